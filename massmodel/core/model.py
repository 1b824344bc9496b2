"""Model objects: components (parts) with one mass source each, slots, rules, and the assembled model.

A component's geometry lives in its own *part frame*; ``Component.pose`` places the part frame in the model frame
(see :mod:`massmodel.core.frames`). Cut-outs are shapes of the same material placed in the part frame and subtracted by
superposition (exact for closed-form primitives, provided they lie inside the parent and do not overlap each other,
which the loader checks).
"""

from __future__ import annotations

import copy
import enum
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
import numpy.typing as npt

from . import batch, display
from .errors import NotFoundError, UsageError
from .frames import Pose
from .groups import in_group
from .loadcases import LoadCase
from .massprops import InertiaError, MassProperties, parallel_axis_shift, validate_inertia
from .shapes import SHAPE_KINDS
from .specs import AllowedContact, Rule, RuleCheck, Slot, Vehicle
from .uncertainty import PartUncertainty

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
    "part_arrays",
    "group_of",
    "in_group",
]

FloatArray = npt.NDArray[np.float64]
_SHAPE_CLASSES = dict(SHAPE_KINDS)


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


def part_arrays(components: Sequence[Component]) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(masses (N,), CGs (N, 3), tensors (N, 3, 3)) of components in the model frame, by the vectorised engine.

    Plain primitives are grouped by kind and evaluated with the array closed forms of
    :func:`massmodel.core.batch.unit_properties` (each distinct shape object once: mirrored and patterned copies
    share theirs); parts with cut-outs, extrusions, point masses and imported shapes take their net geometry from
    :func:`net_geometry`. The mass source then scales each part (density, or mass / volume; a measured CG and
    tensor replace the shape's), and :func:`massmodel.core.batch.place` moves all parts into the model frame at
    once. Agrees with ``Component.props`` part by part to round-off (``tests/test_engine.py``).

    Returns
    -------
    masses : (N,) float
        kg.
    centers : (N, 3) float
        m, model frame.
    tensors : (N, 3, 3) float
        kg·m² about each part's CG, model axes, tensor convention.
    """
    n = len(components)
    if n == 0:
        return np.zeros(0), np.zeros((0, 3)), np.zeros((0, 3, 3))
    volume = np.empty(n)
    centroid = np.zeros((n, 3))
    unit = np.zeros((n, 3, 3))
    # per batch kind: the parts, the row of each part's shape, the rows (dimensions of each distinct shape)
    kinds: dict[str, tuple[list[int], list[int], list[tuple[float, ...]]]] = {}
    row_of: dict[int, int] = {}
    direct: list[int] = []
    for i, c in enumerate(components):
        shape = c.shape
        kind = getattr(shape, "kind", None)
        if c.cutouts or kind not in batch.BATCH_KINDS or type(shape) is not _SHAPE_CLASSES.get(kind):
            direct.append(i)
            continue
        parts, owners, rows = kinds.setdefault(kind, ([], [], []))
        row = row_of.get(id(shape))
        if row is None:
            row = row_of[id(shape)] = len(rows)
            rows.append(tuple([getattr(shape, f) for f in batch.BATCH_KINDS[kind]]))
        parts.append(i)
        owners.append(row)
    for kind, (parts, owners, rows) in kinds.items():
        props = batch.unit_properties(kind, np.array(rows))
        at = np.array(parts, dtype=np.intp)
        owner = np.array(owners, dtype=np.intp)
        volume[at] = props.volume[owner]
        if props.centroid is not None:
            centroid[at] = props.centroid[owner]
        unit[at] = props.tensors()[owner]
    for i in direct:
        c = components[i]
        volume[i], centroid[i], unit[i] = net_geometry(c.shape, c.cutouts)
    # the mass source: density x volume, or a given mass (with the shape's tensor scaled to it, mass / volume)
    by_density = np.array([c.source is MassSource.MATERIAL or c.source is MassSource.DENSITY for c in components])
    given = np.array([c.density if d else c.mass for c, d in zip(components, by_density.tolist(), strict=True)],
                     dtype=float)
    solid = volume > 0.0
    per_volume = np.divide(given, volume, out=np.zeros(n), where=solid & ~by_density)
    scale = np.where(by_density, given, per_volume)
    masses = np.where(by_density, given * volume, given)
    unit *= scale[:, None, None]
    tensors = unit  # now per part, kg*m^2
    for i, c in enumerate(components):
        if c.source is MassSource.MEASURED:  # the measured CG and tensor, validated when the part was made
            local = c.props_local
            centroid[i] = local.center
            tensors[i] = local.inertia
    rotations = np.array([c.pose.linear for c in components], dtype=float).reshape(n, 3, 3)
    translations = np.array([c.pose.translation for c in components], dtype=float).reshape(n, 3)
    centers, inertias = batch.place(centroid, tensors, rotations, translations)
    return masses, centers, inertias


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
    uncertainty : PartUncertainty or None
        Standard uncertainties of mass, CG and inertia and the growth allowance (None: the defaults by maturity of
        :mod:`massmodel.uncertainty` apply).
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
    uncertainty: PartUncertainty | None = None
    volume: float = field(init=False)
    _props_local: MassProperties | None = field(init=False, default=None, repr=False)
    _props: MassProperties | None = field(init=False, default=None, repr=False)

    def __post_init__(self) -> None:
        # Everything a part can get wrong is checked here; the part-frame properties of a plain primitive (no
        # cut-outs, not measured) are made only when asked for (``props_local``, ``props``): a model takes its
        # roll-ups from the vectorised engine (Model.arrays), so a large model builds no per-part objects for them.
        eager = bool(self.cutouts) or self.source is MassSource.MEASURED
        if eager:
            volume, centroid, unit = net_geometry(self.shape, self.cutouts)
        else:
            volume = float(self.shape.volume())
        object.__setattr__(self, "volume", volume)
        where = self.origin or f"component '{self.path}'"
        if self.source in (MassSource.MATERIAL, MassSource.DENSITY):
            if self.density is None or not self.density > 0.0:
                raise UsageError(f"{where}: a density source needs a positive density")
            if volume <= 0.0:
                raise UsageError(f"{where}: the shape has no volume, so density cannot give a mass")
            mass = self.density * volume
        elif self.source is MassSource.MASS:
            if self.mass is None or not self.mass > 0.0:
                raise UsageError(f"{where}: field 'mass' must be a positive mass")
            mass = self.mass
        elif self.mass is None or not self.mass > 0.0 or self.measured_cg is None:
            raise UsageError(f"{where}: measured properties need a positive mass and a CG")
        else:
            mass = self.mass
        if not math.isfinite(mass):
            raise InertiaError(f"mass must be finite and >= 0 kg, got {mass!r}")
        if eager:
            object.__setattr__(self, "_props_local", self._make_local(volume, centroid, unit))

    def _make_local(self, volume: float, centroid: FloatArray, unit: FloatArray) -> MassProperties:
        """Part-frame properties from the net geometry (volume m³, centroid m, tensor per density m⁵)."""
        where = self.origin or f"component '{self.path}'"
        if self.source in (MassSource.MATERIAL, MassSource.DENSITY):
            assert self.density is not None
            return self._local(self.density * volume, centroid, self.density * unit)
        assert self.mass is not None
        if self.source is MassSource.MASS:
            scale = self.mass / volume if volume > 0.0 else 0.0
            return self._local(self.mass, centroid, scale * unit)
        assert self.measured_cg is not None  # checked in __post_init__
        if self.measured_inertia is not None:
            tensor = validate_inertia(self.measured_inertia, what=f"{where}, field 'measured.inertia'")
            return MassProperties._valid_tensor(self.mass, self.measured_cg, tensor)
        tensor = (self.mass / volume) * unit if volume > 0.0 else np.zeros((3, 3))
        return self._local(self.mass, self.measured_cg, tensor)

    @property
    def props_local(self) -> MassProperties:
        """Mass properties in the part frame (CG m, tensor kg·m² about it, part axes), made on first use."""
        local = self._props_local
        if local is None:
            local = self._make_local(*net_geometry(self.shape, self.cutouts))
            object.__setattr__(self, "_props_local", local)
        return local

    @property
    def props(self) -> MassProperties:
        """Mass properties in the model frame (``props_local`` moved by ``pose``), made on first use.

        For one part; a model's roll-ups and per-part arrays come from the vectorised engine (:meth:`Model.arrays`).
        """
        placed = self._props
        if placed is None:
            placed = MassProperties._moved(self.props_local, self.pose.linear, self.pose.translation)
            object.__setattr__(self, "_props", placed)
        return placed

    def _local(self, mass: float, center: Any, tensor: FloatArray) -> MassProperties:
        """Part-frame properties from the shape's closed form: a primitive with valid sizes has a physical tensor,
        so it is validated only when cut-outs were subtracted (superposition is physical only for cut-outs inside
        the parent, which the model-file loader checks but a Component built in Python may not respect)."""
        if self.cutouts:
            return MassProperties(mass, center, tensor)
        return MassProperties._valid_tensor(mass, center, tensor)

    def with_uncertainty(self, uncertainty: PartUncertainty | None) -> Component:
        """The same part with another uncertainty record (the mass properties are shared, not recomputed)."""
        other = copy.copy(self)
        object.__setattr__(other, "uncertainty", uncertainty)
        return other
    def __repr__(self) -> str:
        """One line: path, mass, where the mass comes from, shape, CG in mm (model frame)."""
        source = f"material {self.material}" if self.source is MassSource.MATERIAL else self.source.value
        kind = getattr(self.shape, "kind", type(self.shape).__name__)
        return (
            f"<Component {self.path!r}: {self.props.mass:.4g} kg ({source}, {self.maturity.value}), {kind}, "
            f"CG {display.vector(self.props.center, 0, 1e3)} mm model frame>"
        )

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
    chassis : object or None
        The ``[chassis]`` inputs (:class:`massmodel.vehicle.chassis.ChassisSpec`), None when the file has none.
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
    chassis: Any = None
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

    def __repr__(self) -> str:
        """One line: name, load case (when not the base), parts, mass, CG in mm (model frame)."""
        case = f" case {self.case!r}" if self.case != "base" else ""
        total = self.mass_properties()
        cg = f", CG {display.vector(total.center, 0, 1e3)} mm" if total.mass > 0 else ""
        return f"<Model {self.name!r}{case}: {len(self.components)} parts, {total.mass:.1f} kg{cg}>"

    def _repr_html_(self) -> str:
        """A small table of the model's key figures (the full report: :func:`massmodel.report.summary.build_report`)."""
        total = self.mass_properties()
        rows: list[list[object]] = [
            ["load case", self.case],
            ["source", self.source or "built in Python"],
            ["parts", len(self.components)],
            ["top-level groups", ", ".join(sorted({c.path.split("/")[0] for c in self.components if "/" in c.path}))],
            ["mass", f"{total.mass:.1f} kg"],
        ]
        if total.mass > 0:
            rows.append(["CG (model frame)", f"{display.vector(total.center, 0, 1e3)} mm"])
        if self.vehicle is not None:
            rows.append(["wheelbase", f"{display.number(self.vehicle.wheelbase, 0, 1e3)} mm"])
        rows.append(["rules", len(self.rules)])
        return display.html_table(rows, caption=f"Model '{self.name}'")

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

        For all components (the default) the arrays come from the vectorised engine (:func:`part_arrays`), made
        once and kept; callers get copies. Components of this model are taken from those arrays; others (a part
        built elsewhere) from their own ``props``.
        """
        if components is None:
            return tuple(a.copy() for a in self._all_arrays())  # type: ignore[return-value]
        masses, centers, inertias = self._all_arrays()
        mine = [self._index.get(c.path) for c in components]
        if all(i is not None and self.components[i] is c for i, c in zip(mine, components, strict=True)):
            idx = np.array(mine, dtype=np.intp)
            return masses[idx], centers[idx], inertias[idx]
        return (np.array([c.props.mass for c in components], dtype=float).reshape(-1),
                np.array([c.props.center for c in components], dtype=float).reshape(-1, 3),
                np.array([c.props.inertia for c in components], dtype=float).reshape(-1, 3, 3))

    def adopt_arrays(self, masses: FloatArray, centers: FloatArray, inertias: FloatArray) -> None:
        """Keep part arrays made elsewhere as this model's :meth:`arrays` (a cache: the model stays immutable).

        For callers that assemble a model from another's components with a few rows rebuilt by the same engine
        (:mod:`massmodel.studies`), so that the rows are not computed again. They must be exactly what
        :func:`part_arrays` gives for ``self.components`` (shapes (N,), (N, 3), (N, 3, 3)).
        """
        n = len(self.components)
        if masses.shape != (n,) or centers.shape != (n, 3) or inertias.shape != (n, 3, 3):
            raise ValueError(f"arrays of {masses.shape[0]} parts for a model of {n}")
        stacked = tuple(np.array(a, dtype=float) for a in (masses, centers, inertias))
        for a in stacked:
            a.setflags(write=False)
        object.__setattr__(self, "_stacked", stacked)

    def _all_arrays(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        """:meth:`arrays` of every component, made once (read-only; the model is immutable)."""
        if self._stacked is None:
            stacked = part_arrays(self.components)
            for a in stacked:
                a.setflags(write=False)
            object.__setattr__(self, "_stacked", stacked)
        assert self._stacked is not None
        return self._stacked

    def _indices(self, include: Iterable[str] = ("",), exclude: Iterable[str] = ()) -> npt.NDArray[np.intp]:
        """Indices of the components :meth:`select` picks."""
        inc, exc = list(include), list(exclude)
        return np.array([
            i for i, c in enumerate(self.components)
            if any(in_group(c.path, g) for g in inc) and not any(in_group(c.path, g) for g in exc)
        ], dtype=np.intp)

    def mass_properties(self, include: Iterable[str] = ("",), exclude: Iterable[str] = ()) -> MassProperties:
        """Combined mass properties of the selected components (model frame, about their CG), from the vectorised
        engine (:func:`massmodel.core.batch.rollup`)."""
        inc, exc = tuple(include), tuple(exclude)
        masses, centers, inertias = self._all_arrays()
        if "" in inc and not exc:  # the whole model
            return batch.rollup(masses, centers, inertias)
        idx = self._indices(inc, exc)
        return batch.rollup(masses[idx], centers[idx], inertias[idx])

    def group_members(self) -> dict[str, npt.NDArray[np.intp]]:
        """Every group path (sorted) with the indices of its parts (a part lies in every proper prefix of its path).

        Parts are first gathered by their parent path (one dictionary step per part), then each parent's list is
        handed to the parent and its ancestors: the cost grows with the parts plus the groups times their depth.
        """
        by_parent: dict[str, list[int]] = {}
        for i, c in enumerate(self.components):
            by_parent.setdefault(c.path.rpartition("/")[0], []).append(i)
        lists: dict[str, list[list[int]]] = {}
        for parent, idx in by_parent.items():
            group = parent
            while group:
                lists.setdefault(group, []).append(idx)
                group = group.rpartition("/")[0]
        return {g: np.sort(np.concatenate([np.asarray(x, dtype=np.intp) for x in lists[g]])) for g in sorted(lists)}

    def group_properties(self) -> list[tuple[str, int, MassProperties]]:
        """(group path, number of parts, combined properties) of every group, sorted by path (vectorised engine:
        :func:`massmodel.core.batch.rollup_groups`)."""
        members = self.group_members()
        props = batch.rollup_groups(*self._all_arrays(), list(members.values()))
        return [(g, len(idx), mp) for (g, idx), mp in zip(members.items(), props, strict=True)]

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
            chassis=self.chassis,
        )
