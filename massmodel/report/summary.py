"""The mass-properties report: a machine-readable dict (JSON) and readable terminal tables.

The dict is SI with units in every key (``mass_kg``, ``cg_m``, ``inertia_cg_kg_m2``). The terminal text can show
lengths in mm and inertia in kg·mm² (:class:`DisplayUnits`); conversion happens only here, at the edge.
"""

from __future__ import annotations

import itertools
import json
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TextIO

import numpy as np
import numpy.typing as npt

from massmodel.core import cautions
from massmodel.core.atomic import write_atomic
from massmodel.core.errors import UsageError
from massmodel.core.frames import is_orthogonal
from massmodel.core.massprops import (
    MassProperties,
    inertia_about_point,
    inertia_in_axes,
    principal_axes,
    radii_of_gyration,
)
from massmodel.core.model import Maturity, Model
from massmodel.report.rules import DECIMALS, dict_limit_text, rule_dict
from massmodel.report.text import DisplayUnits, table, table_lines
from massmodel.vehicle.balance import ASSUMPTIONS, Balance, check_rules, static_balance

__all__ = [
    "DisplayUnits",
    "InertiaRequest",
    "ComponentEntries",
    "build_report",
    "format_report",
    "report_lines",
    "write_report_text",
    "inertia_about_entry",
    "json_chunks",
    "json_text",
    "write_json_atomic",
    "CONVENTIONS",
    "REPORT_FORMAT",
]

REPORT_FORMAT = "massmodel-report/1"
CONVENTIONS = {
    "units": "SI: kg, m, kg*m^2 (unit in every key)",
    "frame": "model axes of the model file; cg_m is in model coordinates",
    "inertia": "tensor about the CG with axes parallel to the model axes; off-diagonal I_xy = -integral(x*y dm) "
    "(tensor / negative product convention)",
    "principal_axes": "rows are unit vectors in model axes, in the order of principal_moments_kg_m2 (ascending), "
    "right-handed",
    "loads": "axle and corner loads as mass-equivalent kg (load / 9.80665 m/s^2)",
    "vehicle": "cg_height_m above the ground plane along 'up'; cg_behind_front_axle_m along -'forward' from the front "
    "axle line; cg_left_of_centre_m along 'left' from the centre plane (left . p = 0); inertia_vehicle_axes_kg_m2: "
    "moments about axes through the CG along forward (roll), left (pitch) and up (yaw); vehicle_axes are unit "
    "vectors in model axes",
    "inertia_about_points": "tensor of the whole model about point_m (model coordinates), components in the axes "
    "whose unit vectors (model axes) are the rows of 'axes'; tensor convention",
}


@dataclass(frozen=True, slots=True)
class InertiaRequest:
    """A request for the model's inertia tensor about a point, optionally in other axes.

    Parameters
    ----------
    point : (3,) float or None
        m, model coordinates; None means the model's CG.
    axes : (3, 3) float or None
        Rows are the unit axes (model axes) to express the tensor in; None means the model axes.
    label : str
        How the user wrote it, for the report.
    axes_label : str
        How the user named the axes.
    """

    point: npt.NDArray[np.float64] | None
    axes: npt.NDArray[np.float64] | None = None
    label: str = ""
    axes_label: str = "model"


def inertia_about_entry(mp: MassProperties, request: InertiaRequest) -> dict[str, Any]:
    """The tensor of ``mp`` about a point and in given axes, as report data.

    Parallel-axis theorem to the point (``I_P = I_G + m(|d|² E − d dᵀ)``, d = G − P), then a passive change of
    axes ``A I Aᵀ`` (rows of A = the new axes); Goldstein, Poole & Safko, *Classical Mechanics* (2002) §5.3.

    Raises
    ------
    ValueError
        When the axes are not orthonormal and right-handed.
    """
    point = mp.center if request.point is None else np.asarray(request.point, dtype=float).reshape(3)
    tensor = inertia_about_point(mp, point)
    axes = np.eye(3) if request.axes is None else np.asarray(request.axes, dtype=float)
    if not is_orthogonal(axes) or np.linalg.det(axes) < 0.0:
        raise UsageError(f"axes {request.axes_label!r} must be orthonormal and right-handed")
    tensor = inertia_in_axes(tensor, axes)
    return {
        "label": request.label or ("cg" if request.point is None else ""),
        "point_m": point.tolist(),
        "axes_label": request.axes_label,
        "axes": axes.tolist(),
        "inertia_kg_m2": (0.5 * (tensor + tensor.T)).tolist(),
    }


