"""The mass-properties value object and the pure functions that combine and move it.

Conventions
-----------
* ``mass`` in kg; ``center`` (3,) in m in the reference frame; ``inertia`` (3, 3) in kg·m² about ``center`` with
  axes parallel to the reference frame.
* Tensor convention ("negative" products): ``I_xx = ∫(y² + z²) dm`` and ``I_xy = −∫xy dm``. Reports that use the
  "positive" convention ``P_xy = +∫xy dm`` convert with :func:`products_positive`.
* Active moves (:func:`translate`, :func:`transform`) move the body; passive views (:func:`inertia_about_point`,
  :func:`inertia_in_axes`) describe the same body from another point or in other axes. Two names for two meanings.

References
----------
.. [1] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3 (inertia tensor, parallel-axis theorem).
.. [2] The "positive" (+∫xy dm) and "negative" (tensor, −∫xy dm) product-of-inertia conventions of mass-properties
   reports: common practice, no source.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from . import display

__all__ = [
    "InertiaError",
    "MassProperties",
    "validate_inertia",
    "combine",
    "combine_arrays",
    "parallel_axis_shift",
    "translate",
    "transform",
    "inertia_about_point",
    "inertia_in_axes",
    "principal_axes",
    "radii_of_gyration",
    "products_positive",
]

FloatArray = npt.NDArray[np.float64]


class InertiaError(ValueError):
    """An inertia tensor that no physical body can have (or a mass that is not usable)."""


def validate_inertia(inertia: npt.ArrayLike, *, what: str = "inertia tensor", rtol: float = 1e-9) -> FloatArray:
    """Check that a tensor about a CG can belong to a real body; return it symmetrised.

    Checks: shape (3, 3), finite, symmetric, positive semi-definite, and the triangle inequality of the principal
    moments (each ≤ sum of the other two). Tolerances scale with the largest entry.

    Parameters
    ----------
    inertia : (3, 3) float
        Tensor, kg·m², tensor convention.
    what : str
        Name used in the error message (e.g. ``"component 'chassis/tub'"``).
    rtol : float
        Relative tolerance (times the largest entry) on the eigenvalue tests and on asymmetry; an asymmetry up to
        1e-6 of the largest entry is accepted whatever ``rtol`` (measured tensors are typed with about six digits).

    Returns
    -------
    (3, 3) float
        ``(I + Iᵀ)/2``.

    Raises
    ------
    InertiaError
        Naming the failed test and the offending values.

    References
    ----------
    Goldstein et al. (2002) §5.4; the triangle inequality follows from ``I_a + I_b − I_c = 2∫c² dm ≥ 0``.
    """
    m = np.array(inertia, dtype=float)
    if m.shape != (3, 3):
        raise InertiaError(f"{what}: must be 3x3, got shape {m.shape}")
    # scalar checks on the nine floats (this runs for every component, where numpy's per-call cost dominates)
    (a, b, c), (d, e, f), (g, h, k) = m.tolist()
    entries = (a, b, c, d, e, f, g, h, k)
    if not all(math.isfinite(x) for x in entries):
        raise InertiaError(f"{what}: contains a non-finite value")
    scale = max(abs(x) for x in entries)
    if scale == 0.0:
        return m
    tol = rtol * scale
    asym = max(abs(b - d), abs(c - g), abs(f - h))
    if asym > max(tol, 1e-6 * scale):
        raise InertiaError(f"{what}: not symmetric (largest |I_ij - I_ji| = {asym:.6g} kg*m^2)")
    if b == 0.0 and c == 0.0 and f == 0.0 and d == 0.0 and g == 0.0 and h == 0.0:
        # diagonal (most closed forms): the moments are the diagonal, checked on floats
        lo = min(a, e, k)
        total = a + e + k
        if lo >= -max(tol, 1e-9 * scale) and max(a, e, k) - (total - max(a, e, k)) <= max(tol, 1e-9 * scale):
            return m
        eig = np.array(sorted((a, e, k)))
    else:
        m = 0.5 * (m + m.T)
        eig = np.linalg.eigvalsh(m)
    if eig[0] < -max(tol, 1e-9 * scale):
        raise InertiaError(
            f"{what}: not positive semi-definite (principal moments {np.array2string(eig, precision=6)} kg*m^2)"
        )
    total = float(np.sum(eig))
    worst = float(np.max(eig - (total - eig)))
    if worst > max(tol, 1e-9 * scale):
        raise InertiaError(
            f"{what}: principal moments {np.array2string(eig, precision=6)} kg*m^2 break the triangle inequality "
            "(each must be at most the sum of the other two)"
        )
    return m


def _frozen(a: npt.ArrayLike, shape: tuple[int, ...]) -> FloatArray:
    out = np.array(a, dtype=float).reshape(shape)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, slots=True, eq=False)
class MassProperties:
    """Immutable mass properties of a rigid body.

    Parameters
    ----------
    mass : float
        kg, ≥ 0 and finite.
    center : (3,) float
        Centre of mass, m, reference frame.
    inertia : (3, 3) float
        kg·m² about ``center``, axes parallel to the reference frame, tensor convention (off-diagonals −∫xy dm).
        Validated with :func:`validate_inertia`.

    Examples
    --------
    >>> mp = MassProperties(2.0, [0.0, 0.0, 1.0], np.diag([1.0, 1.0, 1.0]))
    >>> float(mp.mass), mp.center.tolist()
    (2.0, [0.0, 0.0, 1.0])
    """

    mass: float
    center: FloatArray
    inertia: FloatArray

    def __post_init__(self) -> None:
        mass = float(self.mass)
        if not math.isfinite(mass) or mass < 0.0:
            raise InertiaError(f"mass must be finite and >= 0 kg, got {mass!r}")
        center = np.array(self.center, dtype=float).reshape(3)
        if not all(math.isfinite(x) for x in center.tolist()):
            raise InertiaError("centre of mass must be finite")
        object.__setattr__(self, "mass", mass)
        object.__setattr__(self, "center", _frozen(center, (3,)))
        object.__setattr__(self, "inertia", _frozen(validate_inertia(self.inertia), (3, 3)))

    @classmethod
    def point(cls, mass: float, center: npt.ArrayLike) -> MassProperties:
        """A point mass (kg) at ``center`` (m)."""
        return cls(mass, np.asarray(center, dtype=float), np.zeros((3, 3)))

    @classmethod
    def _valid_tensor(cls, mass: float, center: npt.ArrayLike, inertia: FloatArray) -> MassProperties:
        """Like the constructor, for a tensor already known to be physical (a closed form of a valid primitive, or
        one validated by the caller): mass and centre are checked, the tensor is not checked again."""
        mass = float(mass)
        if not math.isfinite(mass) or mass < 0.0:
            raise InertiaError(f"mass must be finite and >= 0 kg, got {mass!r}")
        c = np.array(center, dtype=float).reshape(3)
        if not all(math.isfinite(x) for x in c.tolist()):
            raise InertiaError("centre of mass must be finite")
        out = object.__new__(cls)
        c.setflags(write=False)
        object.__setattr__(out, "mass", mass)
        object.__setattr__(out, "center", c)
        object.__setattr__(out, "inertia", _frozen(inertia, (3, 3)))
        return out

    @classmethod
    def _moved(cls, mp: MassProperties, linear: FloatArray, translation: FloatArray) -> MassProperties:
        """``mp`` moved actively by an orthogonal ``linear`` (checked by the caller) and ``translation``.

        The moved tensor ``R I Rᵀ`` has the eigenvalues of a tensor already validated, so it is not validated again
        (this runs for every component of a model).
        """
        out = object.__new__(cls)
        inertia = linear @ mp.inertia @ linear.T
        inertia += inertia.T
        inertia *= 0.5
        center = linear @ mp.center + translation
        center.setflags(write=False)
        inertia.setflags(write=False)
        object.__setattr__(out, "mass", mp.mass)
        object.__setattr__(out, "center", center)
        object.__setattr__(out, "inertia", inertia)
        return out

    @classmethod
    def zero(cls) -> MassProperties:
        """Nothing: zero mass at the origin."""
        return cls(0.0, np.zeros(3), np.zeros((3, 3)))

    def almost_equal(self, other: MassProperties, rtol: float = 1e-9) -> bool:
        """Agreement of mass, centre and tensor to ``rtol`` relative to their own scale."""
        mscale = max(abs(self.mass), abs(other.mass), 1e-300)
        iscale = max(float(np.max(np.abs(self.inertia))), float(np.max(np.abs(other.inertia))), 1e-300)
        cscale = max(float(np.max(np.abs(self.center))), float(np.max(np.abs(other.center))), 1.0)
        return (
            abs(self.mass - other.mass) <= rtol * mscale
            and bool(np.all(np.abs(self.center - other.center) <= rtol * cscale))
            and bool(np.all(np.abs(self.inertia - other.inertia) <= rtol * iscale))
        )

    def __repr__(self) -> str:
        """One line, rounded: mass, CG (m) and the six tensor entries (kg·m² about the CG), reference frame."""
        i = self.inertia
        entries = " ".join(f"{k} {i[a, b] + 0.0:.4g}" for k, (a, b) in _TENSOR_ENTRIES)
        return (
            f"<MassProperties {self.mass:.4g} kg, CG {display.vector(self.center, 4)} m, inertia about CG "
            f"{entries} kg*m^2 (tensor convention); reference frame>"
        )

    def _repr_html_(self) -> str:
        """A small table: mass, CG and the tensor about the CG (reference frame, tensor convention)."""
        rows = [["mass", f"{self.mass:.4g} kg"], ["CG (reference frame)", f"{display.vector(self.center, 4)} m"]]
        rows += [[f"{k} about CG", f"{self.inertia[a, b] + 0.0:.4g} kg·m²"] for k, (a, b) in _TENSOR_ENTRIES]
        return display.html_table(rows, caption="Mass properties (tensor convention, I_xy = -∫xy dm)")


_TENSOR_ENTRIES = (("Ixx", (0, 0)), ("Iyy", (1, 1)), ("Izz", (2, 2)), ("Ixy", (0, 1)), ("Ixz", (0, 2)), ("Iyz", (1, 2)))


def parallel_axis_shift(mass: npt.ArrayLike, offset: npt.ArrayLike) -> FloatArray:
    """Steiner term ``m (|d|² E − d dᵀ)``, kg·m², vectorised.

    Parameters
    ----------
    mass : float or (N,) float
        kg.
    offset : (3,) or (N, 3) float
        Vector from the new reference point to the body's CG, m.

    Returns
    -------
    (3, 3) or (N, 3, 3) float
        What to add to a tensor about the CG to get the tensor about the new point (tensor convention).

    References
    ----------
    Goldstein et al. (2002), eq. 5.20 (parallel-axis theorem in tensor form).
    """
    m = np.asarray(mass, dtype=float)
    d = np.asarray(offset, dtype=float)
    d2 = np.einsum("...i,...i->...", d, d)
    out = d2[..., None, None] * np.eye(3) - d[..., :, None] * d[..., None, :]
    return m[..., None, None] * out


def combine_arrays(
    masses: npt.ArrayLike, centers: npt.ArrayLike, inertias: npt.ArrayLike
) -> tuple[float, FloatArray, FloatArray]:
    """Combine N bodies given as arrays (the vectorised engine behind :func:`combine`).

    Parameters
    ----------
    masses : (N,) float
        kg.
    centers : (N, 3) float
        Each body's CG, m, common reference frame.
    inertias : (K, 3, 3) float
        The bodies' tensors about their own CGs, kg·m², axes parallel to the reference frame. Only their sum enters,
        so K may differ from N (e.g. K = 1: the tensors already summed, as :func:`massmodel.core.batch.aggregate` does).

    Returns
    -------
    mass : float
        Total, kg.
    center : (3,) float
        Combined CG, m (the origin when the total mass is zero).
    inertia : (3, 3) float
        Tensor about the combined CG, kg·m².

    References
    ----------
    Goldstein et al. (2002), §5.3: ``I = Σ [I_i + m_i(|d_i|² E − d_i d_iᵀ)]`` with ``d_i = c_i − c``.
    """
    m = np.asarray(masses, dtype=float)
    c = np.asarray(centers, dtype=float).reshape(-1, 3)
    inertia_sum = np.asarray(inertias, dtype=float).reshape(-1, 3, 3).sum(axis=0)
    total = float(m.sum())
    if total == 0.0:
        return 0.0, np.zeros(3), inertia_sum
    # First shift to a reference point near the masses (the first moment about the arithmetic mean) for accuracy,
    # then to the CG: second moments are accumulated as one (3, 3) matrix (no (N, 3, 3) temporary).
    ref = c.mean(axis=0)
    d = c - ref
    mw = m[:, None] * d
    cg_offset = mw.sum(axis=0) / total
    second = d.T @ mw  # Σ m d dᵀ about ref
    second_cg = second - total * np.outer(cg_offset, cg_offset)
    steiner = np.trace(second_cg) * np.eye(3) - second_cg
    inertia = inertia_sum + steiner
    return total, ref + cg_offset, 0.5 * (inertia + inertia.T)


def combine(parts: Iterable[MassProperties]) -> MassProperties:
    """Mass properties of several bodies taken as one (parallel-axis theorem to the combined CG).

    Order-free and associative (up to round-off). An empty input gives :meth:`MassProperties.zero`.
    """
    items = list(parts)
    if not items:
        return MassProperties.zero()
    total, center, inertia = combine_arrays(
        np.array([p.mass for p in items]),
        np.array([p.center for p in items]),
        np.array([p.inertia for p in items]),
    )
    return MassProperties(total, center, inertia)


def translate(mp: MassProperties, offset: npt.ArrayLike) -> MassProperties:
    """The same body moved by ``offset`` (m); the tensor about its CG is unchanged."""
    return MassProperties(mp.mass, mp.center + np.asarray(offset, dtype=float), mp.inertia)


def transform(mp: MassProperties, linear: npt.ArrayLike, translation: npt.ArrayLike) -> MassProperties:
    """The body moved actively: ``c' = R c + t`` and ``I' = R I Rᵀ``.

    ``linear`` must be orthogonal (a rotation, or a reflection for a mirrored copy); see :mod:`massmodel.core.frames`.
    """
    r = np.asarray(linear, dtype=float)
    return MassProperties(mp.mass, r @ mp.center + np.asarray(translation, dtype=float), r @ mp.inertia @ r.T)


def inertia_about_point(mp: MassProperties, point: npt.ArrayLike) -> FloatArray:
    """Tensor of the same body about another point (axes unchanged), kg·m².

    Parallel-axis theorem: ``I_P = I_G + m(|d|² E − d dᵀ)``, ``d = G − P``.
    """
    return mp.inertia + parallel_axis_shift(mp.mass, mp.center - np.asarray(point, dtype=float))


def inertia_in_axes(inertia: npt.ArrayLike, axes: npt.ArrayLike) -> FloatArray:
    """Passive change of axes: the components of the same tensor in other axes.

    Parameters
    ----------
    inertia : (3, 3) float
        kg·m², in the reference axes.
    axes : (3, 3) float
        Rows are the new unit axes expressed in the reference axes (orthonormal).

    Returns
    -------
    (3, 3) float
        ``A I Aᵀ`` with ``A`` = ``axes``.
    """
    a = np.asarray(axes, dtype=float)
    return a @ np.asarray(inertia, dtype=float) @ a.T


def principal_axes(inertia: npt.ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Principal moments and axes of a tensor.

    Returns
    -------
    moments : (3,) float
        Principal moments, kg·m², ascending.
    axes : (3, 3) float
        Rows are the unit principal axes, in the same order, expressed in the tensor's axes; the set is
        right-handed (``axes[0] × axes[1] = axes[2]``). ``axes[0]`` and ``axes[1]`` are signed so that their
        largest component is positive and ``axes[2]`` then follows from right-handedness (a deterministic choice;
        for repeated moments the axes within the repeated subspace are any orthonormal set).
    """
    values, vectors = np.linalg.eigh(np.asarray(inertia, dtype=float))
    axes = vectors.T.copy()
    for i in range(3):
        k = int(np.argmax(np.abs(axes[i])))
        if axes[i, k] < 0.0:
            axes[i] = -axes[i]
    if np.dot(np.cross(axes[0], axes[1]), axes[2]) < 0.0:
        axes[2] = -axes[2]
    return values, axes


def radii_of_gyration(mp: MassProperties) -> FloatArray:
    """Radii of gyration about the CG axes parallel to the reference axes, m: ``k_i = sqrt(I_ii / m)``."""
    if mp.mass <= 0.0:
        raise InertiaError("radius of gyration needs a positive mass")
    return np.sqrt(np.diag(mp.inertia) / mp.mass)


def products_positive(inertia: npt.ArrayLike) -> FloatArray:
    """Convert between the tensor convention (−∫xy dm) and the positive one (+∫xy dm): negate the off-diagonals.

    The conversion is its own inverse.
    """
    m = np.array(inertia, dtype=float)
    off = ~np.eye(3, dtype=bool)
    m[off] = -m[off]
    return m
