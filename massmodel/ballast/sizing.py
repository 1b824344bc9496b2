"""Sizing one ballast block (or a stack of plates) to fit a box-shaped slot and reach a target mass.

The slot is a box envelope (a model ``[[slot]]`` with ``shape = "box"``, or a box given directly). The block keeps
the slot's clearance on every side. One axis of the slot is the *fill axis*: the block grows along it, from the wall
opposite the fill direction (``"+z"``: sits on the −z wall and grows upwards) or symmetrically about the slot centre
(``"z"``: its CG stays at the centre). The other two sizes are fixed by the user or take the whole width available,
rounded down to the manufacturing increment.

The minimum-mass rule: the target is reached at the LOW end of the material's density band. The fill length is the
smallest multiple of the increment (or sum of stock plate thicknesses) whose mass at the lowest density is at least
the target; rounding only ever goes up, so the block never falls short however the bar's density lies in its band.
Every mass is exact for the block as drawn (see :mod:`massmodel.ballast.block`).

Everything here is SI and free of CAD (the packaging check of sized pieces is
:func:`massmodel.ballast.targets.check_fit`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import replace
from functools import lru_cache
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.frames import Pose
from massmodel.core.materials import Material

from .block import AXES, BlockError, BlockGeometry, Chamfer, Counterbore, HolePattern
from .spec import (
    LENGTH_SLACK,
    MAX_STEPS,
    BlockSizing,
    BlockSpec,
    Envelope,
    Fill,
    PlacedPiece,
    SizingError,
    mm_text,
)

__all__ = [
    "SizingError",
    "Envelope",
    "Fill",
    "BlockSpec",
    "PlacedPiece",
    "BlockSizing",
    "size_block",
    "heaviest_block",
    "spec_from_parts",
    "cross_sizes",
    "stack_for_units",
]

FloatArray = npt.NDArray[np.float64]


def cross_sizes(env: Envelope, spec: BlockSpec) -> FloatArray:
    """Block sizes across the fill axis, (3,) m (the fill entry is 0): fixed, or the width available rounded down
    to the increment."""
    avail = env.available
    size = np.zeros(3)
    inc = spec.increment
    for k in range(3):
        if k == spec.fill.axis:
            continue
        letter = AXES[k]
        if letter in spec.fixed:
            v = float(spec.fixed[letter])
            if v > avail[k] * (1.0 + LENGTH_SLACK):
                raise SizingError(
                    f"slot '{env.name}': fixed size {mm_text(v)} along {letter} exceeds the {mm_text(avail[k])} available "
                    f"({mm_text(env.size[k])} less twice the clearance {mm_text(env.clearance)})", f"fixed.{letter}")
            size[k] = v
        else:
            n = math.floor(avail[k] / inc + LENGTH_SLACK)
            if n < 1:
                raise SizingError(f"slot '{env.name}': {mm_text(avail[k])} available along {letter} is less than one "
                                  f"increment {mm_text(inc)}", "increment")
            size[k] = round(n * inc, 12)
    return size


def _plate_geometry(env: Envelope, spec: BlockSpec, cross: FloatArray, thickness: float,
                    counterbored: bool) -> BlockGeometry:
    size = cross.copy()
    size[spec.fill.axis] = thickness
    holes = spec.holes
    if holes is not None and holes.counterbore is not None and not counterbored:
        holes = replace(holes, counterbore=None)
    try:
        return _geometry((float(size[0]), float(size[1]), float(size[2])), holes, spec.chamfer)
    except BlockError as exc:
        raise SizingError(f"slot '{env.name}': {exc}", exc.field) from None


@lru_cache(maxsize=4096)
def _geometry(size: tuple[float, float, float], holes: HolePattern | None, chamfer: Chamfer | None) -> BlockGeometry:
    """Blocks are immutable and re-sized often while searching: build each distinct one once."""
    return BlockGeometry(size, holes=holes, chamfer=chamfer)


def _counterbore_last(spec: BlockSpec) -> bool:
    """Whether the counterbored plate is the last of a low-to-high list along the fill axis."""
    return spec.holes is None or spec.holes.counterbore_end > 0


def _stack(env: Envelope, spec: BlockSpec, cross: FloatArray, plates: Sequence[float]) -> tuple[PlacedPiece, ...]:
    """Place plates (listed from low to high coordinate along the fill axis) in the slot.

    The counterbore (if any) goes in the plate at the counterbore end. Returns the pieces from the anchor wall
    outwards.
    """
    k = spec.fill.axis
    total = float(sum(plates))
    if spec.fill.sign > 0:
        start = -0.5 * env.size[k] + env.clearance
    elif spec.fill.sign < 0:
        start = 0.5 * env.size[k] - env.clearance - total
    else:
        start = -0.5 * total
    last = _counterbore_last(spec)
    pieces = []
    pos = start
    n = len(plates)
    for idx, t in enumerate(plates):
        geom = _plate_geometry(env, spec, cross, t, counterbored=(idx == n - 1) if last else (idx == 0))
        centre = np.zeros(3)
        centre[k] = pos + 0.5 * t
        pieces.append(PlacedPiece(geom, env.pose * Pose.from_translation(centre)))
        pos += t
    return tuple(pieces if spec.fill.sign >= 0 else pieces[::-1])


def _order(spec: BlockSpec, plates: list[float]) -> list[float]:
    """Thickest plate at the counterbore end (it must hold the counterbore)."""
    return sorted(plates) if _counterbore_last(spec) else sorted(plates, reverse=True)


def _split_even(env: Envelope, spec: BlockSpec, cross: FloatArray, units: int) -> list[float]:
    """Split ``units`` increments into the fewest near-equal plates that each stay within the segment limit at
    the HIGH end of the density band (low-to-high order along the fill axis)."""
    inc = spec.increment
    if spec.max_segment_mass is None:
        return [round(units * inc, 12)]
    hi = spec.material.band[1]
    last = _counterbore_last(spec)
    cb = spec.holes.counterbore if spec.holes is not None else None
    cb_units = math.floor(cb.depth / inc + LENGTH_SLACK) + 1 if cb is not None else 1  # the counterbored plate is deeper
    for n in range(1, units + 1):
        q, r = divmod(units, n)
        units_each = sorted(q + (1 if i < r else 0) for i in range(n))
        if units_each[-1] < cb_units:
            if n == 1 or units - cb_units < n - 1:
                continue
            q, r = divmod(units - cb_units, n - 1)
            units_each = sorted(q + (1 if i < r else 0) for i in range(n - 1)) + [cb_units]
        thick = [round(u * inc, 12) for u in units_each]  # thickest last
        if not last:
            thick.reverse()
        try:
            masses = [hi * _plate_geometry(env, spec, cross, t, (i == n - 1) if last else (i == 0)).volume()
                      for i, t in enumerate(thick)]
        except SizingError:
            break  # plates have become too thin for their chamfers: more plates only make it worse
        if max(masses) <= spec.max_segment_mass * (1.0 + 1e-12):
            return thick
    lightest = [hi * float(np.prod(cross[np.arange(3) != spec.fill.axis])) * inc]
    extra = ""
    if cb is not None:
        extra = (f"; the counterbored plate must be at least {mm_text(cb_units * inc)} thick and weighs about "
                 f"{lightest[0] * cb_units:.3f} kg")
    raise SizingError(
        f"slot '{env.name}': {mm_text(units * inc)} of plates cannot be split within max_segment_mass "
        f"{spec.max_segment_mass:.3f} kg at the high density end (each {mm_text(inc)} of thickness weighs about "
        f"{lightest[0]:.3f} kg{extra}, and a chamfer of {mm_text(spec.chamfer.size) if spec.chamfer else '0 mm'} needs "
        f"plates more than twice as thick); make the cross-section smaller or the segment limit larger",
        "max_segment_mass")


def _stock_sums(env: Envelope, spec: BlockSpec, cross: FloatArray, limit: float) -> list[tuple[float, list[float]]]:
    """Stack thicknesses reachable with stock plates (each within the segment limit), fewest plates per sum,
    ascending; plates in low-to-high order along the fill axis."""
    hi = spec.material.band[1]
    allowed = []
    for t in spec.stock:
        if spec.max_segment_mass is not None:
            try:
                m = hi * _plate_geometry(env, spec, cross, t, False).volume()
            except SizingError:
                continue
            if m > spec.max_segment_mass:
                continue
        allowed.append(round(t * 1e6))
    if not allowed:
        raise SizingError(f"slot '{env.name}': no stock thickness gives a plate within max_segment_mass "
                          f"{spec.max_segment_mass} kg", "stock")
    g = math.gcd(*allowed)
    cap = int(math.floor(limit * 1e6 / g + LENGTH_SLACK))
    steps = sorted({u // g for u in allowed}, reverse=True)
    best: list[list[int] | None] = [None] * (cap + 1)
    best[0] = []
    for total in range(1, cap + 1):
        choice: list[int] | None = None
        for s in steps:
            prev = best[total - s] if s <= total else None
            if prev is not None and (choice is None or len(prev) + 1 < len(choice)):
                choice = prev + [s]
        best[total] = choice
    return [(total * g * 1e-6, _order(spec, [c * g * 1e-6 for c in comp]))
            for total, comp in enumerate(best) if comp]


def stack_for_units(env: Envelope, spec: BlockSpec, cross: FloatArray, units: int) -> tuple[PlacedPiece, ...]:
    """The block (or plates within the segment limit) ``units`` increments long along the fill axis, placed."""
    return _stack(env, spec, cross, _split_even(env, spec, cross, units))


def _volume(pieces: Iterable[PlacedPiece]) -> float:
    return float(sum(p.geometry.volume() for p in pieces))


def size_block(env: Envelope, spec: BlockSpec, target: float | None) -> BlockSizing:
    """Size a block (or plate stack) in an envelope.

    Parameters
    ----------
    env : Envelope
        The slot.
    spec : BlockSpec
        Material, fill, sizes, holes, chamfers, increment, stock plates, segment limit.
    target : float or None
        Mass to reach at the LOW end of the material's density band, kg (> 0); None sizes the heaviest block.

    Returns
    -------
    BlockSizing
        The smallest block reaching the target (rounded UP to the increment or to a stock-plate sum), or the
        heaviest block with ``reached = False`` and ``needed_fill_length`` when the slot cannot hold the target.

    Raises
    ------
    SizingError
        Negative target, slot smaller than its clearance, fixed sizes too big, holes that do not fit.
    """
    if target is not None and not (math.isfinite(target) and target > 0.0):
        raise SizingError(f"slot '{env.name}': the target mass must be a positive mass, got {target!r} kg", "target")
    cross = cross_sizes(env, spec)
    k = spec.fill.axis
    avail = float(env.available[k])
    lo = spec.material.band[0]
    inc = spec.increment
    if spec.stock:
        sums = _stock_sums(env, spec, cross, avail)
        if not sums:
            raise SizingError(f"slot '{env.name}': no stock plate fits in the {mm_text(avail)} available along "
                              f"{AXES[k]}", "stock")
        stacks = [(t, plates) for t, plates in sums if t >= spec.thinnest * (1 - LENGTH_SLACK)] or sums[-1:]
        full = _stack(env, spec, cross, stacks[-1][1])
        if target is None:
            return BlockSizing(env, spec, None, full, stacks[-1][0], True, full)
        for t, plates in stacks:
            try:
                pieces = _stack(env, spec, cross, plates)
            except SizingError:
                continue  # too thin for its counterbore or chamfer; a thicker stack will do
            if lo * _volume(pieces) >= target:
                return BlockSizing(env, spec, target, pieces, t, True, full)
        return BlockSizing(env, spec, target, full, stacks[-1][0], False, full, _needed_length(env, spec, cross, target))
    n_max = math.floor(avail / inc + LENGTH_SLACK)
    n_min = max(1, math.ceil(spec.thinnest / inc - LENGTH_SLACK))
    if n_max < n_min:
        if n_max < 1:
            raise SizingError(f"slot '{env.name}': {mm_text(avail)} available along the fill axis {AXES[k]} is less than "
                              f"one increment {mm_text(inc)}", "increment")
        raise SizingError(f"slot '{env.name}': {mm_text(avail)} available along the fill axis {AXES[k]} is less than the "
                          f"thinnest block {mm_text(spec.thinnest)}", "min_thickness")
    full = stack_for_units(env, spec, cross, n_max)
    if target is None:
        return BlockSizing(env, spec, None, full, n_max * inc, True, full)
    v_full = _volume(full)
    if lo * v_full < target:
        return BlockSizing(env, spec, target, full, n_max * inc, False, full, _needed_length(env, spec, cross, target))
    n = max(n_min, _first_guess(env, spec, cross, n_min, n_max, v_full, target / lo) - 2)
    while n <= n_max:
        try:
            pieces = stack_for_units(env, spec, cross, n)
        except SizingError:
            n += 1  # too thin for its counterbore, chamfer or holes; the full block is valid, so a thicker one is
            continue
        if lo * _volume(pieces) >= target:
            if n > n_min and n > 1:  # the guess may have overshot: step back while the target still holds
                try:
                    shorter = stack_for_units(env, spec, cross, n - 1)
                    if lo * _volume(shorter) >= target:
                        n -= 1
                        continue
                except SizingError:
                    pass
            return BlockSizing(env, spec, target, pieces, round(n * inc, 12), True, full)
        n += 1
    return BlockSizing(env, spec, target, full, n_max * inc, False, full, _needed_length(env, spec, cross, target))


def _first_guess(env: Envelope, spec: BlockSpec, cross: FloatArray, n_min: int, n_max: int, v_full: float,
                 volume: float) -> int:
    """Increments needed for ``volume`` (m³), from the affine volume of a single block (two evaluations)."""
    n_a = max(n_min, n_max // 2)
    if n_a >= n_max:
        return n_min
    single = replace(spec, max_segment_mass=None)
    try:
        v_a = _volume(_stack(env, single, cross, [round(n_a * spec.increment, 12)]))
        v_b = _volume(_stack(env, single, cross, [round(n_max * spec.increment, 12)]))
    except SizingError:
        return n_min
    slope = (v_b - v_a) / (n_max - n_a)
    if slope <= 0.0:
        return n_min
    return max(n_min, math.ceil(n_max - (v_b - volume) / slope))


def _needed_length(env: Envelope, spec: BlockSpec, cross: FloatArray, target: float) -> float | None:
    """Fill length (a multiple of the increment) that would reach the target in a slot long enough, m.

    A single block's volume is affine in its fill length (holes, chamfers and counterbores remove an affine
    amount), so two evaluations give the estimate; a short scan makes it exact for plate stacks too.
    """
    lo = spec.material.band[0]
    inc = spec.increment
    plain = replace(spec, stock=())
    k = spec.fill.axis
    n_max = math.floor(float(env.available[k]) / inc + LENGTH_SLACK)
    grown = [s + (MAX_STEPS * inc if i == k else 0.0) for i, s in enumerate(env.size)]
    longer = replace(env, size=(grown[0], grown[1], grown[2]))
    v1 = _volume(_stack(longer, replace(plain, max_segment_mass=None), cross, [n_max * inc]))
    v2 = _volume(_stack(longer, replace(plain, max_segment_mass=None), cross, [2 * n_max * inc]))
    slope = (v2 - v1) / (n_max * inc)
    if slope <= 0.0:
        return None
    n = max(n_max, math.floor((n_max * inc + (target / lo - v1) / slope) / inc) - 1)
    for _ in range(10_000):
        if n > MAX_STEPS:
            return None
        try:
            pieces = stack_for_units(longer, plain, cross, n)
        except SizingError:
            return None
        if lo * _volume(pieces) >= target:
            return n * inc
        n += 1
    return None


def heaviest_block(env: Envelope, spec: BlockSpec) -> BlockSizing:
    """The heaviest block (or stack) the envelope holds in the spec's material."""
    return size_block(env, spec, None)


