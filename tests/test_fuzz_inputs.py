"""Structure-aware mutation fuzzing of every input file kind, through the command line (massmodel.cli.main).

Each case takes a small valid seed of one kind (model file, rulebook, measurement session, ballast plan, CAD estimate
JSON and CSV), applies a few mutations to its parsed tree (a value replaced by a hostile one — wrong type, huge,
tiny, NaN, deeply nested, not UTF-8 —, an entry dropped or duplicated, an unknown field, the text cut short) or to its
bytes, writes it, and runs the command that reads it. Whatever the input, the command must:

* end with exit 0, 1 or 2 — never 3 (an internal error: an exception that is not one of the project's error types);
* on exit 2, print exactly one line naming the mutated file (or an option) and write nothing (no output file, no
  temporary file left, the inputs unchanged);
* finish within :data:`CASE_SECONDS` (a guard against hangs and resource bombs, not a speed check).

``make test`` runs :data:`DEFAULT_EXAMPLES` cases per kind; set ``MASSMODEL_FUZZ_EXAMPLES=N`` for N per kind (the
failing case is printed by hypothesis and is the smallest reproducer it found). A systematic sweep beside the random
cases gives every value of every seed, in turn, another TOML type (a table, a list, a boolean).
"""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import signal
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from massmodel.cli import main

DEFAULT_EXAMPLES = 60  # per input kind (9 kinds: about 540 cases, some 10 s here)
EXAMPLES = int(os.environ.get("MASSMODEL_FUZZ_EXAMPLES", DEFAULT_EXAMPLES))
CASE_SECONDS = 5.0

# --- seeds: small valid files of each kind (features chosen to reach every reader: extends, groups, materials,
# profiles, cut-outs, patterns, rules, cases, parameters) ------------------------------------------------------------

BASE = {
    "model": {"name": "fuzz base"},
    "units": {"length": "mm", "mass": "kg"},
    "parameters": {"wall": "3 mm", "tank_mass": "4 kg"},
    "materials": {"fuzzium": {"density": "2700 kg/m^3", "source": "invented"}},
    "part": [{"path": "body/block", "shape": "box", "size": [1000, 400, 200], "material": "fuzzium",
              "maturity": "calculated", "at": [-800, 0, 0]}],
}

MODEL = {
    "model": {"name": "fuzz car", "extends": "base.toml", "rulebook": "rules.toml"},
    "units": {"length": "mm", "mass": "kg"},
    "parameters": {"fuel_mass": "3 kg", "arm": "2 * wall + 10 mm"},
    "vehicle": {"wheelbase": 2000, "track_front": 1500, "track_rear": 1400, "ground_level": -300},
    "group": [{"path": "suspension/left", "at": [0, 600, 0], "mirror": True, "maturity": "estimated"}],
    "part": [
        {"path": "suspension/left/arm", "shape": "cylinder", "radius": "arm", "length": "300 mm",
         "density": "7850 kg/m^3", "rotate": {"extrinsic": "xyz", "angles": [0, "90 deg", 0]}},
        {"path": "body/plate", "shape": "extrusion", "vertices": [[0, 0], [200, 0], [200, 100], [0, 100]],
         "thickness": "10 * wall", "material": "aluminium_6061_t6", "maturity": "calculated",
         "cut": [{"shape": "cylinder", "radius": "4 mm", "length": "10 mm", "at": [100, 50, 15]}]},
        {"path": "body/bolts", "shape": "point", "mass": "0.1 kg", "maturity": "measured", "at": [-500, 0, 50],
         "pattern": {"count": 4, "step": [0, 0, "12 mm"]}},
        {"path": "fuel/tank", "shape": "ellipsoid", "semi_x": 200, "semi_y": 150, "semi_z": 100, "mass": "fuel_mass",
         "maturity": "estimated", "at": [-1200, 0, -100]},
    ],
    "slot": [{"name": "floor", "shape": "box", "size": [200, 200, 50], "at": [-300, 0, -250], "clearance": "1 mm"}],
    "case": [{"name": "heavy", "set": {"fuel_mass": "20 kg"}}],
}

RULES = {
    "rulebook": {"name": "fuzz series"},
    "rule": [
        {"name": "minimum mass", "check": "min_mass", "exclude": ["fuel"], "limit": "110 kg"},
        {"name": "front axle", "check": "min_axle_load", "axle": "front", "limit": "30 kg"},
        {"name": "cg height", "check": "max_cg_height", "limit": "400 mm"},
    ],
}

