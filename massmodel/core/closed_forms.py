"""The closed forms of the batch kinds, written once, and the one-pass roll-up loop that the compiled kernel runs.

Each kind's closed form is one function of its dimensions (``_form_<kind>``). :mod:`massmodel.core.batch` calls it
with dimension columns (numpy arrays, the numpy path); :mod:`massmodel.core.kernels` compiles it with numba, together
with :func:`placed_sums_loop`, which calls it with one part's floats. Keeping the forms and the loop in this one
file also keeps numba's on-disk cache right: the compiled code is keyed to this file and recompiled when it changes.

This module imports numpy alone.

References
----------
.. [1] Machinery's Handbook, 31st ed., Industrial Press (2020), pp.253-254 (solid moments of inertia), as cited per
   kind in :mod:`massmodel.core.shapes`.
.. [2] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3 (rotation of the tensor, parallel axes).
"""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt

__all__ = ["FORMS", "KIND_IDS", "placed_sums_loop", "sums_to_properties"]

FloatArray = npt.NDArray[np.float64]

# The closed forms, one function per kind, written once for both engines: called with dimension columns (arrays)
# by the numpy path (:func:`_unit_columns`) and with one part's floats by the compiled kernel (numba compiles these
# same functions, see :func:`placed_sums_loop`). Each takes the kind's fields in order (unused trailing ones are
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


def placed_sums_loop(kind_id, dims, rho, rotations, translations, ref, check, tol):  # type: ignore[no-untyped-def]
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
        Part axes → model axes, orthogonal: the tensor is rotated with ``R Rᵀ = E`` (as :func:`massmodel.core.batch._rotated_sum`), so
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


def sums_to_properties(sums: FloatArray, ref: FloatArray) -> tuple[float, FloatArray, FloatArray]:
    """Mass, CG and tensor about the CG from the sums of :func:`massmodel.core.kernels.placed_sums`.

    Parameters
    ----------
    sums : (16,) float
        ``W`` (kg), ``F = Σ m d`` (kg·m), ``S = Σ m d dᵀ`` and ``J = Σ R J Rᵀ`` (kg·m², entries xx, yy, zz, xy, xz,
        yz), with ``d`` the CGs relative to ``ref`` (as :func:`placed_sums_loop` returns them).
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
