"""Results as notebook objects: a list of rule results and the report, each with a short text and an HTML table.

The numbers come from :func:`massmodel.report.summary.build_report` and :func:`massmodel.vehicle.balance.check_rules`;
this module only lays them out (``__repr__``, ``__str__``, ``_repr_html_``). Every text is escaped
(:func:`massmodel.core.display.esc`) and every number carries its unit and frame.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Any

from massmodel.core import display
from massmodel.vehicle.balance import RULE_HEADERS, Bound, RuleResult

from .summary import DisplayUnits, format_report, write_json_atomic

__all__ = ["RuleResults", "Report"]


class RuleResults(tuple[RuleResult, ...]):
    """The results of a model's rule checks (an immutable tuple of :class:`RuleResult`) that displays as a table.

    ``all_passed`` is true when every rule passes (and when there is no rule); ``failed`` lists the failures.
    """

    __slots__ = ()

    def __new__(cls, results: Iterable[RuleResult] = ()) -> RuleResults:
        return super().__new__(cls, tuple(results))

    @property
    def all_passed(self) -> bool:
        """Whether every rule passes."""
        return all(r.passed for r in self)

    @property
    def failed(self) -> tuple[RuleResult, ...]:
        """The rules that fail."""
        return tuple(r for r in self if not r.passed)

    def __repr__(self) -> str:
        if not self:
            return "<RuleResults: no rules>"
        verdict = "all pass" if self.all_passed else f"{len(self.failed)} FAIL"
        lines = [f"<RuleResults: {len(self)} rules, {verdict}"]
        lines += ["  " + "  ".join(r.cells()) for r in self]
        return "\n".join(lines) + ">"

    def _repr_html_(self) -> str:
        verdict = "all rules pass" if self.all_passed else f"{len(self.failed)} of {len(self)} rules FAIL"
        return display.html_table([r.cells() for r in self], RULE_HEADERS, f"Rule checks: {verdict}", (2, 3, 4))


@dataclass(frozen=True, eq=False)
class Report:
    """The mass-properties report of a model: its data (JSON-ready dict, SI) with text and HTML views.

    Attributes
    ----------
    data : mapping
        What :func:`massmodel.report.summary.build_report` returns (read-only view).
    """

    data: Mapping[str, Any]

    def __post_init__(self) -> None:
        object.__setattr__(self, "data", MappingProxyType(dict(self.data)))

    @property
    def rules(self) -> RuleResults:
        """The rule results of the report's data."""
        return RuleResults(_rule_from_dict(r) for r in self.data["rules"])

    def text(self, units: DisplayUnits = DisplayUnits.MM, components: bool = False) -> str:
        """The terminal text of the report (:func:`massmodel.report.summary.format_report`)."""
        return format_report(dict(self.data), units=units, components=components)

    def __str__(self) -> str:
        return self.text()

    def write_json(self, path: str | Path) -> Path:
        """Write the report as JSON (through a temporary file and a rename); returns the path."""
        write_json_atomic(dict(self.data), path)
        return Path(path)

    def __repr__(self) -> str:
        d = self.data
        rules = self.rules
        verdict = f", {len(rules)} rules, " + ("all pass" if rules.all_passed else f"{len(rules.failed)} FAIL") if rules else ""
        return (f"<Report {d['model']!r} case {d['case']!r}: {d['mass_kg']:.1f} kg, "
                f"CG {display.vector(d['cg_m'], 0, 1e3)} mm model frame{verdict}>")

    def _repr_html_(self) -> str:
        d = self.data
        case = f" · load case {d['case']}" if d["case"] != "base" else ""
        out = [f"<h4>{display.esc(d['model'])}{display.esc(case)}</h4>"]
        rows: list[list[object]] = [["mass", f"{d['mass_kg']:.2f} kg"],
                                    ["CG (model frame)", f"{display.vector(d['cg_m'], 1, 1e3)} mm"]]
        if "axle_loads_kg" in d:
            yaw = d["inertia_vehicle_axes_kg_m2"]
            rows += [
                ["CG height above ground", f"{display.number(d['cg_height_m'], 1, 1e3)} mm"],
                ["front fraction", f"{d['front_fraction']:.4f}"],
                ["axle loads front / rear", f"{d['axle_loads_kg']['front']:.2f} / {d['axle_loads_kg']['rear']:.2f} kg"],
                ["roll / pitch / yaw inertia about CG", f"{yaw['roll']:.2f} / {yaw['pitch']:.2f} / {yaw['yaw']:.2f} kg·m²"],
            ]
        out.append(display.html_table(rows, caption="Totals"))
        top = [g for g in d["groups"] if "/" not in g["path"]]
        out.append(display.html_table(
            [[g["path"], g["parts"], f"{g['mass_kg']:.2f}", display.vector(g["cg_m"], 0, 1e3)] for g in top],
            ["group", "parts", "mass kg", "CG mm (model frame)"], "Top-level groups", (1, 2, 3),
        ))
        if d["rules"]:
            out.append(self.rules._repr_html_())
        out.append("<p><b>Cautions</b></p><ul>" + "".join(f"<li>{display.esc(c)}</li>" for c in d["cautions"]) + "</ul>")
        return "\n".join(out)


def _rule_from_dict(r: Mapping[str, Any]) -> RuleResult:
    """The :class:`RuleResult` behind one entry of the report's ``rules`` list (inverse of its JSON layout)."""
    unit = r["value"]["unit"]
    low, high = r.get("limit_min"), r.get("limit_max")
    return RuleResult(r["name"], r["check"], r["passed"], r["value"]["value"], Bound(r["bound"]),
                      None if low is None else low["value"], None if high is None else high["value"],
                      r["margin"]["value"], unit, r["detail"])
