"""The CAD commands load only the CAD libraries they need (fresh interpreters, `sys.modules` after each command).

`size-block` without STEP/STL outputs checks the fit in closed form (massmodel.cad.boxfit) and needs neither cadquery
nor OCP; the commands that build or check solids use OCP directly and never import cadquery (which brings VTK and
more along), `export` included (its STEP writer builds the XCAF document with OCP).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).parents[1]
CAR = str(ROOT / "parts_demo/brindlecombe_bl3.toml")
PLAN = str(ROOT / "parts_demo/bl3_ballast_plan.toml")

# Runs each command's main in turn in ONE interpreter and reports, after each, which libraries are loaded. cadquery
# must never appear, so a command that loads it shows it on its own line; OCP stays loaded once a command loads it,
# so the command that must not load OCP runs first.
_RUNNER = """
import json, sys
from massmodel import cli
for args in json.loads(sys.argv[1]):
    code = cli.main(args)
    loaded = {top for top in (m.split(".")[0] for m in sys.modules) if top in ("cadquery", "OCP", "vtkmodules")}
    print(json.dumps({"command": args[0], "code": code, "loaded": sorted(loaded)}))
"""


def _run(commands: list[list[str]]) -> list[dict]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.run([sys.executable, "-c", _RUNNER, json.dumps(commands)], capture_output=True, text=True,
                          env=env, cwd=ROOT, timeout=600)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return [json.loads(line) for line in proc.stdout.splitlines() if line.startswith('{"command"')]


def test_cad_commands_do_not_import_cadquery(tmp_path):
    out = str(tmp_path)
    commands = [
        ["size-block", CAR, "--plan", PLAN, "--slot", "nose_box", "--target", "rules", "--json", f"{out}/nose.json"],
        ["size-block", CAR, "--plan", PLAN, "--slot", "floor_front", "--target", "5kg", "--step", f"{out}/floor.step",
         "--stl", f"{out}/floor.stl"],
        ["elbowroom", CAR, "--json", f"{out}/elbowroom.json"],
        ["place-ballast", CAR, PLAN, "--step", f"{out}/blocks.step", "--stl", f"{out}/blocks.stl"],
        ["seat-ballast", CAR, "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3", "--margin", "0.5kg"],
    ]
    rows = _run(commands)
    assert [r["command"] for r in rows] == [c[0] for c in commands]  # every command ran to its end
    # the demo's nose box cannot hold the rules' target (exit 1, a failed check) but the block fits there
    assert rows[0]["code"] == 1 and json.loads((tmp_path / "nose.json").read_text())["fit"][0]["fits"]
    assert rows[0]["loaded"] == []  # closed-form fit: neither cadquery nor OCP
    assert rows[1]["code"] == 0 and (tmp_path / "floor.step").stat().st_size > 0
    assert (tmp_path / "floor.stl").stat().st_size > 0 and (tmp_path / "blocks.step").stat().st_size > 0
    for r in rows[1:4]:
        assert r["loaded"] == ["OCP"], r  # the STEP/STL writers and the packaging check: OCP, no cadquery
    assert rows[4]["code"] == 0 and "cadquery" not in rows[4]["loaded"]


def test_export_does_not_import_cadquery(tmp_path):
    rows = _run([["export", CAR, "--out", str(tmp_path), "--formats", "step"]])
    assert rows[0]["code"] == 0
    assert "cadquery" not in rows[0]["loaded"]
