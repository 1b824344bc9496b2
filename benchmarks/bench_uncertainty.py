"""Monte Carlo of a large model: samples × parts per second, against numpy references measured in the same run.

A synthetic car of N parts (boxes with random masses, positions and per-part uncertainties of mass, CG and inertia;
a tenth of them of one banded tungsten alloy, sharing its density error) is sampled S times by
:func:`massmodel.uncertainty.monte_carlo`. Printed:

* wall time, and samples·parts per second;
* the ratio to ONE numpy matrix product of the same size: a (S × N) float64 block times an (N × 8) matrix, done in
  the same chunks as the Monte Carlo (so it never holds S × N at once), the block made beforehand and not timed;
* the ratio to drawing the Monte Carlo's random numbers alone (5 standard normals per sample and part: mass, three
  CG coordinates, own inertia), the floor of any sampler that draws every part's errors;
* the peak extra memory of the run (tracemalloc), which the chunking keeps bounded whatever S.

Target (issue): S = 10⁵, N = 10⁴ in under 10 s on one core. BLAS runs on one thread. Times are wall times of this
process on a shared machine, measured in this run.

Run: ``.venv/bin/python benchmarks/bench_uncertainty.py [--samples S] [--parts N]``
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from massmodel.core.frames import Pose  # noqa: E402
from massmodel.core.materials import builtin_materials  # noqa: E402
from massmodel.core.model import Component, MassSource, Maturity, Model, Vehicle  # noqa: E402
from massmodel.core.shapes import Box  # noqa: E402
from massmodel.core.uncertainty import PartUncertainty  # noqa: E402
from massmodel.uncertainty import monte_carlo, uncertainty_inputs  # noqa: E402
from massmodel.uncertainty.montecarlo import DEFAULT_CHUNK_ELEMENTS  # noqa: E402

SEED = 20261204


def synthetic_model(n: int, rng: np.random.Generator) -> Model:
    """N boxes spread over a car-sized volume; every tenth of tungsten alloy (density × volume), the rest by mass."""
    parts = []
    for i in range(n):
        size = tuple(rng.uniform(0.02, 0.06, 3) if i % 10 == 0 else rng.uniform(0.02, 0.3, 3))
        at = np.array([rng.uniform(-3.0, 0.5), rng.uniform(-0.7, 0.7), rng.uniform(-0.2, 0.6)])
        u = PartUncertainty(0.0, tuple(rng.uniform(0.001, 0.02, 3)), float(rng.uniform(0.0, 0.3)), 0.05, "bench")
        if i % 10 == 0:
            c = Component(f"ballast/b{i}", Box(*size), Pose(np.eye(3), at), MassSource.MATERIAL, Maturity.CALCULATED,
                          "#777777", material="tungsten_b777_class1", density=17075.0, uncertainty=u)
        else:
            m = float(rng.uniform(0.05, 5.0))
            u = PartUncertainty(m * float(rng.uniform(0.005, 0.1)), u.cg, u.inertia, u.growth, u.origin)
            c = Component(f"part/p{i}", Box(*size), Pose(np.eye(3), at), MassSource.MASS, Maturity.ESTIMATED,
                          "#777777", mass=m, uncertainty=u)
        parts.append(c)
    vehicle = Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), 2.8, 1.5, 1.45, 0.0, -0.3)
    return Model("bench", tuple(parts), vehicle=vehicle, materials=dict(builtin_materials()))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=100_000)
    ap.add_argument("--parts", type=int, default=10_000)
    args = ap.parse_args()
    s, n = args.samples, args.parts
    rng = np.random.default_rng(SEED)
    t = time.perf_counter()
    model = synthetic_model(n, rng)
    inp = uncertainty_inputs(model)
    print(f"model of {n} parts built in {time.perf_counter() - t:.1f} s; {len(inp.density_keys)} density group(s)")

    step = max(1, DEFAULT_CHUNK_ELEMENTS // n)
    block = rng.standard_normal((step, n))
    coef = rng.standard_normal((n, 8))
    t = time.perf_counter()
    for start in range(0, s, step):
        rows = min(step, s - start)
        block[:rows] @ coef
    t_matmul = time.perf_counter() - t

    gen = np.random.default_rng(1)
    t = time.perf_counter()
    for start in range(0, s, step):
        rows = min(step, s - start)
        for _ in range(5):
            gen.standard_normal((rows, n), dtype=np.float32)
    t_draw = time.perf_counter() - t

    tracemalloc.start()
    t = time.perf_counter()
    mc = monte_carlo(model, s, seed=SEED, inputs=inp)
    t_mc = time.perf_counter() - t
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    rate = s * n / t_mc
    print(f"Monte Carlo {s} samples x {n} parts: {t_mc:.1f} s, {rate:.3g} samples*parts/s "
          f"(target < 10 s: {'met' if t_mc < 10 else 'NOT met'})")
    print(f"  one numpy matrix product (S x N) @ (N x 8), same chunks: {t_matmul:.2f} s -> Monte Carlo / matmul = "
          f"{t_mc / t_matmul:.1f}")
    print(f"  drawing 5 float32 normals per sample and part alone:      {t_draw:.2f} s -> Monte Carlo / draws  = "
          f"{t_mc / t_draw:.2f}")
    print(f"  peak extra memory {peak / 2**20:.0f} MiB (chunks of {step} samples)")
    print(f"  total mass {mc.mean('mass'):.2f} kg, MC std {mc.std('mass'):.3f} kg")


if __name__ == "__main__":
    main()
