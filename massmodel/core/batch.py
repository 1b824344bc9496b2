"""Vectorised mass properties of many primitives of one kind, straight from arrays.

For large assemblies (thousands to millions of parts: fasteners, cells, lattice struts, sampled designs) building a
:class:`massmodel.core.model.Component` per part costs more than the physics. Here N primitives of one kind are given as
arrays (dimensions, densities, rotations, translations) and their mass properties are evaluated with the same closed
forms as :mod:`massmodel.core.shapes` (written once, in :mod:`massmodel.core.closed_forms`), as array expressions or
in the compiled one-pass kernel, then combined with the parallel-axis theorem. The model's roll-ups use this
module too (:func:`place`, :func:`rollup`, :func:`rollup_groups`; see :func:`massmodel.core.model.part_arrays`).

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
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .closed_forms import FORMS, KIND_IDS, sums_to_properties
from .compiled import auto_kernel, import_compiled
from .errors import UserError
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
#: code costs about 1 s once per process (measured: import 0.3 s, first call 0.7 s), the kernel saves about 35 ns
#: a part (docs/engine.md), so it repays its load from about 3e7 parts.
NUMBA_LOAD_PARTS = 30_000_000
#: Once the compiled kernel is loaded in the process (by a large batch or an explicit kernel="numba"), "auto" uses
#: it from this many parts (it is faster than the numpy path from about 1e4 parts).
NUMBA_MIN_PARTS = 10_000
# the smaller dimension that must stay below the larger one, per kind: (small column, large column)
_ORDERED = {"tube": (1, 0), "spherical_shell": (1, 0), "torus": (1, 0)}


class BatchError(UserError, ValueError):
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
    * ``kernel="numba"``: the compiled one-pass kernel (:func:`massmodel.core.closed_forms.placed_sums_loop`) evaluates the closed form,
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
        return auto_kernel(n, "massmodel.core.kernels", NUMBA_LOAD_PARTS, NUMBA_MIN_PARTS,
                           lambda: _numba_kernel() is not None)
    if kernel == "numba" and _numba_kernel() is None:
        raise BatchError("kernel 'numba' asked for, but numba is not importable here; use kernel='numpy'")
    return kernel


@functools.cache
def _numba_kernel() -> Callable[..., tuple[FloatArray, int]] | None:
    """The compiled :func:`massmodel.core.closed_forms.placed_sums_loop` (:data:`massmodel.core.kernels.placed_sums`),
    imported on first use;
    None when numba is not installed or does not import (:func:`massmodel.core.compiled.import_compiled`)."""
    kernels = import_compiled("massmodel.core.kernels")
    return None if kernels is None else kernels.placed_sums  # type: ignore[no-any-return]


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
