"""The compiled Monte Carlo sampler (numba): draws every part's errors and sums them in one pass, sample by sample.

This module imports numba, so nothing imports it at start-up: :mod:`massmodel.uncertainty.montecarlo` loads it
lazily, only when numba is importable and the run is large enough to repay loading it; otherwise the numpy path of
that module runs (same distributions, another random stream).

For each sample the kernel walks the parts in blocks of :data:`BLOCK` parts: it fills a small buffer with the
block's standard normals (only those of the errors whose standard uncertainty is not zero) and adds the block's
contribution to the sums the totals need (Σδm, Σ first and second moments about the nominal CG, Σ own inertia,
subset masses) in local variables, in single precision over a block and double precision across blocks. Nothing of
size samples × parts is ever stored.

Random numbers
--------------
* Uniform 64-bit words: SplitMix64, the output function of Steele, Lea & Flood, "Fast splittable pseudorandom
  number generators", OOPSLA 2014 (the finaliser constants of its reference implementation, as distributed with
  Vigna's xoshiro generators), evaluated at a counter: word ``n`` of sample ``s`` is
  ``mix(key + (s·2³² + n)·γ)``. Being counter-based, every sample's numbers depend on the key and the sample's index
  alone, never on how the samples are split into calls, and the words of different samples never overlap.
  The key comes from the user's seed through ``numpy.random.SeedSequence``.
* Normal pairs: the Box–Muller transform (Box & Muller, "A Note on the Generation of Random Normal Deviates",
  Ann. Math. Statist. 29(2), 610–611, 1958): from one word, 40 bits give U ∈ (0, 1) and the radius
  R = √(−2 ln U), 2 bits a quadrant and 22 bits an angle φ ∈ (−π/4, π/4) inside it; the pair is R·(cos θ, sin θ)
  with θ = φ + quadrant·π/2 (the quarter turn is exact: a swap and signs). ln, sin and cos are series written out
  here (ln m = 2 artanh((m − 1)/(m + 1)) on m ∈ [√½, √2), Taylor series of sin and cos on |φ| ≤ π/4), accurate to
  single precision, so the loop has no table look-up and no branch and the compiler vectorises it. The largest
  radius is √(80 ln 2) ≈ 7.4: |z| > 7.4 (probability 10⁻¹³) is never drawn.
* Uniform density errors: the top 53 bits of one word per banded material and sample (the double in [0, 1)).

The ziggurat method (Marsaglia & Tsang, J. Statistical Software 5(8), 2000) with xoshiro256++ (Blackman & Vigna,
ACM TOMS 47(4), 2021) was measured first, in a prototype: its fast path needs a table look-up per draw, which the
compiler does not vectorise here (a gather), and one draw at a time it took 2.0–2.4 ns per normal against 0.6 ns
for this vectorised transform; see docs/uncertainty.md.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from llvmlite import ir
from numba import float32, types, uint64
from numba.extending import intrinsic

__all__ = ["BLOCK", "KINDS", "normals", "sample_sums", "uniform_words"]

#: Parts per block: the block's normals (at most 5 × BLOCK float32) stay in the first-level cache.
BLOCK = 512
#: The errors of a part, in the order the kernel draws them (its ``kinds`` columns).
KINDS = ("mass", "cg_x", "cg_y", "cg_z", "inertia")

# Reassociation lets the sums run in SIMD lanes; "numpy" error model: a division is a plain division (numba's
# default checks for zero, a branch that stops vectorisation).
_FAST = {"reassoc", "contract", "nsz", "arcp"}
_compiled = numba.njit(cache=True, nogil=True, boundscheck=False, fastmath=_FAST, error_model="numpy")

_GAMMA = np.uint64(0x9E3779B97F4A7C15)  # SplitMix64's increment, 2⁶⁴/φ
_MIX1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX2 = np.uint64(0x94D049BB133111EB)
_LN2 = math.log(2.0)
_SQRT2 = math.sqrt(2.0)
_HALF_PI = 0.5 * math.pi


# Bit manipulations written as LLVM instructions on 32-bit lanes: numba's own integer arithmetic widens int32 to
# int64, which halves the SIMD width of the loop.
_I32 = ir.IntType(32)
_F32 = ir.FloatType()


@intrinsic
def _exponent(typingctx, x):  # type: ignore[no-untyped-def]
    """The unbiased binary exponent e of a positive normal float32 x = m·2ᵉ, m ∈ [1, 2), as a float32."""
    sig = types.float32(types.float32)

    def codegen(context, builder, signature, args):  # type: ignore[no-untyped-def]
        bits = builder.bitcast(args[0], _I32)
        e = builder.sub(builder.lshr(bits, ir.Constant(_I32, 23)), ir.Constant(_I32, 127))
        return builder.sitofp(e, _F32)

    return sig, codegen


@intrinsic
def _mantissa(typingctx, x):  # type: ignore[no-untyped-def]
    """The significand m ∈ [1, 2) of a positive normal float32 x = m·2ᵉ (its exponent bits set to 0)."""
    sig = types.float32(types.float32)

    def codegen(context, builder, signature, args):  # type: ignore[no-untyped-def]
        bits = builder.bitcast(args[0], _I32)
        m = builder.or_(builder.and_(bits, ir.Constant(_I32, 0x7FFFFF)), ir.Constant(_I32, 0x3F800000))
        return builder.bitcast(m, _F32)

    return sig, codegen


@intrinsic
def _high40(typingctx, w):  # type: ignore[no-untyped-def]
    """The top 40 bits of a 64-bit word as a float32 (rounded to 24 significant bits)."""
    sig = types.float32(types.uint64)

    def codegen(context, builder, signature, args):  # type: ignore[no-untyped-def]
        return builder.uitofp(builder.lshr(args[0], ir.Constant(ir.IntType(64), 24)), _F32)

    return sig, codegen


@intrinsic
def _low24(typingctx, w):  # type: ignore[no-untyped-def]
    """The low 24 bits of a 64-bit word as a float32 (exact)."""
    sig = types.float32(types.uint64)

    def codegen(context, builder, signature, args):  # type: ignore[no-untyped-def]
        low = builder.and_(builder.trunc(args[0], _I32), ir.Constant(_I32, 0xFFFFFF))
        return builder.sitofp(low, _F32)

    return sig, codegen


@numba.njit(inline="always")
def _mix(z):  # type: ignore[no-untyped-def]
    """SplitMix64's output function (Steele, Lea & Flood 2014): a bijection of 64-bit words."""
    z = (z ^ (z >> uint64(30))) * _MIX1
    z = (z ^ (z >> uint64(27))) * _MIX2
    return z ^ (z >> uint64(31))


