"""The shape of the house: the layer table of the subpackages, checked on the source (AST), not by hope.

Rules (docs/architecture.md):

- a module may import its own subpackage and LOWER layers only (an upward import fails);
- two subpackages of one layer do not import each other;
- no import cycle between modules, counting every import (module level, inside functions, under TYPE_CHECKING);
- no module over MAX_LINES lines;
- every subpackage ``__init__`` has a docstring saying what it holds and what it may import ("May import: ...").

The top-level ``massmodel/__init__.py`` (the package face) and ``massmodel/__main__.py`` may import anything; no
subpackage may import them.
"""

from __future__ import annotations

import ast
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = "massmodel"

#: Layer of each subpackage (a layer imports its own and lower layers only). Planned packages are listed so the rule
#: holds for them from their first commit: massmodel.uncertainty (model uncertainty propagation), massmodel.studies,
#: massmodel.notebook (notebook helpers, a module or a package, beside the CLI at the top). massmodel.page (the HTML
#: page of a model, merged on main) imports pictures and report and is imported by the CLI, so it sits between them.
LAYERS: dict[str, int] = {
    "core": 0,
    "vehicle": 1,
    "cad": 1,
    "uncertainty": 2,
    "modelfile": 3,
    "ballast": 4,
    "measure": 4,
    "compare": 4,
    "studies": 4,
    "report": 5,
    "pictures": 6,
    "page": 7,
    "cli": 8,
    "notebook": 8,
}
#: Modules of the package itself that may import anything (nothing may import them).
TOP = {"massmodel", "massmodel.__main__"}

MAX_LINES = 650

#: Cycles allowed for now, each a set of modules, with the reason and who removes the entry.
ALLOWED_CYCLES: list[frozenset[str]] = []

#: Modules over MAX_LINES that other branches are rewriting and must not be split here, each with its line count
#: today as a ceiling (it may shrink, not grow). The owning branch deletes its entry when it splits the module.
OVERSIZE_CEILINGS: dict[str, int] = {}


@dataclass(frozen=True)
class Import:
    """One import statement's target inside the package."""

    source: str  # importing module, dotted
    target: str  # imported module (or package), dotted
    path: str  # file of the importing module, relative to the repository
    line: int


def module_files(root: Path, package: str = PACKAGE) -> dict[str, Path]:
    """Dotted module name → file, for every .py under ``root/package`` (a package's module is its __init__.py)."""
    out = {}
    for path in sorted((root / package).rglob("*.py")):
        parts = list(path.relative_to(root).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


def _resolve(name: str, modules: Iterable[str]) -> str | None:
    """The longest known module that ``name`` names or lies in (None outside the package)."""
    known = set(modules)
    while name and name not in known:
        name = name.rpartition(".")[0]
    return name or None


def imports_of(root: Path, package: str = PACKAGE) -> list[Import]:
    """Every import of a package module by a package module (all statements, wherever they are)."""
    files = module_files(root, package)
    out = []
    for module, path in files.items():
        is_package = path.name == "__init__.py"
        rel = str(path.relative_to(root))
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), rel)):
            names: list[str] = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    base = module.split(".") if is_package else module.split(".")[:-1]
                    base = base[: len(base) - (node.level - 1)]
                    stem = ".".join([*base, *([node.module] if node.module else [])])
                else:
                    stem = node.module or ""
                # `from pkg import name` imports the submodule pkg.name when there is one
                names = [f"{stem}.{a.name}" if f"{stem}.{a.name}" in files else stem for a in node.names]
            for name in names:
                if name == package or name.startswith(package + "."):
                    target = _resolve(name, files)
                    if target is not None and target != module:
                        out.append(Import(module, target, rel, node.lineno))
    return out


def layer_of(module: str) -> tuple[str, int] | None:
    """(subpackage, layer) of a module; None for the top-level package face and __main__."""
    if module in TOP:
        return None
    sub = module.split(".")[1]
    if sub not in LAYERS:
        raise AssertionError(f"{module}: subpackage '{sub}' is not in the layer table of tests/test_layout.py")
    return sub, LAYERS[sub]


def layer_violations(imports: Iterable[Import]) -> list[str]:
    """One line per import that goes up the layer table or across to a sibling of the same layer."""
    out = []
    for imp in imports:
        src = layer_of(imp.source)
        if src is None:
            continue  # the package face and __main__ may import anything
        dst = layer_of(imp.target)
        where = f"{imp.path}:{imp.line} imports {imp.target}"
        if dst is None:
            out.append(f"{where}: the package face ({imp.target}) is above every layer; import the module itself")
        elif dst[0] == src[0]:
            continue
        elif dst[1] > src[1]:
            out.append(f"{where}: upward import ({src[0]}, layer {src[1]} -> {dst[0]}, layer {dst[1]})")
        elif dst[1] == src[1]:
            out.append(f"{where}: import between siblings of layer {src[1]} ({src[0]} -> {dst[0]})")
    return out


def cycles(imports: Iterable[Import]) -> list[list[str]]:
    """The strongly connected components of more than one module (Tarjan), each sorted."""
    graph: dict[str, set[str]] = {}
    for imp in imports:
        graph.setdefault(imp.source, set()).add(imp.target)
        graph.setdefault(imp.target, set())
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                found.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def cycle_report(imports: list[Import], allowed: Iterable[frozenset[str]] = ()) -> list[str]:
    """One block per cycle not allowed: its modules and the imports that close it."""
    allowed = list(allowed)
    out = []
    for component in cycles(imports):
        if frozenset(component) in allowed:
            continue
        inside = set(component)
        edges = [f"    {i.path}:{i.line} {i.source} -> {i.target}" for i in imports
                 if i.source in inside and i.target in inside]
        out.append("import cycle between " + ", ".join(component) + ":\n" + "\n".join(sorted(set(edges))))
    return out