def _props_dict(mp: MassProperties) -> dict[str, Any]:
    return {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}


def build_report(model: Model, inertia_requests: Sequence[InertiaRequest] = (), *,
                 stream: bool = False) -> dict[str, Any]:
    """The full report of a model as plain data (JSON-ready, SI).

    ``inertia_requests`` add the whole model's tensor about user points (key ``inertia_about_points``).

    With ``stream=True`` the member ``components`` is a :class:`ComponentEntries` instead of a list: the same
    dictionaries, made one at a time whenever it is iterated, so that :func:`write_json_atomic` and
    :func:`write_report_text` write a model of 10⁵ parts without holding one dictionary per part (about 70 MiB)
    or the whole text. Everything else is the same plain data.
    """
    total = model.mass_properties()
    out: dict[str, Any] = {
        "format": REPORT_FORMAT,
        "model": model.name,
        "case": model.case,
        "source": model.source,
        "conventions": CONVENTIONS,
        **_props_dict(total),
    }
    if total.mass > 0:
        moments, axes = principal_axes(total.inertia)
        out["principal_moments_kg_m2"] = moments.tolist()
        out["principal_axes"] = axes.tolist()
        out["radii_of_gyration_m"] = radii_of_gyration(total).tolist()
    if model.vehicle is not None:
        bal = static_balance(total, model.vehicle)
        out.update(_balance_dict(bal))
        out["vehicle_axes"] = {
            "forward": model.vehicle.forward.tolist(),
            "left": model.vehicle.left.tolist(),
            "up": model.vehicle.up.tolist(),
        }
        out["inertia_vehicle_axes_kg_m2"] = {
            "roll": float(model.vehicle.forward @ total.inertia @ model.vehicle.forward),
            "pitch": float(model.vehicle.left @ total.inertia @ model.vehicle.left),
            "yaw": float(model.vehicle.up @ total.inertia @ model.vehicle.up),
        }
    out["inertia_about_points"] = [inertia_about_entry(total, r) for r in inertia_requests]
    out["rules"] = [rule_dict(r) for r in check_rules(model)]
    out["rules_passed"] = all(r["passed"] for r in out["rules"])
    out["groups"] = [{"path": g, "parts": n, **_props_dict(mp)} for g, n, mp in model.group_properties()]
    masses = model._all_arrays()[0]
    maturity = [c.maturity for c in model.components]
    out["maturity_kg"] = {
        m.value: float(masses[[k is m for k in maturity]].sum()) if maturity else 0.0 for m in Maturity
    }
    entries = ComponentEntries(model)
    out["components"] = entries if stream else list(entries)
    out["parameters"] = {k: {"value_si": q.value, "unit": str(q.dim)} for k, q in model.parameters.items()}
    out["cautions"] = cautions.for_report("ballast") if any(c.slot for c in model.components) else cautions.for_report()
    return out


#: Components converted from the model's arrays to Python lists per block of this many: one conversion per block
#: keeps the speed of one per model, and a block's few lists die young (blocks of 4096 left so many of them alive at
#: each young collection that the cyclic garbage collector went on to full passes over the model: +50 % on the JSON
#: of 10⁵ parts; the lists of a whole model would take about 75 MiB).
_BLOCK = 256