@numba.njit(inline="always")
def _word(key, counter):  # type: ignore[no-untyped-def]
    return _mix(key + counter * _GAMMA)


@numba.njit(inline="always")
def _log(x):  # type: ignore[no-untyped-def]
    """ln x for a positive normal float32: x = m·2ᵉ with m ∈ [√½, √2), ln m = 2 artanh s = 2(s + s³/3 + … + s⁹/9),
    s = (m − 1)/(m + 1), |s| ≤ 0.172 (the next term, 2s¹¹/11, is below 1e-9)."""
    m = _mantissa(x)
    e = _exponent(x)
    high = m > float32(_SQRT2)
    m = float32(0.5) * m if high else m
    e = e + float32(1.0) if high else e
    s = (m - float32(1.0)) / (m + float32(1.0))
    s2 = s * s
    series = float32(1.0) + s2 * (float32(1.0 / 3.0) + s2 * (float32(0.2) + s2 * (float32(1.0 / 7.0)
                                                                                 + s2 * float32(1.0 / 9.0))))
    return float32(2.0) * s * series + e * float32(_LN2)


@numba.njit(inline="always")
def _pair(w):  # type: ignore[no-untyped-def]
    """Two independent standard normals from one 64-bit word (Box–Muller, see the module docstring)."""
    u = (_high40(w) + float32(0.5)) * float32(2.0**-40)  # (0, 1), 40 bits
    radius = math.sqrt(float32(-2.0) * _log(u))
    t = _low24(w)  # bits 23 and 22: the quadrant; bits 0-21: the angle inside it
    hi = t >= float32(2.0**23)
    t = t - float32(2.0**23) if hi else t
    lo = t >= float32(2.0**22)
    t = t - float32(2.0**22) if lo else t
    phi = ((t + float32(0.5)) * float32(2.0**-22) - float32(0.5)) * float32(_HALF_PI)
    p2 = phi * phi
    # Taylor series to φ⁹ and φ¹⁰ (|φ| ≤ π/4: remainders below 2e-9)
    sin = phi * (float32(1.0) - p2 / float32(6.0) * (float32(1.0) - p2 / float32(20.0) * (
        float32(1.0) - p2 / float32(42.0) * (float32(1.0) - p2 / float32(72.0)))))
    cos = float32(1.0) - p2 / float32(2.0) * (float32(1.0) - p2 / float32(12.0) * (float32(1.0) - p2 / float32(30.0) * (
        float32(1.0) - p2 / float32(56.0) * (float32(1.0) - p2 / float32(90.0)))))
    # turn (cos φ, sin φ) by quadrant q = 2·hi + lo quarter turns: (c, s), (−s, c), (−c, −s), (s, −c)
    a = sin if lo else cos
    b = cos if lo else sin
    sign_lo = float32(-1.0) if lo else float32(1.0)
    sign_b = float32(-1.0) if hi else float32(1.0)
    return radius * a * (sign_lo * sign_b), radius * b * sign_b


