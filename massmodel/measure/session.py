"""Load and validate measurement session files (TOML, format 1; see docs/measure.md).

A session file records what was measured on the car: scale readings at the four corners (one or several
weighings), axle-lift series for the CG height, and pendulum tests for inertia. Like the model file loader this is
the edge where units are converted: everything past :func:`load_session` is SI (kg, m, rad, s, kg·m²). Loads may be
written as mass-equivalent readings (``"92.4 kg"``, ``"203.5 lb"``) or as forces (``"906 N"``, ``"203.5 lbf"``);
forces are divided by standard gravity g_n = 9.80665 m/s² once, here, so every load inside is a mass-equivalent kg.
Every error names the file, the item and the field (:class:`MeasurementFileError`).
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.modelfile.reader import (
    ModelFileError,
    TableReader,
    expression_message,
    magnitude_problem,
    parse_toml,
    read_toml,
    read_units,
    split_vector,
)

from .records import (
    CORNERS,
    DEFAULT_GEOMETRY_TOLERANCE_M,
    CarGeometry,
    Comparison,
    Fixture,
    FloatArray,
    LiftDirection,
    LiftReading,
    LiftSeries,
    PendulumKind,
    PendulumTest,
    Session,
    Weighing,
)

__all__ = [
    "MeasurementFileError",
    "Weighing",
    "CarGeometry",
    "LiftDirection",
    "LiftReading",
    "LiftSeries",
    "PendulumKind",
    "Fixture",
    "Comparison",
    "PendulumTest",
    "Session",
    "load_session",
    "loads_session",
    "CORNERS",
    "DEFAULT_GEOMETRY_TOLERANCE_M",
]

_KINDS: dict[str, units.Dimension] = {
    "mass": units.MASS,
    "force": units.FORCE,
    "length": units.LENGTH,
    "angle": units.ANGLE,
    "time": units.TIME,
    "inertia": units.INERTIA,
    "acceleration": units.ACCELERATION,
}
_EXAMPLE = {"mass": "92.4 kg", "force": "906 N", "length": "2620 mm", "angle": "4.5 deg", "time": "2.41 s",
            "inertia": "0.35 kg*m^2", "acceleration": "9.811 m/s^2", "number": "20"}
_UNIT_KINDS = ("mass", "length", "angle", "time", "inertia")
TOP_LEVEL_KEYS = {"session", "units", "car", "scales", "weighing", "axle_lift", "pendulum"}
SESSION_FIELDS = {"name", "date", "model", "note"}
CAR_FIELDS = {"wheelbase", "track_front", "track_rear", "tyre_loaded_radius", "tolerance", "note"}
SCALES_FIELDS = {"uncertainty", "note"}
WEIGHING_FIELDS = {"label", "readings", "pads", "note", *CORNERS}
LIFT_FIELDS = {"name", "lifted", "level", "wheelbase", "tyre_loaded_radius", "uncertainty", "reading", "note"}
LIFT_READING_FIELDS = {"angle", "rise", "load", "direction", "note"}
LIFT_UNCERTAINTY_FIELDS = {"angle", "rise", "wheelbase", "tyre_loaded_radius", "mass"}
PENDULUM_FIELDS = {"name", "kind", "body_mass", "wire_length", "wire_spacing", "wire_radius", "pivot_to_cg",
                   "periods", "timing", "fixture", "local_gravity", "amplitude", "uncertainty", "compare", "note"}
FIXTURE_FIELDS = {"mass", "periods", "timing", "inertia", "pivot_to_cg", "note"}
COMPARE_FIELDS = {"axis", "through", "groups", "exclude"}

class MeasurementFileError(ModelFileError):
    """A problem in a measurement session file, naming the file, the item and the field.

    The same shape as :class:`massmodel.modelfile.loader.ModelFileError` (``file``, ``item``, ``field``, ``message``).
    """


class _Reader(TableReader):
    error_type = MeasurementFileError

    def __init__(self, file: str, defaults: Mapping[str, float]) -> None:
        super().__init__(file)
        self.defaults = defaults

    def quantity(self, value: Any, kinds: tuple[str, ...], item: str, field: str) -> float:
        """A scalar of one of ``kinds``, SI; a force kind comes back as a mass-equivalent (divided by g_n)."""
        want = " or ".join(kinds)
        example = _EXAMPLE[kinds[0]]
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise self.error(item, field, f"expected a {want} such as '{example}', got {value!r}")
        try:
            q = expr.evaluate(value)
        except (expr.ExpressionError, units.UnitError) as exc:
            raise self.error(item, field, expression_message(exc)) from None
        result: float | None = None
        kind: str | None = "number"
        if "number" in kinds and q.dim == units.DIMENSIONLESS:
            result = q.value
        elif q.dim == units.DIMENSIONLESS:
            kind = next((k for k in kinds if k in self.defaults), None)
            if kind is None:
                raise self.error(item, field, f"{value!r} has no unit and [units] declares no default {kinds[0]} "
                                              f"unit; write it like '{example}'")
            result = q.value * self.defaults[kind]
        else:
            for k in kinds:
                if k != "number" and q.dim == _KINDS[k]:
                    result = q.value / units.STANDARD_GRAVITY_M_S2 if k == "force" else q.value
                    kind = k
                    break
        if result is None:
            raise self.error(item, field, f"expected a {want}, got {value!r} in {q.dim}")
        # the model file's limits (a force is read as the mass it weighs)
        problem = magnitude_problem(result, "mass" if kind == "force" else str(kind), value)
        if problem:
            raise self.error(item, field, problem)
        return float(result)

    def positive(self, value: Any, kinds: tuple[str, ...], item: str, field: str) -> float:
        v = self.quantity(value, kinds, item, field)
        if not v > 0.0:
            raise self.error(item, field, f"must be positive, got {value!r}")
        return v

    def text(self, table: Mapping[str, Any], key: str, item: str, default: str = "") -> str:
        if key not in table:
            return default
        value = table[key]
        if not isinstance(value, str):
            raise self.error(item, key, f"expected text, got {value!r}")
        return value

    def periods(self, table: Mapping[str, Any], item: str, prefix: str = "") -> FloatArray | None:
        """Periods from ``periods = [...]`` or ``timing = [{ cycles = N, time = ... }, ...]`` (one of them)."""
        has = [k for k in ("periods", "timing") if k in table]
        if len(has) > 1:
            raise self.error(item, prefix + "timing", "give either 'periods' or 'timing', not both")
        if not has:
            return None
        key = has[0]
        raw = table[key]
        if not isinstance(raw, list) or not raw:
            raise self.error(item, prefix + key, "expected a non-empty list")
        out = []
        for i, v in enumerate(raw):
            f = f"{prefix}{key}[{i}]"
            if key == "periods":
                out.append(self.positive(v, ("time",), item, f))
                continue
            if not isinstance(v, dict) or set(v) != {"cycles", "time"}:
                raise self.error(item, f, "expected a table { cycles = N, time = \"48.2 s\" }")
            cycles = v["cycles"]
            if isinstance(cycles, bool) or not isinstance(cycles, int) or cycles < 1:
                raise self.error(item, f + ".cycles", f"expected a whole number of cycles >= 1, got {cycles!r}")
            out.append(self.positive(v["time"], ("time",), item, f + ".time") / cycles)
        return np.array(out)


def load_session(path: str | Path) -> Session:
    """Read a measurement session file.

    Parameters
    ----------
    path : str or Path
        The TOML session file (format in docs/measure.md).

    Returns
    -------
    Session
        SI throughout; ``model_path`` resolved relative to the session file.

    Raises
    ------
    MeasurementFileError
        Naming the file, the item and the field.
    """
    p = Path(path)
    return _build(read_toml(p, str(path), error=MeasurementFileError), str(path), p.parent)


def loads_session(text: str, *, label: str = "<text>", base_dir: str | Path = ".") -> Session:
    """Like :func:`load_session`, from a string (for tests and tools)."""
    return _build(parse_toml(text, label, MeasurementFileError), label, Path(base_dir))


def _build(data: dict[str, Any], label: str, base_dir: Path) -> Session:
    unknown = sorted(set(data) - TOP_LEVEL_KEYS)
    if unknown:
        raise MeasurementFileError(label, None, None,
                                   f"unknown section '{unknown[0]}'; sections: {', '.join(sorted(TOP_LEVEL_KEYS))}")
    defaults = read_units(data.get("units", {}), {k: _KINDS[k] for k in _UNIT_KINDS}, label, MeasurementFileError)
    rd = _Reader(label, defaults)

    head = data.get("session", {})
    rd.check_fields(head, SESSION_FIELDS, "[session]")
    name = rd.text(head, "name", "[session]")
    if not name.strip():
        raise rd.error("[session]", "name", "is missing (every session needs a name)")
    model_ref = rd.text(head, "model", "[session]") or None
    model_path = base_dir / model_ref if model_ref else None

    car = _car(rd, data.get("car", {}))
    scales = data.get("scales", {})
    rd.check_fields(scales, SCALES_FIELDS, "[scales]")
    scale_u = None
    if "uncertainty" in scales:
        scale_u = rd.quantity(scales["uncertainty"], ("mass", "force"), "[scales]", "uncertainty")
        if scale_u < 0.0:
            raise rd.error("[scales]", "uncertainty", "must not be negative")

    weighings = tuple(_weighing(rd, t, i) for i, t in enumerate(rd.table_list(data, "weighing", "[[weighing]]")))
    labels = [w.label for w in weighings]
    for dup in sorted({x for x in labels if labels.count(x) > 1}):
        raise rd.error(f"weighing '{dup}'", "label", "is used by more than one weighing")
    lifts = tuple(_lift(rd, t, i) for i, t in enumerate(rd.table_list(data, "axle_lift", "[[axle_lift]]")))
    pendulums = tuple(_pendulum(rd, t, i) for i, t in enumerate(rd.table_list(data, "pendulum", "[[pendulum]]")))
    if not (weighings or lifts or pendulums):
        raise rd.error(None, None, "holds no measurements: add [[weighing]], [[axle_lift]] or [[pendulum]] tables")
    return Session(
        name=name.strip(), date=rd.text(head, "date", "[session]"), model_path=model_path, car=car,
        scale_uncertainty=scale_u, weighings=weighings, lifts=lifts, pendulums=pendulums,
        note=rd.text(head, "note", "[session]"), source=label,
    )


def _car(rd: _Reader, table: Any) -> CarGeometry:
    item = "[car]"
    rd.check_fields(table, CAR_FIELDS, item)
    kw: dict[str, float] = {}
    for key in ("wheelbase", "track_front", "track_rear", "tyre_loaded_radius"):
        if key in table:
            kw[key] = rd.positive(table[key], ("length",), item, key)
    if "tolerance" in table:
        kw["tolerance"] = rd.quantity(table["tolerance"], ("length",), item, "tolerance")
        if kw["tolerance"] < 0.0:
            raise rd.error(item, "tolerance", "must not be negative")
    return CarGeometry(**kw)


def _weighing(rd: _Reader, table: dict[str, Any], index: int) -> Weighing:
    label = table.get("label", str(index + 1))
    if not isinstance(label, (str, int)) or isinstance(label, bool):
        raise rd.error(f"weighing #{index + 1}", "label", f"expected text, got {label!r}")
    label = str(label)
    item = f"weighing '{label}'"
    rd.check_fields(table, WEIGHING_FIELDS, item)
    named = [k for k in CORNERS if k in table]
    if "readings" in table and named:
        raise rd.error(item, named[0], "give the loads either as 'readings' = [FL, FR, RL, RR] or by corner, not both")
    if "readings" in table:
        raw = table["readings"]
        if not isinstance(raw, list) or len(raw) != 4:
            got = f"{len(raw)} readings" if isinstance(raw, list) else repr(raw)
            raise rd.error(item, "readings", f"expected four readings [front_left, front_right, rear_left, "
                                             f"rear_right], got {got}")
        fields = [f"readings[{i}]" for i in range(4)]
    else:
        missing = [k for k in CORNERS if k not in table]
        if missing:
            raise rd.error(item, missing[0], f"is missing: a weighing needs four readings ({', '.join(CORNERS)}); "
                                             f"found {len(named)}")
        raw = [table[k] for k in CORNERS]
        fields = list(CORNERS)
    loads = []
    for value, f in zip(raw, fields, strict=True):
        v = rd.quantity(value, ("mass", "force"), item, f)
        if v < 0.0:
            raise rd.error(item, f, f"a negative load ({value!r}) is not a reading: check the pad's zero and sign")
        if v == 0.0:
            raise rd.error(item, f, "a zero load means the wheel is off its pad: every wheel must stand on a pad")
        loads.append(v)
    pads = None
    if "pads" in table:
        p = table["pads"]
        if not isinstance(p, list) or len(p) != 4 or not all(isinstance(x, str) and x.strip() for x in p):
            raise rd.error(item, "pads", "expected the four pad names under [front_left, front_right, rear_left, "
                                         "rear_right], e.g. [\"A\", \"B\", \"C\", \"D\"]")
        if len(set(p)) != 4:
            raise rd.error(item, "pads", f"names the same pad twice: {p}")
        pads = (p[0], p[1], p[2], p[3])
    return Weighing(label, np.array(loads), pads, rd.text(table, "note", item), f"{rd.file}: {item}")


def _named(rd: _Reader, table: dict[str, Any], index: int, section: str, allowed: set[str]) -> tuple[str, str]:
    """(name, item) of a [[section]] table with a 'name' field (default "<section> #n"); checks its fields."""
    name = table.get("name", f"{section} #{index + 1}")
    if not isinstance(name, str) or not name.strip():
        raise rd.error(f"{section} #{index + 1}", "name", f"expected text, got {name!r}")
    name = name.strip()
    item = f"{section} '{name}'"
    rd.check_fields(table, allowed, item)
    return name, item


def _lift(rd: _Reader, table: dict[str, Any], index: int) -> LiftSeries:
    name, item = _named(rd, table, index, "axle_lift", LIFT_FIELDS)
    lifted = table.get("lifted")
    if lifted not in ("front", "rear"):
        raise rd.error(item, "lifted", f"expected \"front\" or \"rear\" (the axle that is lifted), got {lifted!r}")
    level = table.get("level")
    if not isinstance(level, dict) or set(level) != {"front", "rear"}:
        raise rd.error(item, "level", "expected { front = ..., rear = ... }: both axle loads with the car level")
    lv = {}
    for axle in ("front", "rear"):
        lv[axle] = rd.quantity(level[axle], ("mass", "force"), item, f"level.{axle}")
        if not lv[axle] > 0.0:
            raise rd.error(item, f"level.{axle}", f"must be a positive load, got {level[axle]!r}")
    wheelbase = rd.positive(table["wheelbase"], ("length",), item, "wheelbase") if "wheelbase" in table else None
    radius = (rd.positive(table["tyre_loaded_radius"], ("length",), item, "tyre_loaded_radius")
              if "tyre_loaded_radius" in table else None)
    unc: dict[str, float] = {}
    if "uncertainty" in table:
        ut = table["uncertainty"]
        rd.check_fields(ut, LIFT_UNCERTAINTY_FIELDS, item, "uncertainty.")
        kinds = {"angle": ("angle",), "rise": ("length",), "wheelbase": ("length",),
                 "tyre_loaded_radius": ("length",), "mass": ("mass", "force")}
        for key, value in ut.items():
            unc[key] = rd.quantity(value, kinds[key], item, f"uncertainty.{key}")
            if unc[key] < 0.0:
                raise rd.error(item, f"uncertainty.{key}", "a standard uncertainty is not negative")
    raw = table.get("reading", [])
    if not isinstance(raw, list) or not all(isinstance(r, dict) for r in raw):
        raise rd.error(item, "reading", "expected a list of tables { angle | rise, load, direction }")
    readings = []
    for i, r in enumerate(raw):
        f = f"reading[{i}]"
        rd.check_fields(r, LIFT_READING_FIELDS, item, f + ".")
        has = [k for k in ("angle", "rise") if k in r]
        if len(has) != 1:
            raise rd.error(item, f"{f}.angle", "give exactly one of 'angle' (of the car) or 'rise' (of the lifted "
                                               "wheel centres)")
        angle = rise = None
        if "angle" in r:
            angle = rd.quantity(r["angle"], ("angle",), item, f"{f}.angle")
            if not 0.0 < angle < 0.5 * np.pi:
                raise rd.error(item, f"{f}.angle", f"a lift angle must lie between 0 and 90 deg, got {r['angle']!r} "
                                                   "(the level loads go in 'level')")
        else:
            rise = rd.quantity(r["rise"], ("length",), item, f"{f}.rise")
            if not rise > 0.0:
                raise rd.error(item, f"{f}.rise", f"a lift rise must be positive, got {r['rise']!r} "
                                                  "(the level loads go in 'level')")
        if "load" not in r:
            raise rd.error(item, f"{f}.load", f"is missing (the load on the {'rear' if lifted == 'front' else 'front'}"
                                              " axle, which stays on the scales)")
        load = rd.quantity(r["load"], ("mass", "force"), item, f"{f}.load")
        if not load > 0.0:
            raise rd.error(item, f"{f}.load", f"must be a positive load, got {r['load']!r}")
        direction = r.get("direction", "lifting")
        try:
            d = LiftDirection(direction)
        except ValueError:
            raise rd.error(item, f"{f}.direction", f"expected \"lifting\" or \"lowering\", got {direction!r}") from None
        readings.append(LiftReading(angle, rise, load, d, f))
    if len(readings) < 3:
        raise rd.error(item, "reading", f"needs at least three lifted readings (ISO 10392 lifts in at least three "
                                        f"steps), got {len(readings)}")
    return LiftSeries(name, lifted, lv["front"], lv["rear"], tuple(readings), wheelbase, radius, unc,
                      rd.text(table, "note", item), f"{rd.file}: {item}")


def _pendulum(rd: _Reader, table: dict[str, Any], index: int) -> PendulumTest:
    name, item = _named(rd, table, index, "pendulum", PENDULUM_FIELDS)
    try:
        kind = PendulumKind(table.get("kind"))
    except ValueError:
        raise rd.error(item, "kind", f"expected one of {', '.join(k.value for k in PendulumKind)}, "
                                     f"got {table.get('kind')!r}") from None
    needs = {PendulumKind.BIFILAR: ("wire_length", "wire_spacing"),
             PendulumKind.TRIFILAR: ("wire_length", "wire_radius"),
             PendulumKind.COMPOUND: ("pivot_to_cg",)}[kind]
    geometry: dict[str, float | None] = {}
    for key in ("wire_length", "wire_spacing", "wire_radius", "pivot_to_cg"):
        if key in table and key not in needs:
            raise rd.error(item, key, f"is not used by a {kind.value} pendulum (it needs {', '.join(needs)})")
        if key in needs and key not in table:
            raise rd.error(item, key, f"is missing (a {kind.value} pendulum needs {', '.join(needs)})")
        geometry[key] = rd.positive(table[key], ("length",), item, key) if key in table else None
    if "body_mass" not in table:
        raise rd.error(item, "body_mass", "is missing (the mass of the tested body, without the fixture)")
    body_mass = rd.positive(table["body_mass"], ("mass",), item, "body_mass")
    periods = rd.periods(table, item)
    if periods is None:
        raise rd.error(item, "periods", "is missing: give 'periods' = [...] or 'timing' = [{ cycles, time }, ...]")
    fixture = None
    if "fixture" in table:
        ft = table["fixture"]
        rd.check_fields(ft, FIXTURE_FIELDS, item, "fixture.")
        if "mass" not in ft:
            raise rd.error(item, "fixture.mass", "is missing (the mass that swings with the body)")
        fmass = rd.positive(ft["mass"], ("mass",), item, "fixture.mass")
        fperiods = rd.periods(ft, item, "fixture.")
        finertia = None
        if "inertia" in ft:
            finertia = rd.quantity(ft["inertia"], ("inertia",), item, "fixture.inertia")
            if finertia < 0.0:
                raise rd.error(item, "fixture.inertia", "must not be negative")
        if (fperiods is None) == (finertia is None):
            raise rd.error(item, "fixture.inertia", "give exactly one of 'inertia' (about the pendulum axis) or "
                                                    "'periods'/'timing' (the fixture swung empty)")
        fd = None
        if kind is PendulumKind.COMPOUND:
            if "pivot_to_cg" not in ft:
                raise rd.error(item, "fixture.pivot_to_cg", "is missing (a compound pendulum's fixture needs the "
                                                            "distance from the pivot axis to its CG)")
            fd = rd.positive(ft["pivot_to_cg"], ("length",), item, "fixture.pivot_to_cg")
        elif "pivot_to_cg" in ft:
            raise rd.error(item, "fixture.pivot_to_cg", f"is not used by a {kind.value} pendulum")
        fixture = Fixture(fmass, fperiods, finertia, fd)
    gravity = units.STANDARD_GRAVITY_M_S2
    if "local_gravity" in table:
        gravity = rd.quantity(table["local_gravity"], ("acceleration",), item, "local_gravity")
        if not 9.76 < gravity < 9.84:
            raise rd.error(item, "local_gravity", f"{table['local_gravity']!r} is not a gravity on the Earth's surface "
                                                  "(9.76 .. 9.84 m/s^2)")
    amplitude = None
    if "amplitude" in table:
        if kind is not PendulumKind.COMPOUND:
            raise rd.error(item, "amplitude", "the amplitude correction applies to compound pendulums only "
                                              "(bifilar and trifilar reductions assume small swings)")
        amplitude = rd.quantity(table["amplitude"], ("angle",), item, "amplitude")
        if not 0.0 < amplitude < 0.5 * np.pi:
            raise rd.error(item, "amplitude", "expected the swing amplitude (peak angle) between 0 and 90 deg")
    unc: dict[str, float] = {}
    if "uncertainty" in table:
        ut = table["uncertainty"]
        allowed = {"body_mass", "period", *needs} | ({"fixture_mass"} if fixture else set())
        rd.check_fields(ut, allowed, item, "uncertainty.")
        for key, value in ut.items():
            k = ("mass",) if key in ("body_mass", "fixture_mass") else ("time",) if key == "period" else ("length",)
            unc[key] = rd.quantity(value, k, item, f"uncertainty.{key}")
            if unc[key] < 0.0:
                raise rd.error(item, f"uncertainty.{key}", "a standard uncertainty is not negative")
    compare = _comparison(rd, table["compare"], item) if "compare" in table else None
    return PendulumTest(
        name=name, kind=kind, body_mass=body_mass, periods=periods, fixture=fixture, gravity=gravity,
        gravity_given="local_gravity" in table, amplitude=amplitude, uncertainty=unc, compare=compare,
        note=rd.text(table, "note", item), origin=f"{rd.file}: {item}",
        wire_length=geometry["wire_length"], wire_spacing=geometry["wire_spacing"],
        wire_radius=geometry["wire_radius"], pivot_to_cg=geometry["pivot_to_cg"],
    )


_DIRECTIONS = ("forward", "left", "up")


def _comparison(rd: _Reader, table: Any, item: str) -> Comparison:
    rd.check_fields(table, COMPARE_FIELDS, item, "compare.")
    if "axis" not in table:
        raise rd.error(item, "compare.axis", "is missing: \"forward\", \"left\", \"up\" (vehicle directions) or a "
                                             "vector [x, y, z] in model axes")
    raw = table["axis"]
    axis: FloatArray | None
    if isinstance(raw, str) and "," not in raw:
        if raw not in _DIRECTIONS:
            raise rd.error(item, "compare.axis", f"expected one of {', '.join(_DIRECTIONS)} or [x, y, z], got {raw!r}")
        axis, name = None, raw
    else:
        try:
            entries = split_vector(raw, 3, "direction")
        except ValueError:
            raise rd.error(item, "compare.axis", f"expected a direction name or [x, y, z], got {raw!r}") from None
        v = np.array([rd.quantity(x, ("number",), item, f"compare.axis[{i}]") for i, x in enumerate(entries)])
        n = float(np.linalg.norm(v))
        if n == 0.0:
            raise rd.error(item, "compare.axis", "the axis vector is zero")
        axis = v / n
        name = raw if isinstance(raw, str) else "[" + ", ".join(str(x) for x in raw) + "]"
    through = None
    if "through" in table:
        t = table["through"]
        if t == "cg":
            through = None
        else:
            try:
                entries = split_vector(t)
            except ValueError:
                raise rd.error(item, "compare.through", "expected \"cg\" or a point in the model frame such as "
                                                        f"[x, y, z] or '0, 0, -265 mm', got {t!r}") from None
            through = np.array([rd.quantity(x, ("length",), item, f"compare.through[{i}]")
                                for i, x in enumerate(entries)])

    def paths(key: str, default: tuple[str, ...]) -> tuple[str, ...]:
        v = table.get(key, list(default))
        if not isinstance(v, list) or not all(isinstance(s, str) for s in v):
            raise rd.error(item, f"compare.{key}", "expected a list of group or part paths of the model")
        return tuple(v)

    return Comparison(axis, name, through, paths("groups", ("",)), paths("exclude", ()))
