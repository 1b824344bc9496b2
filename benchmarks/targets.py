"""Rows of speed targets for the benchmarks: ``measure  value  target  ok/MISSED``, and the exit code.

Values are ratios (or sizes) against a reference measured in the same run: the machine is shared and its speed
varies. The exceptions are the few targets stated in seconds (bench_export's demo export, bench_packaging's demo
check, bench_placement's placement, bench_uncertainty's 10⁵ × 10⁴ Monte Carlo): their rows carry the unit " s" and
compare a time with that number, so a loaded machine can miss them. Times are CPU times of the measuring process
(``time.process_time``), best of k, unless a row says wall.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field


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
