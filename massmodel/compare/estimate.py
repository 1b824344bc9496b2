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
import enum
import functools
import io
import itertools
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.massprops import InertiaError, MassProperties, validate_inertia
from massmodel.core.units import INERTIA, LENGTH, MASS, UnitError, parse_unit
from massmodel.modelfile.loader import ModelFileError

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

FloatArray = npt.NDArray[np.float64]

#: Format tag of the JSON and CSV estimate files.
FORMAT = "massmodel-estimate/1"
#: Item name of the whole: everything compared (the model, or the group chosen on the command line).
WHOLE = "*"

_AXES = "xyz"


class EstimateError(ModelFileError):
    """A problem in an estimate (file, item, field, message), reported like a model-file problem."""


class Products(enum.Enum):
    """Sign convention of the products of inertia."""

    NEGATIVE = "negative"  # tensor convention: I_xy = -∫xy dm (massmodel's own)
    POSITIVE = "positive"  # P_xy = +∫xy dm (frequent in mass-properties reports)

    @property
    def formula(self) -> str:
        return "I_xy = -∫xy dm" if self is Products.NEGATIVE else "P_xy = +∫xy dm"


class ReferenceKind(enum.Enum):
    """The point the tensors of an estimate are taken about (axes parallel to the estimate axes)."""

    CG = "cg"  # each item's own CG
    ORIGIN = "origin"  # the estimate's origin
    POINT = "point"  # a point stated in the file (estimate coordinates)


# --- axes -----------------------------------------------------------------------------------------------------

_WORDS = {"forward": ("forward", 1.0), "rearward": ("forward", -1.0), "left": ("left", 1.0),
          "right": ("left", -1.0), "up": ("up", 1.0), "down": ("up", -1.0)}


@dataclass(frozen=True, slots=True, eq=False)
class AxisMap:
    """How the estimate's axes lie in the model: a signed permutation.

    Parameters
    ----------
    matrix : (3, 3) float
        Row ``i`` is the estimate's axis ``i`` (x, y, z) as a unit vector in model axes; entries 0 and ±1, one
        non-zero per row and column. ``det = +1`` for a right-handed (proper) map, ``−1`` for a mirror image.
    """

    matrix: FloatArray

    def __post_init__(self) -> None:
        m = np.array(self.matrix, dtype=float).reshape(3, 3)
        if not (np.all(np.isin(m, (-1.0, 0.0, 1.0))) and np.all(np.abs(m).sum(axis=0) == 1)
                and np.all(np.abs(m).sum(axis=1) == 1)):
            raise ValueError("axes must be a signed permutation: each model axis used exactly once")
        m.setflags(write=False)
        object.__setattr__(self, "matrix", m)

    @classmethod
    def identity(cls) -> AxisMap:
        return cls(np.eye(3))

    @classmethod
    def parse(cls, value: str | Mapping[str, Any], vehicle: Any = None) -> AxisMap:
        """Read ``"x=-x, y=-y, z=+z"`` or ``{"x": "-x", "y": "-y", "z": "+z"}``.

        Keys are the estimate's axes; values are model axes with a sign (``+x``, ``-y``, ``z``) or, when a
        vehicle is given, vehicle directions (``forward``, ``rearward``, ``left``, ``right``, ``up``, ``down``).

        Raises
        ------
        ValueError
            Naming what is wrong (missing axis, unknown direction, repeated model axis).
        """
        if isinstance(value, str):
            pairs: dict[str, Any] = {}
            for chunk in value.replace(";", ",").split(","):
                if not chunk.strip():
                    continue
                key, sep, val = chunk.partition("=")
                if not sep:
                    raise ValueError(f"expected 'x=<model axis>' pairs like 'x=-x, y=-y, z=+z', got {chunk.strip()!r}")
                pairs[key.strip()] = val.strip()
        elif isinstance(value, Mapping):
            pairs = dict(value)
        else:
            raise ValueError(f"expected a table like {{\"x\": \"-x\", \"y\": \"-y\", \"z\": \"+z\"}}, got {value!r}")
        unknown = sorted(set(pairs) - set(_AXES))
        if unknown:
            raise ValueError(f"unknown estimate axis {unknown[0]!r} (the keys are x, y and z)")
        missing = [a for a in _AXES if a not in pairs]
        if missing:
            raise ValueError(f"axis '{missing[0]}' is not given (give x, y and z)")
        rows = [_direction(str(pairs[a]), vehicle, a) for a in _AXES]
        try:
            return cls(np.array(rows))
        except ValueError:
            raise ValueError(
                f"axes {cls._text_of(np.array(rows))} use a model axis twice; each model axis must appear once"
            ) from None

    @staticmethod
    def _text_of(m: FloatArray) -> str:
        parts = []
        for i, row in enumerate(m):
            k = int(np.argmax(np.abs(row)))
            parts.append(f"{_AXES[i]}={'+' if row[k] > 0 else '-'}{_AXES[k]}")
        return ", ".join(parts)

    @property
    def text(self) -> str:
        """``"x=-x, y=-y, z=+z"``: each estimate axis as a signed model axis."""
        return self._text_of(self.matrix)

    @property
    def is_proper(self) -> bool:
        """True for a right-handed map (a rotation); False for a mirror image."""
        return bool(np.linalg.det(self.matrix) > 0.0)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, AxisMap) and bool(np.array_equal(self.matrix, other.matrix))

    def __hash__(self) -> int:
        return hash(self.matrix.tobytes())

    def __repr__(self) -> str:
        return f"AxisMap({self.text!r})"


