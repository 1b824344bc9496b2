"""Monte Carlo propagation of the part uncertainties: every part's errors drawn in every sample, in bounded memory.

Each sample draws every part's errors (normal, with the standard uncertainties of
:class:`~massmodel.uncertainty.inputs.UncertaintyInputs`) and one density error per density group (uniform over the
material's band, shared by every part of that material), rebuilds the totals exactly (no linearisation) and derives
the vehicle quantities with the same statics as the RSS (:func:`~massmodel.uncertainty.rss.vehicle_values`).

Two samplers give the same distributions from different random streams (:func:`kernel_for` chooses):

* ``"numba"``: the compiled sampler of :mod:`massmodel.uncertainty.sampler` draws each part's errors and adds them
  to the sums in one pass (counter-based SplitMix64 words, Box–Muller normals); nothing of size samples × parts is
  stored; each sample's numbers depend on the seed and its index only.
* ``"numpy"``: numpy's generator (one per block of :data:`SAMPLE_BLOCK` samples, children of the seed's
  ``SeedSequence``); the sums over parts are matrix products of a (samples × parts) block of errors with
  (parts × k) coefficients, the block holding at most ``chunk_elements`` entries (or one block of samples).

Either way the result does not depend on the chunking, only on the seed and the kernel.

It shows what the first-order RSS leaves out: the ratios (CG, front share) are non-linear in the part masses, the
inertia about the CG gains a positive bias Σ mᵢ u_cᵢ² from the CG scatter, and a density band whose nominal is not
its middle moves the mean.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType, ModuleType

import numpy as np
import numpy.typing as npt

from massmodel.core.compiled import import_compiled
from massmodel.core.errors import UsageError
from massmodel.core.model import Model

from .inputs import UncertaintyInputs, uncertainty_inputs
from .rss import vehicle_values

__all__ = ["MonteCarloResult", "monte_carlo", "kernel_for", "DEFAULT_CHUNK_ELEMENTS", "KERNELS"]

FloatArray = npt.NDArray[np.float64]

#: Largest samples × parts block the numpy kernel holds at once (float32: 8 MiB per array, a handful live at a time).
DEFAULT_CHUNK_ELEMENTS = 1 << 21
#: Samples drawn from one numpy generator (the numpy kernel's chunks hold whole blocks).
SAMPLE_BLOCK = 16
#: Samplers: "numpy" (always available), "numba" (compiled, :mod:`massmodel.uncertainty.sampler`), "auto".
KERNELS = ("auto", "numpy", "numba")
#: "auto" loads the compiled sampler for at least this many samples × parts: importing numba and loading the cached
#: machine code costs about 0.5–1 s once per process (compiling it, the first time on a machine, about 7 s); numpy
#: takes 50–75 ns per sample and part, the compiled sampler under 4 ns (benchmarks/bench_uncertainty.py).
#: The choice depends on the size alone, never on what the process has loaded before: the two samplers draw
#: different (equally valid) numbers from one seed, and a seed must give the same numbers in every run of a command.
NUMBA_LOAD_ELEMENTS = 20_000_000


@dataclass(frozen=True, slots=True, eq=False)
class MonteCarloResult:
    """Sampled values of every quantity (SI), one entry per sample.

    Attributes
    ----------
    samples : int
    seed : int or None
        Seed of the run (``numpy.random.SeedSequence``; None: fresh entropy).
    values : mapping of str to (samples,) float
        Keys of :data:`massmodel.uncertainty.rss.QUANTITIES` (vehicle ones only with a vehicle).
    subsets : mapping of str to (samples,) float
        Masses of the part subsets asked for (e.g. by rules), kg.
    kernel : str
        The sampler that drew them: "numba" or "numpy" (see :func:`kernel_for`).
    """

    samples: int
    seed: int | None
    values: Mapping[str, FloatArray]
    subsets: Mapping[str, FloatArray]
    kernel: str = "numpy"

    def mean(self, name: str) -> float:
        return float(self.values[name].mean())

    def std(self, name: str) -> float:
        """Sample standard deviation (n − 1)."""
        return float(self.values[name].std(ddof=1))

    def standard_error(self, name: str) -> float:
        """Standard error of the sample mean, s/√n."""
        return self.std(name) / float(np.sqrt(self.samples))

    def quantile(self, name: str, q: float) -> float:
        return float(np.quantile(self.values[name], q))


def monte_carlo(
    model: Model,
    samples: int = 20000,
    seed: int | None = 0,
    *,
    inputs: UncertaintyInputs | None = None,
    subsets: Mapping[str, npt.NDArray[np.bool_]] | None = None,
    chunk_elements: int = DEFAULT_CHUNK_ELEMENTS,
    kernel: str = "auto",
) -> MonteCarloResult:
    """Sample the model's totals.

    Parameters
    ----------
    model : Model
    samples : int
        Number of samples (≥ 2).
    seed : int or None
        Seed of the run (``numpy.random.SeedSequence``); the same seed and kernel give the same samples, however
        they are chunked (bit for bit on one machine; the compiled sampler's single-precision sums may differ in the
        last bits on another processor). None: fresh entropy.
    inputs : UncertaintyInputs, optional
        Default: :func:`~massmodel.uncertainty.inputs.uncertainty_inputs` of the model.
    subsets : mapping of str to (N,) bool, optional
        Part subsets whose mass to sample too (rules on a group's mass).
    chunk_elements : int
        Largest samples × parts block held at once (numpy kernel; the compiled one holds no such block and is called
        in chunks of as many samples).
    kernel : {"auto", "numpy", "numba"}
        "numba": the compiled sampler of :mod:`massmodel.uncertainty.sampler`; "numpy": numpy's generator and
        matrix products; "auto" (default): :func:`kernel_for`. Both draw the same distributions from different
        random streams.

    Returns
    -------
    MonteCarloResult
    """
    if samples < 2:
        raise UsageError(f"Monte Carlo needs at least 2 samples, got {samples}")
    inp = inputs or uncertainty_inputs(model)
    n = len(inp.mass)
    chosen = kernel_for(samples * n, kernel)
    masks = np.array([np.asarray(v, dtype=float) for v in (subsets or {}).values()]).reshape(-1, n)  # (R, N)
    m = inp.mass
    total0 = float(m.sum())
    cg0 = (m @ inp.center) / total0
    r = np.ascontiguousarray((inp.center - cg0).T)  # (3, N), about the nominal CG
    ss = np.random.SeedSequence(seed)
    step = max(1, chunk_elements // max(n, 1))
    if chosen == "numba":
        sums = _compiled_sums(inp, r, masks, samples, ss, step)
    else:
        sums = _numpy_sums(inp, r, masks, samples, ss, step)
    mass = total0 + sums[:, 0]
    first = sums[:, 1:4]  # Σ m'(r + δc)
    second = (m * r**2).sum(axis=1) + sums[:, 4:7]  # Σ m'(r + δc)²
    own = inp.inertia_diag.sum(axis=0) + sums[:, 7:10]
    sub = m @ masks.T + sums[:, 10:]
    shift = first / mass[:, None]  # CG − nominal CG
    center = cg0 + shift
    values: dict[str, FloatArray] = {"mass": mass}
    for a, axis in enumerate("xyz"):
        values[f"cg_{axis}"] = center[:, a]
    for a, axis in enumerate("xyz"):
        b, c = [k for k in range(3) if k != a]
        # parallel-axis theorem about the sample's own CG: Σ m'(r'_b² + r'_c²) − M'(s_b² + s_c²)
        values[f"i{axis}{axis}"] = own[:, a] + second[:, b] + second[:, c] - mass * (shift[:, b] ** 2 + shift[:, c] ** 2)
    if model.vehicle is not None:
        values.update(vehicle_values(mass, center, model.vehicle))
    for arr in values.values():
        arr.setflags(write=False)
    subs = {}
    for k, name in enumerate(subsets or {}):
        subs[name] = np.ascontiguousarray(sub[:, k])
        subs[name].setflags(write=False)
    return MonteCarloResult(samples, seed, MappingProxyType(values), MappingProxyType(subs), chosen)


def kernel_for(elements: int, kernel: str = "auto") -> str:
    """The sampler used for ``elements`` = samples × parts: ``kernel`` itself, or for "auto" "numba" when numba is
    importable and ``elements`` ≥ :data:`NUMBA_LOAD_ELEMENTS` (enough to repay loading it), else "numpy".

    The rule looks at the size only (unlike the roll-up kernel's, whose two paths agree to 1e-12): the samplers
    draw different numbers from one seed, so a choice by process history would make a seed's result depend on what
    ran before it in the same process (``how-sure --all-cases`` beside ``--case``)."""
    if kernel not in KERNELS:
        raise UsageError(f"Monte Carlo kernel must be one of {', '.join(KERNELS)}, got {kernel!r}")
    if kernel == "auto":
        return "numba" if elements >= NUMBA_LOAD_ELEMENTS and _sampler() is not None else "numpy"
    if kernel == "numba" and _sampler() is None:
        raise UsageError("Monte Carlo kernel 'numba' asked for, but numba is not importable here; use 'numpy'")
    return kernel


@functools.cache
def _sampler() -> ModuleType | None:
    """:mod:`massmodel.uncertainty.sampler`, imported on first use; None when numba is not installed or does not
    import (:func:`massmodel.core.compiled.import_compiled`: an import error inside massmodel itself is raised)."""
    return import_compiled("massmodel.uncertainty.sampler")


def _compiled_sums(inp: UncertaintyInputs, r: FloatArray, masks: FloatArray, samples: int,
                   ss: np.random.SeedSequence, step: int) -> FloatArray:
    """(samples, 10 + R) sums of :func:`massmodel.uncertainty.sampler.sample_sums`: sample s draws from its own
    counter range of the run's key, so the chunking (``step`` samples a call) does not change the result."""
    kern = _sampler()
    assert kern is not None
    order, seg_start, seg_stop, seg_slot, seg_group = _segments(inp)
    if 5 * len(order) + len(inp.density_keys) >= 1 << 32:  # the words of one sample must fit its 2³² counters
        raise UsageError(f"the compiled Monte Carlo samples at most {(1 << 32) // 5} parts; use kernel='numpy'")
    f32 = np.float32

    def part_rows(a: npt.NDArray[np.float64]) -> npt.NDArray[np.float32]:
        return np.ascontiguousarray(a[..., order], dtype=f32)

    args = (seg_start, seg_stop, seg_slot, seg_group, np.ascontiguousarray(inp.density_low),
            np.ascontiguousarray(inp.density_high - inp.density_low), part_rows(inp.mass), part_rows(inp.u_mass),
            part_rows(r), part_rows(inp.u_cg.T), part_rows(inp.u_inertia), part_rows(inp.inertia_diag.T),
            part_rows(masks))
    key = ss.generate_state(1, np.uint64)[0]  # the run's key (not the numpy path's streams: those are children)
    out = np.empty((samples, 10 + len(masks)))
    for start in range(0, samples, step):
        kern.sample_sums(key, start, out[start:start + step], *args)
    return out


def _segments(inp: UncertaintyInputs) -> tuple[npt.NDArray[np.int64], ...]:
    """Parts in the compiled sampler's order: grouped by density group, then by which errors they draw (those whose
    standard uncertainty is not zero); parts that draw nothing and share no density error are left out (their
    contribution is exactly zero). Returns the order and, per segment, its part range, the slot of each kind of
    error among its draws (-1: not drawn) and its density group (K for none)."""
    n_groups = len(inp.density_keys)
    drawn = np.column_stack([inp.u_mass > 0, inp.u_cg > 0, inp.u_inertia > 0])  # (N, 5), sampler.KINDS order
    pattern = drawn.astype(np.int64) @ (1 << np.arange(5))
    group = np.where(inp.density_group >= 0, inp.density_group, n_groups)
    order = np.lexsort((pattern, group))
    order = order[(pattern[order] > 0) | (group[order] < n_groups)]
    g, p = group[order], pattern[order]
    cut = np.flatnonzero((np.diff(g) != 0) | (np.diff(p) != 0)) + 1
    seg_start = np.concatenate([[0], cut]).astype(np.int64) if len(order) else np.zeros(0, np.int64)
    seg_stop = np.concatenate([cut, [len(order)]]).astype(np.int64) if len(order) else np.zeros(0, np.int64)
    seg_drawn = drawn[order[seg_start]]
    seg_slot = np.where(seg_drawn, np.cumsum(seg_drawn, axis=1) - 1, -1).astype(np.int64).reshape(-1, 5)
    return order, seg_start, seg_stop, np.ascontiguousarray(seg_slot), np.ascontiguousarray(g[seg_start])


def _numpy_sums(inp: UncertaintyInputs, r: FloatArray, masks: FloatArray, samples: int,
                ss: np.random.SeedSequence, step: int) -> FloatArray:
    """(samples, 10 + R) sums (as :func:`massmodel.uncertainty.sampler.sample_sums`) by numpy: each block of
    :data:`SAMPLE_BLOCK` samples draws from its own generator (child ``b`` of the seed sequence), the sums over parts
    are matrix products of (samples × parts) blocks of errors, in chunks of whole blocks."""
    n = len(inp.mass)
    in_group = np.flatnonzero(inp.density_group >= 0)
    group_of = inp.density_group[in_group]
    width = inp.density_high - inp.density_low
    draw_mass, draw_inertia = bool(inp.u_mass.any()), bool(inp.u_inertia.any())
    draw_cg = [bool(inp.u_cg[:, a].any()) for a in range(3)]
    # single precision for the (samples × parts) blocks: they hold only the errors and the parts' moments about the
    # nominal CG, whose sums are small against the totals they correct (those stay in double precision)
    f32 = np.float32
    m32, r32, two_r32 = inp.mass.astype(f32), r.astype(f32), (2.0 * r).astype(f32)
    u_mass32, u_inertia32, u_cg32 = inp.u_mass.astype(f32), inp.u_inertia.astype(f32), inp.u_cg.T.astype(f32)
    r2_32, diag32, masks32 = (r**2).astype(f32), inp.inertia_diag.astype(f32), masks.T.astype(f32)
    out = np.empty((samples, 10 + len(masks)))
    step = max(SAMPLE_BLOCK, step // SAMPLE_BLOCK * SAMPLE_BLOCK)
    for start in range(0, samples, step):  # start: a multiple of SAMPLE_BLOCK
        ns = min(step, samples - start)
        blocks = [(lo, min(lo + SAMPLE_BLOCK, ns)) for lo in range(0, ns, SAMPLE_BLOCK)]
        rngs = [np.random.default_rng(_child(ss, (start + lo) // SAMPLE_BLOCK)) for lo, _ in blocks]
        rows = slice(start, start + ns)
        dm = _block_normals(rngs, blocks, ns, u_mass32) if draw_mass else np.zeros((ns, n), dtype=f32)
        ei = _block_normals(rngs, blocks, ns, u_inertia32) if draw_inertia else np.zeros((ns, n), dtype=f32)
        if len(in_group):
            eps = np.concatenate([g.random((hi - lo, len(width))) for g, (lo, hi) in zip(rngs, blocks, strict=True)])
            shared = (inp.density_low + width * eps)[:, group_of].astype(f32)  # one error per material and sample
            dm[:, in_group] += shared * m32[in_group]
            ei[:, in_group] += shared
        out[rows, 0] = dm.sum(axis=1, dtype=np.float64)
        # the terms linear in δm as matrix products: (ns, N) @ (N, k)
        out[rows, 1:4] = dm @ r32.T  # Σ δm r
        out[rows, 4:7] = dm @ r2_32.T  # Σ δm r²
        out[rows, 7:10] = ei @ diag32  # Σ I e
        out[rows, 10:] = dm @ masks32
        mp = dm
        mp += m32  # m' = m + δm (in place: δm is not needed again)
        for a in range(3):
            if not draw_cg[a]:
                continue
            dc = _block_normals(rngs, blocks, ns, u_cg32[a])
            out[rows, 1 + a] += np.einsum("ij,ij->i", mp, dc)  # Σ m' δc
            t = dc + two_r32[a]
            t *= dc
            out[rows, 4 + a] += np.einsum("ij,ij->i", mp, t)  # Σ m' (2 r δc + δc²)
    return out


def _child(ss: np.random.SeedSequence, index: int) -> np.random.SeedSequence:
    """Child ``index`` of a seed sequence (what its ``spawn`` would give as the index-th child, without its state)."""
    return np.random.SeedSequence(ss.entropy, spawn_key=(*ss.spawn_key, index))


def _block_normals(rngs: list[np.random.Generator], blocks: list[tuple[int, int]], rows: int,
                   scale: npt.NDArray[np.float32]) -> npt.NDArray[np.float32]:
    """(rows, N) normal errors with standard deviations ``scale`` (N,), the rows ``lo:hi`` of each block from its own
    generator, drawn in single precision (about twice as fast to make as double; they only carry small errors)."""
    z = np.empty((rows, len(scale)), dtype=np.float32)
    for g, (lo, hi) in zip(rngs, blocks, strict=True):
        g.standard_normal(dtype=np.float32, out=z[lo:hi])
    z *= scale
    return z
