"""Vectorised mass properties of many primitives of one kind, straight from arrays.

For large assemblies (thousands to millions of parts: fasteners, cells, lattice struts, sampled designs) building a
:class:`massmodel.core.model.Component` per part costs more than the physics. Here N primitives of one kind are given as
arrays (dimensions, densities, rotations, translations) and their mass properties are evaluated with the same closed
forms as :mod:`massmodel.core.shapes`, as array expressions, then combined with :func:`massmodel.core.massprops.combine_arrays`.

Conventions
-----------
* SI: dimensions in m, densities in kg/m³, results in kg, m, kg·m².
* ``dims[:, j]`` is the j-th field of the kind in the order of the shape class's fields (:data:`BATCH_KINDS`),
  each in the shape's own frame as documented in :mod:`massmodel.core.shapes` (e.g. a cone's base on z = 0).
* ``rotations[n]`` and ``translations[n]`` place part n: ``p_model = R p_part + t`` (the :class:`~massmodel.core.frames.Pose`
  convention). ``R`` may be a reflection (det −1, a mirrored copy); tensors transform as ``R I Rᵀ`` either way.
* Inertia tensors use the tensor convention (off-diagonals −∫xy dm), about each part's CG for per-part results and
  about the combined CG for :func:`aggregate`.

The extrusion (a polygon of any vertex count) and the point mass (no volume, so no density) are not batch kinds.

References
----------
.. [1] Machinery's Handbook, 31st ed., Industrial Press (2020), pp.253-254 (solid moments of inertia), as cited per
   kind in :mod:`massmodel.core.shapes`.
.. [2] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3 (rotation of the tensor, parallel axes).
"""

from __future__ import annotations

import functools
import importlib.util
import math
import sys
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .massprops import MassProperties, combine_arrays
from .shapes import SHAPE_KINDS

__all__ = ["BATCH_KINDS", "KERNELS", "BatchError", "Batch", "UnitProperties", "unit_properties", "placed_properties",
           "aggregate", "aggregate_batches", "kernel_for", "place", "rollup", "rollup_groups", "sums_to_properties"]

FloatArray = npt.NDArray[np.float64]

#: Batch kinds and the order of their dimension columns (the shape class's fields).
BATCH_KINDS: dict[str, tuple[str, ...]] = {
    kind: tuple(cls.FIELDS) for kind, cls in SHAPE_KINDS.items() if kind not in ("extrusion", "point")
}
#: Parts per block in :func:`aggregate`: block temporaries stay in cache and memory stays bounded.
BLOCK = 16384
#: Largest accepted deviation of ``R Rᵀ`` from the identity (as :func:`massmodel.core.frames.is_orthogonal`).
ORTHOGONALITY_TOL = 1e-9
#: Roll-up kernels: "numpy" (array expressions, always available), "numba" (the compiled one-pass kernel of
#: :mod:`massmodel.core.kernels`), "auto" (see :func:`kernel_for`).
KERNELS = ("auto", "numpy", "numba")
#: "auto" loads the compiled kernel for a batch of at least this many parts: loading numba and the cached machine
#: code costs about 1 s once per process (measured: import 0.35 s, first call 0.7 s), the kernel saves about 35 ns
#: a part (docs/engine.md), so it repays its load from about 3e7 parts.
NUMBA_LOAD_PARTS = 30_000_000
#: Once the compiled kernel is loaded in the process (by a large batch or an explicit kernel="numba"), "auto" uses
#: it from this many parts (it is faster than the numpy path from about 1e4 parts).
NUMBA_MIN_PARTS = 10_000
# the smaller dimension that must stay below the larger one, per kind: (small column, large column)
_ORDERED = {"tube": (1, 0), "spherical_shell": (1, 0), "torus": (1, 0)}


class BatchError(ValueError):
    """Unusable batch input; the message names the array, the part index and what is wrong."""


@dataclass(frozen=True, slots=True)
class UnitProperties:
    """Per-density properties of N primitives in their own frames.

    Attributes
    ----------
    volume : (N,) float
        m³.
    centroid : (N, 3) float or None
        m, part frame; None when every centroid is the origin.
    diagonal : (N, 3) float
        Diagonal of the tensor about the centroid per density, m⁵ (kg·m² per kg/m³).
    product_xy : (N,) float or None
        Off-diagonal entry (0, 1) = (1, 0) of that tensor (tensor convention), m⁵; None where it is zero for the kind.
        The (0, 2) and (1, 2) entries are zero for every batch kind.
    """

    volume: FloatArray
    centroid: FloatArray | None
    diagonal: FloatArray
    product_xy: FloatArray | None

    def tensors(self) -> FloatArray:
        """(N, 3, 3) per-density tensors about the centroids, part axes."""
        n = len(self.volume)
        out = np.zeros((n, 3, 3))
        out[:, [0, 1, 2], [0, 1, 2]] = self.diagonal
        if self.product_xy is not None:
            out[:, 0, 1] = out[:, 1, 0] = self.product_xy
        return out


