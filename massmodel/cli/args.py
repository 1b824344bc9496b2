"""argparse ``type=`` callables for the options that take a quantity or a point: the edge where command-line text
becomes SI, in the same syntax as the input files (:mod:`massmodel.modelfile.reader`).

A mistake is reported by argparse itself, before the command runs: one line naming the option, exit 2
(:func:`massmodel.cli.main`). Quantities are expressions of the model-file language with their unit (``"0.5 mm"``,
``"2*0.25 kg"``); a bare 0 needs none. A point is three lengths: ``"0 mm, 0 mm, -265 mm"``, ``"0, 0, -265 mm"`` (a
unit written once after the last number applies to all three) or ``"(0, 0, -265) mm"``. A point of ``report
--inertia-about`` may use the model's parameters (``"0, 0, ground_z"``): what cannot be evaluated before the model is
read is kept as text and evaluated with its parameters (:meth:`PointArg.resolve`).
"""

from __future__ import annotations

import argparse
import math
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.core.errors import UsageError
from massmodel.core.shapes import MAX_LENGTH_M
from massmodel.modelfile.reader import split_vector

__all__ = ["KINDS", "PointArg", "quantity", "in_unit", "acceleration_in_g", "lengths", "point", "point_or_cg", "keyed", "override", "share",
           "density_or_material",
           "output_file", "output_folder", "check_outputs"]

#: Quantity kinds of the options: dimension and an example.
KINDS: dict[str, tuple[units.Dimension, str]] = {
    "length": (units.LENGTH, "250 mm"),
    "mass": (units.MASS, "1.5 kg"),
    "angle": (units.ANGLE, "3 deg"),
    "density": (units.DENSITY, "7850 kg/m^3"),
}


def _error(message: str) -> argparse.ArgumentTypeError:
    return argparse.ArgumentTypeError(message)


def _evaluate(text: str, env: Mapping[str, units.Quantity] | None = None) -> units.Quantity:
    try:
        return expr.evaluate(text.strip(), env or {})
    except (expr.ExpressionError, units.UnitError) as exc:
        raise _error(str(exc).splitlines()[0]) from None


def _si(text: str, kind: str, example: str | None = None, env: Mapping[str, units.Quantity] | None = None) -> float:
    dim, default_example = KINDS[kind]
    q = _evaluate(text, env)
    if q.dim == units.DIMENSIONLESS and q.value == 0.0:
        return 0.0
    if q.dim == units.DIMENSIONLESS:
        raise _error(f"expected a {kind} with its unit such as '{example or default_example}', got {text!r}")
    if q.dim != dim:
        raise _error(f"expected {dim.describe()} such as '{example or default_example}', got {text!r}")
    if not math.isfinite(q.value):
        raise _error(f"{text!r} is not a finite number")
    return float(q.value)


def quantity(kind: str, example: str | None = None) -> Callable[[str], float]:
    """A ``type=`` for one quantity of ``kind`` (``"length"``, ``"mass"``, ``"angle"``, ``"density"``) → SI float.

    Examples
    --------
    >>> quantity("length")("0.5 mm")
    0.0005
    """

    def parse(text: str) -> float:
        return _si(text, kind, example)

    parse.__name__ = kind
    return parse


def in_unit(kind: str, unit: str) -> Callable[[str], float]:
    """A ``type=`` for an option documented in ``unit`` (``--chord`` in mm): a bare number is in ``unit``, a
    quantity with its own unit is converted to it (``"0.1"`` and ``"100 um"`` both give 0.1 for mm).

    Examples
    --------
    >>> in_unit("length", "mm")("0.1 m")
    100.0
    """
    size = units.parse_unit(unit).value

    def parse(text: str) -> float:
        try:
            return float(text)  # a bare number, as before (the command checks its range)
        except ValueError:
            pass
        q = _evaluate(text)
        if q.dim == units.DIMENSIONLESS:
            return float(q.value)
        return _si(text, kind) / size

    parse.__name__ = f"{kind} in {unit}"
    return parse


def acceleration_in_g(text: str) -> float:
    """A ``type=`` for an acceleration in g: a bare number (``1.2``), ``"1.2 g"`` or a quantity (``"11.8 m/s^2"``,
    ``"1.2 gee"``) divided by standard gravity g_n = 9.80665 m/s² (exact by definition, NIST SP 811)."""
    t = text.strip()
    if t.endswith("g") and not t.endswith("kg"):
        t = t.removesuffix("g").strip()
    q = _evaluate(t)
    if q.dim == units.DIMENSIONLESS:
        value = q.value
    elif q.dim == units.ACCELERATION:
        value = q.value / units.STANDARD_GRAVITY_M_S2
    else:
        raise _error(f"expected an acceleration in g such as 1.2 (or '11.8 m/s^2'), got {text!r}")
    if not math.isfinite(value):
        raise _error(f"{text!r} is not a finite number")
    return float(value)