SESSION = {
    "session": {"name": "fuzz day", "model": "car.toml"},
    "units": {"mass": "kg", "length": "mm", "angle": "deg", "time": "s"},
    "car": {"wheelbase": 2000, "track_front": 1500, "track_rear": 1400, "tyre_loaded_radius": 265},
    "scales": {"uncertainty": "0.10 kg"},
    "weighing": [
        {"label": "1", "readings": [35.2, 34.7, 55.1, 56.9], "pads": ["A", "B", "C", "D"]},
        {"label": "2", "readings": [35.0, 34.8, 55.9, 56.3], "pads": ["B", "C", "D", "A"]},
    ],
    "axle_lift": [{"name": "rear lifted", "lifted": "rear", "level": {"front": 70.0, "rear": 112.0},
                   "uncertainty": {"rise": "1 mm", "tyre_loaded_radius": "2 mm", "wheelbase": "2 mm"},
                   "reading": [{"rise": 150, "load": 70.5}, {"rise": 300, "load": 71.1},
                               {"rise": 450, "load": 71.6}]}],
    "pendulum": [
        {"name": "yaw", "kind": "trifilar", "body_mass": "180 kg", "wire_length": 3200, "wire_radius": 1100,
         "timing": [{"cycles": 10, "time": "32.46 s"}, {"cycles": 10, "time": "32.40 s"}],
         "fixture": {"mass": "92.0 kg", "timing": [{"cycles": 10, "time": "25.95 s"}]},
         "uncertainty": {"period": "0.002 s", "wire_length": "2 mm", "wire_radius": "1 mm", "body_mass": "0.3 kg"},
         "compare": {"axis": "up", "through": "cg"}},
        {"name": "roll", "kind": "compound", "body_mass": "180 kg", "pivot_to_cg": 918,
         "timing": [{"cycles": 10, "time": "20.28 s"}, {"cycles": 10, "time": "20.34 s"}], "amplitude": "2 deg",
         "local_gravity": "9.8112 m/s^2", "compare": {"axis": "forward", "through": "cg"}},
        {"name": "wheel", "kind": "bifilar", "body_mass": "11.66 kg", "wire_length": 1600, "wire_spacing": 400,
         "timing": [{"cycles": 20, "time": "46.69 s"}], "fixture": {"mass": "1.15 kg", "inertia": "0.0094 kg*m^2"}},
    ],
}

PLAN = {
    "plan": {"name": "fuzz ballast"},
    "units": {"length": "mm", "mass": "kg"},
    "targets": {"mass_margin": "0.5 kg", "front_fraction": {"target": 0.44, "tolerance": 0.01},
                "objective": "cg_height"},
    "defaults": {"material": "tungsten_b777_class3", "increment": "0.5 mm", "min_thickness": "3 mm",
                 "chamfer": {"size": "1 mm", "edges": "xyz"},
                 "holes": {"pattern": "line", "count": 2, "diameter": "8.5 mm", "pitch": "60 mm"}},
    "candidate": [
        {"slot": "floor", "fill": "+z", "fixed": {"x": "150 mm"}},
        {"slot": "nose", "box": {"size": [100, 120, 40], "at": [375, 0, -185], "clearance": "1 mm"}, "fill": "+z",
         "material": "tungsten_b777_class4"},
    ],
}

ESTIMATE = {
    "format": "massmodel-estimate/1",
    "units": {"mass": "kg", "length": "mm", "inertia": "kg*mm^2"},
    "axes": {"x": "+x", "y": "+y", "z": "+z"},
    "origin_in_model": [0, 0, 0],
    "inertia_about": "cg",
    "products": "negative",
    "items": [{"group": "*", "mass": 150.0, "cg": [-900, 0, 0], "inertia": {"xx": 3e6, "yy": 5e7, "zz": 5e7,
                                                                           "xy": 0, "xz": 0, "yz": 0}},
               {"group": "fuel", "mass": 3.0, "cg": [-1200, 0, -100],
                "inertia": {"xx": 1e4, "yy": 1e4, "zz": 1e4, "xy": 0, "xz": 0, "yz": 0}}],
}

