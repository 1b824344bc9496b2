"""Seat ballast: bring a named group (e.g. driver plus seat) up to its minimum mass, and see what it costs in CG
height depending on where in the seat structure the ballast sits.

A ``ballast_height`` rule on the seat group (the ballast's CG at least a given height above the ground, or within a
band of the seated driver's CG height) narrows the tabulated heights to those it allows and marks any given height
it does not.

A ``min_group_mass`` rule counts only the parts in its groups, so ballast that makes it up must be part of one of
them (conventionally the seat). Its mass is sized at the LOW end of the material's density band, so the rule holds
whatever the bar's density. Raising the ballast by ``dh`` raises the car's CG by ``m dh / (M + m)`` (first moment
of mass), which the study tabulates over the height range of the seat structure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.frames import Pose
from massmodel.core.materials import Material
from massmodel.core.model import Model, Rule, RuleCheck, in_group
from massmodel.vehicle.balance import ballast_height_window, static_balance

from .sizing import BlockSizing, Envelope, SizingError, spec_from_parts

__all__ = ["SeatStudy", "seat_ballast_study", "group_extent"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class SeatStudy:
    """Result of :func:`seat_ballast_study`.

    Attributes
    ----------
    rule : Rule
        The group-mass rule.
    group_mass : float
        The rule's group mass now, kg.
    need : float
        Ballast needed at the LOW end of the density band, kg (limit + margin − group mass; ≤ 0: none needed).
    margin : float
        kg.
    material : Material
    sizing : BlockSizing or None
        The plate sized for ``need`` (None when none is needed).
    seat_group : str
        The group the ballast joins.
    station, lateral : float
        Where it sits: forward · p and left · p of the ballast CG, m.
    heights : (K,) float
        Ballast CG heights above the ground, m.
    cg_heights : (K,) float
        The car's CG height above the ground with the ballast there, m.
    front_fractions : (K,) float
    base_cg_height : float
        The car's CG height without the ballast, m.
    seat_range : (float, float)
        Lowest and highest point of the seat structure above the ground, m.
    cg_limit : float or None
        A ``max_cg_height`` rule's limit, m.
    height_rules : tuple of (str, float, float)
        ``ballast_height`` rules on the seat group: name and the lowest and highest ballast CG height above the
        ground they allow, m (``inf`` for no upper end).
    """

    rule: Rule
    group_mass: float
    need: float
    margin: float
    material: Material
    sizing: BlockSizing | None
    seat_group: str
    station: float
    lateral: float
    heights: FloatArray
    cg_heights: FloatArray
    front_fractions: FloatArray
    base_cg_height: float
    seat_range: tuple[float, float]
    cg_limit: float | None
    height_rules: tuple[tuple[str, float, float], ...] = ()

    @property
    def allowed(self) -> npt.NDArray[np.bool_]:
        """Whether each tabulated height meets every ``ballast_height`` rule on the seat group."""
        ok = np.ones(len(self.heights), dtype=bool)
        for _, lo, hi in self.height_rules:
            ok &= (self.heights >= lo - 1e-12) & (self.heights <= hi + 1e-12)
        return ok

    @property
    def lowest_allowed(self) -> float | None:
        """The lowest tabulated height that every ``ballast_height`` rule allows, m (None when none does)."""
        ok = self.allowed
        return float(np.min(self.heights[ok])) if np.any(ok) else None

    @property
    def ballast_mass(self) -> float:
        """Nominal mass of the sized plate, kg (0 when none is needed)."""
        return self.sizing.masses()[0] if self.sizing is not None else 0.0

    @property
    def slope(self) -> float:
        """Rise of the car's CG per metre of ballast height (dimensionless, m/m)."""
        h = self.heights
        return float((self.cg_heights[-1] - self.cg_heights[0]) / (h[-1] - h[0])) if len(h) > 1 else 0.0


def group_extent(model: Model, group: str) -> tuple[float, float]:
    """Lowest and highest point of a group's shapes along the vehicle's up axis, above the ground, m."""
    if model.vehicle is None:
        raise UsageError(f"{model.source or model.name}: the seat study needs a [vehicle] section")
    comps = model.select([group])
    if not comps:
        raise UsageError(f"no part lies in group '{group}'")
    up = model.vehicle.up
    lo, hi = math.inf, -math.inf
    for c in comps:
        b = c.shape.bounds()
        corners = np.array([[b[i][0], b[j][1], b[k][2]] for i in (0, 1) for j in (0, 1) for k in (0, 1)])
        h = c.pose.apply(corners) @ up
        lo, hi = min(lo, float(h.min())), max(hi, float(h.max()))
    return lo - model.vehicle.ground_level, hi - model.vehicle.ground_level


def _rule(model: Model, name: str | None, margin: float) -> Rule:
    rules = [r for r in model.rules if r.check is RuleCheck.MIN_GROUP_MASS]
    if name is not None:
        for r in rules:
            if r.name == name:
                return r
        raise UsageError(f"no min_group_mass rule named '{name}'; rules: {', '.join(r.name for r in rules) or 'none'}")
    if not rules:
        raise UsageError(f"{model.source or model.name}: the model has no min_group_mass rule")
    short = [r for r in rules if _group_mass(model, r) < float(r.limit or 0.0) + margin]
    return short[0] if short else rules[0]


