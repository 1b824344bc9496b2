"""The core needs numpy alone: importing massmodel, loading the demo car, building and printing its report, and the
``report`` command must not import the CAD kernel, the mesh or plotting libraries, scipy, or numba (the compiled kernel does
not pay for its import on a model of this size; see docs/engine.md)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
HEAVY = ("cadquery", "OCP", "trimesh", "pyvista", "vtk", "matplotlib", "scipy", "manifold3d", "numba")

SCRIPT = """
import contextlib, io, json, sys
import massmodel
from massmodel.cli import main
model = massmodel.load_model(sys.argv[1])
report = massmodel.build_report(model)
text = massmodel.format_report(report)
with contextlib.redirect_stdout(io.StringIO()):
    code = main(["report", sys.argv[1], "--inertia-about", "cg", "--inertia-axes", "vehicle"])
heavy = sorted({name.split(".")[0] for name in sys.modules} & set(sys.argv[2].split(",")))
print(json.dumps({"parts": len(model.components), "code": code, "heavy": heavy, "lines": len(text.splitlines())}))
"""


def test_core_imports_without_heavy_libraries() -> None:
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    result = subprocess.run(
        [sys.executable, "-c", SCRIPT, str(REPO / "parts_demo" / "brindlecombe_bl3.toml"), ",".join(HEAVY)],
        cwd=REPO, env=env, capture_output=True, text=True, timeout=120,
    )
    assert result.returncode == 0, result.stderr
    out = json.loads(result.stdout)
    assert out["heavy"] == []
    assert out["code"] == 0 and out["parts"] >= 60 and out["lines"] > 20
