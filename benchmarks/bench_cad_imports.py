"""What the CAD commands cost to start: cold wall time, peak memory and whether they import cadquery.

Rows ``measure  value  target  ok/MISSED`` (benchmarks/targets.py), each value against a reference measured in the
same run; the script exits 1 when a target is missed:

* ``size-block`` on the demo's nose box (``--target rules``, JSON output, no STEP/STL) ÷ ``python -c "import
  cadquery"``, wall time of fresh interpreters ("cold": a new process each time; the files are in the page cache),
  best of 3 each, interleaved; target ≤ 0.5×. The fit check of the block in its slot is in closed form there
  (massmodel.cad.boxfit) and loads neither cadquery nor OCP;
* for each CAD command (size-block without and with STEP/STL, elbowroom, place-ballast with STEP/STL, seat-ballast,
  export), one run: wall time, peak resident memory (VmHWM of the child) and whether it imported cadquery or OCP
  (info rows);
* the number of CAD commands that import cadquery, target 0 (export included: its STEP writer builds the XCAF
  document with OCP).

The children run without PYTHONDONTWRITEBYTECODE (the workplace sets it; with it, modules without a cached .pyc
would be compiled again in every run, which is not what a user's installation does).

Run: ``.venv/bin/python benchmarks/bench_cad_imports.py``.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from targets import CliRun, Targets, run_cli  # noqa: E402

RATIO = 0.5  # size-block / import cadquery, cold wall
REPEATS = 3
CAR = "parts_demo/brindlecombe_bl3.toml"
PLAN = "parts_demo/bl3_ballast_plan.toml"

def _env() -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPATH"] = str(REPO)
    return env


def wall(argv: list[str]) -> tuple[float, str]:
    """Wall time (s) of a fresh interpreter running ``argv`` (after the executable), and its stderr."""
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, *argv], cwd=REPO, env=_env(), stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True)
    return time.perf_counter() - t0, done.stderr


def command(args: list[str]) -> CliRun:
    """Wall time, peak memory and loaded modules of ``python -m massmodel ARGS`` (:func:`targets.run_cli`; exit 1,
    a failed check, is a normal end)."""
    return run_cli(args, REPO, _env(), ok_codes=(0, 1))


def main() -> int:
    out = Targets()
    with tempfile.TemporaryDirectory(prefix="massmodel-bench-") as tmp:
        size_block = ["size-block", CAR, "--plan", PLAN, "--slot", "nose_box", "--target", "rules",
                      "--json", f"{tmp}/nose.json"]
        commands = {
            "size-block (no STEP/STL)": size_block,
            "size-block --step --stl": size_block + ["--step", f"{tmp}/nose.step", "--stl", f"{tmp}/nose.stl"],
            "elbowroom": ["elbowroom", CAR, "--json", f"{tmp}/elbowroom.json"],
            "place-ballast --step --stl": ["place-ballast", CAR, PLAN, "--step", f"{tmp}/blocks.step",
                                           "--stl", f"{tmp}/blocks.stl"],
            "seat-ballast": ["seat-ballast", CAR, "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3",
                             "--margin", "0.5kg"],
            "export": ["export", CAR, "--out", f"{tmp}/export"],
        }
        out.header(f"CAD commands on the demo car: cold wall time of fresh interpreters (best of {REPEATS} for the "
                   "target), peak memory, cadquery imported")
        wall(["-c", "import cadquery"])  # warm the page cache (and write .pyc files) for both sides
        command(size_block)
        t_cq = t_size = float("inf")
        for _ in range(REPEATS):  # interleaved: the machine is shared
            t_cq = min(t_cq, wall(["-c", "import cadquery"])[0])
            t_size = min(t_size, command(size_block).seconds)
        out.info('python -c "import cadquery", wall', t_cq, " s")
        out.info("size-block (no STEP/STL), wall", t_size, " s")
        out.at_most("size-block (no STEP/STL) / import cadquery, cold wall", t_size / t_cq, RATIO)
        importing = []
        for name, args in commands.items():
            run = command(args)
            libs = "cadquery" if "cadquery" in run.modules else ("OCP" if "OCP" in run.modules else "neither")
            out.info(f"{name}: wall", run.seconds, " s")
            out.info(f"{name}: peak memory (VmHWM)", run.kib / 1024.0, " MiB")
            out.info(f"{name}: loads cadquery / OCP / neither", libs)
            if "cadquery" in run.modules:
                importing.append(name)
        out.at_most("CAD commands importing cadquery", float(len(importing)), 0.0, "")
        if importing:
            print(f"importing cadquery: {', '.join(importing)}")
    return out.exit_code()


if __name__ == "__main__":
    sys.exit(main())