def _all_positive_finite(a: FloatArray) -> bool:
    """Every entry finite and > 0, in two reductions without temporaries (NaN makes both comparisons false)."""
    return bool(a.min() > 0.0) and bool(np.isfinite(a.max()))


def _check_dims(kind: str, dims: npt.ArrayLike) -> FloatArray:
    if kind not in BATCH_KINDS:
        raise BatchError(f"kind {kind!r} is not a batch kind (batch kinds: {', '.join(BATCH_KINDS)})")
    fields = BATCH_KINDS[kind]
    d = np.asarray(dims, dtype=float)
    if d.ndim != 2 or d.shape[1] != len(fields):
        raise BatchError(f"dims of a {kind} batch must have shape (N, {len(fields)}) for {', '.join(fields)}; "
                         f"got {d.shape}")
    if len(d) and _all_positive_finite(d) and (kind not in _ORDERED or bool(np.all(
            d[:, _ORDERED[kind][0]] < d[:, _ORDERED[kind][1]]))):
        return d  # the common case in two reductions; the element-wise tests below only find the culprit
    bad = ~(np.isfinite(d) & (d > 0.0))
    if bad.any():
        n, j = np.argwhere(bad)[0]
        raise BatchError(f"dims[{n}, {j}] ({fields[j]} of part {n}) must be a finite length > 0 m, got {d[n, j]!r}")
    if kind in _ORDERED:
        small, large = _ORDERED[kind]
        wrong = d[:, small] >= d[:, large]
        if wrong.any():
            n = int(np.argmax(wrong))
            raise BatchError(f"part {n}: {fields[small]} ({d[n, small]:g} m) must be less than {fields[large]} "
                             f"({d[n, large]:g} m)")
    return d


# The closed forms, one function per kind, written once for both engines: called with dimension columns (arrays)
# by the numpy path (:func:`_unit_columns`) and with one part's floats by the compiled kernel (numba compiles these
# same functions, see :func:`_placed_sums_loop`). Each takes the kind's fields in order (unused trailing ones are
# 0.0) and returns per density: volume, centroid x, y, z, tensor diagonal xx, yy, zz about the centroid and the xy
# product (tensor convention); a literal 0.0 marks an entry that is zero for the whole kind. Sources as cited per
# kind in massmodel.core.shapes (Machinery's Handbook, 31st ed., pp.253-254).


def _form_box(a, b, c):  # type: ignore[no-untyped-def]
    v = a * b * c
    a2, b2, c2 = a * a, b * b, c * c
    s = v / 12.0
    return v, 0.0, 0.0, 0.0, (b2 + c2) * s, (a2 + c2) * s, (a2 + b2) * s, 0.0


def _form_cylinder(r, length, _unused):  # type: ignore[no-untyped-def]
    r2 = r * r
    v = math.pi * r2 * length
    trans = v * (3.0 * r2 + length * length) / 12.0
    return v, 0.0, 0.0, 0.0, trans, trans, v * r2 / 2.0, 0.0


def _form_tube(ro, ri, length):  # type: ignore[no-untyped-def]
    v = math.pi * (ro * ro - ri * ri) * length
    r2 = ro * ro + ri * ri
    trans = v * (3.0 * r2 + length * length) / 12.0
    return v, 0.0, 0.0, 0.0, trans, trans, v * r2 / 2.0, 0.0


def _form_sphere(r, _unused1, _unused2):  # type: ignore[no-untyped-def]
    v = 4.0 / 3.0 * math.pi * (r * r * r)  # products: numpy's power is slow for exponents other than 2
    moment = 0.4 * v * r * r
    return v, 0.0, 0.0, 0.0, moment, moment, moment, 0.0


def _form_spherical_shell(ro, ri, _unused):  # type: ignore[no-untyped-def]
    ro3, ri3 = ro * ro * ro, ri * ri * ri
    v = 4.0 / 3.0 * math.pi * (ro3 - ri3)
    moment = 8.0 * math.pi / 15.0 * (ro3 * ro * ro - ri3 * ri * ri)
    return v, 0.0, 0.0, 0.0, moment, moment, moment, 0.0


def _form_hemisphere(r, _unused1, _unused2):  # type: ignore[no-untyped-def]
    v = 2.0 / 3.0 * math.pi * (r * r * r)
    r2 = r * r
    trans = 83.0 / 320.0 * v * r2
    return v, 0.0, 0.0, 3.0 * r / 8.0, trans, trans, 0.4 * v * r2, 0.0


