"""What a ballast block is sized from and what sizing gives: the slot envelope, the fill direction, the block
specification, placed pieces and the sizing result (plain values, SI; the search itself is in
:mod:`massmodel.ballast.sizing`)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UserError
from massmodel.core.frames import Pose
from massmodel.core.massprops import MassProperties, combine
from massmodel.core.materials import Material
from massmodel.core.model import Slot
from massmodel.core.shapes import Box

from .block import AXES, BlockGeometry, Chamfer, HolePattern

__all__ = ["SizingError", "Envelope", "Fill", "BlockSpec", "PlacedPiece", "BlockSizing", "MAX_STEPS", "LENGTH_SLACK", "mm_text"]

FloatArray = npt.NDArray[np.float64]

LENGTH_SLACK = 1e-9  # relative slack when comparing lengths that should be multiples of the increment
MAX_STEPS = 200_000  # longest search along the fill axis, in increments


class SizingError(UserError, ValueError):
    """A block that cannot be sized: the message names the slot and the offending input (``field``)."""

    def __init__(self, message: str, field: str = "") -> None:
        super().__init__(message)
        self.field = field


def mm_text(x: float, digits: int = 2) -> str:
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
                    f"slot '{self.name}' is {mm_text(self.size[k])} along {AXES[k]}, no more than twice its clearance "
                    f"{mm_text(self.clearance)}: there is no room for a block", "clearance")
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