def _direction(text: str, vehicle: Any, axis: str) -> FloatArray:
    t = text.strip().lower()
    if t in _WORDS:
        if vehicle is None:
            raise ValueError(f"axis '{axis}' = {text!r}: vehicle directions need a model with a [vehicle] table")
        name, sign = _WORDS[t]
        v = sign * np.asarray(getattr(vehicle, name), dtype=float)
        if not np.allclose(np.abs(v), np.round(np.abs(v))):
            raise ValueError(f"axis '{axis}' = {text!r}: the vehicle's {name} direction is not along a model axis")
        return np.round(v)
    sign = 1.0
    if t[:1] in "+-":
        sign = -1.0 if t[0] == "-" else 1.0
        t = t[1:].strip()
    if t not in ("x", "y", "z"):
        hint = " or a vehicle direction (forward, rearward, left, right, up, down)" if vehicle is not None else ""
        raise ValueError(f"axis '{axis}' = {text!r}: expected a signed model axis such as '+x' or '-z'{hint}")
    out = np.zeros(3)
    out[_AXES.index(t)] = sign
    return out


def signed_permutations() -> list[AxisMap]:
    """All 48 signed permutations of three axes: 24 proper (rotations) first, then 24 mirror images."""
    out = []
    for perm in itertools.permutations(range(3)):
        for signs in itertools.product((1.0, -1.0), repeat=3):
            m = np.zeros((3, 3))
            for i, (j, s) in enumerate(zip(perm, signs, strict=True)):
                m[i, j] = s
            out.append(AxisMap(m))
    out.sort(key=lambda a: not a.is_proper)
    return out


# --- conventions ----------------------------------------------------------------------------------------------

_DIMS = {"mass": MASS, "length": LENGTH, "inertia": INERTIA}


@functools.lru_cache(maxsize=256)
def _unit_factor(text: str, kind: str) -> float:
    """SI size of a unit text of the kind 'mass', 'length' or 'inertia' (cached: a diagnosis re-reads the same
    few units often)."""
    q = parse_unit(text)
    dim = _DIMS[kind]
    if q.dim != dim:
        raise UnitError(f"'{text}' is {q.dim.describe()}, not {dim.describe()}")
    if not q.value > 0.0:
        raise UnitError(f"{kind} unit '{text}' has no size")
    return q.value


