"""docs/notebook.ipynb: committed without outputs, and it runs from top to bottom (nbclient, a local kernel, offline,
headless)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
NOTEBOOK = REPO / "docs" / "notebook.ipynb"


def test_committed_notebook_has_no_outputs() -> None:
    nbformat = pytest.importorskip("nbformat", reason="nbformat is in the dev extra")
    nb = nbformat.read(NOTEBOOK, as_version=4)
    nbformat.validate(nb)
    code = [c for c in nb.cells if c.cell_type == "code"]
    assert len(code) >= 8
    for cell in code:
        assert cell.outputs == [] and cell.execution_count is None, cell.source[:60]


def test_notebook_runs(monkeypatch: pytest.MonkeyPatch) -> None:
    nbformat = pytest.importorskip("nbformat", reason="nbformat is in the dev extra")
    nbclient = pytest.importorskip("nbclient", reason="nbclient is in the dev extra")
    pytest.importorskip("ipykernel", reason="ipykernel is in the dev extra")
    # the kernel is a child process: it imports this checkout and draws with matplotlib's image backend
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join(filter(None, [str(REPO), os.environ.get("PYTHONPATH")])))
    monkeypatch.setenv("MPLBACKEND", "module://matplotlib_inline.backend_inline")
    problem = _kernel_problem()
    if problem:
        pytest.skip(problem)
    nb = nbformat.read(NOTEBOOK, as_version=4)
    client = nbclient.NotebookClient(nb, timeout=120, kernel_name="python3",
                                     resources={"metadata": {"path": str(NOTEBOOK.parent)}})
    client.execute()  # raises CellExecutionError naming the cell when a cell fails
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    html = [o for o in outputs if "text/html" in o.get("data", {})]
    pngs = [o for o in outputs if "image/png" in o.get("data", {})]
    assert any("Brindlecombe BL-3" in o["data"]["text/html"] for o in html)  # the model's table
    assert any("Rule checks" in o["data"]["text/html"] for o in html)
    assert len(pngs) >= 2  # the sweep's chart and the picture of the car
    text = "".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    assert "lowest yaw inertia" in text and "kg*m^2" in text


def _kernel_problem() -> str | None:
    """Why no local Python kernel can start here (None when one can)."""
    from jupyter_client.manager import start_new_kernel

    try:
        km, kc = start_new_kernel(kernel_name="python3", startup_timeout=60)
    except Exception as exc:  # a missing kernel spec, ZMQ or process limits: many kinds
        return f"no Jupyter kernel could start: {type(exc).__name__}: {exc}"
    kc.stop_channels()
    km.shutdown_kernel(now=True)
    return None
