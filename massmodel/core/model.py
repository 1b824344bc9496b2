"""Model objects: components (parts) with one mass source each, slots, rules, and the assembled model.

A component's geometry lives in its own *part frame*; ``Component.pose`` places the part frame in the model frame
(see :mod:`massmodel.core.frames`). Cut-outs are shapes of the same material placed in the part frame and subtracted by
superposition (exact for closed-form primitives, provided they lie inside the parent and do not overlap each other,
which the loader checks).
"""

from __future__ import annotations

import enum
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import NotFoundError, UsageError

from .frames import Pose
from .groups import in_group
from .loadcases import LoadCase
from .massprops import MassProperties, combine_arrays, parallel_axis_shift, validate_inertia

__all__ = [
    "Maturity",
    "MassSource",
    "Cutout",
    "Component",
    "Slot",
    "AllowedContact",
    "RuleCheck",
    "Rule",
    "Vehicle",
    "Model",
    "net_geometry",
    "group_of",
    "in_group",
]

FloatArray = npt.NDArray[np.float64]


class Maturity(enum.Enum):
    """How well a mass is known: estimated → calculated (from drawings/CAD) → measured (weighed)."""

    ESTIMATED = "estimated"
    CALCULATED = "calculated"
    MEASURED = "measured"


class MassSource(enum.Enum):
    """Where a component's mass comes from (exactly one per component)."""

    MATERIAL = "material"  # library or file material: density × net volume
    DENSITY = "density"  # explicit density × net volume
    MASS = "mass"  # measured or quoted mass; shape's inertia scaled to it
    MEASURED = "measured"  # measured mass, CG and optionally inertia; shape for display only


@dataclass(frozen=True, slots=True)
class Cutout:
    """A hole or pocket: a primitive placed in the parent's part frame, removed from the parent."""

    shape: Any
    pose: Pose


def net_geometry(shape: Any, cutouts: Sequence[Cutout] = ()) -> tuple[float, FloatArray, FloatArray]:
    """Volume, centroid and unit-density inertia of a shape minus its cut-outs, in the part frame.

    Superposition of signed solids: moments about the part-frame origin are added with the cut-outs negative,
    then shifted to the net centroid.

    Returns
    -------
    volume : float
        m³.
    centroid : (3,) float
        m, part frame (the origin when the net volume is zero).
    inertia_per_density : (3, 3) float
        kg·m² per kg/m³, about the net centroid, part axes.
    """
    vols = [shape.volume()]
    cents = [np.asarray(shape.centroid(), dtype=float)]
    tens = [np.asarray(shape.inertia_per_density(), dtype=float)]
    for cut in cutouts:
        r = cut.pose.linear
        vols.append(-cut.shape.volume())
        cents.append(cut.pose.apply(cut.shape.centroid()))
        tens.append(-(r @ cut.shape.inertia_per_density() @ r.T))
    if len(vols) == 1:
        return vols[0], cents[0], tens[0]
    v = np.array(vols)
    c = np.array(cents)
    volume = float(v.sum())
    if volume <= 0.0:
        return volume, np.zeros(3), np.zeros((3, 3))
    centroid = (v[:, None] * c).sum(axis=0) / volume
    inertia = sum(t + parallel_axis_shift(w, ci - centroid) for t, w, ci in zip(tens, v, c, strict=True))
    inertia = np.asarray(inertia)
    return volume, centroid, 0.5 * (inertia + inertia.T)