def _form_cone(r, h, _unused):  # type: ignore[no-untyped-def]
    v = math.pi * r * r * h / 3.0
    trans = v * (3.0 / 20.0 * r * r + 3.0 / 80.0 * h * h)
    return v, 0.0, 0.0, h / 4.0, trans, trans, 0.3 * v * r * r, 0.0


def _form_frustum(r0, r1, h):  # type: ignore[no-untyped-def]
    # integrals over t in [0, 1] of t^m r(t)^n, r(t) = r0 (1 - t) + r1 t, from the Bernstein form
    # sum_i C(n, i) r0^(n-i) r1^i (m + i)! (n - i)! / (n + m + 1)!, as massmodel.core.shapes
    s0, s1, p = r0 * r0, r1 * r1, r0 * r1
    t20 = (s0 + p + s1) / 3.0
    t40 = (s0 * s0 + s0 * p + p * p + p * s1 + s1 * s1) / 5.0
    t21 = (s0 + 2.0 * p + 3.0 * s1) / 12.0
    t22 = (s0 + 3.0 * p + 6.0 * s1) / 30.0
    v = math.pi * h * t20
    zc = h * t21 / t20
    trans = math.pi * h * (0.25 * t40 + h * h * t22) - v * zc * zc  # about the base, then to the centroid
    return v, 0.0, 0.0, zc, trans, trans, 0.5 * math.pi * h * t40, 0.0


def _form_wedge(a, b, length):  # type: ignore[no-untyped-def]
    v = 0.5 * a * b * length
    l2 = length * length / 12.0
    return (v, a / 3.0, b / 3.0, length / 2.0, v * (b * b / 18.0 + l2), v * (a * a / 18.0 + l2),
            v * (a * a + b * b) / 18.0, v * a * b / 36.0)


def _form_torus(big, small, _unused):  # type: ignore[no-untyped-def]
    v = 2.0 * math.pi * math.pi * big * small * small
    r2, a2 = big * big, small * small
    diameter = v * (4.0 * r2 + 5.0 * a2) / 8.0
    return v, 0.0, 0.0, 0.0, diameter, diameter, v * (4.0 * r2 + 3.0 * a2) / 4.0, 0.0


def _form_ellipsoid(a, b, c):  # type: ignore[no-untyped-def]
    v = 4.0 / 3.0 * math.pi * a * b * c
    a2, b2, c2 = a * a, b * b, c * c
    s = v / 5.0
    return v, 0.0, 0.0, 0.0, (b2 + c2) * s, (a2 + c2) * s, (a2 + b2) * s, 0.0


#: The closed form of each batch kind; the compiled kernel numbers the kinds in this order (:data:`KIND_IDS`).
FORMS = {
    "box": _form_box, "cylinder": _form_cylinder, "tube": _form_tube, "sphere": _form_sphere,
    "spherical_shell": _form_spherical_shell, "hemisphere": _form_hemisphere, "cone": _form_cone,
    "frustum": _form_frustum, "wedge": _form_wedge, "torus": _form_torus, "ellipsoid": _form_ellipsoid,
}
KIND_IDS = {kind: i for i, kind in enumerate(FORMS)}


def _unit_columns(kind: str, cols: FloatArray) -> tuple[FloatArray, FloatArray | None, FloatArray, FloatArray | None]:
    """The closed forms on dimension columns ``cols`` (k, n): volume (n,), centroid (3, n) or None, tensor
    diagonal (3, n) and xy product (n,) or None, per density (see :class:`UnitProperties`)."""
    args = [*cols, *([0.0] * (3 - len(cols)))]
    v, cx, cy, cz, dx, dy, dz, pxy = FORMS[kind](*args)
    centroid = None
    if not all(isinstance(x, float) for x in (cx, cy, cz)):
        zero = np.zeros_like(v)
        centroid = np.array([zero if isinstance(x, float) else x for x in (cx, cy, cz)])
    return v, centroid, np.array([dx, dy, dz]), None if isinstance(pxy, float) else pxy