def lengths(n: int | None = None) -> Callable[[str], tuple[float, ...]]:
    """A ``type=`` for ``n`` comma-separated lengths (any number with None): ``"14 mm, 5 mm"`` or ``"14, 5 mm"``."""

    def parse(text: str) -> tuple[float, ...]:
        try:
            entries = split_vector(text, n, "list of lengths")
        except ValueError as exc:
            raise _error(str(exc)) from None
        return tuple(_si(str(e), "length") for e in entries)

    parse.__name__ = "lengths"
    return parse


@dataclass(frozen=True)
class PointArg:
    """A point given on the command line, read as far as possible without the model.

    Attributes
    ----------
    text : str
        As typed (the label of the point in reports).
    entries : tuple of str
        The three coordinates (each with its unit once :func:`split_vector` distributed it).
    values : tuple of (float or None)
        The coordinates in m; None where the text uses model parameters (evaluated by :meth:`resolve`).
    """

    text: str
    entries: tuple[str, ...]
    values: tuple[float | None, ...]

    @property
    def is_cg(self) -> bool:
        """Whether the text was ``"cg"`` (the model's CG, no coordinates)."""
        return not self.entries

    def resolve(self, env: Mapping[str, units.Quantity]) -> np.ndarray | None:
        """The point in m, (3,), evaluating the coordinates that use model parameters with ``env`` (None for
        ``"cg"``).

        Raises
        ------
        ValueError
            One line naming the coordinate.
        """
        if self.is_cg:
            return None
        out = []
        for axis, entry, value in zip("xyz", self.entries, self.values, strict=True):
            if value is None:
                try:
                    value = _coordinate(self.text, axis, entry, env)
                except argparse.ArgumentTypeError as exc:
                    raise UsageError(str(exc)) from None
            out.append(value)
        return np.array(out)


def _coordinate(text: str, axis: str, entry: str, env: Mapping[str, units.Quantity] | None) -> float:
    try:
        value = _si(entry, "length", None, env)
    except argparse.ArgumentTypeError as exc:
        message = str(exc)
        if message.startswith("expected length"):
            message = "expected a length with a unit such as '250 mm'"
        raise _error(f"{text!r}, {axis}: {message}") from None
    if abs(value) > MAX_LENGTH_M:  # the parallel-axis term would overflow to a non-finite tensor
        raise _error(f"{text!r}, {axis}: {value:g} m is farther than {MAX_LENGTH_M:g} m from the origin")
    return value


def _point(text: str, deferred: bool) -> PointArg:
    try:
        entries = tuple(str(e) for e in split_vector(text))
    except ValueError:
        raise _error(f"expected three coordinates with units, e.g. '0, 0, -265 mm' or '0 mm, 0 mm, -0.265 m', "
                     f"got {text!r}") from None
    values: list[float | None] = [None, None, None]
    for k in (2, 0, 1):  # z first: a unit written once after the last number is checked where it is written
        axis, entry = "xyz"[k], entries[k]
        try:
            uses_names = bool(expr.referenced_names(entry))
        except (expr.ExpressionError, units.UnitError) as exc:
            raise _error(f"{text!r}, {axis}: {str(exc).splitlines()[0]}") from None
        if not (uses_names and deferred):
            values[k] = _coordinate(text, axis, entry, None)
    return PointArg(text.strip(), entries, tuple(values))


def point(text: str) -> np.ndarray:
    """A ``type=`` for a point of three lengths (no model parameters) → (3,) m."""
    return np.array(_point(text, deferred=False).values, dtype=float)


def point_or_cg(text: str) -> PointArg:
    """A ``type=`` for ``--inertia-about``: ``"cg"`` (:attr:`PointArg.is_cg`) or a point that may use the model's
    parameters (:meth:`PointArg.resolve`)."""
    if text.strip().lower() == "cg":
        return PointArg(text.strip(), (), ())
    return _point(text, deferred=True)


def keyed(kind: str, key_name: str = "NAME") -> Callable[[str], tuple[str, float]]:
    """A ``type=`` for ``KEY=QUANTITY`` (``--capacity floor=12 kg``, ``--fix x=180 mm``) → (key, SI value)."""

    def parse(text: str) -> tuple[str, float]:
        key, sep, value = text.partition("=")
        if not sep or not key.strip() or not value.strip():
            raise _error(f"expected {key_name}={kind.upper()} such as {key_name.lower()}={KINDS[kind][1]!r}, "
                         f"got {text!r}")
        return key.strip(), _si(value, kind)

    parse.__name__ = f"{key_name}={kind}"
    return parse