@_compiled
def _fill(key, counter, out, count):  # type: ignore[no-untyped-def]
    """out[:count] ← standard normals from the words ``counter, counter + 1, …``; returns the number of words used.
    Pair q goes to out[q] and out[pairs + q] (an odd count leaves the last pair's second normal unused)."""
    pairs = (count + 1) // 2
    state = key + counter * _GAMMA  # SplitMix64's Weyl sequence, stepped by γ (no multiply in the loop)
    for q in range(pairs):
        a, b = _pair(_mix(state))
        state += _GAMMA
        out[q] = a
        out[pairs + q] = b
    return pairs


@_compiled
def normals(key, sample, count):  # type: ignore[no-untyped-def]
    """``count`` standard normals (float32) of sample ``sample``'s stream, in the kernel's order: what
    :func:`sample_sums` draws for that sample's first block when the model has no density group (with K groups
    they start K words later). For the tests of the generator."""
    out = np.empty(count + 1, np.float32)
    _fill(key, uint64(sample) << uint64(32), out, count)
    return out[:count]


@_compiled
def uniform_words(key, sample, count):  # type: ignore[no-untyped-def]
    """The first ``count`` 64-bit words of sample ``sample``'s stream (SplitMix64 at counters s·2³², s·2³² + 1, …)."""
    out = np.empty(count, np.uint64)
    base = uint64(sample) << uint64(32)
    for n in range(count):
        out[n] = _word(key, base + uint64(n))
    return out


