"""Rule results as JSON and as text: the limits written out from the numbers of a `RuleResult`.

The JSON of one rule (in the model report, the load-case report and the ballast plan) is::

    {"name": ..., "check": "min_mass", "passed": true,
     "value": {"value": 431.2, "unit": "kg"},
     "bound": "at_least",                          # at_least | at_most | between
     "limit_min": {"value": 425.0, "unit": "kg"},  # null unless at_least or between
     "limit_max": null,                            # null unless at_most or between
     "margin": {"value": 6.2, "unit": "kg"}, "detail": "whole model"}

Text is built here only, from those numbers: ``>= 425.00 kg``, ``<= 0.3000 m``, ``0.4000 .. 0.5000 fraction``.
"""

from __future__ import annotations

from typing import Any

from massmodel.vehicle.balance import DECIMALS, RuleResult, limit_text

__all__ = ["DECIMALS", "dict_limit_text", "limit_text", "rule_dict", "rule_limit_text"]

def rule_limit_text(result: RuleResult) -> str:
    """The limits of one result as text with their unit (see :func:`limit_text`)."""
    return limit_text(result.bound, result.limit_min, result.limit_max, result.unit)


def _quantity(value: float | None, unit: str) -> dict[str, Any] | None:
    return None if value is None else {"value": value, "unit": unit}


def rule_dict(result: RuleResult) -> dict[str, Any]:
    """JSON-ready dict of one rule result (numbers with their units; layout in the module docstring)."""
    return {
        "name": result.name,
        "check": result.check,
        "passed": result.passed,
        "value": {"value": result.value, "unit": result.unit},
        "bound": result.bound.value,
        "limit_min": _quantity(result.limit_min, result.unit),
        "limit_max": _quantity(result.limit_max, result.unit),
        "margin": {"value": result.margin, "unit": result.unit},
        "detail": result.detail,
    }


def dict_limit_text(rule: dict[str, Any]) -> str:
    """The limits of a rule's JSON dict (from :func:`rule_dict`) as text with their unit."""
    unit = rule["value"]["unit"]
    lo, hi = rule["limit_min"], rule["limit_max"]
    return limit_text(rule["bound"], None if lo is None else lo["value"], None if hi is None else hi["value"], unit)