class ComponentEntries:
    """The ``components`` of a streamed report (:func:`build_report` with ``stream=True``).

    Iterating yields the dictionary of each component, in the model's order, made from the model's arrays at that
    moment (one at a time: nothing is kept); ``len()`` is the number of components. ``list(entries)`` is exactly
    the list that :func:`build_report` gives without streaming.
    """

    __slots__ = ("model",)

    def __init__(self, model: Model) -> None:
        self.model = model

    def __len__(self) -> int:
        return len(self.model.components)

    def __iter__(self) -> Iterator[dict[str, Any]]:
        masses, centers, inertias = self.model._all_arrays()
        components = self.model.components
        for start in range(0, len(components), _BLOCK):
            stop = start + _BLOCK
            # one conversion of a block of the stacked arrays to lists instead of three small ones per component
            rows = zip(masses[start:stop].tolist(), centers[start:stop].tolist(), inertias[start:stop].tolist(),
                       strict=True)
            for c, (mass, cg, tensor) in zip(components[start:stop], rows, strict=True):
                yield {
                    "path": c.path,
                    "mass_kg": mass,
                    "cg_m": cg,
                    "inertia_cg_kg_m2": tensor,
                    "volume_m3": c.volume if c.volume > 0 else None,
                    "mass_source": c.source.value,
                    "material": c.material,
                    "density_kg_m3": c.implied_density,
                    "inertia_source": c.inertia_source,
                    "maturity": c.maturity.value,
                    "slot": c.slot,
                    "colour": c.colour,
                }

    def brief(self) -> Iterator[tuple[str, float, str, str, list[float]]]:
        """(path, mass_kg, mass_source, maturity, cg_m) of each component: the members the terminal table shows, the
        same values as in the dictionaries, without making them."""
        masses, centers, _ = self.model._all_arrays()
        components = self.model.components
        for start in range(0, len(components), _BLOCK):
            stop = start + _BLOCK
            rows = zip(components[start:stop], masses[start:stop].tolist(), centers[start:stop].tolist(), strict=True)
            for c, mass, cg in rows:
                yield c.path, mass, c.source.value, c.maturity.value, cg

    def __repr__(self) -> str:
        return f"<ComponentEntries of {self.model.name!r}: {len(self)} components, made when iterated>"


def _balance_dict(bal: Balance) -> dict[str, Any]:
    return {
        "axle_loads_kg": {"front": bal.front, "rear": bal.rear},
        "corner_loads_kg": {
            "front_left": float(bal.corners[0]),
            "front_right": float(bal.corners[1]),
            "rear_left": float(bal.corners[2]),
            "rear_right": float(bal.corners[3]),
        },
        "front_fraction": bal.front_fraction,
        "left_fraction": bal.left_fraction,
        "cross_fraction": bal.cross_fraction,
        "cg_height_m": bal.cg_height,
        "cg_behind_front_axle_m": bal.cg_behind_front_axle,
        "cg_left_of_centre_m": bal.cg_left_of_centre,
        "load_assumptions": ASSUMPTIONS,
    }


def json_text(data: Any) -> str:
    """JSON text laid out for people and written fast.

    The members of the top-level object and of the objects in it go one per line, a list of objects (components,
    groups, rules) one element per line, and everything deeper is compact. Only the standard library's C encoder
    is used (indented output would take the slow pure-Python one: seconds for a model of 10,000 components). NaN
    and infinities are refused (ValueError). The text is the concatenation of :func:`json_chunks`.
    """
    return "".join(json_chunks(data))


def json_chunks(data: Any) -> Iterator[str]:
    """The text of :func:`json_text` in pieces (at most one element of a list of objects each), for writing a
    large report without holding its text; a :class:`ComponentEntries` is written as the list it stands for."""
    return _layout(data, 0)


def _layout(value: Any, depth: int) -> Iterator[str]:
    pad, inner = "  " * depth, "  " * (depth + 1)
    if isinstance(value, dict) and value and depth < 2:
        sep = "{\n"
        for k, v in value.items():
            yield f"{sep}{inner}{json.dumps(str(k))}: "
            yield from _layout(v, depth + 1)
            sep = ",\n"
        yield "\n" + pad + "}"
    elif isinstance(value, ComponentEntries) and depth < 2 or (
            isinstance(value, list) and value and depth < 2 and all(isinstance(v, dict) for v in value)):
        sep = "[\n"
        for v in value:
            yield sep + inner + json.dumps(v, allow_nan=False)
            sep = ",\n"
        yield "[]" if sep == "[\n" else "\n" + pad + "]"
    else:
        yield json.dumps(list(value) if isinstance(value, ComponentEntries) else value, allow_nan=False)