def spec_from_parts(
    material: Material,
    fill: str,
    *,
    fixed: Mapping[str, float] | None = None,
    increment: float = 0.5e-3,
    holes: Mapping[str, Any] | None = None,
    chamfer: tuple[float, str] | None = None,
    stock: Sequence[float] = (),
    max_segment_mass: float | None = None,
    min_thickness: float | None = None,
) -> BlockSpec:
    """Build a :class:`BlockSpec` from plain values (SI), as the plan loader and the CLI give them.

    ``holes`` holds the :class:`HolePattern` fields plus optional ``counterbore_diameter`` and ``counterbore_depth``;
    the counterbore end defaults to the fill direction when the holes run along the fill axis (the exposed face).
    """
    f = Fill.parse(fill)
    pattern = None
    if holes:
        h = dict(holes)
        cb = None
        cbd, cbh = h.pop("counterbore_diameter", None), h.pop("counterbore_depth", None)
        if (cbd is None) != (cbh is None):
            raise SizingError("a counterbore needs both a diameter and a depth", "counterbore")
        if cbd is not None:
            cb = Counterbore(float(cbd), float(cbh))  # type: ignore[arg-type]
        axis = h.get("axis", "z")
        if "counterbore_end" not in h:
            h["counterbore_end"] = (f.sign or 1) if axis == f.letter else 1
        try:
            pattern = HolePattern(counterbore=cb, **h)
        except TypeError as exc:
            raise SizingError(f"holes: {exc}", "holes") from None
    ch = Chamfer(*chamfer) if chamfer else None
    return BlockSpec(material, f, dict(fixed or {}), increment, pattern, ch, tuple(stock), max_segment_mass,
                     min_thickness)