@_compiled
def sample_sums(key, first, out, seg_start, seg_stop, seg_slot, seg_group, density_low, density_width,
                mass, u_mass, r, u_cg, u_inertia, own, masks):  # type: ignore[no-untyped-def]
    """Sample ``out.shape[0]`` samples (indices ``first, first + 1, …``) and write their sums.

    Parameters
    ----------
    key : uint64
        The run's key (from the seed).
    first : int
        Index of the first sample (its stream).
    out : (S, 10 + R) float64
        Written: Σδm (kg); Σ δm r_a + m′ δc_a (3, kg·m); Σ δm r_a² + m′ δc_a (2 r_a + δc_a) (3, kg·m²);
        Σ e I_aa (3, kg·m²); Σ δm over each subset (R, kg). r is about the nominal CG; m′ = m + δm.
    seg_start, seg_stop : (G,) int64
        Part ranges of the segments: parts of one density group drawing the same kinds of error.
    seg_slot : (G, 5) int64
        Position of each kind (:data:`KINDS`) among the segment's draws, -1 where it is not drawn.
    seg_group : (G,) int64
        Density group of the segment, K (one past the last) for none.
    density_low, density_width : (K,) float64
        Relative density errors: uniform on [low, low + width).
    mass, u_mass, u_inertia : (N,) float32
        kg, kg, fraction.
    r, u_cg, own : (3, N) float32
        Position about the nominal CG (m), CG standard uncertainty (m), own inertia diagonal (kg·m²).
    masks : (R, N) float32
        1 for the parts of each subset.
    """
    n_density = density_low.shape[0]
    n_sub = masks.shape[0]
    buf = np.empty(5 * BLOCK + 1, np.float32)
    zeros = np.zeros(BLOCK, np.float32)
    dm_block = np.empty(BLOCK, np.float32)
    eps = np.zeros(n_density + 1)
    for row in range(out.shape[0]):
        base = uint64(first + row) << uint64(32)
        for k in range(n_density):
            u = float(_word(key, base + uint64(k)) >> uint64(11)) * 2.0**-53
            eps[k] = density_low[k] + density_width[k] * u
        counter = base + uint64(n_density)
        for c in range(out.shape[1]):
            out[row, c] = 0.0
        for g in range(seg_start.shape[0]):
            e = float32(eps[seg_group[g]])
            drawn = 0
            for kind in range(5):
                drawn += seg_slot[g, kind] >= 0
            for b0 in range(seg_start[g], seg_stop[g], BLOCK):
                nb = min(BLOCK, seg_stop[g] - b0)
                counter += uint64(_fill(key, counter, buf, drawn * nb))
                slot = seg_slot[g, 0]
                z_m = buf[slot * nb:(slot + 1) * nb] if slot >= 0 else zeros[:nb]
                slot = seg_slot[g, 1]
                z_x = buf[slot * nb:(slot + 1) * nb] if slot >= 0 else zeros[:nb]
                slot = seg_slot[g, 2]
                z_y = buf[slot * nb:(slot + 1) * nb] if slot >= 0 else zeros[:nb]
                slot = seg_slot[g, 3]
                z_z = buf[slot * nb:(slot + 1) * nb] if slot >= 0 else zeros[:nb]
                slot = seg_slot[g, 4]
                z_i = buf[slot * nb:(slot + 1) * nb] if slot >= 0 else zeros[:nb]
                # 1-D views of the block's rows (the loop then vectorises; indexing the 2-D arrays does not)
                b1 = b0 + nb
                m_b, um_b, ui_b = mass[b0:b1], u_mass[b0:b1], u_inertia[b0:b1]
                rx_b, ry_b, rz_b = r[0, b0:b1], r[1, b0:b1], r[2, b0:b1]
                ux_b, uy_b, uz_b = u_cg[0, b0:b1], u_cg[1, b0:b1], u_cg[2, b0:b1]
                ix_b, iy_b, iz_b = own[0, b0:b1], own[1, b0:b1], own[2, b0:b1]
                s_m = f_x = f_y = f_z = q_x = q_y = q_z = o_x = o_y = o_z = float32(0.0)
                for p in range(nb):
                    dm = um_b[p] * z_m[p] + e * m_b[p]
                    mp = m_b[p] + dm
                    rx, ry, rz = rx_b[p], ry_b[p], rz_b[p]
                    cx, cy, cz = ux_b[p] * z_x[p], uy_b[p] * z_y[p], uz_b[p] * z_z[p]
                    s_m += dm
                    f_x += dm * rx + mp * cx
                    f_y += dm * ry + mp * cy
                    f_z += dm * rz + mp * cz
                    q_x += dm * rx * rx + mp * cx * (rx + rx + cx)
                    q_y += dm * ry * ry + mp * cy * (ry + ry + cy)
                    q_z += dm * rz * rz + mp * cz * (rz + rz + cz)
                    ei = ui_b[p] * z_i[p] + e
                    o_x += ei * ix_b[p]
                    o_y += ei * iy_b[p]
                    o_z += ei * iz_b[p]
                    dm_block[p] = dm
                out[row, 0] += s_m
                out[row, 1] += f_x
                out[row, 2] += f_y
                out[row, 3] += f_z
                out[row, 4] += q_x
                out[row, 5] += q_y
                out[row, 6] += q_z
                out[row, 7] += o_x
                out[row, 8] += o_y
                out[row, 9] += o_z
                for k in range(n_sub):
                    mask_b = masks[k, b0:b1]
                    t = float32(0.0)
                    for p in range(nb):
                        t += dm_block[p] * mask_b[p]
                    out[row, 10 + k] += t
    return out

