"""Monte Carlo propagation of the part uncertainties: samples × parts, in chunks of bounded memory.

Each sample draws every part's errors (normal, with the standard uncertainties of
:class:`~massmodel.uncertainty.inputs.UncertaintyInputs`) and one density error per density group (uniform over the
material's band, shared by every part of that material), rebuilds the totals exactly (no linearisation) and derives
the vehicle quantities with the same statics as the RSS (:func:`~massmodel.uncertainty.rss.vehicle_values`).

The sums over parts are matrix products of a (samples × parts) block of errors with (parts × k) coefficients; the
block holds at most ``chunk_elements`` entries so memory stays bounded whatever the number of samples.

It shows what the first-order RSS leaves out: the ratios (CG, front share) are non-linear in the part masses, the
inertia about the CG gains a positive bias Σ mᵢ u_cᵢ² from the CG scatter, and a density band whose nominal is not
its middle moves the mean.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Model

from .inputs import UncertaintyInputs, uncertainty_inputs
from .rss import vehicle_values

__all__ = ["MonteCarloResult", "monte_carlo", "DEFAULT_CHUNK_ELEMENTS"]

FloatArray = npt.NDArray[np.float64]

#: Largest samples × parts block held at once (float32: 8 MiB per array, a handful of arrays live at a time).
DEFAULT_CHUNK_ELEMENTS = 1 << 21


@dataclass(frozen=True, slots=True, eq=False)
class MonteCarloResult:
    """Sampled values of every quantity (SI), one entry per sample.

    Attributes
    ----------
    samples : int
    seed : int or None
        Seed of the numpy Generator (None: unseeded).
    values : mapping of str to (samples,) float
        Keys of :data:`massmodel.uncertainty.rss.QUANTITIES` (vehicle ones only with a vehicle).
    subsets : mapping of str to (samples,) float
        Masses of the part subsets asked for (e.g. by rules), kg.
    """

    samples: int
    seed: int | None
    values: Mapping[str, FloatArray]
    subsets: Mapping[str, FloatArray]

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
) -> MonteCarloResult:
    """Sample the model's totals.

    Parameters
    ----------
    model : Model
    samples : int
        Number of samples (≥ 2).
    seed : int or None
        Seed of ``numpy.random.default_rng``; the same seed gives the same samples.
    inputs : UncertaintyInputs, optional
        Default: :func:`~massmodel.uncertainty.inputs.uncertainty_inputs` of the model.
    subsets : mapping of str to (N,) bool, optional
        Part subsets whose mass to sample too (rules on a group's mass).
    chunk_elements : int
        Largest samples × parts block held at once.

    Returns
    -------
    MonteCarloResult
    """
    if samples < 2:
        raise UsageError(f"Monte Carlo needs at least 2 samples, got {samples}")
    inp = inputs or uncertainty_inputs(model)
    rng = np.random.default_rng(seed)
    n = len(inp.mass)
    masks = np.array([np.asarray(v, dtype=float) for v in (subsets or {}).values()]).reshape(-1, n).T  # (N, R)
    m = inp.mass
    total0 = float(m.sum())
    cg0 = (m @ inp.center) / total0
    r = np.ascontiguousarray((inp.center - cg0).T)  # (3, N), about the nominal CG
    own0 = inp.inertia_diag.sum(axis=0)
    in_group = np.flatnonzero(inp.density_group >= 0)
    group_of = inp.density_group[in_group]
    width = inp.density_high - inp.density_low
    draw_mass, draw_inertia = bool(inp.u_mass.any()), bool(inp.u_inertia.any())
    draw_cg = [bool(inp.u_cg[:, a].any()) for a in range(3)]

    # single precision for the (samples × parts) blocks: they hold only the errors and the parts' moments about the
    # nominal CG, whose sums are small against the totals they correct (those stay in double precision)
    f32 = np.float32
    m32, r32, two_r32 = m.astype(f32), r.astype(f32), (2.0 * r).astype(f32)
    u_mass32, u_inertia32, u_cg32 = inp.u_mass.astype(f32), inp.u_inertia.astype(f32), inp.u_cg.T.astype(f32)
    r2_32, diag32, masks32 = (r**2).astype(f32), inp.inertia_diag.astype(f32), masks.astype(f32)
    second0 = (m * r**2).sum(axis=1)  # Σ m r_a², about the nominal CG
    sub0 = m @ masks

    mass = np.empty(samples)
    first = np.empty((samples, 3))  # Σ m'(r + δc)
    second = np.empty((samples, 3))  # Σ m'(r + δc)²
    own = np.empty((samples, 3))
    sub = np.empty((samples, masks.shape[1]))
    step = max(1, chunk_elements // max(n, 1))
    for start in range(0, samples, step):
        ns = min(step, samples - start)
        rows = slice(start, start + ns)
        dm = _scaled_normal(rng, ns, u_mass32) if draw_mass else np.zeros((ns, n), dtype=f32)
        ei = _scaled_normal(rng, ns, u_inertia32) if draw_inertia else np.zeros((ns, n), dtype=f32)
        if len(in_group):
            eps = inp.density_low + width * rng.random((ns, len(width)))  # one error per material and sample
            shared = eps[:, group_of].astype(f32)
            dm[:, in_group] += shared * m32[in_group]
            ei[:, in_group] += shared
        mass[rows] = total0 + dm.sum(axis=1, dtype=np.float64)
        # the terms linear in δm as matrix products: (ns, N) @ (N, k)
        first[rows] = dm @ r32.T  # Σ δm r
        second[rows] = second0 + dm @ r2_32.T  # Σ m r² + Σ δm r²
        own[rows] = own0 + ei @ diag32  # Σ I (1 + e)
        if masks.shape[1]:
            sub[rows] = sub0 + dm @ masks32
        mp = dm
        mp += m32  # m' = m + δm (in place: δm is not needed again)
        for a in range(3):
            if not draw_cg[a]:
                continue
            dc = _scaled_normal(rng, ns, u_cg32[a])
            first[rows, a] += np.einsum("ij,ij->i", mp, dc)  # Σ m' δc
            t = dc + two_r32[a]
            t *= dc
            second[rows, a] += np.einsum("ij,ij->i", mp, t)  # Σ m' (2 r δc + δc²)
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
    return MonteCarloResult(samples, seed, MappingProxyType(values), MappingProxyType(subs))


def _scaled_normal(rng: np.random.Generator, rows: int, scale: npt.NDArray[np.float32]) -> npt.NDArray[np.float32]:
    """(rows, N) normal errors with standard deviations ``scale`` (N,), drawn in single precision (about twice as
    fast to make as double; they only carry small errors)."""
    z = rng.standard_normal((rows, len(scale)), dtype=np.float32)
    z *= scale
    return z
