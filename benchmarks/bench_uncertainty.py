"""Monte Carlo of a large model on one core: time, samples·parts per second, against numpy references of the same run.

A synthetic car of N parts (boxes with random masses, positions and per-part uncertainties of mass, CG and inertia;
a tenth of them of one banded tungsten alloy, sharing its density error and without a mass uncertainty of their own)
is sampled S times by :func:`massmodel.uncertainty.monte_carlo` with the compiled sampler
(:mod:`massmodel.uncertainty.sampler`). Rows (``benchmarks/targets.py``; exit code 1 when a target is missed):

* the CPU time of the run against the 10 s target (S = 10⁵, N = 10⁴; the issue's target, on one core), its wall
  time, and samples·parts per second;
* the ratio to ONE numpy matrix product of the same size: a (S × N) float64 block times an (N × 8) matrix, done in
  the same chunks as the numpy sampler (so it never holds S × N at once), the block made beforehand and not timed;
* the ratio to numpy drawing the normals alone (5 float32 standard normals per sample and part — mass, three CG
  coordinates, own inertia — in the same chunks), the floor of a numpy sampler; target: at most 0.2 (a fifth);
* the ratio to the numpy sampler (``kernel="numpy"``);
* the peak extra memory of the run (tracemalloc: numpy arrays; the sampler's own buffers are a few kB per call).

The numpy drawing and the numpy sampler are timed on ``--numpy-fraction`` of the samples (default a tenth: at full
size they take about a minute each here) in the same chunks, and scaled to S; the matrix product runs in full.
The compiled sampler's one-time load (numba's import and its machine code, cached on disk with ``cache=True``;
compiled on the first run on a machine) is printed apart and not counted. Threads: NUMBA_NUM_THREADS,
OPENBLAS_NUM_THREADS and OMP_NUM_THREADS are set to 1 before numpy and numba load. Times are CPU times of this
process (``time.process_time``): the machine is shared.

Run: ``.venv/bin/python benchmarks/bench_uncertainty.py [--samples S] [--parts N] [--numpy-fraction F]``
"""

from __future__ import annotations

import os

for _var in ("NUMBA_NUM_THREADS", "OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import importlib.util  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from targets import Targets  # noqa: E402

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


def cpu_and_wall(fn):  # type: ignore[no-untyped-def]
    """(result, CPU seconds, wall seconds) of one call."""
    c, w = time.process_time(), time.perf_counter()
    result = fn()
    return result, time.process_time() - c, time.perf_counter() - w


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=100_000)
    ap.add_argument("--parts", type=int, default=10_000)
    ap.add_argument("--numpy-fraction", type=float, default=0.1)
    args = ap.parse_args()
    s, n = args.samples, args.parts
    s_np = max(16, round(s * args.numpy_fraction))
    rng = np.random.default_rng(SEED)
    out = Targets()
    t = time.perf_counter()
    model = synthetic_model(n, rng)
    inp = uncertainty_inputs(model)
    out.header(f"massmodel.uncertainty.monte_carlo: {s} samples x {n} parts, {len(inp.density_keys)} density "
               f"group(s), compiled sampler, one thread (model built in {time.perf_counter() - t:.1f} s)")
    if importlib.util.find_spec("numba") is None:
        print("numba is not importable: only the numpy sampler exists here; nothing to measure")
        return 1

    _, _, t_load = cpu_and_wall(lambda: monte_carlo(model, 2, seed=1, inputs=inp, kernel="numba"))
    out.info("one-time load of the compiled sampler (wall, not counted)", t_load, " s")
    print(f"(numpy references: the matrix product in full, the draws and the numpy sampler on {s_np} samples, "
          "scaled to S)")

    step = max(1, DEFAULT_CHUNK_ELEMENTS // n)
    block = rng.standard_normal((step, n))
    coef = rng.standard_normal((n, 8))

    def matmul() -> None:
        for start in range(0, s, step):
            block[:min(step, s - start)] @ coef

    def draws() -> None:
        gen = np.random.default_rng(1)
        for start in range(0, s_np, step):
            for _ in range(5):
                gen.standard_normal((min(step, s_np - start), n), dtype=np.float32)

    _, t_matmul, _ = cpu_and_wall(matmul)
    _, t_draw, _ = cpu_and_wall(draws)
    t_draw *= s / s_np
    _, t_numpy, _ = cpu_and_wall(lambda: monte_carlo(model, s_np, seed=SEED, inputs=inp, kernel="numpy"))
    t_numpy *= s / s_np

    tracemalloc.start()
    mc, t_mc, w_mc = cpu_and_wall(lambda: monte_carlo(model, s, seed=SEED, inputs=inp, kernel="numba"))
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    out.at_most(f"Monte Carlo {s:.0e} x {n:.0e}, CPU time (one core)", t_mc, 10, " s")
    out.info("  the same, wall time", w_mc, " s")
    out.info("  samples*parts per CPU second", s * n / t_mc, "/s")
    out.info("  CPU time per sample and part", t_mc / (s * n) * 1e9, " ns")
    out.info("Monte Carlo / numpy matmul (S x N)@(N x 8), same chunks", t_mc / t_matmul, "x")
    out.at_most("Monte Carlo / numpy drawing 5 normals per sample, part", t_mc / t_draw, 0.2)
    out.info("numpy sampler (kernel='numpy') / Monte Carlo", t_numpy / t_mc, "x")
    out.info(f"peak extra memory (tracemalloc; output {s} x 10 float64)", peak / 2**20, " MiB")
    out.info("total mass: mean, kg", mc.mean("mass"), "")
    out.info("total mass: standard deviation, kg", mc.std("mass"), "")
    return out.exit_code()


if __name__ == "__main__":
    sys.exit(main())