@dataclass(frozen=True, slots=True, eq=False)
class Conventions:
    """What an estimate declares about all its numbers.

    Parameters
    ----------
    mass_unit, length_unit, inertia_unit : str
        Unit texts (:func:`massmodel.core.units.parse_unit`), e.g. ``"kg"``, ``"mm"``, ``"kg*mm^2"``.
    products : Products
        Sign convention of the off-diagonal terms as written.
    reference : ReferenceKind
        The point the tensors are about.
    reference_point : (3,) float or None
        For ``POINT``: the point in estimate coordinates, in ``length_unit`` as written.
    axes : AxisMap
        The estimate axes in model axes.
    origin : (3,) float
        The estimate's origin in model coordinates, in ``length_unit`` as written.
    """

    mass_unit: str
    length_unit: str
    inertia_unit: str
    products: Products
    reference: ReferenceKind
    axes: AxisMap
    origin: FloatArray
    reference_point: FloatArray | None = None
    mass_factor: float = field(init=False)
    length_factor: float = field(init=False)
    inertia_factor: float = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "mass_factor", _unit_factor(self.mass_unit, "mass"))
        object.__setattr__(self, "length_factor", _unit_factor(self.length_unit, "length"))
        object.__setattr__(self, "inertia_factor", _unit_factor(self.inertia_unit, "inertia"))
        origin = np.array(self.origin, dtype=float).reshape(3)
        origin.setflags(write=False)
        object.__setattr__(self, "origin", origin)
        if (self.reference is ReferenceKind.POINT) != (self.reference_point is not None):
            raise ValueError("a stated reference point goes with reference 'point' only")
        if self.reference_point is not None:
            p = np.array(self.reference_point, dtype=float).reshape(3)
            p.setflags(write=False)
            object.__setattr__(self, "reference_point", p)

    def with_(self, **changes: Any) -> Conventions:
        """A copy with some fields changed (the units are re-checked)."""
        return replace(self, **changes)

    @property
    def reference_text(self) -> str:
        if self.reference is ReferenceKind.CG:
            return "about each item's CG"
        if self.reference is ReferenceKind.ORIGIN:
            return "about the estimate origin"
        assert self.reference_point is not None
        p = ", ".join(f"{v:g}" for v in self.reference_point)
        return f"about the point ({p}) {self.length_unit} in estimate axes"

    def describe(self) -> str:
        """One line of text: every declared convention with its unit."""
        o = ", ".join(f"{v:g}" for v in self.origin)
        hand = "" if self.axes.is_proper else " (a mirror image)"
        return (f"mass {self.mass_unit} · lengths {self.length_unit} · inertia {self.inertia_unit} · "
                f"axes {self.axes.text}{hand} · origin ({o}) {self.length_unit} in model axes · "
                f"{self.reference_text} · products {self.products.value} ({self.products.formula})")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready declaration (as in the file format)."""
        about: Any = self.reference.value
        if self.reference_point is not None:
            about = {"point": self.reference_point.tolist()}
        return {
            "units": {"mass": self.mass_unit, "length": self.length_unit, "inertia": self.inertia_unit},
            "axes": dict(pair.split("=") for pair in self.axes.text.split(", ")),
            "origin_in_model": self.origin.tolist(),
            "inertia_about": about,
            "products": self.products.value,
        }


# --- items and the estimate --------------------------------------------------------------------------------

@dataclass(frozen=True, slots=True, eq=False)
class EstimateItem:
    """One row of an estimate, numbers as written (declared units, estimate axes, declared product sign).

    Parameters
    ----------
    group : str
        ``"*"`` for the whole, else a group or part path of the model.
    mass : float
        In the declared mass unit.
    cg : (3,) float
        In the declared length unit, estimate coordinates.
    inertia : (3, 3) float
        In the declared inertia unit, estimate axes, about the declared reference point, declared product sign.
    label : str
        Where it was read ("item 2 (group 'power')"), for messages.
    """

    group: str
    mass: float
    cg: FloatArray
    inertia: FloatArray
    label: str = ""

    def __post_init__(self) -> None:
        for name, shape in (("cg", (3,)), ("inertia", (3, 3))):
            a = np.array(getattr(self, name), dtype=float).reshape(shape)
            a.setflags(write=False)
            object.__setattr__(self, name, a)
        object.__setattr__(self, "mass", float(self.mass))


@dataclass(frozen=True, slots=True, eq=False)
class Estimate:
    """A CAD estimate: items as written and the declared conventions.

    Parameters
    ----------
    source : str
        File it came from (for messages and reports).
    kind : str
        ``"json"``, ``"csv"`` or ``"step"``.
    conventions : Conventions
        As declared.
    items : tuple of EstimateItem
        At least one; group names unique.
    description : str
        Free text from the file.
    doubtful : frozenset of str
        The conventions a diagnosis may question: for files every declared one (``products``, ``units``,
        ``reference``, ``axes``); for a STEP file computed here only ``axes`` (the user's placement options).
    notes : tuple of str
        Extra lines for reports (e.g. the solids and densities of a STEP file).
    """

    source: str
    kind: str
    conventions: Conventions
    items: tuple[EstimateItem, ...]
    description: str = ""
    doubtful: frozenset[str] = frozenset({"products", "units", "reference", "axes"})
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not self.items:
            raise EstimateError(self.source, None, "items", "the estimate has no items")
        seen: set[str] = set()
        for it in self.items:
            if it.group in seen:
                raise EstimateError(self.source, it.label, "group", f"group '{it.group}' is given twice")
            seen.add(it.group)

    @property
    def groups(self) -> list[str]:
        return [it.group for it in self.items]

    def arrays(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        """(masses (N,), CGs (N, 3), tensors (N, 3, 3)) as written."""
        return (np.array([it.mass for it in self.items]), np.array([it.cg for it in self.items]),
                np.array([it.inertia for it in self.items]))


def normalise_arrays(
    masses: npt.ArrayLike, cgs: npt.ArrayLike, inertias: npt.ArrayLike, conv: Conventions
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Numbers as written → SI in the model frame, about each CG, tensor convention (vectorised; not validated).

    Parameters
    ----------
    masses : (N,) float
        As written.
    cgs : (N, 3) float
        As written (estimate coordinates, declared length unit).
    inertias : (N, 3, 3) float
        As written.
    conv : Conventions
        How to read them.

    Returns
    -------
    masses : (N,) float
        kg.
    centers : (N, 3) float
        m, model coordinates.
    inertias : (N, 3, 3) float
        kg·m² about each CG, model axes, ``I_xy = −∫xy dm``.

    References
    ----------
    Module docstring, steps 1-4 (Goldstein et al. 2002, §5.3-5.4).
    """
    m = np.asarray(masses, dtype=float) * conv.mass_factor
    c_e = np.asarray(cgs, dtype=float).reshape(-1, 3) * conv.length_factor
    tensor = np.asarray(inertias, dtype=float).reshape(-1, 3, 3) * conv.inertia_factor
    if conv.products is Products.POSITIVE:
        tensor = np.where(np.eye(3, dtype=bool), tensor, -tensor)
    if conv.reference is not ReferenceKind.CG:
        point = np.zeros(3) if conv.reference_point is None else conv.reference_point * conv.length_factor
        d = c_e - point
        d2 = np.einsum("ni,ni->n", d, d)
        steiner = d2[:, None, None] * np.eye(3) - d[:, :, None] * d[:, None, :]
        tensor = tensor - m[:, None, None] * steiner
    a = conv.axes.matrix
    centers = conv.origin * conv.length_factor + c_e @ a
    inertia_model = np.einsum("ji,njk,kl->nil", a, tensor, a)
    return m, centers, 0.5 * (inertia_model + np.swapaxes(inertia_model, 1, 2))


def normalise(estimate: Estimate, conventions: Conventions | None = None) -> list[MassProperties]:
    """The items as SI mass properties in the model frame (about each CG, tensor convention), validated.

    Parameters
    ----------
    estimate : Estimate
        As read.
    conventions : Conventions, optional
        Another reading; the declared conventions by default.

    Raises
    ------
    EstimateError
        When a tensor read this way is impossible (not positive semi-definite, triangle inequality), naming the
        item and the field and, when one other reading of the declared conventions would make it possible, saying
        which.
    """
    conv = estimate.conventions if conventions is None else conventions
    m, c, tensors = normalise_arrays(*estimate.arrays(), conv)
    out = []
    for k, it in enumerate(estimate.items):
        try:
            tensor = validate_inertia(tensors[k], what="the tensor about the CG in model axes")
        except InertiaError as exc:
            hint = _validity_hint(estimate, conv, k) if conventions is None else ""
            raise EstimateError(estimate.source, it.label, "inertia",
                                f"read as declared ({conv.reference_text}, products {conv.products.value}), "
                                f"{exc}{hint}") from None
        out.append(MassProperties(float(m[k]), c[k], tensor))
    return out


def _validity_hint(estimate: Estimate, conv: Conventions, k: int) -> str:
    """Which single other reading (product sign, reference point) would make item ``k``'s tensor possible."""
    it = estimate.items[k]
    other = Products.POSITIVE if conv.products is Products.NEGATIVE else Products.NEGATIVE
    candidates = [(conv.with_(products=other), f"with products '{other.value}'")]
    for ref in (ReferenceKind.CG, ReferenceKind.ORIGIN):
        if ref is not conv.reference:
            candidates.append((conv.with_(reference=ref, reference_point=None), f"with inertia_about '{ref.value}'"))
    for alt, words in candidates:
        _, _, t = normalise_arrays([it.mass], [it.cg], [it.inertia], alt)
        try:
            validate_inertia(t[0])
        except InertiaError:
            continue
        return f"; read {words} it would be a possible tensor - check the declaration"
    return ""


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


def _vector(file: str, item: str | None, fld: str, value: Any) -> FloatArray:
    if not isinstance(value, (list, tuple)) or len(value) != 3:
        raise EstimateError(file, item, fld, f"expected three numbers [x, y, z], got {value!r}")
    return np.array([_number(file, item, f"{fld}[{i}]", v) for i, v in enumerate(value)])


def _parse_text_vector(file: str, item: str | None, fld: str, text: str) -> FloatArray:
    parts = [p for p in text.replace(",", " ").split() if p]
    try:
        values = [float(p) for p in parts]
    except ValueError:
        raise EstimateError(file, item, fld, f"expected three numbers 'x y z', got {text!r}") from None
    if len(values) != 3 or not all(math.isfinite(v) for v in values):
        raise EstimateError(file, item, fld, f"expected three finite numbers 'x y z', got {text!r}")
    return np.array(values)


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


def _check_written(file: str, item: str, mass: float, tensor: FloatArray, conv: Conventions) -> FloatArray:
    """The written tensor made exactly symmetric, after checking the mass and the symmetry (numbers as written, in
    the declared units ``conv``)."""
    if not mass > 0.0:
        raise EstimateError(file, item, "mass", f"must be a positive mass, got {mass:g} {conv.mass_unit}")
    scale = float(np.max(np.abs(tensor)))
    asym = float(np.max(np.abs(tensor - tensor.T)))
    if scale > 0.0 and asym > 1e-6 * scale:
        i, j = np.unravel_index(int(np.argmax(np.abs(tensor - tensor.T))), (3, 3))
        a, b = _AXES[i] + _AXES[j], _AXES[j] + _AXES[i]
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
            _unit_factor(text, key)
        except UnitError as exc:
            raise EstimateError(file, "units", key, str(exc)) from None
        units_[key] = text
    try:
        axes = AxisMap.parse(get("axes"), vehicle)
    except ValueError as exc:
        raise EstimateError(file, None, "axes", str(exc)) from None
    origin = get("origin_in_model")
    origin_v = (_parse_text_vector(file, None, "origin_in_model", origin) if isinstance(origin, str)
                else _vector(file, None, "origin_in_model", origin))
    about = get("inertia_about")
    point = None
    if isinstance(about, Mapping):
        _unknown(file, "inertia_about", list(about), ["point"])
        if "point" not in about:
            raise EstimateError(file, "inertia_about", "point", "missing (write {\"point\": [x, y, z]})")
        point = _vector(file, "inertia_about", "point", about["point"])
        reference = ReferenceKind.POINT
    elif isinstance(about, str) and about.strip().lower().startswith("point"):
        point = _parse_text_vector(file, None, "inertia_about", about.strip()[5:])
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
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise EstimateError(str(p), None, None, f"not UTF-8 text ({exc.reason})") from None
    except FileNotFoundError:
        raise EstimateError(str(p), None, None, "no such file") from None
    except OSError as exc:
        raise EstimateError(str(p), None, None, f"cannot be read ({exc.strerror or exc})") from None
    return loads_estimate(text, str(p), kind, vehicle)


def _load_json(text: str, file: str, vehicle: Any) -> Estimate:
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise EstimateError(file, None, None, f"not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}") from None
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
        cg = _vector(file, label, "cg", row["cg"])
        tensor = _check_written(file, label, mass, _inertia_field(file, label, row["inertia"]), conv)
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
    rows = [next(csv.reader(io.StringIO(line)), []) for _, line in body]
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
        items.append(EstimateItem(group, mass, cg, _check_written(file, label, mass, tensor, conv), label))
    est = Estimate(file, "csv", conv, tuple(items), decl.get("description", ("", 0))[0])
    normalise(est)
    return est
