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
from dataclasses import dataclass, field, replace
from functools import lru_cache
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UserError
from massmodel.core.frames import Pose
from massmodel.core.massprops import MassProperties, combine
from massmodel.core.materials import Material
from massmodel.core.model import Slot
from massmodel.core.shapes import Box

from .block import AXES, BlockError, BlockGeometry, Chamfer, Counterbore, HolePattern

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
_EPS = 1e-9  # relative slack when comparing lengths that should be multiples of the increment
MAX_STEPS = 200_000  # longest search along the fill axis, in increments


class SizingError(UserError, ValueError):
    """A block that cannot be sized: the message names the slot and the offending input (``field``)."""

    def __init__(self, message: str, field: str = "") -> None:
        super().__init__(message)
        self.field = field


def _mm(x: float, digits: int = 2) -> str:
    return f"{x * 1e3:.{digits}f} mm"


@dataclass(frozen=True, slots=True, eq=False)
class Envelope:
    """A box-shaped space for ballast.

    Parameters
    ----------
    name : str
        Slot name.
    size : (3,) float
        Box edges along the slot axes, m.
    pose : Pose
        Slot frame (centred on the box) in the model frame.
    clearance : float
        Gap a block keeps to every wall, m.
    note : str
        Free text.
    """

    name: str
    size: tuple[float, float, float]
    pose: Pose
    clearance: float
    note: str = ""

    def __post_init__(self) -> None:
        size = tuple(float(s) for s in self.size)
        if len(size) != 3 or not all(math.isfinite(s) and s > 0.0 for s in size):
            raise SizingError(f"slot '{self.name}': size must be three positive lengths", "size")
        if not (math.isfinite(self.clearance) and self.clearance >= 0.0):
            raise SizingError(f"slot '{self.name}': clearance must be a length >= 0", "clearance")
        object.__setattr__(self, "size", size)

    @classmethod
    def from_slot(cls, slot: Slot) -> Envelope:
        """The envelope of a model slot (box slots only)."""
        if not isinstance(slot.shape, Box):
            raise SizingError(f"slot '{slot.name}' ({slot.origin}) is a {slot.shape.kind}: ballast blocks are sized "
                              "in box slots only", "shape")
        s = slot.shape
        return cls(slot.name, (s.size_x, s.size_y, s.size_z), slot.pose, slot.clearance)

    @property
    def available(self) -> FloatArray:
        """Inner size left for a block, (3,) m: size − 2 × clearance (checked positive)."""
        inner = np.array(self.size) - 2.0 * self.clearance
        for k in range(3):
            if inner[k] <= 0.0:
                raise SizingError(
                    f"slot '{self.name}' is {_mm(self.size[k])} along {AXES[k]}, no more than twice its clearance "
                    f"{_mm(self.clearance)}: there is no room for a block", "clearance")
        return inner

    def to_slot(self) -> Slot:
        """A model :class:`Slot` for this envelope (for plan-defined slots and CAD checks)."""
        return Slot(self.name, Box(*self.size), self.pose, self.clearance, origin=f"envelope '{self.name}'")


@dataclass(frozen=True, slots=True)
class Fill:
    """How a block grows in its slot: along ``axis`` (0, 1, 2) from one wall (``sign`` ±1) or about the centre (0)."""

    axis: int
    sign: int

    @classmethod
    def parse(cls, text: str) -> Fill:
        """"+z" (from the −z wall upwards), "-x" (from the +x wall towards −x), or "y" (about the slot centre)."""
        t = str(text).strip().lower()
        sign = 0
        if len(t) == 2 and t[0] in "+-":
            sign = 1 if t[0] == "+" else -1
            t = t[1:]
        if t not in ("x", "y", "z"):
            raise SizingError(f"fill must be one of +x -x +y -y +z -z (grow from a wall) or x y z (grow about the slot "
                              f"centre), got {text!r}", "fill")
        return cls(AXES.index(t), sign)

    def __str__(self) -> str:
        return ("+" if self.sign > 0 else "-" if self.sign < 0 else "") + AXES[self.axis]

    @property
    def letter(self) -> str:
        return AXES[self.axis]