CSV = """#: format = massmodel-estimate/1
#: units.mass = kg
#: units.length = mm
#: units.inertia = kg*mm^2
#: axes = x=+x, y=+y, z=+z
#: origin_in_model = 0 0 0
#: inertia_about = cg
#: products = negative
group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,note
*,150,-900,0,0,3e6,5e7,5e7,0,0,0,whole car
fuel,3,-1200,0,-100,1e4,1e4,1e4,0,0,0,tank
"""

# --- a TOML writer for the mutated trees (tomli reads; nothing in the project writes arbitrary TOML) ----------------


def _key(k: str) -> str:
    return json.dumps(k, ensure_ascii=False)


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) else repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=True)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def to_toml(data: dict[str, Any]) -> str:
    """TOML text of ``data``: top-level tables as [tables], lists of tables as [[tables]], the rest inline."""
    head, tail = [], []
    for k, v in data.items():
        if isinstance(v, dict):
            tail.append(f"[{_key(k)}]")
            tail += [f"{_key(kk)} = {_value(vv)}" for kk, vv in v.items()]
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for entry in v:
                tail.append(f"[[{_key(k)}]]")
                tail += [f"{_key(kk)} = {_value(vv)}" for kk, vv in entry.items()]
        else:
            head.append(f"{_key(k)} = {_value(v)}")
    return "\n".join(head + tail) + "\n"


# --- mutations -----------------------------------------------------------------------------------------------------

HOSTILE_TEXT = ["", " ", "1e308 kg", "-1e308 mm", "1e-320 mm", "nan", "inf kg", "-0 mm", "0", "1 kg", "1 mm",
                "3 m", "1e9 mm", "1e-9 mm", "10 deg", "((((((((1))))))))", "1" + "+1" * 300, "x" * 5000,
                "__file__", "fuel_mass", "wall", "a/b/c", "../../etc/passwd", "car.toml", "base.toml", "\u00e9\u00e9",
                "max(1 mm, 2)", "1 mm, 2 mm", "#zzzzzz", "tungsten_b777_class3", "+z", "-q", "rules"]
HOSTILE_NUMBERS = [0, -1, 1, 2**63, -(2**63), 10**400, 1e308, -1e308, 1e-320, float("nan"), float("inf"),
                   float("-inf"), 0.5, 3, 7, 100000, True]


DEEP = "<<deep {}>>"  # stands for a list nested so many levels deep; the writers expand it in the text (a real
# nested list would overflow the recursion of this test's own tree walks)


def _deep(depth: int) -> str:
    return DEEP.format(depth)


def _expand(text: str) -> str:
    return re.sub(r'"<<deep (\d+)>>"', lambda m: "[" * int(m.group(1)) + "1" + "]" * int(m.group(1)), text)


TYPE_SWAPS: list[Any] = [{"x": 1}, [1], [], {}, 1, 2.5, "x", True, [{"a": "1 mm"}], [[1, 2]]]


@st.composite
def hostile_value(draw: st.DrawFn) -> Any:
    kind = draw(st.integers(0, 9))
    if kind >= 8:  # a value of another TOML type than the field takes (a table for a name, a list for a number)
        return draw(st.sampled_from(TYPE_SWAPS))
    if kind == 0:
        return draw(st.sampled_from(HOSTILE_TEXT))
    if kind == 1:
        return draw(st.sampled_from(HOSTILE_NUMBERS))
    if kind == 2:
        return draw(st.text(max_size=12))
    if kind == 3:
        return draw(st.lists(st.sampled_from(HOSTILE_NUMBERS + HOSTILE_TEXT[:12]), max_size=5))
    if kind == 4:
        return {draw(st.sampled_from(["__file__", "x", "path", "shape", "a"])): draw(st.sampled_from(HOSTILE_TEXT))}
    if kind == 5:
        return _deep(draw(st.sampled_from([40, 200, 3000])))
    if kind == 6:
        return [draw(st.floats(allow_nan=True)) for _ in range(draw(st.integers(0, 4)))]
    return draw(st.floats(allow_nan=True, allow_infinity=True))


def _paths(node: Any, prefix: tuple[Any, ...] = ()) -> Iterator[tuple[Any, ...]]:
    """Every path (keys and indices) to a value in the tree."""
    yield prefix
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, (*prefix, i))


def _parent(tree: Any, path: tuple[Any, ...]) -> Any:
    for p in path[:-1]:
        tree = tree[p]
    return tree