def override(text: str) -> tuple[str, str]:
    """A ``type=`` for ``--set NAME=VALUE``: the parameter name and its expression (its syntax checked here, its
    value evaluated with the model's parameters)."""
    try:
        name, value = expr.parse_override(text)
        expr.referenced_names(value)
    except ValueError as exc:
        raise _error(str(exc).splitlines()[0]) from None
    return name, value


def share(text: str) -> float:
    """A ``type=`` for a positive share: ``"1 %"`` or ``0.01``."""
    t = text.strip()
    try:
        value = float(t[:-1]) / 100.0 if t.endswith("%") else float(t)
    except ValueError:
        raise _error(f"expected a share such as '1 %' or 0.01, got {text!r}") from None
    if not (value > 0.0 and math.isfinite(value)):
        raise _error(f"must be positive, got {text!r}")
    return value


def density_or_material(text: str) -> Any:
    """A ``type=`` for a density (``"7850 kg/m^3"`` → float, kg/m³) or a material key (kept as text, resolved
    against the model's library when the model is read)."""
    key = text.strip()
    if key.isidentifier():
        return key
    return _si(text, "density")


def output_file(text: str) -> Path:
    """A file the command writes (``--json FILE``, ``-o FILE``): checked against the inputs by :func:`check_outputs`."""
    if not text.strip():
        raise _error("expected a file name")
    return Path(text)


def output_folder(text: str) -> Path:
    """A folder the command writes into (``export --out DIR``): checked by :func:`check_outputs`."""
    return output_file(text)


_OUTPUT_TYPES = (output_file, output_folder)


def _subparser(parser: argparse.ArgumentParser, command: str) -> argparse.ArgumentParser | None:
    for action in parser._actions:  # argparse keeps the sub-commands in this action only
        if isinstance(action, argparse._SubParsersAction):
            return action.choices.get(command)
    return None


def _same(a: Path, b: Path) -> bool:
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
    except OSError:
        pass
    return a.resolve() == b.resolve()


def _files(parser: argparse.ArgumentParser, args: argparse.Namespace) -> tuple[list[tuple[str, Path]],
                                                                                list[tuple[str, Path, bool]]]:
    """The command's inputs (name, path) and outputs (option, path, is a folder) as given on the command line."""
    sub = _subparser(parser, getattr(args, "command", ""))
    inputs: list[tuple[str, Path]] = []
    outputs: list[tuple[str, Path, bool]] = []
    for action in sub._actions if sub is not None else []:
        values = getattr(args, action.dest, None)
        for value in values if isinstance(values, list) else [values]:
            if not isinstance(value, Path):
                continue
            name = action.option_strings[-1] if action.option_strings else action.dest
            if action.type in _OUTPUT_TYPES:
                outputs.append((name, value, action.type is output_folder))
            else:
                inputs.append((name, value))
    return inputs, outputs


def check_outputs(parser: argparse.ArgumentParser, args: argparse.Namespace) -> list[Path]:
    """Refuse an output option that names an input file of the command, or the same file as another output.

    The inputs are the command's arguments of type :class:`~pathlib.Path` (the model, the session, the plan, the
    estimate, ``--model``); the outputs are the options of type :func:`output_file` or :func:`output_folder`. Run by
    :func:`massmodel.cli.main` before the command, so nothing is read or written when it fails.

    Returns
    -------
    list of Path
        The folders of the outputs that do not exist yet (the command creates them; the command line says so).

    Raises
    ------
    UsageError
        One line naming the output option and the file, e.g. ``--json car.toml: that is the input model``.
    """
    inputs, outputs = _files(parser, args)
    for i, (opt, out, _) in enumerate(outputs):
        for name, path in inputs:
            if _same(out, path):
                what = f"the input of {name}" if name.startswith("-") else f"the input {name}"
                raise UsageError(f"{opt} {out}: that is {what}; choose another output name (nothing was written)")
        for other, path, _ in outputs[:i]:
            if _same(out, path):
                raise UsageError(f"{opt} {out}: {other} writes the same file; choose another output name (nothing "
                                 "was written)")
    missing: list[Path] = []
    for _, out, folder in outputs:
        top = out if folder else out.parent
        if top.exists():
            continue
        while not top.parent.exists() and top.parent != top:
            top = top.parent
        if top not in missing:
            missing.append(top)
    return missing