@dataclass(frozen=True, slots=True, eq=False)
class Component:
    """One part of the model.

    Parameters
    ----------
    path : str
        Unique path, "/" separated (e.g. ``suspension/front/left/upright``).
    shape : primitive from :mod:`massmodel.core.shapes`
        Geometry in the part frame.
    pose : Pose
        Part frame in the model frame.
    source : MassSource
        The one mass source.
    maturity : Maturity
        How well the mass is known.
    colour : str
        ``#rrggbb``.
    cutouts : tuple of Cutout
        Holes and pockets (part frame).
    material : str or None
        Material key (MATERIAL source; may also be given for display with MASS).
    density : float or None
        kg/m³ for MATERIAL and DENSITY sources.
    mass : float or None
        kg for MASS and MEASURED sources.
    measured_cg : (3,) float or None
        MEASURED: CG in the part frame, m.
    measured_inertia : (3, 3) float or None
        MEASURED: tensor about the CG in part axes, kg·m² (tensor convention); None → the shape's inertia scaled
        to the mass (a point mass when the shape has no volume).
    slot : str or None
        Slot the part must fit in.
    note : str
        Free text.
    origin : str
        Where the part was defined ("file, item"), for messages.
    """

    path: str
    shape: Any
    pose: Pose
    source: MassSource
    maturity: Maturity
    colour: str
    cutouts: tuple[Cutout, ...] = ()
    material: str | None = None
    density: float | None = None
    mass: float | None = None
    measured_cg: FloatArray | None = None
    measured_inertia: FloatArray | None = None
    slot: str | None = None
    note: str = ""
    origin: str = ""
    volume: float = field(init=False)
    props: MassProperties = field(init=False)
    props_local: MassProperties = field(init=False)

    def __post_init__(self) -> None:
        volume, centroid, unit = net_geometry(self.shape, self.cutouts)
        object.__setattr__(self, "volume", volume)
        where = self.origin or f"component '{self.path}'"
        if self.source in (MassSource.MATERIAL, MassSource.DENSITY):
            if self.density is None or not self.density > 0.0:
                raise UsageError(f"{where}: a density source needs a positive density")
            if volume <= 0.0:
                raise UsageError(f"{where}: the shape has no volume, so density cannot give a mass")
            local = self._local(self.density * volume, centroid, self.density * unit)
        elif self.source is MassSource.MASS:
            if self.mass is None or not self.mass > 0.0:
                raise UsageError(f"{where}: field 'mass' must be a positive mass")
            scale = self.mass / volume if volume > 0.0 else 0.0
            local = self._local(self.mass, centroid, scale * unit)
        else:
            if self.mass is None or not self.mass > 0.0 or self.measured_cg is None:
                raise UsageError(f"{where}: measured properties need a positive mass and a CG")
            if self.measured_inertia is not None:
                tensor = validate_inertia(self.measured_inertia, what=f"{where}, field 'measured.inertia'")
                local = MassProperties._valid_tensor(self.mass, self.measured_cg, tensor)
            else:
                tensor = (self.mass / volume) * unit if volume > 0.0 else np.zeros((3, 3))
                local = self._local(self.mass, self.measured_cg, tensor)
        object.__setattr__(self, "props_local", local)
        object.__setattr__(self, "props", MassProperties._moved(local, self.pose.linear, self.pose.translation))

    def _local(self, mass: float, center: Any, tensor: FloatArray) -> MassProperties:
        """Part-frame properties from the shape's closed form: a primitive with valid sizes has a physical tensor,
        so it is validated only when cut-outs were subtracted (superposition is physical only for cut-outs inside
        the parent, which the model-file loader checks but a Component built in Python may not respect)."""
        if self.cutouts:
            return MassProperties(mass, center, tensor)
        return MassProperties._valid_tensor(mass, center, tensor)

    @property
    def group(self) -> str:
        """Path of the innermost group ('' for a top-level part)."""
        return group_of(self.path)

    @property
    def implied_density(self) -> float | None:
        """Mass / net volume, kg/m³, for MASS and MEASURED sources with a shape of volume; else the density."""
        if self.source in (MassSource.MATERIAL, MassSource.DENSITY):
            return self.density
        return self.mass / self.volume if self.volume > 0.0 and self.mass else None

    @property
    def inertia_source(self) -> str:
        """How the tensor was obtained: 'shape' (closed form), 'measured', 'shape scaled' or 'point'."""
        if self.source is MassSource.MEASURED:
            if self.measured_inertia is not None:
                return "measured"
            return "shape scaled" if self.volume > 0.0 else "point"
        if self.source is MassSource.MASS:
            return "shape scaled" if self.volume > 0.0 else "point"
        return "shape"


def group_of(path: str) -> str:
    """Parent path of a part path ('' at top level)."""
    return path.rpartition("/")[0]


@dataclass(frozen=True, slots=True, eq=False)
class Slot:
    """A space reserved for a part (typically ballast): an envelope solid placed in the model frame.

    Parameters
    ----------
    name : str
        Unique slot name.
    shape : primitive
        Envelope in the slot frame.
    pose : Pose
        Slot frame in the model frame.
    clearance : float
        Required gap between a part and the envelope walls, m.
    origin : str
        Where it was defined.
    """

    name: str
    shape: Any
    pose: Pose
    clearance: float
    origin: str = ""


@dataclass(frozen=True, slots=True)
class AllowedContact:
    """Parts meant to touch or overlap, which packaging checks do not report (e.g. a lumped display shape inside
    another part, plates stacked on each other).

    Parameters
    ----------
    first, second : str
        Part or group paths; a pair of parts is covered when one lies in ``first`` and the other in ``second``
        (both in the same group when ``first == second``).
    note : str
        Why the contact is intended.
    origin : str
        Where it was defined.
    """

    first: str
    second: str
    note: str = ""
    origin: str = ""

    def covers(self, a: str, b: str) -> bool:
        """Whether the pair of part paths ``a``, ``b`` is covered (in either order)."""
        return (in_group(a, self.first) and in_group(b, self.second)) or (
            in_group(a, self.second) and in_group(b, self.first)
        )