@st.composite
def mutated_tree(draw: st.DrawFn, seed: dict[str, Any]) -> dict[str, Any]:
    tree = json.loads(json.dumps(seed))
    for _ in range(draw(st.integers(1, 3))):
        paths = [p for p in _paths(tree) if p]
        path = draw(st.sampled_from(paths))
        parent = _parent(tree, path)
        op = draw(st.integers(0, 5))
        if op <= 2:  # replace (most often)
            parent[path[-1]] = draw(hostile_value())
        elif op == 3:  # drop
            del parent[path[-1]]
        elif op == 4:  # duplicate / add a sibling
            if isinstance(parent, list):
                parent.append(json.loads(json.dumps(parent[path[-1]])))
            else:
                parent[draw(st.sampled_from(["__file__", "unknown_field", "extends", "path", "name"]))] = \
                    draw(hostile_value())
        else:  # a table becomes a list or a list a table
            value = parent[path[-1]]
            parent[path[-1]] = [value] if not isinstance(value, list) else {"x": value}
        if not tree:
            break
    return tree


@st.composite
def mutated_bytes(draw: st.DrawFn, text: str) -> bytes:
    data = bytearray(text.encode("utf-8"))
    op = draw(st.integers(0, 3))
    at = draw(st.integers(0, len(data)))
    if op == 0:
        data[at:at] = draw(st.sampled_from([b"\xff\xfe", b"\xc3", b"\x00", b"\xe9t\xe9"]))
    elif op == 1:
        del data[at:]
    elif op == 2:
        data[at:at] = draw(st.sampled_from([b"[" * 5000, b"{a=" * 3000, b'"' * 3, b"\n[[part]]\n", b"=\n"]))
    else:
        end = draw(st.integers(at, len(data)))
        data[at:end] = data[at:end][::-1]
    return bytes(data)


@st.composite
def mutated_file(draw: st.DrawFn, seed: dict[str, Any] | str, fmt: str) -> bytes:
    if isinstance(seed, str) or draw(st.integers(0, 4)) == 0:
        text = seed if isinstance(seed, str) else to_toml(seed) if fmt == "toml" else json.dumps(seed)
        return draw(mutated_bytes(text))
    tree = draw(mutated_tree(seed))
    text = to_toml(tree) if fmt == "toml" else json.dumps(tree, allow_nan=True)
    return _expand(text).encode("utf-8", "surrogatepass")


# --- running one case ----------------------------------------------------------------------------------------------


class Hang(BaseException):
    """A case ran over :data:`CASE_SECONDS` (a BaseException, so the command line's handlers do not catch it)."""


@contextmanager
def time_guard(seconds: float) -> Iterator[None]:
    def alarm(signum: int, frame: Any) -> None:
        raise Hang(f"the case ran over {seconds} s")

    old = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def write_world(folder: Path) -> dict[str, Path]:
    """The seed files of every kind in ``folder``."""
    files = {"base": "base.toml", "model": "car.toml", "rules": "rules.toml", "session": "session.toml",
             "plan": "plan.toml", "json": "estimate.json", "csv": "estimate.csv"}
    paths = {k: folder / v for k, v in files.items()}
    paths["base"].write_text(to_toml(BASE), encoding="utf-8")
    paths["model"].write_text(to_toml(MODEL), encoding="utf-8")
    paths["rules"].write_text(to_toml(RULES), encoding="utf-8")
    paths["session"].write_text(to_toml(SESSION), encoding="utf-8")
    paths["plan"].write_text(to_toml(PLAN), encoding="utf-8")
    paths["json"].write_text(json.dumps(ESTIMATE), encoding="utf-8")
    paths["csv"].write_text(CSV, encoding="utf-8")
    return paths


#: Input kind → (file key, seed, format, the command line reading it, given the files and the output path).
KINDS: dict[str, tuple[str, Any, str, Callable[[dict[str, Path], Path], list[str]]]] = {
    "model": ("model", MODEL, "toml", lambda f, o: ["report", str(f["model"]), "--all-cases", "--json", str(o)]),
    "base": ("base", BASE, "toml", lambda f, o: ["report", str(f["model"]), "--json", str(o)]),
    "rulebook": ("rules", RULES, "toml", lambda f, o: ["report", str(f["model"]), "--json", str(o)]),
    "session": ("session", SESSION, "toml", lambda f, o: ["weigh", str(f["session"]), "--json", str(o)]),
    "session-tilt": ("session", SESSION, "toml", lambda f, o: ["tilt", str(f["session"]), "--json", str(o)]),
    "session-swing": ("session", SESSION, "toml", lambda f, o: ["swing", str(f["session"]), "--json", str(o)]),
    "plan": ("plan", PLAN, "toml", lambda f, o: ["place-ballast", str(f["model"]), str(f["plan"]), "--no-fit",
                                                   "--json", str(o)]),
    "estimate-json": ("json", ESTIMATE, "json", lambda f, o: ["crossweigh", str(f["model"]), str(f["json"]),
                                                               "--json", str(o)]),
    "estimate-csv": ("csv", CSV, "csv", lambda f, o: ["crossweigh", str(f["model"]), str(f["csv"]), "--json",
                                                       str(o)]),
}


