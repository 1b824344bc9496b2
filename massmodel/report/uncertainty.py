"""Text and JSON of the model's uncertainty: RSS and Monte Carlo table, rule probabilities, growth allowance.

Every value is a standard uncertainty (coverage factor k = 1, about 68 % for a normal distribution) unless stated;
the Monte Carlo's 95 % interval is the 2.5 %–97.5 % quantile range of the samples.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from massmodel.core import cautions
from massmodel.core.model import Model
from massmodel.uncertainty.inputs import declares_uncertainty, growth_summary, uncertainty_inputs
from massmodel.uncertainty.montecarlo import MonteCarloResult
from massmodel.uncertainty.rss import QUANTITIES, rss_uncertainties
from massmodel.uncertainty.rules import RuleConfidence, rule_confidence, rules_monte_carlo

from .text import DisplayUnits, table

__all__ = ["COVERAGE", "report_uncertainty", "how_sure_data", "format_how_sure", "uncertainty_lines",
           "plus_minus"]

COVERAGE = "standard uncertainty u, coverage factor k = 1 (about 68 % for a normal distribution)"
RSS_METHOD = ("first-order RSS: Zimmerman & Nakai, SAWE Paper 3360 (2005); GUM (JCGM 100:2008) §5.1.2 and §5.2 "
              "for the shared density errors")
MC_METHOD = ("Monte Carlo over samples x parts: normal part errors, one uniform density error per banded material "
             "shared by its parts, totals rebuilt exactly")
RULE_NOTE = ("probability of passing from a normal distribution with the RSS u (and, where run, the fraction of Monte "
             "Carlo samples that pass); needed margin = z_P * u for a one-sided confidence P")


def _rule_dict(r: RuleConfidence) -> dict[str, Any]:
    out = {
        "case": r.case, "name": r.name, "check": r.check, "unit": r.unit, "value": r.value, "margin": r.margin,
        "standard_uncertainty": r.u, "probability_pass_rss": r.probability_rss, "confidence": r.confidence,
        "required_margin_rss": r.required_margin_rss, "passes_at_confidence": r.passes_at_confidence,
    }
    if r.probability_mc is not None:
        out.update(probability_pass_mc=r.probability_mc, probability_pass_mc_se=r.probability_mc_se,
                   required_margin_mc=r.required_margin_mc)
    return out


def report_uncertainty(model: Model, confidence: float | None = None) -> dict[str, Any]:
    """The ``uncertainty`` member of ``massmodel report``'s JSON (RSS only; fast).

    Quantities as ``{value, standard_uncertainty, unit}``; the growth allowance separately; with ``confidence`` the
    rules' probabilities and needed margins.
    """
    inp = uncertainty_inputs(model)
    est = rss_uncertainties(model, inp)
    out: dict[str, Any] = {
        "coverage": COVERAGE,
        "method": RSS_METHOD,
        "declared_in_model": declares_uncertainty(model),
        "quantities": {k: {"value": e.value, "standard_uncertainty": e.u, "unit": e.quantity.unit}
                       for k, e in est.items()},
        "growth": growth_summary(model, inp),
    }
    if confidence is not None:
        out["rules_at_confidence"] = [_rule_dict(r) for r in rule_confidence(model, confidence, inputs=inp)]
    return out


def plus_minus(report: Mapping[str, Any], name: str, scale: float = 1.0, digits: int = 3) -> str:
    """``" ± 1.234"`` for a quantity of a report with an ``uncertainty`` member, else ``""``."""
    unc = report.get("uncertainty")
    if not unc or name not in unc["quantities"]:
        return ""
    return f" ± {unc['quantities'][name]['standard_uncertainty'] * scale:.{digits}f}"


def uncertainty_lines(report: Mapping[str, Any], units: DisplayUnits = DisplayUnits.SI) -> list[str]:
    """The UNCERTAINTY block of ``massmodel report`` (empty when the report has none)."""
    unc = report.get("uncertainty")
    if not unc:
        return []
    lu, ls = units.length
    iu, isc = units.inertia
    q = unc["quantities"]
    out = ["", f"UNCERTAINTY ({COVERAGE}; {'from the model file' if unc['declared_in_model'] else 'defaults by maturity'})"]
    rows = []
    for spec in QUANTITIES:
        if spec.name not in q:
            continue
        scale, unit, fmt = _display(spec.unit, ls, lu, isc, iu)
        e = q[spec.name]
        rows.append([spec.label, f"{e['value'] * scale:{fmt}}", f"± {e['standard_uncertainty'] * scale:{fmt}}", unit])
    out.append(table(["quantity", "value", "u", "unit"], rows, "lrrl"))
    g = unc["growth"]
    out.append(f"  growth allowance (a predicted change, NOT an uncertainty): current {g['current_mass_kg']:.2f} kg + "
               f"allowance {g['growth_allowance_kg']:.2f} kg = predicted {g['predicted_mass_kg']:.2f} kg")
    rules = unc.get("rules_at_confidence")
    if rules:
        p = rules[0]["confidence"]
        out.append(f"  rules at {100 * p:g} % one-sided confidence (RSS, normal):")
        out.append(_rule_table(rules, with_case=False))
    return out


def _display(unit: str, ls: float, lu: str, isc: float, iu: str) -> tuple[float, str, str]:
    if unit == "m":
        return ls, lu, ".4f" if ls == 1.0 else ".1f"
    if unit == "kg*m^2":
        return isc, iu, ".3f" if isc == 1.0 else ".0f"
    if unit == "fraction":
        return 1.0, "fraction", ".4f"
    return 1.0, unit, ".3f"


def _fmt(value: float | None, unit: str) -> str:
    if value is None:
        return "-"
    return f"{value:.4f}" if unit in ("fraction", "m") else f"{value:.2f}"


def _rule_table(rules: Sequence[Mapping[str, Any]], with_case: bool = True) -> str:
    with_mc = any("probability_pass_mc" in r for r in rules)
    rows = []
    for r in rules:
        unit = r["unit"]
        verdict = "pass" if r["passes_at_confidence"] else ("FAIL" if r["margin"] < 0.0 else "not sure")
        mc = "-"
        if "probability_pass_mc" in r:
            mc = f"{100 * r['probability_pass_mc']:.2f} ± {100 * r['probability_pass_mc_se']:.2f}"
        row = [verdict, r["name"], f"{_fmt(r['margin'], unit)} {unit}", f"{_fmt(r['standard_uncertainty'], unit)}",
               f"{100 * r['probability_pass_rss']:.2f}", _fmt(r["required_margin_rss"], unit)]
        if with_mc:
            row[5:5] = [mc]
            row.append(_fmt(r.get("required_margin_mc"), unit))
        rows.append(([r["case"]] if with_case else []) + row)
    head = ["verdict", "rule", "margin", "u", "P rss %", "need rss"]
    if with_mc:
        head = ["verdict", "rule", "margin", "u", "P rss %", "P mc %", "need rss", "need mc"]
    align = ("l" if with_case else "") + "ll" + "r" * (len(head) - 2)
    return table((["case"] if with_case else []) + head, rows, align)


def how_sure_data(models: Mapping[str, Model], samples: int = 20000, seed: int | None = 0,
                  confidence: float = 0.95) -> tuple[dict[str, Any], dict[str, MonteCarloResult]]:
    """Everything ``massmodel how-sure`` shows, JSON-ready (SI), and the Monte Carlo runs by case.

    Parameters
    ----------
    models : mapping of case name to Model
        The base and the load cases (:func:`massmodel.modelfile.loader.load_case_models`).
    samples, seed : Monte Carlo size and seed (``numpy.random.SeedSequence``). The samples a seed gives depend on
        the sampler that drew them (:func:`massmodel.uncertainty.montecarlo.kernel_for`), recorded per case as
        ``mc_sampler``.
    confidence : one-sided confidence of the rule verdicts.
    """
    cases: dict[str, Any] = {}
    runs: dict[str, MonteCarloResult] = {}
    rules: list[dict[str, Any]] = []
    for name, model in models.items():
        inp = uncertainty_inputs(model)
        est = rss_uncertainties(model, inp)
        mc = rules_monte_carlo(model, samples, seed, inp)
        runs[name] = mc
        quantities = {}
        for key, e in est.items():
            quantities[key] = {
                "unit": e.quantity.unit, "label": e.quantity.label, "value": e.value,
                "rss_standard_uncertainty": e.u, "rss_from_parts": e.u_parts, "rss_from_density": e.u_density,
                "rss_density_if_independent": e.u_density_if_independent,
                "mc_mean": mc.mean(key), "mc_standard_deviation": mc.std(key),
                "mc_standard_error_of_mean": mc.standard_error(key),
                "mc_interval_95": [mc.quantile(key, 0.025), mc.quantile(key, 0.975)],
            }
        cases[name] = {"parts": len(model.components), "mc_sampler": mc.kernel,
                       "density_groups": list(inp.density_keys),
                       "declared_in_model": declares_uncertainty(model), "quantities": quantities,
                       "growth": growth_summary(model, inp)}
        rules.extend(_rule_dict(r) for r in rule_confidence(model, confidence, mc, inp))
    first = next(iter(models.values()))
    data = {
        "model": first.name, "source": first.source, "coverage": COVERAGE, "rss_method": RSS_METHOD,
        "mc_method": MC_METHOD, "samples": samples, "seed": seed, "confidence": confidence, "rule_note": RULE_NOTE,
        "cases": cases, "rules": rules, "rules_pass_at_confidence": all(r["passes_at_confidence"] for r in rules),
        "cautions": cautions.for_report(),
    }
    return data, runs


def format_how_sure(data: Mapping[str, Any], units: DisplayUnits = DisplayUnits.SI) -> str:
    """Readable text of :func:`how_sure_data`."""
    lu, ls = units.length
    iu, isc = units.inertia
    out = [f"massmodel how-sure · {data['model']}   ({data['source']})",
           f"values ± {COVERAGE}",
           f"RSS: {data['rss_method']}",
           f"MC:  {data['mc_method']}; {data['samples']} samples, seed {data['seed']}"]
    for case, c in data["cases"].items():
        out += ["", f"CASE {case} · {c['parts']} parts · Monte Carlo sampler {c['mc_sampler']} · shared density "
                    f"errors: {', '.join(c['density_groups']) or 'none'}"
                    f"{'' if c['declared_in_model'] else ' · no [uncertainty] in the file: defaults by maturity'}"]
        rows = []
        for q in c["quantities"].values():
            scale, unit, fmt = _display(q["unit"], ls, lu, isc, iu)
            lo, hi = q["mc_interval_95"]
            rows.append([q["label"], unit, f"{q['value'] * scale:{fmt}}", f"{q['rss_standard_uncertainty'] * scale:{fmt}}",
                         f"{q['rss_from_density'] * scale:{fmt}}", f"{q['rss_density_if_independent'] * scale:{fmt}}",
                         f"{q['mc_mean'] * scale:{fmt}}", f"{q['mc_standard_error_of_mean'] * scale:{fmt}}",
                         f"{q['mc_standard_deviation'] * scale:{fmt}}",
                         f"{lo * scale:{fmt}} .. {hi * scale:{fmt}}"])
        out.append(table(["quantity", "unit", "nominal", "u rss", "of it density", "(if indep.)", "mc mean",
                          "± s.e.", "mc std", "mc 95 % interval"], rows, "llrrrrrrrr"))
        g = c["growth"]
        by = ", ".join(f"{k} {v:.2f}" for k, v in g["growth_allowance_by_maturity_kg"].items())
        out.append(f"  growth allowance (a predicted change, NOT an uncertainty): {g['current_mass_kg']:.2f} kg now + "
                   f"{g['growth_allowance_kg']:.2f} kg ({by}) = {g['predicted_mass_kg']:.2f} kg predicted")
    if data["rules"]:
        out += ["", f"RULES AT {100 * data['confidence']:g} % ONE-SIDED CONFIDENCE "
                    "(margin, u and needed margin in the rule's unit)",
                _rule_table(data["rules"]), f"  {data['rule_note']}",
                "  " + ("every rule passes at this confidence" if data["rules_pass_at_confidence"]
                        else "SOME RULES ARE NOT PASSED WITH THIS CONFIDENCE")]
    out += ["", "CAUTIONS"]
    out.extend(f"  - {line}" for line in data["cautions"])
    return "\n".join(out)