class RuleCheck(enum.Enum):
    """Kinds of rule check."""

    MIN_MASS = "min_mass"
    MIN_GROUP_MASS = "min_group_mass"
    MIN_AXLE_LOAD = "min_axle_load"
    FRONT_FRACTION = "front_fraction"
    MAX_CG_HEIGHT = "max_cg_height"


@dataclass(frozen=True, slots=True)
class Rule:
    """One rule of the series' regulations as a check.

    ``limit`` is in SI (kg for masses and loads, m for heights); ``minimum``/``maximum`` are fractions for
    FRONT_FRACTION. ``groups`` lists the groups summed by MIN_GROUP_MASS; ``exclude`` the groups left out of
    MIN_MASS; ``axle`` is "front" or "rear" for MIN_AXLE_LOAD. ``cases`` names the load cases the rule applies in
    (empty: every case whose ``general_rules`` is true, and the base; see :mod:`massmodel.core.loadcases`).
    """

    name: str
    check: RuleCheck
    limit: float | None = None
    minimum: float | None = None
    maximum: float | None = None
    groups: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    axle: str | None = None
    origin: str = ""
    cases: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True, eq=False)
class Vehicle:
    """The vehicle context of a model.

    Parameters
    ----------
    forward, left, up : (3,) float
        Unit vectors of the vehicle directions in model axes (ISO 8855 by default: +x, +y, +z). Right-handed.
    wheelbase : float
        m.
    track_front, track_rear : float
        Lateral distance between the tyre contact centres, m.
    front_axle_station : float
        ``forward · p`` of the front axle line, m.
    ground_level : float
        ``up · p`` of the ground plane, m.
    """

    forward: FloatArray
    left: FloatArray
    up: FloatArray
    wheelbase: float
    track_front: float
    track_rear: float
    front_axle_station: float
    ground_level: float

    def __post_init__(self) -> None:
        for name in ("forward", "left", "up"):
            v = np.array(getattr(self, name), dtype=float).reshape(3)
            v.setflags(write=False)
            object.__setattr__(self, name, v)
        basis = np.array([self.forward, self.left, self.up])
        if not np.allclose(basis @ basis.T, np.eye(3), atol=1e-12) or np.linalg.det(basis) < 0.0:
            raise UsageError("vehicle axes forward, left, up must be orthonormal and right-handed")
        for name in ("wheelbase", "track_front", "track_rear"):
            if not getattr(self, name) > 0.0:
                raise UsageError(f"vehicle field '{name}' must be a positive length")

    @property
    def basis(self) -> FloatArray:
        """(3, 3): rows forward, left, up in model axes (model → vehicle-direction components)."""
        return np.array([self.forward, self.left, self.up])

    @property
    def rear_axle_station(self) -> float:
        """``forward · p`` of the rear axle line, m."""
        return self.front_axle_station - self.wheelbase

    def contact_points(self) -> FloatArray:
        """(4, 3) tyre contact centres FL, FR, RL, RR in model coordinates, m."""
        rows = []
        for station, track in ((self.front_axle_station, self.track_front), (self.rear_axle_station, self.track_rear)):
            for side in (+1.0, -1.0):
                rows.append(station * self.forward + side * 0.5 * track * self.left + self.ground_level * self.up)
        return np.array(rows)