def _placed_sums_loop(kind_id, dims, rho, rotations, translations, ref, check, tol):  # type: ignore[no-untyped-def]
    """One pass over a block of n placed primitives of one kind: the body of the compiled kernel.

    :mod:`massmodel.core.kernels` compiles this function with numba (with the ``_form_*`` closed forms above
    compiled too); as plain Python it gives the same results, slowly. Per part it evaluates the kind's closed form,
    tests the rotation, places the CG (``x = R c + t``), rotates the tensor and accumulates, about ``ref``:

    * ``W = Σ m``, ``F = Σ m d`` and ``S = Σ m d dᵀ`` with ``d = x − ref`` (kg, kg·m, kg·m²);
    * ``J = Σ ρ R J Rᵀ`` (kg·m², about each part's own CG, model axes).

    Parameters
    ----------
    kind_id : int
        :data:`KIND_IDS` of the kind.
    dims : (n, k) float
        The kind's fields, m.
    rho : (n,) float
        kg/m³.
    rotations : (n, 3, 3) float
        Part axes → model axes, orthogonal: the tensor is rotated with ``R Rᵀ = E`` (as :func:`_rotated_sum`), so
        a matrix that is not orthogonal gives a wrong tensor when ``check`` is off, as in the numpy path.
    translations : (n, 3) float
        m.
    ref : (3,) float
        Output: the reference point of the moments (the mean of the translations), m.
    check : bool
        Test every rotation: each entry of ``R Rᵀ − E`` within ``tol`` (NaN fails).
    tol : float
        Orthogonality tolerance.

    Returns
    -------
    sums : (16,) float
        ``W``, ``F`` (3), ``S`` (xx, yy, zz, xy, xz, yz), ``J`` (same order); see :func:`sums_to_properties`.
    bad : int
        How many rotations fail the check (the caller finds and names the first).
    """
    n = rho.shape[0]
    fields = dims.shape[1]
    r0 = r1 = r2 = 0.0
    for k in range(n):
        r0 += translations[k, 0]
        r1 += translations[k, 1]
        r2 += translations[k, 2]
    ref[0], ref[1], ref[2] = r0 / n, r1 / n, r2 / n
    w = f0 = f1 = f2 = 0.0
    s00 = s11 = s22 = s01 = s02 = s12 = 0.0
    j00 = j11 = j22 = j01 = j02 = j12 = jd = 0.0
    bad = 0
    for k in range(n):
        a = dims[k, 0]
        b = dims[k, 1] if fields > 1 else 0.0
        c = dims[k, 2] if fields > 2 else 0.0
        if kind_id == 0:
            v, u0, u1, u2, d0, d1, d2, p = _form_box(a, b, c)
        elif kind_id == 1:
            v, u0, u1, u2, d0, d1, d2, p = _form_cylinder(a, b, c)
        elif kind_id == 2:
            v, u0, u1, u2, d0, d1, d2, p = _form_tube(a, b, c)
        elif kind_id == 3:
            v, u0, u1, u2, d0, d1, d2, p = _form_sphere(a, b, c)
        elif kind_id == 4:
            v, u0, u1, u2, d0, d1, d2, p = _form_spherical_shell(a, b, c)
        elif kind_id == 5:
            v, u0, u1, u2, d0, d1, d2, p = _form_hemisphere(a, b, c)
        elif kind_id == 6:
            v, u0, u1, u2, d0, d1, d2, p = _form_cone(a, b, c)
        elif kind_id == 7:
            v, u0, u1, u2, d0, d1, d2, p = _form_frustum(a, b, c)
        elif kind_id == 8:
            v, u0, u1, u2, d0, d1, d2, p = _form_wedge(a, b, c)
        elif kind_id == 9:
            v, u0, u1, u2, d0, d1, d2, p = _form_torus(a, b, c)
        else:
            v, u0, u1, u2, d0, d1, d2, p = _form_ellipsoid(a, b, c)
        r = rotations[k]
        a0, a1, a2 = r[0, 0], r[0, 1], r[0, 2]
        b0, b1, b2 = r[1, 0], r[1, 1], r[1, 2]
        c0, c1, c2 = r[2, 0], r[2, 1], r[2, 2]
        if check:
            worst = max(abs(a0 * a0 + a1 * a1 + a2 * a2 - 1.0), abs(b0 * b0 + b1 * b1 + b2 * b2 - 1.0),
                        abs(c0 * c0 + c1 * c1 + c2 * c2 - 1.0), abs(a0 * b0 + a1 * b1 + a2 * b2),
                        abs(a0 * c0 + a1 * c1 + a2 * c2), abs(b0 * c0 + b1 * c1 + b2 * c2))
            bad += 0 if worst <= tol else 1  # NaN counts as bad
        density = rho[k]
        m = density * v
        x0 = translations[k, 0] - ref[0] + a0 * u0 + a1 * u1 + a2 * u2
        x1 = translations[k, 1] - ref[1] + b0 * u0 + b1 * u1 + b2 * u2
        x2 = translations[k, 2] - ref[2] + c0 * u0 + c1 * u1 + c2 * u2
        w += m
        mx0, mx1, mx2 = m * x0, m * x1, m * x2
        f0 += mx0
        f1 += mx1
        f2 += mx2
        s00 += mx0 * x0
        s11 += mx1 * x1
        s22 += mx2 * x2
        s01 += mx0 * x1
        s02 += mx0 * x2
        s12 += mx1 * x2
        # R diag(d) R^T = d_x E + (d_y - d_x) r_y r_y^T + (d_z - d_x) r_z r_z^T (r_k the columns of R); d_x E in jd
        e0 = density * d0
        e1 = density * d1 - e0
        e2 = density * d2 - e0
        q = density * p  # the xy product adds q (r_x r_y^T + r_y r_x^T)
        jd += e0
        j00 += e1 * a1 * a1 + e2 * a2 * a2 + 2.0 * q * a0 * a1
        j11 += e1 * b1 * b1 + e2 * b2 * b2 + 2.0 * q * b0 * b1
        j22 += e1 * c1 * c1 + e2 * c2 * c2 + 2.0 * q * c0 * c1
        j01 += e1 * a1 * b1 + e2 * a2 * b2 + q * (a0 * b1 + a1 * b0)
        j02 += e1 * a1 * c1 + e2 * a2 * c2 + q * (a0 * c1 + a1 * c0)
        j12 += e1 * b1 * c1 + e2 * b2 * c2 + q * (b0 * c1 + b1 * c0)
    sums = np.empty(16)
    sums[0], sums[1], sums[2], sums[3] = w, f0, f1, f2
    sums[4], sums[5], sums[6], sums[7], sums[8], sums[9] = s00, s11, s22, s01, s02, s12
    sums[10], sums[11], sums[12] = j00 + jd, j11 + jd, j22 + jd
    sums[13], sums[14], sums[15] = j01, j02, j12
    return sums, bad


