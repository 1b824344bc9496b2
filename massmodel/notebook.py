"""The notebook facade: open a model file once, ask what-ifs that return new objects, show results inline.

::

    import massmodel as mm
    car = mm.open_model("parts_demo/brindlecombe_bl3.toml")
    car                                              # <OpenedModel 'Brindlecombe BL-3': 163 parts, 434.9 kg, ...>
    light = car.with_parameters(fuel_mass="10 kg")   # a new object; the file is not read again
    probe = car.with_part(mm.point_mass("probe", "5 kg", "-1500, 0, -200 mm", group="ballast"))
    probe.check_rules()                              # a table of the rule checks
    car.picture(view="side")                         # a PIL image: shows inline, ``.save("side.png")`` writes it

The file is parsed once (:func:`massmodel.modelfile.loader.read_source`); each what-if re-evaluates that source
(:func:`massmodel.modelfile.loader.build_model`) with the parameters and load case it names, then applies the
parts added and removed in the order they were asked for. Every object is immutable.

This is the top layer (beside :mod:`massmodel.cli`): it may import everything. Heavy libraries (VTK, matplotlib,
Pillow) load only inside :meth:`OpenedModel.picture`.

Cautions: a mass model and a linear balance are estimates; ballast, lifting and weighing a car are governed by the
series' regulations and the scrutineers, and by licensed engineering practice (see :mod:`massmodel.core.cautions`,
shown in every report).
"""

from __future__ import annotations

import math
import re
import tempfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

import numpy as np

from massmodel.core import display, expr, units
from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.frames import Pose
from massmodel.core.loadcases import BASE_CASE
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Component, MassSource, Maturity, Model, in_group
from massmodel.core.shapes import PointMass
from massmodel.modelfile.loader import ModelSource, build_model, read_source
from massmodel.report.summary import build_report
from massmodel.report.views import Report, RuleResults
from massmodel.vehicle.balance import Balance, check_rules, static_balance

if TYPE_CHECKING:
    from PIL.Image import Image

__all__ = ["OpenedModel", "open_model", "point_mass", "parse_point", "parse_mass", "PICTURE_VIEWS"]

#: Views of :meth:`OpenedModel.picture` and their default sizes (px).
PICTURE_VIEWS: Mapping[str, tuple[int, int]] = MappingProxyType(
    {"sheet": (2000, 1400), "side": (1200, 700), "top": (1200, 700), "front": (900, 700), "iso": (1000, 800)}
)
POINT_COLOUR = "#d4007a"
_TRAILING_UNIT = re.compile(r"^(?P<values>.*?[0-9.)\s])\s*(?P<unit>[A-Za-z\u00b5\u03bc][A-Za-z0-9_^*/\u00b5\u03bc]*)$")


def parse_mass(mass: float | str) -> float:
    """A mass in kg from a number (kg) or a quantity text such as ``"5 kg"`` or ``"11 lb"``.

    Raises
    ------
    ValueError
        Naming the value when it is not a positive finite mass.
    """
    if isinstance(mass, bool):
        raise UsageError(f"mass {mass!r}: give a number of kg or a text such as '5 kg'")
    if isinstance(mass, str):
        try:
            q = expr.evaluate(mass, {})
        except (expr.ExpressionError, units.UnitError) as exc:
            raise UsageError(f"mass {mass!r}: {exc}") from None
        if q.dim != units.MASS:
            raise UsageError(f"mass {mass!r}: expected a mass such as '5 kg', got a quantity in {q.dim}")
        value = q.value
    elif isinstance(mass, (int, float)):
        value = float(mass)
    else:
        raise UsageError(f"mass {mass!r}: give a number of kg or a text such as '5 kg'")
    if not (math.isfinite(value) and value > 0.0):
        raise UsageError(f"mass {mass!r}: must be a positive finite mass")
    return float(value)


