"""docs/api.md names what exists: every public name of ``massmodel`` is listed, and every function named beside a
module in the page is an attribute of that module."""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

import massmodel
from massmodel.pictures.viewer import renderer_problem

API = Path(__file__).resolve().parents[1] / "docs" / "api.md"
# "`name`, `other` (`massmodel.module`" : the names belong to the module in parentheses
NAMED_IN_MODULE = re.compile(r"((?:`\w+`(?:, )?)+) \(`(massmodel(?:\.\w+)+)`")


def test_every_public_name_is_listed() -> None:
    text = API.read_text(encoding="utf-8")
    missing = [name for name in massmodel.__all__ if f"`{name}" not in text]
    assert missing == []


def test_every_function_named_beside_a_module_exists() -> None:
    pairs = [(name, module) for names, module in NAMED_IN_MODULE.findall(API.read_text(encoding="utf-8"))
             for name in re.findall(r"`(\w+)`", names)]
    assert len(pairs) >= 25
    absent = [f"{module}.{name}" for name, module in pairs if not hasattr(importlib.import_module(module), name)]
    assert absent == []


def test_facade_names_resolve() -> None:
    assert massmodel.open_model is importlib.import_module("massmodel.notebook").open_model
    assert {"open_model", "point_mass", "OpenedModel"} <= set(dir(massmodel))


def test_readme_facade_example_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    problem = renderer_problem()
    if problem:
        pytest.skip(problem)
    readme = (API.parents[1] / "README.md").read_text(encoding="utf-8")
    section = readme[readme.index("## Python API"):]
    code = re.search(r"```python\n(.*?)```", section, re.DOTALL)
    assert code is not None
    lines = code[1].splitlines()
    assert 6 <= len([ln for ln in lines if ln.strip()]) <= 10
    (tmp_path / "parts_demo").symlink_to(API.parents[1] / "parts_demo")
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {}
    exec(compile(code[1], "README.md", "exec"), namespace)  # noqa: S102 - the README's own example
    trial = namespace["trial"]
    assert "ballast/probe" in {c.path for c in trial.model.components}  # type: ignore[attr-defined]
    from PIL import Image

    with Image.open(tmp_path / "side.png") as img:
        assert img.size == (1200, 700)
