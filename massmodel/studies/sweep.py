"""Parameter sweeps (one parameter or a grid of several) and one-at-a-time sensitivities.

A :class:`Study` names the model source, the fixed overrides, the load case, the varied parameters and the outputs;
it is a plain value that can be sent to other processes (:mod:`massmodel.studies.cluster`). Points are evaluated in
chunks by :func:`evaluate_chunk`, the same function locally and on Dask workers, so both give the same numbers.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core import expr, units
from massmodel.core.errors import UsageError
from massmodel.core.model import Model
from massmodel.modelfile.loader import ModelSource

from .evaluate import Evaluator
from .outputs import (
    Output,
    OutputPlan,
    RuleLimits,
    column_of,
    evaluate_outputs,
    rule_limits,
    select_outputs,
    worst_points,
)

__all__ = ["ParameterRange", "Study", "SweepResult", "Sensitivity", "parse_range", "parse_step", "grid_points",
           "evaluate_chunk", "run_points", "sweep", "sensitivity", "MAX_POINTS", "Progress"]

FloatArray = npt.NDArray[np.float64]
Progress = Callable[[int, int], None]
#: Largest number of points a sweep accepts (a grid grows fast; a study this big belongs on a cluster in pieces).
MAX_POINTS = 1_000_000
CHUNK = 250


def _frozen(a: npt.ArrayLike) -> FloatArray:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


def literal(value: float, dim: units.Dimension) -> str:
    """An expression text of the model language for an SI value (``"0.0125 m"``); exact round trip of the float."""
    return repr(float(value)) if dim == units.DIMENSIONLESS else f"{float(value)!r} {dim}"


@dataclass(frozen=True, slots=True)
class ParameterRange:
    """The values one parameter takes in a sweep.

    Attributes
    ----------
    name : str
        Parameter of the model file.
    values : (n,) float
        SI values, in sweep order.
    unit : str
        SI unit of the values ('' for a plain number).
    texts : tuple of str
        The override texts given to the model at each value.
    """

    name: str
    values: FloatArray
    unit: str
    texts: tuple[str, ...]


def _quantity(text: str, env: Mapping[str, units.Quantity], where: str) -> units.Quantity:
    try:
        return expr.evaluate(text.strip(), env)
    except (expr.ExpressionError, units.UnitError) as exc:
        raise UsageError(f"{where}: {str(exc).splitlines()[0]}") from None


def _check_name(name: str, model: Model) -> units.Quantity:
    if name not in model.parameters:
        import difflib

        close = difflib.get_close_matches(name, list(model.parameters), n=3)
        hint = f"; did you mean {', '.join(close)}?" if close else f"; parameters: {', '.join(model.parameters)}"
        raise UsageError(f"{model.source or model.name}: unknown parameter '{name}'{hint}")
    return model.parameters[name]


def _same_dim(q: units.Quantity, current: units.Quantity, text: str, name: str) -> float:
    if q.dim == current.dim or (q.dim == units.DIMENSIONLESS and q.value == 0.0):
        return float(q.value)
    raise UsageError(f"--vary {name}: {text.strip()!r} is in {q.dim}, the parameter is in {current.dim}")


def parse_range(text: str, model: Model) -> ParameterRange:
    """A swept parameter from ``name=FROM:TO:STEPS`` or ``name=V1,V2,...`` (values with units; they may use the
    model's parameters, e.g. ``wheelbase=wheelbase-20mm:wheelbase+20mm:5``).

    Raises
    ------
    ValueError
        One line: unknown parameter, steps not a whole number above 0, a value of the wrong dimension.
    """
    if "=" not in text:
        raise UsageError(f"--vary {text!r}: expected name=FROM:TO:STEPS or name=V1,V2,... (e.g. fuel_mass=30kg:0kg:31)")
    name, spec = (s.strip() for s in text.split("=", 1))
    current = _check_name(name, model)
    env = model.parameters
    if ":" in spec:
        pieces = spec.split(":")
        if len(pieces) != 3:
            raise UsageError(f"--vary {name}: expected FROM:TO:STEPS, got {spec!r}")
        try:
            steps = int(pieces[2])
        except ValueError:
            raise UsageError(f"--vary {name}: STEPS must be a whole number, got {pieces[2]!r}") from None
        if steps <= 0:
            raise UsageError(f"--vary {name}: STEPS must be at least 1, got {steps}")
        lo = _same_dim(_quantity(pieces[0], env, f"--vary {name}"), current, pieces[0], name)
        hi = _same_dim(_quantity(pieces[1], env, f"--vary {name}"), current, pieces[1], name)
        values = np.linspace(lo, hi, steps) if steps > 1 else np.array([lo])
    else:
        items = [s for s in spec.split(",") if s.strip()]
        if not items:
            raise UsageError(f"--vary {name}: no values given")
        values = np.array([_same_dim(_quantity(s, env, f"--vary {name}"), current, s, name) for s in items])
    unit = "" if current.dim == units.DIMENSIONLESS else str(current.dim)
    return ParameterRange(name, _frozen(values), unit, tuple(literal(v, current.dim) for v in values))


def parse_step(text: str, model: Model) -> tuple[str, float, str]:
    """``name=STEP`` for a sensitivity (the step with a unit): (name, step SI, step text).

    Raises
    ------
    ValueError
        Unknown parameter, a step of zero or of the wrong dimension.
    """
    if "=" not in text:
        raise UsageError(f"--step {text!r}: expected name=STEP, e.g. wheelbase=10mm")
    name, spec = (s.strip() for s in text.split("=", 1))
    current = _check_name(name, model)
    step = _same_dim(_quantity(spec, model.parameters, f"--step {name}"), current, spec, name)
    if not step > 0.0:
        raise UsageError(f"--step {name}: the step must be above zero, got {spec!r}")
    return name, step, spec


def grid_points(ranges: Sequence[ParameterRange]) -> list[dict[str, str]]:
    """Every combination of the ranges' values (the last range varies fastest), as override maps.

    Raises
    ------
    ValueError
        More than :data:`MAX_POINTS` points, or a parameter given twice.
    """
    names = [r.name for r in ranges]
    if len(set(names)) != len(names):
        raise UsageError(f"--vary: parameter '{next(n for n in names if names.count(n) > 1)}' given twice")
    count = int(np.prod([len(r.texts) for r in ranges], dtype=float)) if ranges else 0
    if count > MAX_POINTS:
        raise UsageError(f"--vary: the grid has {count} points; at most {MAX_POINTS} in one study")
    return [dict(zip(names, combo, strict=True)) for combo in itertools.product(*(r.texts for r in ranges))]


@dataclass(frozen=True, slots=True)
class Study:
    """What a study evaluates at every point (a plain value, picklable for Dask workers).

    Attributes
    ----------
    source : ModelSource
    varied : tuple of str
        Parameters the points set.
    overrides : tuple of (str, str)
        Fixed overrides applied at every point.
    case : str or None
        Load case.
    outputs : tuple of str
        Output names (:data:`massmodel.studies.outputs.OUTPUT_NAMES`); empty: every output.
    partial : bool
        Rebuild only the parts the varied parameters reach (:class:`massmodel.studies.evaluate.Evaluator`).
    """

    source: ModelSource
    varied: tuple[str, ...]
    overrides: tuple[tuple[str, str], ...] = ()
    case: str | None = None
    outputs: tuple[str, ...] = ()
    partial: bool = True

    def evaluator(self) -> Evaluator:
        """A fresh :class:`Evaluator` for this study."""
        return Evaluator(self.source, self.varied, dict(self.overrides), self.case, partial=self.partial)


def evaluate_chunk(study: Study, points: Sequence[Mapping[str, str]], evaluator: Evaluator | None = None
                   ) -> tuple[FloatArray, FloatArray]:
    """Outputs and rule values of a chunk of points: ((n, outputs), (n, rules)) arrays, SI.

    The same function runs locally and on Dask workers; each call builds its own evaluator (the base model once
    per chunk) unless given one, then reduces every point's model to its few numbers (moment sums → CG, inertia,
    loads, margins).
    """
    ev = study.evaluator() if evaluator is None else evaluator
    plan = OutputPlan(ev.base, select_outputs(ev.base, study.outputs))
    values = np.empty((len(points), len(plan.outputs)))
    rules = np.empty((len(points), len(ev.base.rules)))
    for i, point in enumerate(points):
        try:
            model, total = ev.evaluate(point)
        except ValueError as exc:
            at = ", ".join(f"{k} = {v}" for k, v in point.items())
            raise UsageError(f"at {at}: {exc}") from None
        v, r = plan.evaluate(model, total)
        values[i] = v
        rules[i] = r
    return values, rules


def chunks(points: Sequence[Mapping[str, str]], size: int) -> list[Sequence[Mapping[str, str]]]:
    """Consecutive pieces of at most ``size`` points."""
    return [points[i:i + size] for i in range(0, len(points), size)]


def run_points(study: Study, points: Sequence[Mapping[str, str]], progress: Progress | None = None,
               chunk: int = CHUNK, evaluator: Evaluator | None = None) -> tuple[FloatArray, FloatArray]:
    """Evaluate every point in this process, chunk by chunk (see :func:`evaluate_chunk`), with one evaluator."""
    ev = study.evaluator() if evaluator is None else evaluator
    outs = select_outputs(ev.base, study.outputs)
    values = [np.empty((0, len(outs)))]
    rules = [np.empty((0, len(ev.base.rules)))]
    done = 0
    for piece in chunks(points, chunk):
        v, r = evaluate_chunk(study, piece, ev)
        values.append(v)
        rules.append(r)
        done += len(piece)
        if progress is not None:
            progress(done, len(points))
    return np.concatenate(values), np.concatenate(rules)


@dataclass(frozen=True, slots=True)
class SweepResult:
    """The outputs of a sweep.

    Attributes
    ----------
    model : str
        Model name.
    case : str
        Load case.
    parameters : tuple of ParameterRange
        The swept parameters (a grid over all of them).
    points : (n, p) float
        SI value of each parameter at each point.
    outputs : tuple of Output
    values : (n, k) float
        Output values, SI (rows follow ``points``).
    rules : tuple of RuleLimits
        The model's rules and their bounds.
    rule_values : (n, r) float
        Each rule's checked value at each point (rule's unit).
    base_values : (k,) float
        The outputs with the file's own parameter values (the fixed overrides applied).
    base_parameters : (p,) float
        The file's own values of the swept parameters, SI.
    method : str
        How the points were built (partial rebuild or full builds, and why).
    """

    model: str
    case: str
    parameters: tuple[ParameterRange, ...]
    points: FloatArray
    outputs: tuple[Output, ...]
    values: FloatArray
    rules: tuple[RuleLimits, ...]
    rule_values: FloatArray
    base_values: FloatArray
    base_parameters: FloatArray
    method: str = field(default="")

    def column(self, key: str) -> FloatArray:
        """The values of the output ``key`` (e.g. ``"cg_x"``) at every point."""
        return column_of(self.outputs, self.values, key)

    def worst(self) -> list[tuple[int, int]]:
        """(output index, point index) of the smallest margin of each rule (the first such point on ties)."""
        return worst_points(self.outputs, self.values)


def _method(ev: Evaluator) -> str:
    if ev.partial:
        return f"each point rebuilds the {len(ev.rebuilt)} of {len(ev.base.components)} parts its parameters reach"
    return f"each point is a full build ({ev.reason})"


def sweep(study: Study, ranges: Sequence[ParameterRange], runner: Callable[..., tuple[FloatArray, FloatArray]] | None = None,
          progress: Progress | None = None, chunk: int = CHUNK) -> SweepResult:
    """Evaluate the grid of ``ranges`` (see :func:`grid_points`).

    Parameters
    ----------
    study : Study
        Its ``varied`` must be the names of ``ranges``.
    ranges : sequence of ParameterRange
    runner : callable, optional
        ``runner(study, points, progress=...)`` returning the arrays of :func:`evaluate_chunk` for all points;
        default :func:`run_points` (this process); :func:`massmodel.studies.cluster.run_points_dask` for Dask.
    progress : callable, optional
        ``progress(done, total)``, called after each chunk.
    chunk : int
        Points per chunk of the default runner (a runner of its own has its own).
    """
    points = grid_points(ranges)
    ev = study.evaluator()
    outs = select_outputs(ev.base, study.outputs)
    base_values, _ = evaluate_outputs(ev.base, outs)
    if runner is None:
        values, rule_values = run_points(study, points, progress=progress, chunk=chunk, evaluator=ev)
    else:
        values, rule_values = runner(study, points, progress=progress)
    grid = np.array([[float(v) for v in combo] for combo in itertools.product(*(r.values for r in ranges))])
    return SweepResult(
        model=ev.base.name, case=ev.base.case, parameters=tuple(ranges), points=_frozen(grid.reshape(len(points), -1)),
        outputs=outs, values=_frozen(values), rules=tuple(rule_limits(r) for r in ev.base.rules),
        rule_values=_frozen(rule_values), base_values=_frozen(base_values),
        base_parameters=_frozen([ev.base.parameters[r.name].value for r in ranges]), method=_method(ev),
    )


@dataclass(frozen=True, slots=True)
class Sensitivity:
    """One-at-a-time sensitivities: each parameter moved by − and + its step, the others at the file's values.

    Attributes
    ----------
    model, case : str
    names : tuple of str
        Parameters, in the order given.
    steps : (p,) float
        Step of each parameter, SI.
    units : tuple of str
        SI unit of each parameter.
    outputs : tuple of Output
    base : (k,) float
        Outputs at the file's values.
    minus, plus : (p, k) float
        Outputs with parameter i moved by −step and +step.
    """

    model: str
    case: str
    names: tuple[str, ...]
    steps: FloatArray
    units: tuple[str, ...]
    outputs: tuple[Output, ...]
    base: FloatArray
    minus: FloatArray
    plus: FloatArray

    @property
    def effect(self) -> FloatArray:
        """(p, k) central difference per step: (plus − minus) / 2, in each output's unit per step."""
        return 0.5 * (self.plus - self.minus)

    def ranking(self, key: str) -> list[int]:
        """Parameter indices by the size of their effect on output ``key``, largest first."""
        k = next((i for i, o in enumerate(self.outputs) if o.key == key), None)
        if k is None:
            raise UsageError(f"no output '{key}'; outputs: {', '.join(o.key for o in self.outputs)}")
        spread = np.maximum(np.abs(self.plus[:, k] - self.base[k]), np.abs(self.minus[:, k] - self.base[k]))
        return sorted(range(len(self.names)), key=lambda i: (-spread[i], i))