@dataclass(frozen=True, eq=False)
class BlockSpec:
    """What to make: material, fill, fixed sizes, holes, chamfers and how the block may be split.

    Parameters
    ----------
    material : Material
        With its density band (kg/m³).
    fill : Fill
        Fill axis and anchor.
    fixed : mapping of axis letter → float
        Sizes fixed by the user, m (not the fill axis). Other cross sizes take the whole width available, rounded
        down to ``increment``.
    increment : float
        Manufacturing increment, m: every machined size is a multiple of it.
    holes : HolePattern or None
        Fastener holes; with a stack of plates they must run along the fill axis.
    chamfer : Chamfer or None
        Edge chamfers (each plate of a stack is chamfered on its own).
    stock : tuple of float
        Stock plate thicknesses, m; when given, the fill length is a stack of these.
    max_segment_mass : float or None
        Largest mass of one piece (at the HIGH end of the density band), kg; the block is split into plates along
        the fill axis to honour it.
    min_thickness : float or None
        Thinnest block along the fill axis, m (default one increment).
    """

    material: Material
    fill: Fill
    fixed: Mapping[str, float] = field(default_factory=dict)
    increment: float = 0.5e-3
    holes: HolePattern | None = None
    chamfer: Chamfer | None = None
    stock: tuple[float, ...] = ()
    max_segment_mass: float | None = None
    min_thickness: float | None = None

    def __post_init__(self) -> None:
        density = getattr(self.material, "density", None)
        if not isinstance(self.material, Material) or not (isinstance(density, float) and density > 0.0):
            raise SizingError(f"the ballast material {getattr(self.material, 'key', self.material)!r} has no density: "
                              "a block's mass needs one (give the material a density and, for alloys, its band)",
                              "material")
        if not (math.isfinite(self.increment) and self.increment > 0.0):
            raise SizingError(f"increment must be a positive length, got {self.increment!r}", "increment")
        for axis, value in self.fixed.items():
            if axis not in AXES:
                raise SizingError(f"fixed sizes are given per axis x, y or z, not {axis!r}", "fixed")
            if not (math.isfinite(value) and value > 0.0):
                raise SizingError(f"fixed size along {axis} must be a positive length", f"fixed.{axis}")
            if axis == self.fill.letter:
                raise SizingError(f"the fill axis {axis} is the size the block is sized by; it cannot be fixed too",
                                  f"fixed.{axis}")
        if any(not (math.isfinite(t) and t > 0.0) for t in self.stock):
            raise SizingError("stock plate thicknesses must be positive lengths", "stock")
        if any(round(t * 1e6) < 1 for t in self.stock):  # stacks are summed in whole micrometres
            raise SizingError("stock plate thicknesses must be at least 0.001 mm", "stock")
        if self.max_segment_mass is not None and not (math.isfinite(self.max_segment_mass)
                                                      and self.max_segment_mass > 0.0):
            raise SizingError("max_segment_mass must be a positive mass", "max_segment_mass")
        if self.min_thickness is not None and not (math.isfinite(self.min_thickness) and self.min_thickness > 0.0):
            raise SizingError("min_thickness must be a positive length", "min_thickness")
        split = bool(self.stock) or self.max_segment_mass is not None
        if split and self.holes is not None and self.holes.axis != self.fill.letter:
            raise SizingError(f"plates are stacked along the fill axis {self.fill.letter}; their holes must run along "
                              f"it too (holes along {self.holes.axis})", "holes.axis")

    @property
    def thinnest(self) -> float:
        return self.min_thickness if self.min_thickness is not None else self.increment


@dataclass(frozen=True, eq=False)
class PlacedPiece:
    """One block or plate: its geometry and its pose (block frame → model frame)."""

    geometry: BlockGeometry
    pose: Pose

    def props(self, density: float) -> MassProperties:
        """Mass properties at ``density`` (kg/m³), model frame."""
        g = self.geometry
        r = self.pose.linear
        return MassProperties(density * g.volume(), self.pose.apply(g.centroid()),
                              density * (r @ g.inertia_per_density() @ r.T))