def unit_properties(kind: str, dims: npt.ArrayLike) -> UnitProperties:
    """Volume, centroid and per-density tensor of N primitives of one kind (closed forms of :mod:`massmodel.core.shapes`).

    Parameters
    ----------
    kind : str
        One of :data:`BATCH_KINDS`.
    dims : (N, k) float
        The kind's fields in the order of :data:`BATCH_KINDS`, m.

    Returns
    -------
    UnitProperties

    Raises
    ------
    BatchError
        Unknown kind, wrong shape, a non-positive or non-finite size, or inner ≥ outer sizes.
    """
    d = _check_dims(kind, dims)
    v, centroid, diag, pxy = _unit_columns(kind, np.ascontiguousarray(d.T))
    return UnitProperties(v, None if centroid is None else centroid.T.copy(), diag.T.copy(), pxy)


def _check_placement(n: int, densities: npt.ArrayLike, rotations: npt.ArrayLike, translations: npt.ArrayLike,
                     validate: bool) -> tuple[FloatArray, FloatArray, FloatArray]:
    rho = np.asarray(densities, dtype=float)
    r = np.asarray(rotations, dtype=float)
    t = np.asarray(translations, dtype=float)
    for name, a, shape in (("densities", rho, (n,)), ("rotations", r, (n, 3, 3)), ("translations", t, (n, 3))):
        if a.shape != shape:
            raise BatchError(f"{name} must have shape {shape}, got {a.shape}")
    if validate and n and not (_all_positive_finite(rho) and bool(np.isfinite(t.sum()))):
        bad = ~(np.isfinite(rho) & (rho > 0.0))
        if bad.any():
            k = int(np.argmax(bad))
            raise BatchError(f"densities[{k}] must be a finite density > 0 kg/m^3, got {rho[k]!r}")
        if not np.isfinite(t).all():
            raise BatchError(f"translations[{int(np.argmax(~np.isfinite(t).all(axis=1)))}] must be finite")
    return rho, r, t


def _columns(r: FloatArray) -> FloatArray:
    """Rotations (n, 3, 3) as 9 contiguous columns (9, n): row ``3 i + k`` holds ``R[:, i, k]``."""
    return r.reshape(len(r), 9).T.copy()


def _check_orthogonal(cols: FloatArray, offset: int) -> None:
    """Every rotation (as :func:`_columns`) orthogonal: each entry of ``R Rᵀ − E`` within :data:`ORTHOGONALITY_TOL`
    (NaN fails too)."""
    worst = np.zeros(cols.shape[1])
    for i in range(3):
        for j in range(i, 3):
            g = cols[3 * i] * cols[3 * j]
            g += cols[3 * i + 1] * cols[3 * j + 1]
            g += cols[3 * i + 2] * cols[3 * j + 2]
            if i == j:
                g -= 1.0
            np.abs(g, out=g)
            np.maximum(worst, g, out=worst)  # NaN propagates and fails the test below
    bad = ~(worst <= ORTHOGONALITY_TOL)
    if bad.any():
        k = int(np.argmax(bad))
        raise BatchError(f"rotations[{offset + k}] is not orthogonal (largest |R R^T - E| entry {worst[k]:.3g}); "
                         "give a rotation or a reflection")