def write_json_atomic(data: Any, path: str | Path) -> None:
    """Write JSON (:func:`json_text`) to ``path`` through a temporary file and a rename (never half-written).

    The text goes into the temporary file piece by piece (:func:`json_chunks`), so a streamed report
    (``build_report(..., stream=True)``) is never held whole in memory.
    """

    def write(tmp: Path) -> None:
        with open(tmp, "w", encoding="utf-8") as out:
            out.writelines(json_chunks(data))
            out.write("\n")

    write_atomic(path, write)


# --- terminal text -------------------------------------------------------------------------------------------

def _num(x: float, spec: str) -> str:
    """``format(x, spec)``, except that a value that rounds to zero shows no minus sign ("0.0000", not "-0.0000")."""
    text = format(x, spec)
    if "-" in text and float(text) == 0.0:
        text = format(0.0, spec)
    return text


def _vec(v: Sequence[float], scale: float, digits: int) -> str:
    return "(" + ", ".join(_num(x * scale, f".{digits}f") for x in v) + ")"


def _tensor_lines(tensor: Any, scale: float, digits: int) -> list[str]:
    return ["    [" + "  ".join(_num(x, f">14.{digits}f") for x in row) + " ]" for row in np.asarray(tensor) * scale]


def format_report(report: dict[str, Any], units: DisplayUnits = DisplayUnits.SI, components: bool = True) -> str:
    """Readable text of a report built by :func:`build_report`."""
    return "\n".join(report_lines(report, units, components))


def write_report_text(report: dict[str, Any], stream: TextIO, units: DisplayUnits = DisplayUnits.SI,
                      components: bool = True) -> None:
    """Write :func:`format_report`'s text and a final newline to a text stream line by line (what ``print`` of
    the text writes, without holding the text of a model of 10⁵ parts)."""
    lines = report_lines(report, units, components)
    while block := list(itertools.islice(lines, 2048)):  # a few writes of joined lines, not one per line
        stream.write("\n".join(block) + "\n")