def parse_point(at: str | Sequence[float | str]) -> np.ndarray:
    """A point in the model frame, m, written as in model files.

    Parameters
    ----------
    at : str or sequence of 3
        ``"-1500, 0, -200 mm"`` (a unit written after the last value applies to every value written without one),
        ``"-1.5 m, 0 m, 0.2 m"``, a sequence of three quantity texts, or three numbers in metres.

    Returns
    -------
    (3,) float
        m, model frame.

    Raises
    ------
    ValueError
        Naming the text and the value that is not a length.
    """
    if isinstance(at, str):
        unit_text = ""
        m = _TRAILING_UNIT.match(at.strip())
        if m and "," in m["values"]:
            unit_text = m["unit"]
            items: list[Any] = m["values"].split(",")
        else:
            items = at.split(",")
    else:
        unit_text = ""
        items = list(at)
    if len(items) != 3:
        raise UsageError(f"point {at!r}: expected three values x, y, z (e.g. '-1500, 0, -200 mm')")
    scale = 1.0
    if unit_text:
        try:
            unit = units.parse_unit(unit_text)
        except units.UnitError as exc:
            raise UsageError(f"point {at!r}: {exc}") from None
        if unit.dim != units.LENGTH:
            raise UsageError(f"point {at!r}: unit '{unit_text}' is not a length")
        scale = unit.value
    out = []
    for i, item in enumerate(items):
        if isinstance(item, (int, float)) and not isinstance(item, bool):
            out.append(float(item) * (scale if unit_text else 1.0))
            continue
        try:
            q = expr.evaluate(str(item).strip(), {})
        except (expr.ExpressionError, units.UnitError) as exc:
            raise UsageError(f"point {at!r}, value {i + 1}: {exc}") from None
        if q.dim == units.DIMENSIONLESS and (unit_text or q.value == 0.0):
            out.append(q.value * scale)
        elif q.dim == units.LENGTH:
            out.append(q.value)
        elif q.dim == units.DIMENSIONLESS:
            raise UsageError(f"point {at!r}, value {i + 1}: {item!r} has no unit; write e.g. '-1500, 0, -200 mm'")
        else:
            raise UsageError(f"point {at!r}, value {i + 1}: expected a length, got a quantity in {q.dim}")
    point = np.array(out)
    if not np.all(np.isfinite(point)):
        raise UsageError(f"point {at!r}: values must be finite")
    return point


def point_mass(
    path: str, mass: float | str, at: str | Sequence[float | str], group: str = "",
    maturity: Maturity = Maturity.ESTIMATED, note: str = "",
) -> Component:
    """A point mass as a component (e.g. a probe mass or a ballast estimate), ready for :meth:`OpenedModel.with_part`.

    Parameters
    ----------
    path : str
        Part name or path.
    mass : float or str
        kg, or a quantity text (``"5 kg"``).
    at : str or sequence of 3
        Position in the model frame (see :func:`parse_point`): ``"-1500, 0, -200 mm"``.
    group : str
        Group path to put the part in (``group/path``); '' for the path as given.
    maturity : Maturity
        How well the mass is known (an estimate by default).
    note : str
        Free text.

    Returns
    -------
    Component
        Source MASS, shape 'point' (no volume, zero inertia about its own CG).
    """
    full = f"{group.strip('/')}/{path}" if group.strip("/") else path
    if not full or full.startswith("/") or full.endswith("/") or "//" in full:
        raise UsageError(f"point mass path {full!r}: give a name such as 'probe' or 'ballast/probe'")
    return Component(
        path=full, shape=PointMass(), pose=Pose.from_translation(parse_point(at)), source=MassSource.MASS,
        maturity=maturity, colour=POINT_COLOUR, mass=parse_mass(mass), note=note, origin=f"point mass '{full}'",
    )


def _override_text(name: str, value: Any) -> str:
    if isinstance(value, str):
        return value
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return repr(float(value))
    raise UsageError(f"parameter {name!r}: give an expression text such as '10 kg', got {value!r}")