def sensitivity(source: ModelSource, steps: Iterable[tuple[str, float]], overrides: Mapping[str, str] | None = None,
                case: str | None = None, outputs: Sequence[str] = (), progress: Progress | None = None) -> Sensitivity:
    """Move each parameter by ∓ its step (SI) from its value in the file, one at a time.

    Raises
    ------
    ModelFileError
        The model cannot be built at a moved value (the message names the parameter value).
    """
    items = list(steps)
    study = Study(source, tuple(n for n, _ in items), tuple((overrides or {}).items()), case, tuple(outputs))
    base_ev = Evaluator(source, (), dict(study.overrides), case)
    base_model = base_ev.base
    outs = select_outputs(base_model, outputs)
    base, _ = evaluate_outputs(base_model, outs)
    minus = np.empty((len(items), len(outs)))
    plus = np.empty((len(items), len(outs)))
    for i, (name, step) in enumerate(items):
        current = base_model.parameters[name]
        ev = Evaluator(source, (name,), dict(study.overrides), case)
        for row, sign in ((minus, -1.0), (plus, 1.0)):
            text = literal(current.value + sign * step, current.dim)
            try:
                row[i] = evaluate_outputs(ev.model({name: text}), outs)[0]
            except ValueError as exc:
                raise UsageError(f"at {name} = {text}: {exc}") from None
        if progress is not None:
            progress(i + 1, len(items))
    unit_of = [str(base_model.parameters[n].dim) if base_model.parameters[n].dim != units.DIMENSIONLESS else ""
               for n, _ in items]
    return Sensitivity(base_model.name, base_model.case, tuple(n for n, _ in items), _frozen([s for _, s in items]),
                       tuple(unit_of), outs, _frozen(base), _frozen(minus), _frozen(plus))
