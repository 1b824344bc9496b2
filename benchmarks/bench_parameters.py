"""A model file of N chained parameters (p1 = p0 + 1 g, ...) with three load cases: ``report`` and ``check`` against
reading the file.

Prints, for N = 2,000 and 20,000, the time of ``massmodel report`` and ``massmodel check`` (in-process, the library
imported beforehand) and their ratio to the reference: reading and parsing the same file with tomli, measured in
this run. Each load case overrides the first parameter, so every case evaluates the whole chain; ``check`` builds
every case, and loading any case checks the values of all cases. Target: both well under the time of evaluating the
chain a handful of times, i.e. a parse cache larger than the file's texts and each distinct set of overrides
evaluated once (massmodel.core.expr). Times are best of 3 wall-clock seconds on a shared machine, each run with
the caches emptied first (as in a new process).

Run: ``.venv/bin/python benchmarks/bench_parameters.py``.
"""

from __future__ import annotations

import contextlib
import io
import sys
import tempfile
import time
from pathlib import Path

import tomli

from massmodel.cli import main


def chain_file(folder: Path, n: int) -> Path:
    lines = ["[model]", 'name = "chain"', "[units]", 'length = "mm"', 'mass = "kg"', "[vehicle]", "wheelbase = 2000",
             "track_front = 1500", "track_rear = 1400", "ground_level = -300", "[parameters]", 'p0 = "1 kg"']
    lines += [f'p{i} = "p{i - 1} + 0.001 kg"' for i in range(1, n)]
    lines += ["[[part]]", 'path = "a/b"', 'shape = "point"', f'mass = "p{n - 1}"', 'maturity = "measured"',
              "at = [-1000, 0, 0]", "[[rule]]", 'name = "min"', 'check = "min_mass"', 'limit = "1 kg"']
    for k in range(1, 4):
        lines += ["[[case]]", f'name = "c{k}"', f'set = {{ p0 = "{k + 1} kg" }}']
    path = folder / f"chain_{n}.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def best(fn, k: int = 3) -> float:
    times = []
    for _ in range(k):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def cold() -> None:
    """Forget every remembered parse and evaluation, so that each run reads the file afresh (as a new process)."""
    from massmodel.core import expr, expr_syntax

    for name in ("_evaluate_parameters_cached", "_parsed_text"):
        cached = getattr(expr, name, None)
        if cached is not None:
            cached.cache_clear()
    expr_syntax._parse.cache_clear()


def quiet(argv: list[str]) -> None:
    cold()
    with contextlib.redirect_stdout(io.StringIO()):
        code = main(argv)
    if code not in (0, 1):
        sys.exit(f"{argv}: exit {code}")


def run() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        for n in (2_000, 20_000):
            path = chain_file(Path(tmp), n)
            ref = best(lambda p=path: tomli.loads(p.read_text(encoding="utf-8")))
            for command in ("report", "check"):
                t = best(lambda c=command, p=path: quiet([c, str(p)]))
                print(f"N = {n:6d}  {command:6s} {t:6.3f} s  = {t / ref:6.1f} x reading the file ({ref * 1e3:.1f} ms)")


if __name__ == "__main__":
    run()