def size_violations(root: Path, ceilings: dict[str, int], package: str = PACKAGE) -> list[str]:
    out = []
    for path in module_files(root, package).values():
        rel = str(path.relative_to(root))
        count = len(path.read_text(encoding="utf-8").splitlines())
        limit = ceilings.get(rel, MAX_LINES)
        if count > limit:
            why = f"ceiling {limit} lines until its branch splits it" if rel in ceilings else f"limit {MAX_LINES}"
            out.append(f"{rel}: {count} lines ({why}); split it by concept")
    return out


def docstring_violations(root: Path, package: str = PACKAGE) -> list[str]:
    out = []
    for module, path in module_files(root, package).items():
        if path.name != "__init__.py" or module == package:
            continue
        rel = str(path.relative_to(root))
        doc = ast.get_docstring(ast.parse(path.read_text(encoding="utf-8"), rel)) or ""
        if not doc:
            out.append(f"{rel}: no docstring (say what the subpackage holds and what it may import)")
        elif "may import" not in doc.lower():
            out.append(f"{rel}: the docstring does not say what the subpackage may import ('May import: ...')")
    return out


# ----------------------------------------------------------------------------------------------------------------
# The rules on massmodel itself
# ----------------------------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def imports() -> list[Import]:
    return imports_of(ROOT)


def test_every_subpackage_is_in_the_layer_table() -> None:
    subs = {m.split(".")[1] for m in module_files(ROOT) if m not in TOP}
    assert subs <= set(LAYERS), f"add {sorted(subs - set(LAYERS))} to LAYERS and to docs/architecture.md"


def test_no_upward_or_sibling_import(imports: list[Import]) -> None:
    bad = layer_violations(imports)
    assert not bad, "imports breaking the layer table:\n" + "\n".join(bad)


def test_no_import_cycle(imports: list[Import]) -> None:
    bad = cycle_report(imports, ALLOWED_CYCLES)
    assert not bad, "\n".join(bad)


def test_allowed_cycles_still_exist(imports: list[Import]) -> None:
    # an allow-list entry whose cycle is gone must be deleted (it would hide a new cycle among the same modules)
    present = {frozenset(c) for c in cycles(imports)}
    stale = [sorted(c) for c in ALLOWED_CYCLES if c not in present]
    assert not stale, f"delete these entries from ALLOWED_CYCLES, the cycles are gone: {stale}"


def test_modules_are_small() -> None:
    bad = size_violations(ROOT, OVERSIZE_CEILINGS)
    assert not bad, "\n".join(bad)


def test_subpackages_say_what_they_hold_and_may_import() -> None:
    bad = docstring_violations(ROOT)
    assert not bad, "\n".join(bad)


# ----------------------------------------------------------------------------------------------------------------
# The checker finds what it should (a small made-up package in tmp_path)
# ----------------------------------------------------------------------------------------------------------------


def _write(root: Path, files: dict[str, str]) -> None:
    for rel, text in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")


def test_checker_finds_each_kind_of_break(tmp_path: Path) -> None:
    doc = '"""Holds things.\n\nMay import: core."""\n'
    _write(tmp_path, {
        "massmodel/__init__.py": "from massmodel.cli import main\n",  # the face may import anything
        "massmodel/core/__init__.py": doc,
        "massmodel/core/a.py": "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from .b import B\n",
        "massmodel/core/b.py": "def f():\n    from massmodel.core import a\n\n\nB = 1\n",
        "massmodel/core/up.py": "def g():\n    import massmodel.vehicle.balance\n",
        "massmodel/vehicle/__init__.py": '"""Vehicle things."""\n',
        "massmodel/vehicle/balance.py": "from massmodel.cad.solids import x\nimport massmodel\n",
        "massmodel/cad/__init__.py": doc,
        "massmodel/cad/solids.py": "x = 1\n" * (MAX_LINES + 1),
        "massmodel/cli/__init__.py": doc + "from massmodel.core.b import B\nmain = None\n",
    })
    found = imports_of(tmp_path)
    layer = layer_violations(found)
    assert layer == [
        "massmodel/core/up.py:2 imports massmodel.vehicle.balance: upward import (core, layer 0 -> vehicle, layer 1)",
        "massmodel/vehicle/balance.py:1 imports massmodel.cad.solids: import between siblings of layer 1 "
        "(vehicle -> cad)",
        "massmodel/vehicle/balance.py:2 imports massmodel: the package face (massmodel) is above every layer; "
        "import the module itself",
    ]
    # the cycle closes through a function-level import and a TYPE_CHECKING one
    assert cycles(found) == [["massmodel.core.a", "massmodel.core.b"]]
    report = cycle_report(found)
    assert "massmodel/core/a.py:3 massmodel.core.a -> massmodel.core.b" in report[0]
    assert "massmodel/core/b.py:2 massmodel.core.b -> massmodel.core.a" in report[0]
    assert cycle_report(found, [frozenset({"massmodel.core.a", "massmodel.core.b"})]) == []
    assert size_violations(tmp_path, {}) == [
        f"massmodel/cad/solids.py: {MAX_LINES + 1} lines (limit {MAX_LINES}); split it by concept"]
    assert size_violations(tmp_path, {"massmodel/cad/solids.py": MAX_LINES + 1}) == []
    assert docstring_violations(tmp_path) == [
        "massmodel/vehicle/__init__.py: the docstring does not say what the subpackage may import ('May import: ...')"]
