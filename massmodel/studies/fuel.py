"""The fuel-burn track: CG, axle loads, front share and rule margins as the fuel load goes from full to empty.

The fuel's shape follows the parameter as the model file defines it (the demo car's fuel box gets lower as
``fuel_mass`` falls), so the track re-evaluates the file at each fuel load (:class:`massmodel.studies.evaluate.
Evaluator`). A file often cannot build a fuel shape of zero size (a box of height 0 is no solid); then the empty
point is the model with the fuel parts left out, which is exact when those parts' masses are proportional to the
parameter (checked at the full and half loads; otherwise the track stops with a message).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Model
from massmodel.modelfile.loader import ModelSource
from massmodel.modelfile.reader import ModelFileError

from .evaluate import Evaluator
from .outputs import Output, OutputPlan, RuleLimits, column_of, rule_limits, select_outputs, worst_points
from .sweep import Progress, literal

__all__ = ["FuelTrack", "fuel_track", "TRACK_OUTPUTS"]

FloatArray = npt.NDArray[np.float64]
TRACK_OUTPUTS = ("mass", "cg_x", "cg_y", "cg_z", "cg_height", "front_axle", "rear_axle", "front_share", "margins")
_PROPORTIONAL_RTOL = 1e-9


@dataclass(frozen=True, slots=True)
class FuelTrack:
    """Outputs along the fuel load, full to empty.

    Attributes
    ----------
    model, case : str
    parameter : str
        The fuel parameter of the model file.
    unit : str
        Its SI unit.
    fuel : (n,) float
        The fuel parameter at each point, full first, SI.
    outputs : tuple of Output
    values : (n, k) float
    rules : tuple of RuleLimits
    rule_values : (n, r) float
    left_out : tuple of str
        Parts left out at a zero load (empty when the file builds the empty point itself).
    """

    model: str
    case: str
    parameter: str
    unit: str
    fuel: FloatArray
    outputs: tuple[Output, ...]
    values: FloatArray
    rules: tuple[RuleLimits, ...]
    rule_values: FloatArray
    left_out: tuple[str, ...] = ()

    def column(self, key: str) -> FloatArray:
        """The values of output ``key`` along the track."""
        return column_of(self.outputs, self.values, key)

    def worst(self) -> list[tuple[int, int]]:
        """(output index, point index) of the smallest margin of each rule (the first such point on ties)."""
        return worst_points(self.outputs, self.values)


def _empty_model(ev: Evaluator, name: str, full: float, dim: object, error: ModelFileError) -> tuple[Model, tuple[str, ...]]:
    """The model with no fuel when the file cannot build a zero load: the parts whose mass follows the parameter
    are left out, after checking that their masses are proportional to it (full and half loads)."""
    if not full > 0.0:
        raise error
    at_full = ev.model({name: literal(full, dim)})  # type: ignore[arg-type]
    at_half = ev.model({name: literal(0.5 * full, dim)})  # type: ignore[arg-type]
    half = {c.path: c for c in at_half.components}
    moving = [c for c in at_full.components if c.props.mass != half[c.path].props.mass
              or not np.array_equal(c.props.center, half[c.path].props.center)]
    for c in moving:
        if abs(half[c.path].props.mass - 0.5 * c.props.mass) > _PROPORTIONAL_RTOL * c.props.mass:
            raise ModelFileError(error.file, error.item, error.field,
                                 f"{error.message}; and part '{c.path}' does not scale with {name} (its mass at half "
                                 "the load is not half), so it cannot simply be left out for an empty tank") from None
    if not moving:
        raise error
    gone = {c.path for c in moving}
    return at_full.with_components([c for c in at_full.components if c.path not in gone]), tuple(sorted(gone))


def fuel_track(source: ModelSource, parameter: str = "fuel_mass", full: float | None = None, empty: float = 0.0,
               steps: int = 21, overrides: Mapping[str, str] | None = None, case: str | None = None,
               progress: Progress | None = None) -> FuelTrack:
    """Evaluate the model from a full to an empty fuel load.

    Parameters
    ----------
    source : ModelSource
    parameter : str
        The fuel parameter (a mass or volume the file turns into the fuel's shape).
    full : float, optional
        The full load, SI; default the parameter's value in the file (in ``case``, with ``overrides``).
    empty : float
        The empty load, SI (0: a dry tank).
    steps : int
        Number of points, at least 2.

    Raises
    ------
    ValueError
        Bad steps, an unknown parameter, or a point the file cannot build.
    """
    if steps < 2:
        raise UsageError(f"--steps must be at least 2 for a track from full to empty, got {steps}")
    ev = Evaluator(source, (parameter,), overrides, case)
    current = ev.base.parameters[parameter]
    full_value = current.value if full is None else float(full)
    if full_value < empty:
        raise UsageError(f"the full load ({full_value:g}) is below the empty load ({empty:g}) in SI units of {parameter}")
    outs = select_outputs(ev.base, TRACK_OUTPUTS if ev.base.vehicle is not None else ("mass", "cg_x", "cg_y", "cg_z",
                                                                                       "margins"))
    plan = OutputPlan(ev.base, outs)
    fuel = np.linspace(full_value, empty, steps)
    values = np.empty((steps, len(outs)))
    rule_values = np.empty((steps, len(ev.base.rules)))
    left_out: tuple[str, ...] = ()
    for i, f in enumerate(fuel):
        text = literal(f, current.dim)
        try:
            model, total = ev.evaluate({parameter: text})
        except ModelFileError as exc:
            if f != 0.0:
                raise UsageError(f"at {parameter} = {text}: {exc}") from None
            model, left_out = _empty_model(ev, parameter, full_value, current.dim, exc)
            total = model.mass_properties()
        values[i], rule_values[i] = plan.evaluate(model, total)
        if progress is not None:
            progress(i + 1, steps)
    unit = "" if str(current.dim) == "1" else str(current.dim)
    for a in (fuel, values, rule_values):
        a.setflags(write=False)
    return FuelTrack(ev.base.name, ev.base.case, parameter, unit, fuel, outs, values,
                     tuple(rule_limits(r) for r in ev.base.rules), rule_values, left_out)