def _center_columns(cols: FloatArray, centroid: FloatArray | None, t_cols: FloatArray) -> FloatArray:
    """CG of each part in the model frame, (3, n): ``t + R c_part``."""
    if centroid is None:
        return t_cols
    out = t_cols.copy()
    for i in range(3):
        for k in range(3):
            out[i] += cols[3 * i + k] * centroid[k]
    return out


def placed_properties(
    kind: str,
    dims: npt.ArrayLike,
    densities: npt.ArrayLike,
    rotations: npt.ArrayLike,
    translations: npt.ArrayLike,
    *,
    validate: bool = True,
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Per-part mass properties of N placed primitives in the model frame.

    Parameters
    ----------
    kind : str
        One of :data:`BATCH_KINDS`.
    dims : (N, k) float
        m, the kind's fields in order.
    densities : (N,) float
        kg/m³.
    rotations : (N, 3, 3) float
        Orthogonal (rotation or reflection), part axes → model axes.
    translations : (N, 3) float
        Origin of each part frame in the model frame, m.
    validate : bool
        Check densities, finiteness and orthogonality (a pass over the rotations).

    Returns
    -------
    masses : (N,) float
        kg.
    centers : (N, 3) float
        m, model frame.
    inertias : (N, 3, 3) float
        kg·m² about each part's CG, model axes, tensor convention: ``ρ R J Rᵀ``.
    """
    d = _check_dims(kind, dims)
    n = len(d)
    rho, r, t = _check_placement(n, densities, rotations, translations, validate)
    cols = _columns(r)
    if validate:
        _check_orthogonal(cols, 0)
    v, centroid, diag, pxy = _unit_columns(kind, np.ascontiguousarray(d.T))
    w = diag * rho
    p = None if pxy is None else pxy * rho
    out = np.empty((n, 3, 3))
    for i in range(3):
        for j in range(i, 3):
            e = w[0] * cols[3 * i] * cols[3 * j] + w[1] * cols[3 * i + 1] * cols[3 * j + 1]
            e += w[2] * cols[3 * i + 2] * cols[3 * j + 2]
            if p is not None:
                e += p * (cols[3 * i] * cols[3 * j + 1] + cols[3 * i + 1] * cols[3 * j])
            out[:, i, j] = e
            out[:, j, i] = e
    return rho * v, _center_columns(cols, centroid, np.ascontiguousarray(t.T)).T.copy(), out


ISOTROPIC_KINDS = frozenset({"sphere", "spherical_shell"})  # tensor diagonal (d, d, d): R J Rᵀ = d E
AXISYMMETRIC_KINDS = frozenset({"cylinder", "tube", "hemisphere", "cone", "frustum", "torus"})  # (t, t, a)


def _rotated_sum(kind: str, cols: FloatArray, weights: FloatArray, product_xy: FloatArray | None) -> FloatArray:
    """``Σ_n R_n J_n R_nᵀ`` (3, 3) for ``J = diag(weights) + p (e_x e_yᵀ + e_y e_xᵀ)``, as matrix products.

    With ``r_k`` the columns of an orthogonal R, ``Σ_k r_k r_kᵀ = E``, so
    ``R diag(d) Rᵀ = d_x E + (d_y − d_x) r_y r_yᵀ + (d_z − d_x) r_z r_zᵀ`` (plus ``p (r_x r_yᵀ + r_y r_xᵀ)``): an
    axisymmetric kind (d_x = d_y) needs only the axis column r_z and an isotropic one no rotation at all. With
    ``A_k`` (3, n) the k-th columns of all parts (rows ``k, 3 + k, 6 + k`` of ``cols``),
    ``Σ_n u_n r_k r_kᵀ = A_k (u ⊙ A_k)ᵀ``: one BLAS product per column used, no (n, 3, 3) array.
    """
    dx = weights[0]
    total = float(dx.sum()) * np.eye(3)
    if kind in ISOTROPIC_KINDS:
        return total
    used = (2,) if kind in AXISYMMETRIC_KINDS else (1, 2)
    for k in used:
        a = cols[k::3]
        total += a @ (a * (weights[k] - dx)).T
    if product_xy is not None:
        cross = (cols[0::3] * product_xy) @ cols[1::3].T
        total += cross + cross.T
    return total


def aggregate(
    kind: str,
    dims: npt.ArrayLike,
    densities: npt.ArrayLike,
    rotations: npt.ArrayLike,
    translations: npt.ArrayLike,
    *,
    validate: bool = True,
    block: int = BLOCK,
    kernel: str = "auto",
) -> MassProperties:
    """Combined mass properties of N placed primitives of one kind (about the combined CG, model axes).

    Same inputs as :func:`placed_properties`. Parts are taken in blocks of ``block`` and each block is summed by a
    roll-up kernel:

    * ``kernel="numpy"``: the closed forms run as array expressions on the block's dimension columns (held in
      cache), the rotated tensors are summed as matrix products (:func:`_rotated_sum`) and the block is
      combined with :func:`massmodel.core.massprops.combine_arrays`;
    * ``kernel="numba"``: the compiled one-pass kernel (:func:`_placed_sums_loop`) evaluates the closed form,
      checks the rotation, places the CG, rotates the tensor and accumulates the moments, part by part, in one
      read of the block;
    * ``kernel="auto"`` (default): :func:`kernel_for`.

    The blocks are then combined with the parallel-axis theorem (exact). Memory beyond the inputs is O(block).

    Returns
    -------
    MassProperties
    """
    d = _check_dims(kind, dims)
    n = len(d)
    if n == 0:
        return MassProperties.zero()
    rho, r, t = _check_placement(n, densities, rotations, translations, validate)
    compiled = _numba_kernel() if kernel_for(n, kernel) == "numba" else None
    masses, centers, tensors = [], [], []
    for start in range(0, n, block):
        stop = min(n, start + block)
        w = rho[start:stop]
        if compiled is not None:
            m, cg, inertia = _compiled_block(compiled, KIND_IDS[kind], start, d[start:stop], w, r[start:stop],
                                             t[start:stop], validate)
        else:
            v, centroid, diag, pxy = _unit_columns(kind, d[start:stop].T.copy())
            cols = _columns(r[start:stop])
            if validate:
                _check_orthogonal(cols, start)
            own = _rotated_sum(kind, cols, diag * w, None if pxy is None else pxy * w)
            c = _center_columns(cols, centroid, t[start:stop].T.copy())
            m, cg, inertia = combine_arrays(w * v, c.T, own[None])
        masses.append(m)
        centers.append(cg)
        tensors.append(inertia)
    if len(masses) == 1:
        return MassProperties(masses[0], centers[0], tensors[0])
    return MassProperties(*combine_arrays(np.array(masses), np.array(centers), np.array(tensors)))


def kernel_for(n: int, kernel: str = "auto") -> str:
    """The roll-up kernel used for ``n`` parts: ``kernel`` itself, or for "auto" "numba" when numba is importable
    and either the compiled kernel is already loaded in this process and ``n`` ≥ :data:`NUMBA_MIN_PARTS`, or ``n``
    ≥ :data:`NUMBA_LOAD_PARTS` (enough to repay loading it); else "numpy"."""
    if kernel not in KERNELS:
        raise BatchError(f"kernel must be one of {', '.join(KERNELS)}, got {kernel!r}")
    if kernel == "auto":
        loaded = "massmodel.core.kernels" in sys.modules
        wanted = n >= NUMBA_MIN_PARTS if loaded else n >= NUMBA_LOAD_PARTS
        return "numba" if wanted and _numba_kernel() is not None else "numpy"
    if kernel == "numba" and _numba_kernel() is None:
        raise BatchError("kernel 'numba' asked for, but numba is not importable here; use kernel='numpy'")
    return kernel


@functools.cache
def _numba_kernel() -> Callable[..., tuple[FloatArray, int]] | None:
    """The compiled :func:`_placed_sums_loop` (:data:`massmodel.core.kernels.placed_sums`), imported on first use;
    None when numba is not installed or does not import."""
    if importlib.util.find_spec("numba") is None:
        return None
    try:
        from . import kernels
    except ImportError:  # pragma: no cover - a broken numba/llvmlite install: the numpy path still works
        return None
    return kernels.placed_sums  # type: ignore[no-any-return]


def _compiled_block(fn: Callable[..., tuple[FloatArray, int]], kind_id: int, start: int, dims: FloatArray,
                    rho: FloatArray, r: FloatArray, t: FloatArray, validate: bool) -> tuple[float, FloatArray, FloatArray]:
    """One block through the compiled kernel: mass, CG and tensor about the CG."""
    r = np.ascontiguousarray(r)
    ref = np.empty(3)
    sums, bad = fn(kind_id, np.ascontiguousarray(dims), np.ascontiguousarray(rho), r, np.ascontiguousarray(t), ref,
                   validate, ORTHOGONALITY_TOL)
    if bad:
        _check_orthogonal(_columns(r), start)  # raises naming the part (the same test as the kernel's)
        raise AssertionError(f"the compiled kernel refused {bad} rotations from part {start}, the numpy check none")
    return sums_to_properties(sums, ref)


def sums_to_properties(sums: FloatArray, ref: FloatArray) -> tuple[float, FloatArray, FloatArray]:
    """Mass, CG and tensor about the CG from the sums of :func:`massmodel.core.kernels.placed_sums`.

    Parameters
    ----------
    sums : (16,) float
        ``W`` (kg), ``F = Σ m d`` (kg·m), ``S = Σ m d dᵀ`` and ``J = Σ R J Rᵀ`` (kg·m², entries xx, yy, zz, xy, xz,
        yz), with ``d`` the CGs relative to ``ref`` (as :func:`_placed_sums_loop` returns them).
    ref : (3,) float
        m.

    Returns
    -------
    mass : float
        kg.
    center : (3,) float
        m (``ref`` when the mass is zero).
    inertia : (3, 3) float
        kg·m² about the CG: ``J + tr(S_G) E − S_G`` with ``S_G = S − W δ δᵀ``, ``δ = F / W`` (parallel-axis theorem,
        Goldstein et al. (2002) §5.3).
    """
    w = float(sums[0])
    s = _symmetric(sums[4:10])
    j = _symmetric(sums[10:16])
    if w == 0.0:
        return 0.0, np.array(ref, dtype=float), j
    delta = sums[1:4] / w
    s -= w * np.outer(delta, delta)
    inertia = j + np.trace(s) * np.eye(3) - s
    return w, ref + delta, inertia


def _symmetric(e: FloatArray) -> FloatArray:
    """(3, 3) from the entries xx, yy, zz, xy, xz, yz."""
    xx, yy, zz, xy, xz, yz = (float(x) for x in e)
    return np.array([[xx, xy, xz], [xy, yy, yz], [xz, yz, zz]])


@dataclass(frozen=True, slots=True)
class Batch:
    """N primitives of one kind as arrays (see :func:`placed_properties` for the fields)."""

    kind: str
    dims: FloatArray
    densities: FloatArray
    rotations: FloatArray
    translations: FloatArray


def aggregate_batches(batches: Iterable[Batch], *, validate: bool = True, kernel: str = "auto") -> MassProperties:
    """Combined mass properties of several batches (e.g. one per kind), with :func:`combine_arrays`.

    ``kernel="auto"`` decides once for the total number of parts (see :func:`kernel_for`)."""
    items = list(batches)
    chosen = kernel_for(sum(len(b.densities) for b in items), kernel)
    parts = [aggregate(b.kind, b.dims, b.densities, b.rotations, b.translations, validate=validate, kernel=chosen)
             for b in items]
    if not parts:
        return MassProperties.zero()
    return MassProperties(*combine_arrays(np.array([p.mass for p in parts]), np.array([p.center for p in parts]),
                                          np.array([p.inertia for p in parts])))


def place(centers: FloatArray, tensors: FloatArray, rotations: FloatArray,
          translations: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Per-part properties moved actively into the model frame (the model's engine, see :class:`massmodel.core.model.Model`).

    Parameters
    ----------
    centers : (N, 3) float
        CGs in the part frames, m.
    tensors : (N, 3, 3) float
        Tensors about the CGs, part axes, kg·m² (tensor convention).
    rotations : (N, 3, 3) float
        Orthogonal, part axes → model axes (checked by the caller: :class:`massmodel.core.frames.Pose`).
    translations : (N, 3) float
        m.

    Returns
    -------
    centers : (N, 3) float
        ``R c + t``, m, model frame.
    tensors : (N, 3, 3) float
        ``R I Rᵀ`` (symmetrised), kg·m², model axes (Goldstein et al. (2002) §5.3).
    """
    n = len(centers)
    moved = np.empty((n, 3))
    rotated = np.empty((n, 3, 3))
    for start in range(0, n, BLOCK):  # in blocks: the temporaries stay small (memory), the block in cache
        stop = min(n, start + BLOCK)
        r = rotations[start:stop]
        np.matmul(r, centers[start:stop, :, None], out=moved[start:stop, :, None])
        moved[start:stop] += translations[start:stop]
        out = rotated[start:stop]
        np.matmul(np.matmul(r, tensors[start:stop]), r.transpose(0, 2, 1), out=out)
        out += out.transpose(0, 2, 1).copy()
        out *= 0.5
    return moved, rotated


def rollup(masses: FloatArray, centers: FloatArray, tensors: FloatArray) -> MassProperties:
    """Combined properties of N parts given in one frame (:func:`massmodel.core.massprops.combine_arrays`; a few
    numpy passes, so no compiled kernel is needed here: see docs/engine.md)."""
    if len(masses) == 0:
        return MassProperties.zero()
    return MassProperties(*combine_arrays(masses, centers, tensors))


def rollup_groups(masses: FloatArray, centers: FloatArray, tensors: FloatArray,
                  members: Sequence[npt.NDArray[np.intp]]) -> list[MassProperties]:
    """:func:`rollup` of each subset of parts (index arrays into the part arrays), in order."""
    return [rollup(masses[idx], centers[idx], tensors[idx]) for idx in members]
