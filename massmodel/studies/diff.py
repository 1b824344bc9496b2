"""What changed between two versions of a model: parts added, removed and changed, and each part's share of the
change of the total mass, CG and inertia tensor.

Decomposition (exact; the shares add up to the total change):

* mass: ``ΔM = Σ (m'_i − m_i)``;
* CG: ``C' − C = Σ_i [m'_i (r'_i − C) − m_i (r_i − C)] / M'`` (first moments about the old CG);
* inertia about the CG: ``I'_{C'} − I_C = Σ_i ([I'_i + m'_i S(r'_i − C)] − [I_i + m_i S(r_i − C)]) − M' S(C' − C)``
  with ``S(d) = |d|² E − d dᵀ`` (parallel-axis theorem, Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed.
  (2002), §5.3): each part's tensor about the old CG, plus one term for moving the reference point from the old CG
  to the new one (``recentre``), which belongs to no single part.

An unchanged part contributes exactly zero; an added part counts with m_i = 0, a removed one with m'_i = 0.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties, parallel_axis_shift
from massmodel.core.model import Component, Model
from massmodel.vehicle.balance import static_balance

__all__ = ["PartChange", "GroupChange", "ModelDiff", "diff_models", "check_limits", "LIMIT_KEYS", "TOLERANCE"]

FloatArray = npt.NDArray[np.float64]
#: Differences below these count as no change (kg, m, kg·m²): far below any scale's or CAD model's resolution.
TOLERANCE = {"mass": 1e-9, "cg": 1e-9, "inertia": 1e-9}
#: Gating limits understood by :func:`check_limits`: SI unit of each.
LIMIT_KEYS = {"mass": "kg", "cg": "m", "cg_x": "m", "cg_y": "m", "cg_z": "m", "inertia": "kg*m^2"}


@dataclass(frozen=True, slots=True)
class PartChange:
    """One part that was added, removed or changed.

    Attributes
    ----------
    path : str
    status : str
        ``added``, ``removed`` or ``changed``.
    fields : tuple of str
        What changed: ``mass``, ``cg``, ``inertia``, ``shape``, ``source``, ``maturity``, ``material``.
    old, new : Component or None
    delta_mass : float
        kg.
    delta_cg : (3,) float
        This part's share of the total CG change, m, model frame.
    delta_inertia : (3, 3) float
        Its share of the total tensor change (about the old CG), kg·m², model axes.
    """

    path: str
    status: str
    fields: tuple[str, ...]
    old: Component | None
    new: Component | None
    delta_mass: float
    delta_cg: FloatArray
    delta_inertia: FloatArray


@dataclass(frozen=True, slots=True)
class GroupChange:
    """The summed shares of the changed parts in one group (a path prefix)."""

    path: str
    parts: int
    delta_mass: float
    delta_cg: FloatArray
    delta_inertia: FloatArray


@dataclass(frozen=True, slots=True)
class ModelDiff:
    """The difference between two models (see the module notes for the decomposition).

    Attributes
    ----------
    old_name, new_name : str
        How the two versions were named (file, or file@revision).
    old, new : MassProperties
        Totals, model frame.
    changes : tuple of PartChange
        Sorted by the size of the mass change, then path.
    groups : tuple of GroupChange
        Every group holding a changed part, sorted by path.
    recentre : (3, 3) float
        ``−M' S(C' − C)``: the tensor change from moving the reference point to the new CG, kg·m².
    old_balance, new_balance : dict or None
        Front share, CG height and axle loads of each version (when it has a [vehicle]).
    """

    old_name: str
    new_name: str
    old: MassProperties
    new: MassProperties
    changes: tuple[PartChange, ...]
    groups: tuple[GroupChange, ...]
    recentre: FloatArray
    old_balance: Mapping[str, float] | None = None
    new_balance: Mapping[str, float] | None = None

    @property
    def delta_mass(self) -> float:
        return self.new.mass - self.old.mass

    @property
    def delta_cg(self) -> FloatArray:
        return self.new.center - self.old.center

    @property
    def delta_inertia(self) -> FloatArray:
        return self.new.inertia - self.old.inertia

    @property
    def empty(self) -> bool:
        """No part added, removed or changed."""
        return not self.changes


def _fields(a: Component, b: Component) -> tuple[str, ...]:
    out = []
    if abs(a.props.mass - b.props.mass) > TOLERANCE["mass"]:
        out.append("mass")
    if np.max(np.abs(a.props.center - b.props.center)) > TOLERANCE["cg"]:
        out.append("cg")
    if np.max(np.abs(a.props.inertia - b.props.inertia)) > TOLERANCE["inertia"]:
        out.append("inertia")
    if not _same_shape(a, b):
        out.append("shape")
    for name in ("source", "maturity", "material"):
        if getattr(a, name) != getattr(b, name):
            out.append(name)
    return tuple(out)


def _same_shape(a: Component, b: Component) -> bool:
    """Same primitive with the same sizes and the same number of cut-outs (shapes holding arrays, such as imported
    meshes, compare equal only when they are the same object)."""
    if type(a.shape) is not type(b.shape) or len(a.cutouts) != len(b.cutouts):
        return False
    try:
        return bool(a.shape == b.shape)
    except (ValueError, TypeError):
        return a.shape is b.shape


def _about(mp: MassProperties | None, point: FloatArray) -> tuple[float, FloatArray, FloatArray]:
    """(m, m (r − P), I + m S(r − P)) of a part about ``point``; zeros for a missing part."""
    if mp is None:
        return 0.0, np.zeros(3), np.zeros((3, 3))
    d = mp.center - point
    return mp.mass, mp.mass * d, mp.inertia + parallel_axis_shift(mp.mass, d)


def _balance(model: Model, total: MassProperties) -> dict[str, float] | None:
    if model.vehicle is None or total.mass <= 0.0:
        return None
    b = static_balance(total, model.vehicle)
    return {"front_fraction": b.front_fraction, "cg_height_m": b.cg_height, "front_axle_kg": b.front,
            "rear_axle_kg": b.rear}


def diff_models(old: Model, new: Model, old_name: str = "old", new_name: str = "new") -> ModelDiff:
    """Compare two models part by part (parts matched by path).

    Raises
    ------
    ValueError
        When a version has no mass (its CG is undefined).
    """
    a, b = old.mass_properties(), new.mass_properties()
    for name, mp in ((old_name, a), (new_name, b)):
        if not mp.mass > 0.0:
            raise UsageError(f"{name}: the model has no mass, so its CG is undefined")
    old_parts = {c.path: c for c in old.components}
    new_parts = {c.path: c for c in new.components}
    pivot = a.center
    changes = []
    fields: tuple[str, ...]
    for path in list(old_parts) + [p for p in new_parts if p not in old_parts]:
        before, after = old_parts.get(path), new_parts.get(path)
        if before is None:
            status, fields = "added", ("mass", "cg", "inertia")
        elif after is None:
            status, fields = "removed", ("mass", "cg", "inertia")
        else:
            fields = _fields(before, after)
            if not fields:
                continue
            status = "changed"
        m0, s0, i0 = _about(before.props if before else None, pivot)
        m1, s1, i1 = _about(after.props if after else None, pivot)
        changes.append(PartChange(path, status, fields, before, after, m1 - m0, (s1 - s0) / b.mass, i1 - i0))
    changes.sort(key=lambda c: (-abs(c.delta_mass), c.path))
    groups: dict[str, list[PartChange]] = {}
    for c in changes:
        segs = c.path.split("/")
        for k in range(1, len(segs)):
            groups.setdefault("/".join(segs[:k]), []).append(c)
    group_rows = tuple(
        GroupChange(g, len(members), float(sum(c.delta_mass for c in members)),
                    np.sum([c.delta_cg for c in members], axis=0), np.sum([c.delta_inertia for c in members], axis=0))
        for g, members in sorted(groups.items())
    )
    recentre = -parallel_axis_shift(b.mass, b.center - pivot)
    return ModelDiff(old_name, new_name, a, b, tuple(changes), group_rows, recentre, _balance(old, a), _balance(new, b))


def check_limits(diff: ModelDiff, limits: Mapping[str, float]) -> list[str]:
    """The gating limits the change goes over, as lines of text (empty: within every limit).

    Parameters
    ----------
    limits : mapping
        ``mass`` (kg, |ΔM|), ``cg`` (m, distance the CG moved), ``cg_x``/``cg_y``/``cg_z`` (m, one coordinate),
        ``inertia`` (kg·m², the largest change of a tensor entry), SI.
    """
    measured = {
        "mass": (abs(diff.delta_mass), "kg", 1.0),
        "cg": (float(np.linalg.norm(diff.delta_cg)), "mm", 1e3),
        "cg_x": (abs(float(diff.delta_cg[0])), "mm", 1e3),
        "cg_y": (abs(float(diff.delta_cg[1])), "mm", 1e3),
        "cg_z": (abs(float(diff.delta_cg[2])), "mm", 1e3),
        "inertia": (float(np.max(np.abs(diff.delta_inertia))), "kg*m^2", 1.0),
    }
    out = []
    for key, limit in limits.items():
        value, unit, scale = measured[key]
        if value > limit:
            out.append(f"{key} changed by {value * scale:.4g} {unit}, over the limit of {limit * scale:.4g} {unit}")
    return out