@dataclass(frozen=True, eq=False)
class BlockSizing:
    """A sized block (or plate stack) in a slot.

    Attributes
    ----------
    envelope : Envelope
    spec : BlockSpec
    target : float or None
        Target mass at the low end of the density band, kg (None: the heaviest block was asked for).
    pieces : tuple of PlacedPiece
        Plates from the anchor wall outwards (one piece when not split).
    fill_length : float
        Size along the fill axis, m (sum of the plates).
    reached : bool
        Whether the mass at the lowest density reaches the target.
    capacity : tuple of PlacedPiece
        The heaviest block (or stack) the slot holds in this material.
    needed_fill_length : float or None
        When not reached: the fill length that would reach the target, m (the slot would need it plus clearance).
    """

    envelope: Envelope
    spec: BlockSpec
    target: float | None
    pieces: tuple[PlacedPiece, ...]
    fill_length: float
    reached: bool
    capacity: tuple[PlacedPiece, ...]
    needed_fill_length: float | None = None

    @property
    def volume(self) -> float:
        """Net volume, m³."""
        return float(sum(p.geometry.volume() for p in self.pieces))

    def masses(self) -> tuple[float, float, float]:
        """(nominal, lowest, highest) mass over the density band, kg."""
        lo, hi = self.spec.material.band
        v = self.volume
        return self.spec.material.density * v, lo * v, hi * v

    def capacity_masses(self) -> tuple[float, float, float]:
        """(nominal, lowest, highest) mass of the heaviest block the slot holds, kg."""
        lo, hi = self.spec.material.band
        v = float(sum(p.geometry.volume() for p in self.capacity))
        return self.spec.material.density * v, lo * v, hi * v

    def props(self, density: float | None = None) -> MassProperties:
        """Mass properties of the block or stack, model frame (nominal density unless given)."""
        rho = self.spec.material.density if density is None else density
        return combine(p.props(rho) for p in self.pieces)

    @property
    def shortfall(self) -> float:
        """kg missing at the low end of the band (0 when reached)."""
        if self.target is None or self.reached:
            return 0.0
        return self.target - self.masses()[1]

    def segment_masses(self) -> list[float]:
        """Mass of each piece at the HIGH end of the density band, kg."""
        hi = self.spec.material.band[1]
        return [hi * p.geometry.volume() for p in self.pieces]


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
            if v > avail[k] * (1.0 + _EPS):
                raise SizingError(
                    f"slot '{env.name}': fixed size {_mm(v)} along {letter} exceeds the {_mm(avail[k])} available "
                    f"({_mm(env.size[k])} less twice the clearance {_mm(env.clearance)})", f"fixed.{letter}")
            size[k] = v
        else:
            n = math.floor(avail[k] / inc + _EPS)
            if n < 1:
                raise SizingError(f"slot '{env.name}': {_mm(avail[k])} available along {letter} is less than one "
                                  f"increment {_mm(inc)}", "increment")
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
    cb_units = math.floor(cb.depth / inc + _EPS) + 1 if cb is not None else 1  # the counterbored plate is deeper
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
        extra = (f"; the counterbored plate must be at least {_mm(cb_units * inc)} thick and weighs about "
                 f"{lightest[0] * cb_units:.3f} kg")
    raise SizingError(
        f"slot '{env.name}': {_mm(units * inc)} of plates cannot be split within max_segment_mass "
        f"{spec.max_segment_mass:.3f} kg at the high density end (each {_mm(inc)} of thickness weighs about "
        f"{lightest[0]:.3f} kg{extra}, and a chamfer of {_mm(spec.chamfer.size) if spec.chamfer else '0 mm'} needs "
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
    cap = int(math.floor(limit * 1e6 / g + _EPS))
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
            raise SizingError(f"slot '{env.name}': no stock plate fits in the {_mm(avail)} available along "
                              f"{AXES[k]}", "stock")
        stacks = [(t, plates) for t, plates in sums if t >= spec.thinnest * (1 - _EPS)] or sums[-1:]
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
    n_max = math.floor(avail / inc + _EPS)
    n_min = max(1, math.ceil(spec.thinnest / inc - _EPS))
    if n_max < n_min:
        if n_max < 1:
            raise SizingError(f"slot '{env.name}': {_mm(avail)} available along the fill axis {AXES[k]} is less than "
                              f"one increment {_mm(inc)}", "increment")
        raise SizingError(f"slot '{env.name}': {_mm(avail)} available along the fill axis {AXES[k]} is less than the "
                          f"thinnest block {_mm(spec.thinnest)}", "min_thickness")
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
    n_max = math.floor(float(env.available[k]) / inc + _EPS)
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