@dataclass(frozen=True, slots=True, eq=False)
class Model:
    """An assembled mass model (immutable).

    Parameters
    ----------
    name : str
        Model name.
    components : tuple of Component
        All parts with their model-frame poses (mirrors and patterns expanded).
    vehicle : Vehicle or None
        Vehicle context; None for a model of a sub-assembly.
    rules : tuple of Rule
        Rule checks.
    slots : tuple of Slot
        Reserved envelopes.
    parameters : mapping
        Resolved parameters (name → Quantity), for reports.
    materials : mapping
        Materials available to the model (key → Material).
    source : str
        The file the model came from ('' when built in Python).
    description : str
        Free text.
    case : str
        The load case this model was evaluated for ("base" when none; see :mod:`massmodel.core.loadcases`).
    load_cases : tuple of LoadCase
        Every load case the file defines (the same tuple in the base model and in each case's model).
    allowed_contacts : tuple of AllowedContact
        Pairs of parts meant to touch or overlap (left out of interference and clearance findings).
    """

    name: str
    components: tuple[Component, ...]
    vehicle: Vehicle | None = None
    rules: tuple[Rule, ...] = ()
    slots: tuple[Slot, ...] = ()
    parameters: Mapping[str, Any] = field(default_factory=dict)
    materials: Mapping[str, Any] = field(default_factory=dict)
    source: str = ""
    description: str = ""
    case: str = "base"
    load_cases: tuple[LoadCase, ...] = ()
    allowed_contacts: tuple[AllowedContact, ...] = ()
    _index: Mapping[str, int] = field(init=False, repr=False)
    _stacked: tuple[FloatArray, FloatArray, FloatArray] | None = field(init=False, repr=False, default=None)

    def __post_init__(self) -> None:
        index: dict[str, int] = {}
        for i, c in enumerate(self.components):
            if c.path in index:
                raise UsageError(f"duplicate component path '{c.path}' ({c.origin})")
            index[c.path] = i
        object.__setattr__(self, "_index", MappingProxyType(index))
        object.__setattr__(self, "parameters", MappingProxyType(dict(self.parameters)))
        object.__setattr__(self, "materials", MappingProxyType(dict(self.materials)))

    def component(self, path: str) -> Component:
        """The component with this path (KeyError naming close matches when absent)."""
        try:
            return self.components[self._index[path]]
        except KeyError:
            import difflib

            close = difflib.get_close_matches(path, list(self._index), n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFoundError(f"no component '{path}'{hint}") from None

    def slot(self, name: str) -> Slot:
        """The slot with this name."""
        for s in self.slots:
            if s.name == name:
                return s
        raise NotFoundError(f"no slot '{name}'; slots: {', '.join(s.name for s in self.slots) or 'none'}")

    def groups(self) -> list[str]:
        """Every group path (all proper path prefixes of the parts), sorted."""
        out: set[str] = set()
        for c in self.components:
            parts = c.path.split("/")
            for k in range(1, len(parts)):
                out.add("/".join(parts[:k]))
        return sorted(out)

    def select(self, include: Iterable[str] = ("",), exclude: Iterable[str] = ()) -> list[Component]:
        """Components in any of ``include`` groups and in none of ``exclude`` groups (paths or group paths)."""
        inc = list(include)
        exc = list(exclude)
        return [
            c for c in self.components
            if any(in_group(c.path, g) for g in inc) and not any(in_group(c.path, g) for g in exc)
        ]

    def arrays(self, components: Sequence[Component] | None = None) -> tuple[FloatArray, FloatArray, FloatArray]:
        """(masses (N,), centres (N, 3), tensors (N, 3, 3)) of components in the model frame.

        For all components (the default) the arrays are made once and kept; callers get copies.
        """
        if components is None:
            return tuple(a.copy() for a in self._all_arrays())  # type: ignore[return-value]
        comps = components
        n = len(comps)
        masses = np.empty(n)
        centers = np.empty((n, 3))
        inertias = np.empty((n, 3, 3))
        for i, c in enumerate(comps):
            masses[i] = c.props.mass
            centers[i] = c.props.center
            inertias[i] = c.props.inertia
        return masses, centers, inertias

    def _all_arrays(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        """:meth:`arrays` of every component, made once (read-only; the model is immutable)."""
        if self._stacked is None:
            stacked = self.arrays(self.components)
            for a in stacked:
                a.setflags(write=False)
            object.__setattr__(self, "_stacked", stacked)
        assert self._stacked is not None
        return self._stacked

    def mass_properties(self, include: Iterable[str] = ("",), exclude: Iterable[str] = ()) -> MassProperties:
        """Combined mass properties of the selected components (model frame, about their CG)."""
        inc, exc = tuple(include), tuple(exclude)
        if "" in inc and not exc:  # the whole model
            return MassProperties.zero() if not self.components else MassProperties(*combine_arrays(*self._all_arrays()))
        comps = self.select(inc, exc)
        if not comps:
            return MassProperties.zero()
        return MassProperties(*combine_arrays(*self.arrays(comps)))

    def with_components(self, components: Sequence[Component], name: str | None = None) -> Model:
        """A copy of the model with another component list (and optionally another name)."""
        return Model(
            name=self.name if name is None else name,
            components=tuple(components),
            vehicle=self.vehicle,
            rules=self.rules,
            slots=self.slots,
            parameters=self.parameters,
            materials=self.materials,
            source=self.source,
            description=self.description,
            case=self.case,
            load_cases=self.load_cases,
            allowed_contacts=self.allowed_contacts,
        )
