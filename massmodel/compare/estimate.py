"""CAD mass-properties estimates: the file formats, their declared conventions, and their reading into the model frame.

An estimate is a list of items (the whole, ``"*"``, and optionally groups or parts of the model), each a mass, a CG
and an inertia tensor *as written* by whoever made it, plus the conventions the file declares for all of them:
units, axes, origin, reference point of the tensors and the sign of the products of inertia. The numbers are kept
as written so that :mod:`massmodel.compare.diagnose` can re-read them under another convention; :func:`normalise` is the one
place where they are turned into SI mass properties in the model frame (about each CG, tensor convention).

The JSON and CSV formats are described in ``docs/compare.md``. STEP files plus densities are read by
:mod:`massmodel.compare.estimate_step` (it needs OpenCascade).

Reading under conventions
-------------------------
With ``f_m, f_l, f_I`` the SI sizes of the declared mass, length and inertia units, for every item:

1. ``m = f_m · mass``, ``c_e = f_l · cg`` (estimate axes), ``I = f_I · inertia``;
2. positive products (``P_xy = +∫xy dm``) are negated into the tensor convention (``I_xy = −∫xy dm``);
3. a tensor about a point ``p`` (the estimate origin, ``p = 0``, or a stated point) is moved to the CG by the
   parallel-axis theorem, ``I_G = I_p − m(|d|² E − d dᵀ)`` with ``d = c_e − p``;
4. estimate axes → model axes with the signed permutation ``A`` (rows: the estimate's x, y, z axes as model
   directions): ``c = o + Aᵀ c_e`` (``o``: the estimate origin in model coordinates) and ``I_model = Aᵀ I_G A``.

References
----------
.. [1] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3 (parallel-axis theorem in tensor
   form) and §5.4 (transformation of the tensor under a change of axes).
.. [2] The positive and negative product-of-inertia conventions are both in use (mass-properties reports often
   give P_xy = +∫xy dm): common practice, no source.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.units import UnitError
from massmodel.modelfile.reader import magnitude_problem, parse_json, read_text, split_vector

from .conventions import (
    AXIS_LETTERS,
    FORMAT,
    WHOLE,
    AxisMap,
    Conventions,
    Estimate,
    EstimateError,
    EstimateItem,
    FloatArray,
    Products,
    ReferenceKind,
    normalise,
    normalise_arrays,
    signed_permutations,
    unit_factor,
)

__all__ = [
    "FORMAT",
    "WHOLE",
    "AxisMap",
    "Conventions",
    "Estimate",
    "EstimateError",
    "EstimateItem",
    "Products",
    "ReferenceKind",
    "load_estimate",
    "loads_estimate",
    "normalise",
    "normalise_arrays",
    "signed_permutations",
]


# --- reading files ----------------------------------------------------------------------------------------------

_TOP_FIELDS = ("format", "description", "units", "axes", "origin_in_model", "inertia_about", "products", "items")
_ITEM_FIELDS = ("group", "mass", "cg", "inertia", "note")
_TERMS = ("xx", "yy", "zz", "xy", "xz", "yz")
_CSV_DECL = ("format", "description", "units.mass", "units.length", "units.inertia", "axes", "origin_in_model",
             "inertia_about", "products")


def _unknown(file: str, item: str | None, keys: Sequence[str], allowed: Sequence[str]) -> None:
    for key in keys:
        if key not in allowed:
            close = difflib.get_close_matches(key, allowed, n=1)
            hint = f"; did you mean '{close[0]}'?" if close else f" (known: {', '.join(allowed)})"
            raise EstimateError(file, item, key, f"unknown field{hint}")


def _number(file: str, item: str | None, fld: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise EstimateError(file, item, fld, f"expected a number, got {value!r}")
    x = float(value)
    if not math.isfinite(x):
        raise EstimateError(file, item, fld, f"expected a finite number, got {value!r}")
    return x


def _vector(file: str, item: str | None, fld: str, value: Any, length_unit: str, units_allowed: bool = True) -> FloatArray:
    """A point as written in the declared length unit: ``[x, y, z]`` numbers, or any point syntax of the input files
    (``"10, 20, -265 mm"``, ``["10 mm", "20 mm", "-0.265 m"]``, ``"x y z"``); lengths with a unit are converted to
    the declared unit, so that the numbers stay as the file means them. An item's CG (``units_allowed`` False) is
    plain numbers only: the diagnosis re-reads every item's numbers in other units."""
    try:
        entries = split_vector(value)
    except ValueError:
        raise EstimateError(file, item, fld, f"expected three numbers [x, y, z] (or 'x, y, z {length_unit}'), "
                                             f"got {value!r}") from None
    if not units_allowed:
        return np.array([_number(file, item, f"{fld}[{i}]", float(v) if isinstance(v, str) and _is_plain(v) else v)
                         for i, v in enumerate(entries)])
    return np.array([_length(file, item, f"{fld}[{i}]", v, length_unit) for i, v in enumerate(entries)])