@dataclass(frozen=True, eq=False)
class OpenedModel:
    """A model file read once, with the what-ifs asked of it, and the model they give (immutable).

    Make it with :func:`open_model`; every ``with_*`` / ``without`` returns a new object.

    Attributes
    ----------
    source : ModelSource
        The read file.
    overrides : mapping of str to str
        Parameter name → expression text.
    case : str
        Load case ("base" for the file as written).
    edits : tuple
        Parts added (``("add", Component)``) and removed (``("remove", paths)``), in order.
    model : Model
        The model they give.
    """

    source: ModelSource
    overrides: Mapping[str, str] = field(default_factory=dict)
    case: str = BASE_CASE
    edits: tuple[tuple[str, Any], ...] = ()
    model: Model = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "overrides", MappingProxyType(dict(self.overrides)))
        model = build_model(self.source, dict(self.overrides) or None, self.case)
        for kind, what in self.edits:
            model = _apply(model, kind, what)
        object.__setattr__(self, "model", model)

    # --- what-ifs ---------------------------------------------------------------------------------------------

    def _replace(self, **changes: Any) -> OpenedModel:
        fields = {"source": self.source, "overrides": self.overrides, "case": self.case, "edits": self.edits}
        return OpenedModel(**{**fields, **changes})

    def _edited(self, kind: str, what: Any) -> OpenedModel:
        """A copy with one more edit, applied to this model directly (the source is not evaluated again: a sweep of
        probe positions costs one model copy each)."""
        out = object.__new__(OpenedModel)
        for name, value in (("source", self.source), ("overrides", self.overrides), ("case", self.case),
                            ("edits", (*self.edits, (kind, what))), ("model", _apply(self.model, kind, what))):
            object.__setattr__(out, name, value)
        return out

    def with_parameters(self, **values: str | float) -> OpenedModel:
        """The same file with parameters set (expression texts like ``"10 kg"``), added to those set before."""
        texts = {name: _override_text(name, v) for name, v in values.items()}
        return self._replace(overrides={**self.overrides, **texts})

    def with_case(self, case: str | None) -> OpenedModel:
        """The same what-ifs in another load case of the file (None or "base": the file as written)."""
        return self._replace(case=case or BASE_CASE)

    def with_part(self, component: Component) -> OpenedModel:
        """The model with one more part (e.g. from :func:`point_mass`); its path must be new."""
        if not isinstance(component, Component):
            raise TypeError(f"with_part takes a Component (e.g. from massmodel.point_mass), got {type(component).__name__}")
        return self._edited("add", component)

    def without(self, *paths: str) -> OpenedModel:
        """The model without these parts or groups (paths or group paths, e.g. ``"fuel"``)."""
        if not paths or any(not isinstance(p, str) or not p.strip("/") for p in paths):
            raise UsageError(f"without() needs part or group paths such as 'fuel', got {paths!r}")
        return self._edited("remove", tuple(paths))

    # --- results ----------------------------------------------------------------------------------------------

    @property
    def name(self) -> str:
        """The model's name."""
        return self.model.name

    def mass_properties(self, include: Sequence[str] = ("",), exclude: Sequence[str] = ()) -> MassProperties:
        """Mass, CG (m) and inertia about the CG (kg·m²) of the selected groups, model frame."""
        return self.model.mass_properties(include, exclude)

    def balance(self) -> Balance:
        """Static axle and corner loads (kg) and the CG in vehicle terms (needs a ``[vehicle]`` section)."""
        if self.model.vehicle is None:
            raise UsageError(f"model '{self.name}' ({self.source.label}) has no [vehicle] section, so no balance")
        return static_balance(self.model.mass_properties(), self.model.vehicle)

    def check_rules(self, case: str | None = None) -> RuleResults:
        """The rule checks in this object's load case, or in ``case`` with the same what-ifs."""
        model = self.model if case is None else self.with_case(case).model
        return RuleResults(check_rules(model))

    def report(self) -> Report:
        """The full report (data, text, HTML, JSON) of the model."""
        return Report(build_report(self.model))

    def picture(self, view: str = "sheet", size: tuple[int, int] | None = None, colour_by: str = "group") -> Image:
        """An off-screen picture of the model as a PIL image (shows inline; ``.save("car.png")`` writes it).

        Parameters
        ----------
        view : str
            'sheet' (four views with labels and title block), 'side', 'top', 'front' or 'iso'.
        size : (int, int), optional
            Width and height in pixels (default per view, :data:`PICTURE_VIEWS`).
        colour_by : str
            'group', 'material', 'density' or 'maturity'.

        Raises
        ------
        ValueError
            For an unknown view or colouring or a size out of range.
        """
        from PIL import Image as PILImage

        from massmodel.pictures.scene import ColourBy, SceneOptions, build_scene
        from massmodel.pictures.sheet import render_sheet

        if view not in PICTURE_VIEWS:
            raise UsageError(f"unknown view {view!r}; choose {', '.join(PICTURE_VIEWS)}")
        try:
            colours = ColourBy(colour_by)
        except ValueError:
            raise UsageError(f"unknown colour_by {colour_by!r}; choose {', '.join(c.value for c in ColourBy)}") from None
        scene = build_scene(self.model, SceneOptions(colour_by=colours))
        with tempfile.TemporaryDirectory(prefix="massmodel-picture-") as tmp:
            path = Path(tmp) / f"{view}.png"
            render_sheet(scene, path, size=size or PICTURE_VIEWS[view], view=view)
            with PILImage.open(path) as img:
                img.load()
                return img.copy()

    # --- display ----------------------------------------------------------------------------------------------

    def what_ifs(self) -> list[str]:
        """The what-ifs asked, as short texts in the order they apply."""
        out = [f"case {self.case}"] if self.case != BASE_CASE else []
        out += [f"set {k} = {v}" for k, v in self.overrides.items()]
        for kind, what in self.edits:
            if kind == "add":
                out.append(f"add {what.path} ({what.props.mass:.4g} kg)")
            else:
                out.append("without " + ", ".join(what))
        return out

    def __repr__(self) -> str:
        body = repr(self.model).removeprefix("<Model ").removesuffix(">")  # names the load case already
        asked = [a for a in self.what_ifs() if not a.startswith("case ")]
        listed = "; ".join(asked) if sum(map(len, asked)) <= 80 else f"{len(asked)} what-ifs"
        return f"<OpenedModel {body}{'; ' + listed if asked else ''}>"

    def _repr_html_(self) -> str:
        asked = self.what_ifs()
        listing = "<ul>" + "".join(f"<li>{display.esc(a)}</li>" for a in asked) + "</ul>" if asked else ""
        head = f"<p>Opened from {display.esc(self.source.label)}{'; what-ifs:' if asked else ''}</p>"
        return head + listing + self.model._repr_html_()


def _apply(model: Model, kind: str, what: Any) -> Model:
    """One edit of :attr:`OpenedModel.edits` applied to a model."""
    if kind == "add":
        if what.path in {c.path for c in model.components}:
            raise UsageError(f"model '{model.name}' already has a part '{what.path}'; remove it with without() first "
                             "or give the new part another path")
        return model.with_components([*model.components, what])
    for path in what:
        if not any(in_group(c.path, path) for c in model.components):
            import difflib

            close = difflib.get_close_matches(path, [*model.groups(), *(c.path for c in model.components)], n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFoundError(f"model '{model.name}' has no part or group '{path}'{hint}")
    kept = [c for c in model.components if not any(in_group(c.path, p) for p in what)]
    return model.with_components(kept)


def open_model(path: str | Path) -> OpenedModel:
    """Read a model file once and build its base model (see :class:`OpenedModel`).

    Raises
    ------
    ModelFileError
        Naming the file, the item and the field.
    """
    return OpenedModel(read_source(path))