def _group_mass(model: Model, rule: Rule) -> float:
    return float(sum(c.props.mass for c in model.components if any(in_group(c.path, g) for g in rule.groups)))


def seat_ballast_study(
    model: Model,
    material: Material,
    margin: float,
    *,
    rule_name: str | None = None,
    seat_group: str | None = None,
    footprint: tuple[float, float] = (0.15, 0.10),
    increment: float = 0.5e-3,
    at: tuple[float, float] | None = None,
    heights: FloatArray | None = None,
    steps: int = 7,
) -> SeatStudy:
    """Size the ballast a group-mass rule needs and tabulate the car's CG height against the ballast height.

    Parameters
    ----------
    model : Model
    material : Material
        Ballast material (with its density band).
    margin : float
        kg above the rule's limit, at the low end of the band.
    rule_name : str, optional
        The rule (default: the first ``min_group_mass`` rule that is short).
    seat_group : str, optional
        Group the ballast joins (default: the rule's group whose path names a seat, else its last group).
    footprint : (float, float)
        Plate size along the model's forward and left axes, m; the thickness is sized.
    increment : float
        Manufacturing increment, m.
    at : (float, float), optional
        forward · p and left · p of the ballast, m (default: the seat group's CG).
    heights : (K,) float, optional
        Ballast CG heights above the ground, m (default: ``steps`` heights across the seat structure).
    """
    if model.vehicle is None:
        raise UsageError(f"{model.source or model.name}: the seat study needs a [vehicle] section")
    if not (math.isfinite(margin) and margin >= 0.0):
        raise UsageError(f"margin must be a mass >= 0, got {margin!r} kg")
    v = model.vehicle
    rule = _rule(model, rule_name, margin)
    if seat_group is None:
        seat_group = next((g for g in rule.groups if "seat" in g.split("/")[-1]), rule.groups[-1])
    elif not any(in_group(seat_group, g) for g in rule.groups):
        raise UsageError(f"group '{seat_group}' is not counted by rule '{rule.name}' (groups: {', '.join(rule.groups)})")
    group = _group_mass(model, rule)
    need = float(rule.limit or 0.0) + margin - group
    seat_lo, seat_hi = group_extent(model, seat_group)
    height_rules = tuple((r.name, *ballast_height_window(model, r)) for r in model.rules
                         if r.check is RuleCheck.BALLAST_HEIGHT
                         and any(in_group(g, seat_group) or in_group(seat_group, g) for g in r.groups))
    seat_mp = model.mass_properties([seat_group])
    station = float(v.forward @ seat_mp.center) if at is None else float(at[0])
    lateral = float(v.left @ seat_mp.center) if at is None else float(at[1])
    total = model.mass_properties()
    base = static_balance(total, v)
    sizing = None
    if need > 0.0:
        env = Envelope("seat ballast", (footprint[0], footprint[1], 1.0), Pose(v.basis.T, np.zeros(3)), 0.0)
        try:
            sizing = _size(env, material, increment, need)
        except SizingError as exc:
            raise UsageError(f"seat ballast: {exc}") from None
    if heights is None:  # the plate's CG from half its thickness above the lowest point to as far below the top
        half = 0.5 * sizing.fill_length if sizing is not None else 0.0
        lo_h, hi_h = seat_lo + half, max(seat_hi - half, seat_lo + half)
        lo_r = max([lo_h, *(a for _, a, _ in height_rules)])  # the ballast-height rules narrow the range
        hi_r = min([hi_h, *(b for _, _, b in height_rules)])
        if lo_r <= hi_r:
            lo_h, hi_h = lo_r, max(hi_r, lo_r)
        heights = np.linspace(lo_h, hi_h, max(2, int(steps)))
    heights = np.asarray(heights, dtype=float)
    if heights.ndim != 1 or heights.size < 1 or not np.all(np.isfinite(heights)) or np.any(heights <= 0.0):
        got = ", ".join(f"{h * 1e3:.1f}" for h in np.ravel(heights))
        raise UsageError(f"ballast heights must be heights above the ground (> 0 mm), got {got} mm")
    m = sizing.masses()[0] if sizing is not None else 0.0
    cg_h, ff = [], []
    for h in heights:
        p = station * v.forward + lateral * v.left + (v.ground_level + h) * v.up
        mass = total.mass + m
        centre = (total.mass * total.center + m * p) / mass
        bal = static_balance(type(total).point(mass, centre), v)
        cg_h.append(bal.cg_height)
        ff.append(bal.front_fraction)
    limit = next((float(r.limit or 0.0) for r in model.rules if r.check is RuleCheck.MAX_CG_HEIGHT), None)
    return SeatStudy(rule, group, need, margin, material, sizing, seat_group, station, lateral, heights,
                     np.array(cg_h), np.array(ff), base.cg_height, (seat_lo, seat_hi), limit, height_rules)


def _size(env: Envelope, material: Material, increment: float, need: float) -> BlockSizing:
    from .sizing import size_block

    spec = spec_from_parts(material, "+z", increment=increment)
    sizing = size_block(env, spec, need)
    if not sizing.reached:
        raise SizingError(f"a plate of this footprint would have to be more than {env.size[2] * 1e3:.0f} mm thick")
    return sizing