def _is_plain(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _length(file: str, item: str | None, fld: str, value: Any, length_unit: str) -> float:
    """One coordinate: a number in the declared length unit, or a length with its unit (converted to it)."""
    if not isinstance(value, str):
        return _number(file, item, fld, value)
    from massmodel.core import expr, units

    try:
        q = expr.evaluate(value)
    except (expr.ExpressionError, units.UnitError) as exc:
        raise EstimateError(file, item, fld, str(exc)) from None
    if q.dim == units.DIMENSIONLESS:
        x = q.value
    elif q.dim == units.LENGTH:
        x = q.value / unit_factor(length_unit, "length")
    else:
        raise EstimateError(file, item, fld, f"expected a length or a number in {length_unit}, got {value!r}")
    if not math.isfinite(x):
        raise EstimateError(file, item, fld, f"expected a finite number, got {value!r}")
    return x


def _inertia_field(file: str, item: str, value: Any) -> FloatArray:
    if isinstance(value, Mapping):
        _unknown(file, item, [f"inertia.{k}" for k in value], [f"inertia.{t}" for t in _TERMS])
        missing = [t for t in _TERMS if t not in value]
        if missing:
            raise EstimateError(file, item, f"inertia.{missing[0]}",
                                "missing (give xx, yy, zz, xy, xz and yz, or a 3x3 matrix)")
        v = {t: _number(file, item, f"inertia.{t}", value[t]) for t in _TERMS}
        return np.array([[v["xx"], v["xy"], v["xz"]], [v["xy"], v["yy"], v["yz"]], [v["xz"], v["yz"], v["zz"]]])
    if isinstance(value, list) and len(value) == 3 and all(isinstance(r, list) and len(r) == 3 for r in value):
        return np.array([[_number(file, item, f"inertia[{i}][{j}]", x) for j, x in enumerate(r)]
                         for i, r in enumerate(value)])
    raise EstimateError(file, item, "inertia",
                        "expected {\"xx\": .., \"yy\": .., \"zz\": .., \"xy\": .., \"xz\": .., \"yz\": ..} or a 3x3 matrix")


def _check_written(file: str, item: str, mass: float, cg: FloatArray, tensor: FloatArray,
                   conv: Conventions) -> FloatArray:
    """The written tensor made exactly symmetric, after checking the mass, the magnitudes (the limits of the model
    file, :data:`massmodel.modelfile.reader.MAGNITUDE_LIMITS`) and the symmetry (numbers as written, in the declared
    units ``conv``)."""
    if not mass > 0.0:
        raise EstimateError(file, item, "mass", f"must be a positive mass, got {mass:g} {conv.mass_unit}")
    checks = [("mass", "mass", mass, conv.mass_unit)]
    checks += [(f"cg[{i}]", "length", float(x), conv.length_unit) for i, x in enumerate(cg)]
    checks += [(f"inertia.{AXIS_LETTERS[i]}{AXIS_LETTERS[j]}", "inertia", float(tensor[i, j]), conv.inertia_unit)
               for i in range(3) for j in range(i, 3)]
    for fld, kind, value, unit in checks:
        problem = magnitude_problem(value * unit_factor(unit, kind), kind, f"{value:g} {unit}")
        if problem:
            raise EstimateError(file, item, fld, problem)
    scale = float(np.max(np.abs(tensor)))
    asym = float(np.max(np.abs(tensor - tensor.T)))
    if scale > 0.0 and asym > 1e-6 * scale:
        i, j = np.unravel_index(int(np.argmax(np.abs(tensor - tensor.T))), (3, 3))
        a, b = AXIS_LETTERS[i] + AXIS_LETTERS[j], AXIS_LETTERS[j] + AXIS_LETTERS[i]
        raise EstimateError(file, item, "inertia",
                            f"not symmetric: {a} = {tensor[i, j]:.10g} {conv.inertia_unit} but {b} = {tensor[j, i]:.10g} "
                            f"{conv.inertia_unit} "
                            "(an inertia tensor is symmetric)")
    return 0.5 * (tensor + tensor.T)


def _conventions(file: str, get: Any, vehicle: Any) -> Conventions:
    """Build the declared conventions; ``get(name)`` returns the raw declaration or raises a missing-field error."""
    units_: dict[str, str] = {}
    for key in ("mass", "length", "inertia"):
        text = get(f"units.{key}")
        if not isinstance(text, str):
            raise EstimateError(file, "units", key, f"expected a unit text such as 'kg*mm^2', got {text!r}")
        try:
            unit_factor(text, key)
        except UnitError as exc:
            raise EstimateError(file, "units", key, str(exc)) from None
        units_[key] = text
    try:
        axes = AxisMap.parse(get("axes"), vehicle)
    except ValueError as exc:
        raise EstimateError(file, None, "axes", str(exc)) from None
    origin = get("origin_in_model")
    origin_v = _vector(file, None, "origin_in_model", origin, units_["length"])
    about = get("inertia_about")
    point = None
    if isinstance(about, Mapping):
        _unknown(file, "inertia_about", list(about), ["point"])
        if "point" not in about:
            raise EstimateError(file, "inertia_about", "point", "missing (write {\"point\": [x, y, z]})")
        point = _vector(file, "inertia_about", "point", about["point"], units_["length"])
        reference = ReferenceKind.POINT
    elif isinstance(about, str) and about.strip().lower().startswith("point"):
        point = _vector(file, None, "inertia_about", about.strip()[5:].strip(), units_["length"])
        reference = ReferenceKind.POINT
    else:
        names = [r.value for r in ReferenceKind if r is not ReferenceKind.POINT]
        if not isinstance(about, str) or about.strip().lower() not in names:
            raise EstimateError(file, None, "inertia_about",
                                f"expected 'cg', 'origin' or a point {{\"point\": [x, y, z]}}, got {about!r}")
        reference = ReferenceKind(about.strip().lower())
    products = get("products")
    if not isinstance(products, str) or products.strip().lower() not in ("negative", "positive"):
        raise EstimateError(file, None, "products",
                            "expected 'negative' (I_xy = -∫xy dm, tensor convention) or 'positive' (P_xy = +∫xy dm), "
                            f"got {products!r}")
    return Conventions(units_["mass"], units_["length"], units_["inertia"], Products(products.strip().lower()),
                       reference, axes, origin_v, point)


def _check_format(file: str, value: Any) -> None:
    if value != FORMAT:
        raise EstimateError(file, None, "format", f"expected '{FORMAT}', got {value!r} (is this an estimate file?)")


def loads_estimate(text: str, file: str, kind: str = "json", vehicle: Any = None) -> Estimate:
    """Read an estimate from text.

    Parameters
    ----------
    text : str
        File contents.
    file : str
        Name used in messages and reports.
    kind : str
        ``"json"`` or ``"csv"``.
    vehicle : Vehicle, optional
        Lets the axes be given as vehicle directions (``forward``, ``down``, ...).

    Raises
    ------
    EstimateError
        Naming the file, the item and the field.
    """
    if kind == "json":
        return _load_json(text, file, vehicle)
    if kind == "csv":
        return _load_csv(text, file, vehicle)
    raise EstimateError(file, None, None, f"unknown estimate kind {kind!r} (json or csv)")


def load_estimate(path: str | Path, vehicle: Any = None) -> Estimate:
    """Read a ``.json`` or ``.csv`` estimate file (format in ``docs/compare.md``)."""
    p = Path(path)
    kind = p.suffix.lower().lstrip(".")
    if kind not in ("json", "csv"):
        raise EstimateError(str(p), None, None, "an estimate file must end in .json or .csv (or be a STEP file)")
    return loads_estimate(read_text(p, str(p), EstimateError), str(p), kind, vehicle)


def _load_json(text: str, file: str, vehicle: Any) -> Estimate:
    data = parse_json(text, file, EstimateError)
    if not isinstance(data, dict):
        raise EstimateError(file, None, None, "expected a JSON object at the top")
    _unknown(file, None, list(data), _TOP_FIELDS)
    _check_format(file, data.get("format"))

    def get(name: str) -> Any:
        head, _, tail = name.partition(".")
        if head not in data:
            raise EstimateError(file, None, head, "missing (every estimate declares its units, axes, "
                                "origin_in_model, inertia_about and products)")
        value = data[head]
        if not tail:
            return value
        if not isinstance(value, dict):
            raise EstimateError(file, None, head, "expected a table {\"mass\": .., \"length\": .., \"inertia\": ..}")
        _unknown(file, head, list(value), ["mass", "length", "inertia"])
        if tail not in value:
            raise EstimateError(file, head, tail, "missing")
        return value[tail]

    conv = _conventions(file, get, vehicle)
    rows = data.get("items")
    if not isinstance(rows, list) or not rows:
        raise EstimateError(file, None, "items", "missing or empty: give a list of items (the whole '*' and/or groups)")
    items = []
    for k, row in enumerate(rows):
        label = f"items[{k}]"
        if not isinstance(row, dict):
            raise EstimateError(file, label, None, "expected a table with group, mass, cg and inertia")
        group = row.get("group")
        if isinstance(group, str) and group:
            label = f"items[{k}] (group '{group}')"
        _unknown(file, label, list(row), _ITEM_FIELDS)
        for key in ("group", "mass", "cg", "inertia"):
            if key not in row:
                raise EstimateError(file, label, key, "missing")
        if not isinstance(group, str) or not group.strip():
            raise EstimateError(file, label, "group", f"expected '*' or a group path, got {group!r}")
        mass = _number(file, label, "mass", row["mass"])
        cg = _vector(file, label, "cg", row["cg"], conv.length_unit, units_allowed=False)
        tensor = _check_written(file, label, mass, cg, _inertia_field(file, label, row["inertia"]), conv)
        items.append(EstimateItem(group.strip(), mass, cg, tensor, label))
    description = data.get("description", "")
    if not isinstance(description, str):
        raise EstimateError(file, None, "description", "expected text")
    est = Estimate(file, "json", conv, tuple(items), description)
    normalise(est)  # validity of every tensor as declared
    return est


_CSV_REQUIRED = ("group", "mass", "cg_x", "cg_y", "cg_z", "i_xx", "i_yy", "i_zz", "i_xy", "i_xz", "i_yz")
_CSV_OPTIONAL = ("i_yx", "i_zx", "i_zy", "note")


def _load_csv(text: str, file: str, vehicle: Any) -> Estimate:
    decl: dict[str, tuple[str, int]] = {}
    body: list[tuple[int, str]] = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if stripped.startswith("#:"):
            key, sep, value = stripped[2:].partition("=")
            key = key.strip()
            if not sep:
                raise EstimateError(file, f"line {lineno}", key or None, "expected '#: name = value'")
            _unknown(file, f"line {lineno}", [key], _CSV_DECL)
            if key in decl:
                raise EstimateError(file, f"line {lineno}", key, f"declared twice (first on line {decl[key][1]})")
            decl[key] = (value.strip(), lineno)
        elif stripped.startswith("#") or not stripped:
            continue
        else:
            body.append((lineno, line))
    if "format" not in decl:
        raise EstimateError(file, None, "format", f"missing: the first lines must declare '#: format = {FORMAT}'")
    _check_format(file, decl["format"][0])

    def get(name: str) -> Any:
        if name not in decl:
            raise EstimateError(file, None, name, f"missing: declare it on a line '#: {name} = ...'")
        return decl[name][0]

    conv = _conventions(file, get, vehicle)
    if not body:
        raise EstimateError(file, None, "items", "no header line and no rows after the declarations")
    rows = []
    for lineno, line in body:
        try:
            rows.append(next(csv.reader(io.StringIO(line)), []))
        except csv.Error as exc:  # e.g. a field over the csv module's limit of 128 KiB
            raise EstimateError(file, f"line {lineno}", None, f"not a CSV line: {exc}") from None
    header = [h.strip().lower() for h in rows[0]]
    _unknown(file, f"line {body[0][0]} (header)", header, _CSV_REQUIRED + _CSV_OPTIONAL)
    for col in _CSV_REQUIRED:
        if col not in header:
            raise EstimateError(file, f"line {body[0][0]} (header)", col, "missing column")
    full = [c in header for c in ("i_yx", "i_zx", "i_zy")]
    if any(full) and not all(full):
        raise EstimateError(file, f"line {body[0][0]} (header)", "i_yx",
                            "give all of i_yx, i_zx, i_zy (the lower triangle) or none")
    items = []
    for (lineno, _), cells in zip(body[1:], rows[1:], strict=True):
        label = f"line {lineno}"
        if len(cells) != len(header):
            raise EstimateError(file, label, None, f"has {len(cells)} cells, the header has {len(header)}")
        row = {h: c.strip() for h, c in zip(header, cells, strict=True)}
        group = row["group"]
        if not group:
            raise EstimateError(file, label, "group", "empty: write '*' for the whole or a group path")
        label = f"line {lineno} (group '{group}')"

        def num(col: str, row: dict[str, str] = row, label: str = label) -> float:
            try:
                x = float(row[col])
            except ValueError:
                raise EstimateError(file, label, col, f"expected a number, got {row[col]!r}") from None
            if not math.isfinite(x):
                raise EstimateError(file, label, col, f"expected a finite number, got {row[col]!r}")
            return x

        mass = num("mass")
        cg = np.array([num("cg_x"), num("cg_y"), num("cg_z")])
        xx, yy, zz, xy, xz, yz = (num(f"i_{t}") for t in _TERMS)
        yx, zx, zy = (num("i_yx"), num("i_zx"), num("i_zy")) if all(full) else (xy, xz, yz)
        tensor = np.array([[xx, xy, xz], [yx, yy, yz], [zx, zy, zz]])
        items.append(EstimateItem(group, mass, cg, _check_written(file, label, mass, cg, tensor, conv), label))
    est = Estimate(file, "csv", conv, tuple(items), decl.get("description", ("", 0))[0])
    normalise(est)
    return est
