"""Speed of the packaging check (`massmodel elbowroom`).

1. The demo car (>= 60 parts): time of the whole check against the 10 s target.
2. A generated 500-part assembly (boxes, cylinders and tubes on a jittered grid, random rotations, some overlapping):
   pairs decided per second with the bounding-box prefilter (R-tree, then exact booleans on candidates only),
   against all-pairs exact booleans without the prefilter. The all-pairs baseline is NOT run in full (about 125 000
   booleans): it is timed on a random sample of pairs and extrapolated to every pair, plus the same solid-building
   time. Target: prefilter at least 10x faster.

Rows ``measure  value  target  ok/MISSED`` (benchmarks/targets.py); the script exits 1 when a target is missed.

Run from the repository root: .venv/bin/python benchmarks/bench_packaging.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))  # benchmarks/targets.py

from targets import Targets  # noqa: E402

from massmodel.cad.packaging import check_packaging, overlap_volume, placed_solids  # noqa: E402
from massmodel.core.frames import Pose, RotationKind, rotation_from_sequence  # noqa: E402
from massmodel.core.model import Component, MassSource, Maturity, Model  # noqa: E402
from massmodel.core.shapes import Box, Cylinder, Tube  # noqa: E402
from massmodel.modelfile.loader import load_model  # noqa: E402

DEMO_TARGET_S = 10.0
RATIO_TARGET = 10.0
N_PARTS = 500
SAMPLE_PAIRS = 400


def generated_assembly(n: int, seed: int = 7) -> Model:
    rng = np.random.default_rng(seed)
    side = int(np.ceil(n ** (1 / 3)))
    spacing = 0.07
    comps = []
    for k in range(n):
        i, j, m = k % side, (k // side) % side, k // side // side
        at = np.array([i, j, m]) * spacing + rng.normal(0.0, 0.012, 3)
        kind = k % 3
        if kind == 0:
            shape = Box(*rng.uniform(0.02, 0.06, 3))
        elif kind == 1:
            shape = Cylinder(rng.uniform(0.008, 0.025), rng.uniform(0.03, 0.08))
        else:
            ro = rng.uniform(0.012, 0.03)
            shape = Tube(ro, ro * 0.8, rng.uniform(0.03, 0.08))
        r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", tuple(rng.uniform(-np.pi, np.pi, 3)))
        comps.append(Component(path=f"grid/p{k:03d}", shape=shape, pose=Pose(r, at), source=MassSource.DENSITY,
                               maturity=Maturity.ESTIMATED, colour="#808080", density=2700.0))
    return Model(name="generated 500", components=tuple(comps))


def main() -> int:
    import cadquery  # noqa: F401  (import time is not part of the check)

    demo = load_model(ROOT / "parts_demo/brindlecombe_bl3.toml")
    t = time.perf_counter()
    report = check_packaging(demo)
    demo_s = time.perf_counter() - t
    print(f"demo car: {report.solids} solids, {report.total_pairs} pairs, {report.candidate_pairs} candidates, "
          f"{'pass' if report.passed else 'FAIL'}")
    print(f"  check {demo_s:.2f} s (stages: " + ", ".join(f"{k} {v:.2f} s" for k, v in report.seconds.items())
          + ")")

    model = generated_assembly(N_PARTS)
    t = time.perf_counter()
    big = check_packaging(model, near=[])
    pre_s = time.perf_counter() - t
    solids_s = big.seconds["solids"]
    print(f"\n{N_PARTS}-part assembly: {big.total_pairs} pairs, {big.candidate_pairs} candidates from bounding boxes, "
          f"{len(big.interferences)} interfering pairs")
    print(f"  prefilter + exact booleans: {pre_s:.2f} s ({solids_s:.2f} s building solids), "
          f"{big.total_pairs / pre_s:,.0f} pairs/s")

    # baseline: exact booleans on every pair, timed on a random sample (same solids as the check builds)
    rng = np.random.default_rng(11)
    _, solids, _ = placed_solids(model)  # the same solids the check intersects
    pairs = set()
    while len(pairs) < SAMPLE_PAIRS:
        i, j = sorted(rng.choice(N_PARTS, 2, replace=False))
        pairs.add((int(i), int(j)))
    t = time.perf_counter()
    for i, j in pairs:
        overlap_volume(solids[i], solids[j])
    per_pair = (time.perf_counter() - t) / len(pairs)
    base_s = solids_s + per_pair * big.total_pairs
    ratio = base_s / pre_s
    print(f"  all pairs, exact booleans, no prefilter: {per_pair * 1e3:.2f} ms a pair on {len(pairs)} sampled pairs, "
          f"extrapolated to {big.total_pairs} pairs: {base_s:.0f} s ({big.total_pairs / base_s:,.0f} pairs/s)")
    out = Targets()
    print()
    out.header("bench_packaging")
    out.at_most("packaging check of the demo car (wall)", demo_s, DEMO_TARGET_S, " s")
    out.at_least(f"all-pairs exact booleans / prefilter, {N_PARTS} parts", ratio, RATIO_TARGET)
    return out.exit_code()


if __name__ == "__main__":
    sys.exit(main())
