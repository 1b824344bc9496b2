"""Compiled one-pass roll-up kernels (numba), used by :mod:`massmodel.core.batch` when they pay off.

This module imports numba, so nothing imports it at start-up: :func:`massmodel.core.batch.kernel_for` loads it
lazily, only for batches large enough to repay numba's import (about 0.35 s) and only when numba is importable;
otherwise the numpy path of :mod:`massmodel.core.batch` runs. Both give the same results to round-off (tested to
1e-12 relative in ``tests/test_kernels.py``).

The kernel reads each part once: density, volume, centroid, tensor diagonal and xy product per density (from the
closed forms of :mod:`massmodel.core.batch`, evaluated by numpy on the block's dimensions), rotation and
translation; it checks the rotation, places the CG (``x = R c + t``), rotates the tensor (``ρ R J Rᵀ``) and
accumulates the sums the roll-up needs, about a reference point near the parts for accuracy:

* ``W = Σ m``, ``F = Σ m d`` and ``S = Σ m d dᵀ`` with ``d = x − ref`` (kg, kg·m, kg·m²);
* ``J = Σ ρ R J Rᵀ`` (kg·m², about each part's own CG, model axes).

:func:`massmodel.core.batch.sums_to_properties` turns them into mass, CG and the tensor about the CG (parallel-axis
theorem, Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed., §5.3).

Compiled code is cached on disk by numba (``cache=True``): the first call on a machine compiles (a few seconds),
later processes load the cached machine code.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["placed_sums"]


# Reassociation lets the sums run in SIMD lanes (round-off of the same order as numpy's pairwise sums); NaN and
# infinity keep their meaning, so a NaN rotation still fails the orthogonality test.
_FAST = {"reassoc", "contract", "nsz", "arcp"}


@numba.njit(cache=True, nogil=True, boundscheck=False, fastmath=_FAST)
def placed_sums(rho, volume, centroid, diag, pxy, rotations, translations, ref, check, tol):  # type: ignore[no-untyped-def]
    """One pass over a block of n placed primitives.

    Parameters
    ----------
    rho, volume : (n,) float
        kg/m³ and m³.
    centroid : (3, n) float
        Part-frame centroids, m; shape (3, 0) when every centroid is the origin.
    diag : (3, n) float
        Tensor diagonal per density about the centroid, part axes, m⁵.
    pxy : (n,) float
        xy product per density (tensor convention), m⁵; shape (0,) when zero for the kind.
    rotations : (n, 3, 3) float
        Part axes → model axes, orthogonal (the tensor is rotated with ``R Rᵀ = E``, so a matrix that is not
        orthogonal gives a wrong tensor when ``check`` is off, as in the numpy path).
    translations : (n, 3) float
        m.
    ref : (3,) float
        Output: the reference point of the first and second moments (the mean of the translations), m.
    check : bool
        Test every rotation: each entry of ``R Rᵀ − E`` within ``tol`` (NaN fails).
    tol : float
        Orthogonality tolerance.

    Returns
    -------
    sums : (16,) float
        ``W``, ``F`` (3), ``S`` (xx, yy, zz, xy, xz, yz), ``J`` (same order).
    bad : int
        How many rotations fail the check (the caller finds and names the first).
    """
    n = rho.shape[0]
    r0 = r1 = r2 = 0.0
    for k in range(n):
        r0 += translations[k, 0]
        r1 += translations[k, 1]
        r2 += translations[k, 2]
    ref[0], ref[1], ref[2] = r0 / n, r1 / n, r2 / n
    has_c = centroid.shape[1] == n
    has_p = pxy.shape[0] == n
    w = 0.0
    f0 = f1 = f2 = 0.0
    s00 = s11 = s22 = s01 = s02 = s12 = 0.0
    j00 = j11 = j22 = j01 = j02 = j12 = jd = 0.0
    bad = 0
    for k in range(n):
        r = rotations[k]
        a0, a1, a2 = r[0, 0], r[0, 1], r[0, 2]
        b0, b1, b2 = r[1, 0], r[1, 1], r[1, 2]
        c0, c1, c2 = r[2, 0], r[2, 1], r[2, 2]
        if check:
            g00 = abs(a0 * a0 + a1 * a1 + a2 * a2 - 1.0)
            g11 = abs(b0 * b0 + b1 * b1 + b2 * b2 - 1.0)
            g22 = abs(c0 * c0 + c1 * c1 + c2 * c2 - 1.0)
            g01 = abs(a0 * b0 + a1 * b1 + a2 * b2)
            g02 = abs(a0 * c0 + a1 * c1 + a2 * c2)
            g12 = abs(b0 * c0 + b1 * c1 + b2 * c2)
            worst = max(g00, g11, g22, g01, g02, g12)
            bad += 0 if worst <= tol else 1  # NaN counts as bad
        m = rho[k] * volume[k]
        x0 = translations[k, 0] - ref[0]
        x1 = translations[k, 1] - ref[1]
        x2 = translations[k, 2] - ref[2]
        if has_c:
            u, v, z = centroid[0, k], centroid[1, k], centroid[2, k]
            x0 += a0 * u + a1 * v + a2 * z
            x1 += b0 * u + b1 * v + b2 * z
            x2 += c0 * u + c1 * v + c2 * z
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
        # R diag(d) R^T = d_x E + (d_y - d_x) r_y r_y^T + (d_z - d_x) r_z r_z^T with r_k the columns of the
        # orthogonal R (as the numpy path's _rotated_sum); d_x E is summed once, in jd
        d0 = rho[k] * diag[0, k]
        e1 = rho[k] * diag[1, k] - d0
        e2 = rho[k] * diag[2, k] - d0
        jd += d0
        j00 += e1 * a1 * a1 + e2 * a2 * a2
        j11 += e1 * b1 * b1 + e2 * b2 * b2
        j22 += e1 * c1 * c1 + e2 * c2 * c2
        j01 += e1 * a1 * b1 + e2 * a2 * b2
        j02 += e1 * a1 * c1 + e2 * a2 * c2
        j12 += e1 * b1 * c1 + e2 * b2 * c2
        if has_p:
            p = rho[k] * pxy[k]
            j00 += 2.0 * p * a0 * a1
            j11 += 2.0 * p * b0 * b1
            j22 += 2.0 * p * c0 * c1
            j01 += p * (a0 * b1 + a1 * b0)
            j02 += p * (a0 * c1 + a1 * c0)
            j12 += p * (b0 * c1 + b1 * c0)
    sums = np.empty(16)
    sums[0] = w
    sums[1], sums[2], sums[3] = f0, f1, f2
    sums[4], sums[5], sums[6], sums[7], sums[8], sums[9] = s00, s11, s22, s01, s02, s12
    sums[10], sums[11], sums[12], sums[13], sums[14], sums[15] = j00 + jd, j11 + jd, j22 + jd, j01, j02, j12
    return sums, bad
