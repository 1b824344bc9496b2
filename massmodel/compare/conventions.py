"""The declared conventions of a CAD estimate (units, axes, origin, reference point, product sign), its items as
written, and their reading into SI mass properties in the model frame (:func:`normalise`).

The formulas are given in :mod:`massmodel.compare.estimate` (module docstring, "Reading under conventions"), which
also reads the JSON and CSV files; every name here is re-exported there.

References
----------
.. [1] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3 (parallel-axis theorem in tensor
   form) and §5.4 (transformation of the tensor under a change of axes).
.. [2] The positive and negative product-of-inertia conventions are both in use (mass-properties reports often
   give P_xy = +∫xy dm): common practice, no source.
"""

from __future__ import annotations

import enum
import functools
import itertools
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import InertiaError, MassProperties, validate_inertia
from massmodel.core.units import INERTIA, LENGTH, MASS, UnitError, parse_unit
from massmodel.modelfile.reader import ModelFileError

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
    "normalise",
    "normalise_arrays",
    "signed_permutations",
    "unit_factor",
]

FloatArray = npt.NDArray[np.float64]

#: Format tag of the JSON and CSV estimate files.
FORMAT = "massmodel-estimate/1"
#: Item name of the whole: everything compared (the model, or the group chosen on the command line).
WHOLE = "*"

AXIS_LETTERS = "xyz"


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
            raise UsageError("axes must be a signed permutation: each model axis used exactly once")
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
                    raise UsageError(f"expected 'x=<model axis>' pairs like 'x=-x, y=-y, z=+z', got {chunk.strip()!r}")
                pairs[key.strip()] = val.strip()
        elif isinstance(value, Mapping):
            pairs = dict(value)
        else:
            raise UsageError(f"expected a table like {{\"x\": \"-x\", \"y\": \"-y\", \"z\": \"+z\"}}, got {value!r}")
        unknown = sorted(set(pairs) - set(AXIS_LETTERS))
        if unknown:
            raise UsageError(f"unknown estimate axis {unknown[0]!r} (the keys are x, y and z)")
        missing = [a for a in AXIS_LETTERS if a not in pairs]
        if missing:
            raise UsageError(f"axis '{missing[0]}' is not given (give x, y and z)")
        rows = [_direction(str(pairs[a]), vehicle, a) for a in AXIS_LETTERS]
        try:
            return cls(np.array(rows))
        except ValueError:
            raise UsageError(
                f"axes {cls._text_of(np.array(rows))} use a model axis twice; each model axis must appear once"
            ) from None

    @staticmethod
    def _text_of(m: FloatArray) -> str:
        parts = []
        for i, row in enumerate(m):
            k = int(np.argmax(np.abs(row)))
            parts.append(f"{AXIS_LETTERS[i]}={'+' if row[k] > 0 else '-'}{AXIS_LETTERS[k]}")
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
            raise UsageError(f"axis '{axis}' = {text!r}: vehicle directions need a model with a [vehicle] table")
        name, sign = _WORDS[t]
        v = sign * np.asarray(getattr(vehicle, name), dtype=float)
        if not np.allclose(np.abs(v), np.round(np.abs(v))):
            raise UsageError(f"axis '{axis}' = {text!r}: the vehicle's {name} direction is not along a model axis")
        return np.round(v)
    sign = 1.0
    if t and t[0] in "+-":  # ("" is in every text: test the first character itself)
        sign = -1.0 if t[0] == "-" else 1.0
        t = t[1:].strip()
    if t not in ("x", "y", "z"):
        hint = " or a vehicle direction (forward, rearward, left, right, up, down)" if vehicle is not None else ""
        raise UsageError(f"axis '{axis}' = {text!r}: expected a signed model axis such as '+x' or '-z'{hint}")
    out = np.zeros(3)
    out[AXIS_LETTERS.index(t)] = sign
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
def unit_factor(text: str, kind: str) -> float:
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
        object.__setattr__(self, "mass_factor", unit_factor(self.mass_unit, "mass"))
        object.__setattr__(self, "length_factor", unit_factor(self.length_unit, "length"))
        object.__setattr__(self, "inertia_factor", unit_factor(self.inertia_unit, "inertia"))
        origin = np.array(self.origin, dtype=float).reshape(3)
        origin.setflags(write=False)
        object.__setattr__(self, "origin", origin)
        if (self.reference is ReferenceKind.POINT) != (self.reference_point is not None):
            raise UsageError("a stated reference point goes with reference 'point' only")
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