def run_case(tmp: Path, kind: str, content: bytes, capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    """Write the world with one mutated file, run its command, check the promises; the exit code and stderr."""
    for p in tmp.iterdir():
        shutil.rmtree(p) if p.is_dir() else p.unlink()
    files = write_world(tmp)
    key, _, _, argv = KINDS[kind]
    files[key].write_bytes(content)
    before = {p.name: p.read_bytes() for p in tmp.iterdir()}
    out = tmp / "out" / "result.json"
    capsys.readouterr()
    with time_guard(CASE_SECONDS):
        code = main(argv(files, out))
    _, err = capsys.readouterr()
    assert code in (0, 1, 2), f"exit {code}: {err}"
    after = {p.name: p.read_bytes() for p in tmp.iterdir() if p.is_file()}
    assert {k: v for k, v in after.items() if k in before} == before, "an input file changed"
    if code == 2:
        assert len(err.splitlines()) == 1, f"not one line: {err!r}"
        named = [p.name for p in files.values()]
        assert any(n in err for n in named) or " --" in err, f"names no file: {err!r}"
        assert not (tmp / "out").exists(), "an output was written on failure"
        assert set(after) == set(before), f"files left behind: {sorted(set(after) - set(before))}"
    return code, err


@pytest.mark.parametrize("kind", list(KINDS))
def test_seeds_are_valid(tmp_path: Path, capsys: pytest.CaptureFixture[str], kind: str) -> None:
    # the seeds run clean, so the mutations (not the seeds) are what the fuzz cases test
    key, seed, fmt, _ = KINDS[kind]
    text = seed if isinstance(seed, str) else to_toml(seed) if fmt == "toml" else json.dumps(seed)
    code, err = run_case(tmp_path, kind, text.encode(), capsys)
    assert code in (0, 1), err


@pytest.mark.parametrize("kind", list(KINDS))
def test_mutated_inputs_fail_cleanly(tmp_path_factory: pytest.TempPathFactory, capsys: pytest.CaptureFixture[str],
                                     kind: str) -> None:
    key, seed, fmt, _ = KINDS[kind]
    tmp = tmp_path_factory.mktemp(f"fuzz-{kind}")

    @settings(max_examples=EXAMPLES, deadline=None, derandomize=EXAMPLES == DEFAULT_EXAMPLES, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                     HealthCheck.function_scoped_fixture])
    @given(content=mutated_file(seed, fmt))
    def case(content: bytes) -> None:
        run_case(tmp, kind, content, capsys)

    case()


SWEEP_VALUES: list[Any] = [{"x": 1}, ["x"], True]


@pytest.mark.parametrize("kind", [k for k in KINDS if KINDS[k][2] != "csv" and k != "session-tilt"])
def test_every_field_of_another_type_fails_cleanly(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                   kind: str) -> None:
    # Systematic, not random: each value of the seed (every leaf of its tree) in turn becomes a table, a list and a
    # boolean — the mistakes a reader that assumes a type turns into a TypeError or AttributeError.
    key, seed, fmt, _ = KINDS[kind]
    leaves = [p for p in _paths(seed) if p and not isinstance(_get(seed, p), (dict, list))]
    assert len(leaves) > 10
    for path in leaves:
        for value in SWEEP_VALUES:
            tree = json.loads(json.dumps(seed))
            _parent(tree, path)[path[-1]] = value
            text = to_toml(tree) if fmt == "toml" else json.dumps(tree)
            run_case(tmp_path, kind, text.encode("utf-8"), capsys)


def _get(tree: Any, path: tuple[Any, ...]) -> Any:
    for p in path:
        tree = tree[p]
    return tree
