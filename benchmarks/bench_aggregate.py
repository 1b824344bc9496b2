"""Aggregate N random primitives in random poses: massmodel.core.batch against OpenCascade and against a bare numpy pass.

For N = 10², 10⁴, 10⁶ random primitives (all eleven batch kinds, random sizes and densities, random rotations with
about a third of them mirrored, random positions) this prints:

* time per component of ``massmodel.core.batch.aggregate_batches`` (validation on, the default);
* the ratio to an OpenCascade loop over the same assembly (N ≤ 10⁴): ``BRepGProp.VolumeProperties_s`` per placed
  solid, accumulated with ``GProp_GProps.Add(props, density)``; the solids are built beforehand and that time is
  not counted, so the reference is the kernel's integration alone. The agreement of mass, CG and tensor is printed
  (relative to each quantity's largest entry);
* the ratio to a bare numpy pass over the same input arrays (each array summed once: the memory-bound floor);
* memory: input bytes per component and the peak of extra memory during the aggregation (tracemalloc), per component.

Targets (issue 2): ≥ 500× faster than the OpenCascade loop per component at N = 10⁴ agreeing to 1e-9 relative;
within 3× of the numpy floor at N = 10⁶; memory linear in N. Times are CPU times of this process (the machine is
shared), best of k, measured in this run; BLAS runs on one thread. "unchecked" is the engine with validate=False.

Run: ``.venv/bin/python benchmarks/bench_aggregate.py [--quick]`` (``--quick`` stops at N = 10⁴).
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one thread, like the numpy floor and the OpenCascade loop

import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from massmodel.core import batch  # noqa: E402
from massmodel.core.massprops import MassProperties  # noqa: E402

SEED = 20261201


def random_rotations(rng: np.random.Generator, n: int) -> np.ndarray:
    """Uniform random rotations (unit quaternions); about a third turned into reflections (mirrored copies)."""
    q = rng.normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1)[:, None]
    w, x, y, z = q.T
    r = np.empty((n, 3, 3))
    r[:, 0, 0] = 1 - 2 * (y * y + z * z)
    r[:, 0, 1] = 2 * (x * y - z * w)
    r[:, 0, 2] = 2 * (x * z + y * w)
    r[:, 1, 0] = 2 * (x * y + z * w)
    r[:, 1, 1] = 1 - 2 * (x * x + z * z)
    r[:, 1, 2] = 2 * (y * z - x * w)
    r[:, 2, 0] = 2 * (x * z - y * w)
    r[:, 2, 1] = 2 * (y * z + x * w)
    r[:, 2, 2] = 1 - 2 * (x * x + y * y)
    mirrored = rng.random(n) < 1 / 3
    r[mirrored, 1, :] *= -1.0  # reflection across the model's y = 0 plane after the rotation
    return r


def random_assembly(n: int, seed: int = SEED) -> list[batch.Batch]:
    """N random primitives spread over the batch kinds, one Batch per kind."""
    rng = np.random.default_rng(seed)
    kinds = list(batch.BATCH_KINDS)
    which = rng.integers(0, len(kinds), n)
    out = []
    for k, kind in enumerate(kinds):
        m = int(np.sum(which == k))
        if m == 0:
            continue
        fields = batch.BATCH_KINDS[kind]
        dims = rng.uniform(0.005, 0.3, (m, len(fields)))
        if kind in ("tube", "spherical_shell", "torus"):  # inner/tube size below the outer/ring size
            dims[:, 1] = dims[:, 0] * rng.uniform(0.1, 0.9, m)
        out.append(batch.Batch(kind, dims, rng.uniform(500.0, 19300.0, m), random_rotations(rng, m),
                               rng.uniform(-2.0, 2.0, (m, 3))))
    return out


def engine(parts: list[batch.Batch]) -> MassProperties:
    return batch.aggregate_batches(parts)


def engine_unchecked(parts: list[batch.Batch]) -> MassProperties:
    """The engine without its input checks (densities, finiteness, orthogonality of every rotation)."""
    return batch.aggregate_batches(parts, validate=False)


def floor(parts: list[batch.Batch]) -> float:
    """A bare numpy pass: every input array summed once (reads each byte once, computes nothing useful)."""
    total = 0.0
    for b in parts:
        total += float(b.dims.sum() + b.densities.sum() + b.rotations.sum() + b.translations.sum())
    return total


def best_time(fn, arg, repeats: int) -> float:
    """Best CPU time of this process over ``repeats`` calls (CPU time, not wall: the machine is shared)."""
    best = float("inf")
    for _ in range(repeats):
        t0 = time.process_time()
        fn(arg)
        best = min(best, time.process_time() - t0)
    return best


def occ_solids(parts: list[batch.Batch]) -> list[tuple[object, float, bool]]:
    """Placed OpenCascade solids (mm) of every primitive, with densities (built once, not timed)."""
    from massmodel.cad.primitives import to_solid
    from massmodel.cad.solids import place_solid
    from massmodel.core.frames import Pose
    from massmodel.core.shapes import SHAPE_KINDS

    solids = []
    for b in parts:
        cls = SHAPE_KINDS[b.kind]
        for dims, rho, r, t in zip(b.dims, b.densities, b.rotations, b.translations, strict=True):
            solid = place_solid(to_solid(cls(*(float(v) for v in dims))), Pose(r, t))
            solids.append((solid.wrapped, float(rho), b.kind == "ellipsoid"))
    return solids


def occ_loop(solids: list[tuple[object, float, bool]]) -> tuple[float, np.ndarray, np.ndarray]:
    """OpenCascade: VolumeProperties per solid, accumulated with GProp_GProps.Add(props, density); SI result."""
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps

    total = GProp_GProps()
    for shape, rho, nurbs in solids:
        props = GProp_GProps()
        if nurbs:  # the ellipsoid is a NURBS solid: the adaptive integrator is needed for ~1e-10 accuracy
            BRepGProp.VolumeProperties_s(shape, props, 1e-14)
        else:
            BRepGProp.VolumeProperties_s(shape, props)
        total.Add(props, rho)
    g = total.CentreOfMass()
    m = total.MatrixOfInertia()
    tensor = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15
    return total.Mass() * 1e-9, np.array([g.X(), g.Y(), g.Z()]) * 1e-3, tensor


def agreement(mp: MassProperties, ref: tuple[float, np.ndarray, np.ndarray]) -> float:
    mass, center, tensor = ref
    return max(abs(mp.mass - mass) / mass,
               float(np.max(np.abs(mp.center - center))) / max(1.0, float(np.max(np.abs(center)))),
               float(np.max(np.abs(mp.inertia - tensor))) / float(np.max(np.abs(tensor))))


def peak_extra_bytes(parts: list[batch.Batch]) -> int:
    tracemalloc.start()
    tracemalloc.reset_peak()
    base = tracemalloc.get_traced_memory()[0]
    engine(parts)
    peak = tracemalloc.get_traced_memory()[1] - base
    tracemalloc.stop()
    return peak


def main(argv: list[str]) -> int:
    sizes = [10**2, 10**4] if "--quick" in argv else [10**2, 10**4, 10**6]
    print("massmodel.core.batch: aggregate N random primitives (11 kinds, random poses, 1/3 mirrored); "
          "CPU time, best of k")
    print(f"{'N':>9}  {'engine s':>9}  {'per part':>9}  {'unchecked':>9}  {'floor s':>8}  {'/floor':>7}  "
          f"{'unch./floor':>11}  {'OCP s':>7}  {'OCP/engine':>10}  {'agree':>7}  {'input B/part':>12}  "
          f"{'extra B/part':>12}")
    for n in sizes:
        parts = random_assembly(n)
        repeats = 3 if n >= 10**6 else 7
        engine(parts)  # warm-up
        t_engine = t_unchecked = t_floor = float("inf")
        for _ in range(repeats):  # interleaved, best of each: the machine is shared and noisy
            t_engine = min(t_engine, best_time(engine, parts, 1))
            t_unchecked = min(t_unchecked, best_time(engine_unchecked, parts, 1))
            t_floor = min(t_floor, best_time(floor, parts, 1))
        inputs = sum(b.dims.nbytes + b.densities.nbytes + b.rotations.nbytes + b.translations.nbytes for b in parts)
        extra = peak_extra_bytes(parts)
        occ_text = ratio_text = agree_text = "-"
        if n <= 10**4:
            solids = occ_solids(parts)
            t0 = time.process_time()
            ref = occ_loop(solids)
            t_occ = time.process_time() - t0
            agree = agreement(engine(parts), ref)
            occ_text, ratio_text, agree_text = f"{t_occ:.3f}", f"{t_occ / t_engine:.0f}x", f"{agree:.1e}"
        print(f"{n:>9}  {t_engine:>9.5f}  {t_engine / n * 1e9:>7.0f}ns  {t_unchecked / n * 1e9:>7.0f}ns  "
              f"{t_floor:>8.5f}  {t_engine / t_floor:>6.1f}x  {t_unchecked / t_floor:>10.1f}x  {occ_text:>7}  "
              f"{ratio_text:>10}  {agree_text:>7}  {inputs / n:>12.0f}  {extra / n:>12.1f}")
    print("targets: OCP/engine >= 500x at N = 1e4 with agreement <= 1e-9; engine/floor <= 3x at N = 1e6; "
          "memory per part flat in N")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
