"""Rows of speed targets for the benchmarks: ``measure  value  target  ok/MISSED``, and the exit code.

Values are ratios (or sizes) against a reference measured in the same run: the machine is shared and its speed
varies. The exceptions are the few targets stated in seconds (bench_export's demo export, bench_packaging's demo
check, bench_placement's placement, bench_uncertainty's 10⁵ × 10⁴ Monte Carlo): their rows carry the unit " s" and
compare a time with that number, so a loaded machine can miss them. Times are CPU times of the measuring process
(``time.process_time``), best of k, unless a row says wall.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

#: Runs ``python -m massmodel ARGS`` in the interpreter it is given to (``python -c CLI_CHILD ARGS``) and writes, as
#: the last line of stderr, JSON of its exit code, its peak resident memory in KiB and the top-level modules it
#: loaded. The peak is VmHWM of /proc/self/status (the high-water mark of this process image, reset by exec);
#: ru_maxrss of getrusage is the fallback where /proc is missing (on Linux it keeps the parent's peak across fork and
#: exec).
CLI_CHILD = """
import json, resource, runpy, sys
sys.argv = ["massmodel", *sys.argv[1:]]
code = 0
try:
    runpy.run_module("massmodel", run_name="__main__")
except SystemExit as done:
    code = done.code if isinstance(done.code, int) else (0 if done.code is None else 2)
try:
    with open("/proc/self/status") as status:
        kib = next(int(line.split()[1]) for line in status if line.startswith("VmHWM:"))
except OSError:
    kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
tops = sorted({m.split(".")[0] for m in sys.modules})
sys.stderr.write(json.dumps({"code": code, "kib": kib, "modules": tops}) + "\\n")
"""


@dataclass(frozen=True)
class CliRun:
    """What :func:`run_cli` measured of one command: wall time (s), peak resident memory (KiB), the top-level
    modules it loaded."""

    seconds: float
    kib: int
    modules: frozenset[str]


def run_cli(args: list[str], cwd: Path, env: Mapping[str, str], ok_codes: tuple[int, ...] = (0,)) -> CliRun:
    """Run ``python -m massmodel ARGS`` in a fresh interpreter (:data:`CLI_CHILD`).

    An exit code outside ``ok_codes`` ends the benchmark: a command that stopped early (bad input) did not do the
    work being measured, and would pass for a fast or small run.
    """
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", CLI_CHILD, *args], cwd=cwd, env=dict(env),
                          stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    seconds = time.perf_counter() - t0
    lines = done.stderr.strip().splitlines()
    if not lines:
        raise RuntimeError(f"massmodel {' '.join(args)} wrote no report (exit {done.returncode})")
    report = json.loads(lines[-1])
    if report["code"] not in ok_codes:
        raise RuntimeError(f"massmodel {' '.join(args)} exited {report['code']}: {done.stderr.strip()[-2000:]}")
    return CliRun(seconds, int(report["kib"]), frozenset(report["modules"]))


@dataclass
class Targets:
    """Collects rows and prints them; :meth:`exit_code` is 1 when a target was missed."""

    rows: list[tuple[str, str, str, str]] = field(default_factory=list)

    def at_most(self, measure: str, value: float, limit: float, unit: str = "x") -> None:
        """A row whose value must not exceed ``limit``."""
        self._add(measure, value, f"<= {limit:g}{unit}", value <= limit, unit)

    def at_least(self, measure: str, value: float, limit: float, unit: str = "x") -> None:
        """A row whose value must reach ``limit``."""
        self._add(measure, value, f">= {limit:g}{unit}", value >= limit, unit)

    def info(self, measure: str, value: float | str, unit: str = "") -> None:
        """A row without a target (context for the others)."""
        text = value if isinstance(value, str) else f"{value:.3g}{unit}"
        self.rows.append((measure, text, "-", "info"))
        print(f"{measure:<58} {text:>12}  {'-':>10}  info", flush=True)

    def _add(self, measure: str, value: float, target: str, ok: bool, unit: str) -> None:
        text = f"{value:.3g}{unit}"
        status = "ok" if ok else "MISSED"
        self.rows.append((measure, text, target, status))
        print(f"{measure:<58} {text:>12}  {target:>10}  {status}", flush=True)

    def header(self, title: str) -> None:
        print(title)
        print(f"{'measure':<58} {'value':>12}  {'target':>10}  ok/MISSED")

    def exit_code(self) -> int:
        missed = [r[0] for r in self.rows if r[3] == "MISSED"]
        if missed:
            print(f"MISSED {len(missed)} target(s): {'; '.join(missed)}")
            return 1
        print("all targets met")
        return 0


def best_cpu(fn: Callable[[], object], repeats: int) -> float:
    """Best CPU time of this process over ``repeats`` calls of ``fn``, s."""
    best = float("inf")
    for _ in range(repeats):
        t0 = time.process_time()
        fn()
        best = min(best, time.process_time() - t0)
    return best