def report_lines(report: dict[str, Any], units: DisplayUnits = DisplayUnits.SI,
                 components: bool = True) -> Iterator[str]:
    """The lines of :func:`format_report`, one at a time (the component table's cells are made first, for the
    widths of its columns)."""
    lu, ls = units.length
    iu, isc = units.inertia
    ld = 1 if units is DisplayUnits.MM else 4
    idg = 0 if units is DisplayUnits.MM else 4
    # lines gathered between the streamed parts (an entry may be a table of several lines, joined by newlines)
    out: list[str] = []
    case = f" · load case {report['case']}" if report.get("case", "base") != "base" else ""
    out.append(f"massmodel report · {report['model']}{case}   ({report['source']})")
    out.append(f"frame: model axes · inertia about the CG, tensor convention (I_xy = -∫xy dm) · lengths {lu}")
    out.append("")
    if components:
        entries = report["components"]
        brief = entries.brief() if isinstance(entries, ComponentEntries) else (
            (c["path"], c["mass_kg"], c["mass_source"], c["maturity"], c["cg_m"]) for c in entries)
        # tuples of text, which the cyclic garbage collector stops tracking (lists of 10^5 rows would set off full
        # collections over the whole model)
        cells = [(path, _num(mass, ".3f"), source, maturity, _vec(cg, ls, ld))
                for path, mass, source, maturity, cg in brief]
        out.append(f"COMPONENT BUDGET ({len(cells)} parts)")
        yield from out
        out.clear()
        yield from table_lines(["path", "mass kg", "source", "maturity", f"CG {lu}"], cells, "lrllr")
        del cells
        out.append("")
    top = [g for g in report["groups"] if "/" not in g["path"]]
    rows = [[g["path"], str(g["parts"]), f"{g['mass_kg']:.3f}",
             f"{100 * g['mass_kg'] / report['mass_kg']:.1f}" if report["mass_kg"] else "-",
             _vec(g["cg_m"], ls, ld)] for g in top]
    out.append("GROUPS (top level; all levels in the JSON)")
    out.append(table(["group", "parts", "mass kg", "share %", f"CG {lu}"], rows))
    out.append("")
    mat = report["maturity_kg"]
    out.append("MASS BY MATURITY  " + "   ".join(f"{k}: {v:.2f} kg" for k, v in mat.items()))
    out.append("")
    out.append("TOTAL")
    # ± u beside the totals when the report carries an uncertainty member
    from .uncertainty import plus_minus, uncertainty_lines

    out.append(f"  mass            {report['mass_kg']:.3f}{plus_minus(report, 'mass')} kg")
    out.append(f"  CG              {_vec(report['cg_m'], ls, ld)} {lu}")
    if "inertia_cg_kg_m2" in report:
        out.append(f"  inertia about CG ({iu}, model axes, tensor convention):")
        out.extend(_tensor_lines(report["inertia_cg_kg_m2"], isc, idg))
    if "principal_moments_kg_m2" in report:
        out.append(f"  principal moments {_vec(report['principal_moments_kg_m2'], isc, idg)} {iu} (ascending)")
        for i, ax in enumerate(report["principal_axes"]):
            out.append(f"    axis {i + 1}  {_vec(ax, 1.0, 4)} (unit vector, model axes)")
        out.append(f"  radii of gyration {_vec(report['radii_of_gyration_m'], ls, ld)} {lu} (about CG, model axes)")
    for entry in report.get("inertia_about_points", []):
        what = "the CG" if entry["label"] == "cg" else "point"
        given = f", given as '{entry['label']}'" if entry["label"] not in ("", "cg") else ""
        out.append(f"  inertia about {what} {_vec(entry['point_m'], ls, ld)} {lu} (model coordinates{given}), {iu}, "
                   f"{entry['axes_label']} axes, tensor convention:")
        if entry["axes_label"] != "model":
            for i, ax in enumerate(entry["axes"]):
                out.append(f"    axis {i + 1}  {_vec(ax, 1.0, 4)} (unit vector, model axes)")
        out.extend(_tensor_lines(entry["inertia_kg_m2"], isc, idg))
    if "axle_loads_kg" in report:
        out.append("")
        out.append("VEHICLE BALANCE (static)")
        v = report["inertia_vehicle_axes_kg_m2"]
        out.append(f"  CG height above ground     {_num(report['cg_height_m'] * ls, f'.{ld}f')} {lu}")
        out.append(f"  CG behind front axle       {_num(report['cg_behind_front_axle_m'] * ls, f'.{ld}f')} {lu}")
        out.append(f"  CG left of centre plane    {_num(report['cg_left_of_centre_m'] * ls, f'.{ld}f')} {lu}")
        out.append(f"  front fraction {_num(report['front_fraction'], '.4f')}   left fraction "
                   f"{_num(report['left_fraction'], '.4f')}   cross (FR+RL) {_num(report['cross_fraction'], '.4f')}")
        out.append(f"  roll / pitch / yaw inertia about CG  {_num(v['roll'] * isc, f'.{idg}f')} / "
                   f"{_num(v['pitch'] * isc, f'.{idg}f')} / {_num(v['yaw'] * isc, f'.{idg}f')} {iu}")
        a = report["axle_loads_kg"]
        c = report["corner_loads_kg"]
        out.append(table(
            ["kg", "left", "right", "axle"],
            [["front", _num(c["front_left"], ".2f"), _num(c["front_right"], ".2f"), _num(a["front"], ".2f")],
             ["rear", _num(c["rear_left"], ".2f"), _num(c["rear_right"], ".2f"), _num(a["rear"], ".2f")]],
        ))
        out.append(f"  assumptions: {report['load_assumptions']}")
    out.extend(uncertainty_lines(report, units))
    if report["rules"]:
        out.append("")
        out.append("RULE CHECKS")
        rows = []
        for r in report["rules"]:
            val = r["value"]["value"]
            mar = r["margin"]["value"]
            unit = r["value"]["unit"]
            fmt = f".{DECIMALS.get(unit, 4)}f"
            # a failing rule keeps its minus sign even when the margin rounds to zero
            margin = _num(mar, "+" + fmt) if r["passed"] else format(mar, "+" + fmt)
            rows.append(["pass" if r["passed"] else "FAIL", r["name"], f"{_num(val, fmt)} {unit}", dict_limit_text(r),
                         f"{margin} {unit}"])
        out.append(table(["", "rule", "value", "limit", "margin"], rows, "llrrr"))
        out.append("  " + ("all rules pass" if report["rules_passed"] else "SOME RULES FAIL"))
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {line}" for line in report["cautions"])
    yield from out
