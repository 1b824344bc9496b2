"""A 1,000-point parameter sweep of the demo car against 1,000 full re-reads of the file, in the same run.

Three ways to get the same 1,000 sets of outputs (mass, CG, CG height, front share, axle loads, inertia about the
vehicle axes, every rule's margin) for the demo car with the fuel load going from 30 kg to 1 kg:

* **re-read**: ``load_model(file, {fuel_mass: ...})`` per point (read, parse, merge ``extends``, build): the
  reference;
* **full builds**: the file read once (``read_source``), ``build_model`` per point (``massmodel vary --full-builds``);
* **sweep**: :func:`massmodel.studies.sweep.sweep`, which rebuilds only the parts the varied parameter reaches
  (``massmodel vary``, the default).

The outputs of the three are compared (they must agree exactly). Target: the sweep ≥ 20x faster than re-reading.
Then the same for a tenth of the points of ``ride_height``, which moves every sprung group: the partial rebuild
gains much less there (it rebuilds most parts). Times are CPU times of this process (the machine is shared),
measured in this run.

Run: ``.venv/bin/python benchmarks/bench_sweep.py [--points N]`` (default 1,000).
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))  # benchmarks/targets.py

from targets import Targets  # noqa: E402

from massmodel.modelfile.loader import build_model, load_model, read_source  # noqa: E402
from massmodel.studies.outputs import evaluate_outputs, select_outputs  # noqa: E402
from massmodel.studies.sweep import Study, parse_range, sweep  # noqa: E402

CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"


def compare(name: str, spec: str, n: int, label: str) -> float:
    """Time the three ways for ``n`` points of ``spec``; print them and return the sweep's ratio to re-reading."""
    source = read_source(CAR)
    base = build_model(source)
    outs = select_outputs(base, ())
    rng = parse_range(f"{name}={spec}:{n}", base)
    points = [{name: t} for t in rng.texts]

    t0 = time.process_time()
    reread = np.array([evaluate_outputs(load_model(CAR, p), outs)[0] for p in points])
    t_reread = time.process_time() - t0

    t0 = time.process_time()
    full = np.array([evaluate_outputs(build_model(source, p), outs)[0] for p in points])
    t_full = time.process_time() - t0

    t0 = time.process_time()
    result = sweep(Study(read_source(CAR), (name,)), [rng])  # the file read once, inside the timing
    t_sweep = time.process_time() - t0

    same = np.array_equal(reread, full) and np.array_equal(full, result.values)
    print(f"demo car, {len(base.components)} parts, {n} points of {label}, {len(outs)} outputs each")
    print(f"  {result.method}")
    print(f"  re-read the file per point : {t_reread:8.3f} s  ({1e3 * t_reread / n:6.2f} ms/point)  reference")
    print(f"  read once, full builds     : {t_full:8.3f} s  ({1e3 * t_full / n:6.2f} ms/point)  "
          f"{t_reread / t_full:5.1f}x faster")
    print(f"  sweep (partial rebuild)    : {t_sweep:8.3f} s  ({1e3 * t_sweep / n:6.2f} ms/point)  "
          f"{t_reread / t_sweep:5.1f}x faster")
    print(f"  outputs identical in all three: {same}")
    if not same:
        print(f"  largest difference: {float(np.max(np.abs(reread - result.values))):.3g}")
    return t_reread / t_sweep


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=1000)
    n = ap.parse_args().points
    ratio = compare("fuel_mass", "30kg:1kg", n, "fuel_mass 30 kg -> 1 kg")
    print()
    # the honest other end: ride height moves every sprung group (93 of 163 parts are rebuilt at each point)
    ride = compare("ride_height", "30mm:50mm", max(10, n // 10), "ride_height 30 mm -> 50 mm (reaches most parts)")
    print()
    out = Targets()
    out.header("bench_sweep")
    out.at_least(f"re-read per point / sweep, {n} points of fuel_mass", ratio, 20.0)
    out.info(f"re-read per point / sweep, {max(10, n // 10)} points of ride_height", ride, "x")
    return out.exit_code()


if __name__ == "__main__":
    raise SystemExit(main())
