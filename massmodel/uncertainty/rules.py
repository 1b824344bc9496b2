"""How likely the car passes each rule, and the margin a rule needs for a chosen confidence.

For each rule of a model (a load case's model holds the rules that apply in that case) the rule's value — a mass,
an axle load, the front share or the CG height — has a nominal value (:func:`massmodel.vehicle.balance.check_rule`)
and a standard uncertainty u (RSS, :mod:`massmodel.uncertainty.rss`). With a normal distribution of the value the
probability of passing a one-sided limit is Φ(margin/u), and the margin needed for a one-sided confidence P is
z_P·u with z_P = Φ⁻¹(P) (e.g. 1.645 for 95 %). The front-share band has two sides: its probability counts both,
its needed margin is taken on the nearer side (exact when the band is wide against u).

The Monte Carlo gives the same without the normal approximation: the fraction of samples that pass (± its standard
error √(p(1−p)/n)) and the needed margin as the nominal margin minus the (1 − P) quantile of the sampled margins.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Model, Rule, RuleCheck
from massmodel.vehicle.balance import AT_LIMIT_RTOL, check_rules

from .inputs import UncertaintyInputs, uncertainty_inputs
from .montecarlo import MonteCarloResult, monte_carlo
from .rss import Quantity, Sensitivity, rss_of, sensitivities

__all__ = ["RuleConfidence", "rule_subsets", "rule_confidence", "rule_margins", "rule_margin_samples",
           "rules_monte_carlo"]

FloatArray = npt.NDArray[np.float64]

_VEHICLE_VALUE = {RuleCheck.FRONT_FRACTION: "front_fraction", RuleCheck.MAX_CG_HEIGHT: "cg_height"}


@dataclass(frozen=True, slots=True)
class RuleConfidence:
    """One rule in one load case, with its uncertainty (SI; ``unit`` is the rule's: kg, fraction or m).

    Attributes
    ----------
    case, name, check, unit : str
    value, margin : float
        Nominal value and margin (positive inside the limit), from the vehicle rule check.
    u : float
        RSS standard uncertainty of the value.
    probability_rss : float
        Probability of passing, normal distribution with the RSS u.
    required_margin_rss : float
        Margin needed for the confidence, z_P·u.
    confidence : float
        The chosen one-sided confidence P.
    probability_mc, probability_mc_se, required_margin_mc : float or None
        The Monte Carlo counterparts (None without a Monte Carlo run).
    """

    case: str
    name: str
    check: str
    unit: str
    value: float
    margin: float
    u: float
    probability_rss: float
    required_margin_rss: float
    confidence: float
    probability_mc: float | None = None
    probability_mc_se: float | None = None
    required_margin_mc: float | None = None

    @property
    def passes_at_confidence(self) -> bool:
        """Whether the nominal margin covers the needed one (the Monte Carlo's when there is one)."""
        need = self.required_margin_mc if self.required_margin_mc is not None else self.required_margin_rss
        return self.margin >= need - AT_LIMIT_RTOL * max(abs(need), 1e-12)


def rule_subsets(model: Model) -> dict[str, npt.NDArray[np.bool_]]:
    """(N,) masks of the parts whose mass each mass rule sums, keyed by rule name."""
    out = {}
    paths = {c.path: i for i, c in enumerate(model.components)}
    for rule in model.rules:
        if rule.check is RuleCheck.MIN_MASS:
            chosen = model.select(exclude=rule.exclude)
        elif rule.check is RuleCheck.MIN_GROUP_MASS:
            chosen = model.select(include=rule.groups)
        else:
            continue
        mask = np.zeros(len(model.components), dtype=bool)
        mask[[paths[c.path] for c in chosen]] = True
        out[rule.name] = mask
    return out


def _margin(rule: Rule, value: FloatArray) -> FloatArray:
    """The rule's margin (as :func:`massmodel.vehicle.balance.check_rule` defines it) of sampled values."""
    if rule.check is RuleCheck.FRONT_FRACTION:
        lo = rule.minimum if rule.minimum is not None else 0.0
        hi = rule.maximum if rule.maximum is not None else 1.0
        return np.minimum(value - lo, hi - value)  # type: ignore[no-any-return]
    if rule.check is RuleCheck.MAX_CG_HEIGHT:
        return float(rule.limit or 0.0) - value  # type: ignore[no-any-return]
    return value - float(rule.limit or 0.0)  # type: ignore[no-any-return]


def _value_key(rule: Rule) -> tuple[str, str]:
    """("subsets" | "values", key) of the sampled value a rule checks."""
    if rule.check in (RuleCheck.MIN_MASS, RuleCheck.MIN_GROUP_MASS):
        return "subsets", rule.name
    if rule.check is RuleCheck.MIN_AXLE_LOAD:
        return "values", "front" if rule.axle == "front" else "rear"
    return "values", _VEHICLE_VALUE[rule.check]


def rule_margin_samples(model: Model, mc: MonteCarloResult) -> dict[str, FloatArray]:
    """Sampled margins of every rule of the model (``mc`` from :func:`rules_monte_carlo`), rule unit."""
    out = {}
    for rule in model.rules:
        kind, key = _value_key(rule)
        store = mc.subsets if kind == "subsets" else mc.values
        if key not in store:
            raise UsageError(f"rule '{rule.name}': the Monte Carlo run has no samples of '{key}' "
                             "(run it with rules_monte_carlo)")
        out[rule.name] = _margin(rule, store[key])
    return out


def rules_monte_carlo(model: Model, samples: int = 20000, seed: int | None = 0,
                      inputs: UncertaintyInputs | None = None) -> MonteCarloResult:
    """:func:`~massmodel.uncertainty.montecarlo.monte_carlo` with the part subsets of the model's mass rules."""
    return monte_carlo(model, samples, seed, inputs=inputs, subsets=rule_subsets(model))


def _rule_sensitivity(rule: Rule, sens: Mapping[str, Sensitivity], mask: npt.NDArray[np.bool_] | None) -> Sensitivity:
    if mask is not None:
        base = sens["mass"]
        return Sensitivity(0.0, mask.astype(float), base.gc, base.gi)  # Σ over the subset: ∂/∂mᵢ = 1 inside
    return sens[_value_key(rule)[1]]


def rule_confidence(
    model: Model,
    confidence: float = 0.95,
    mc: MonteCarloResult | None = None,
    inputs: UncertaintyInputs | None = None,
) -> list[RuleConfidence]:
    """Probability of passing and margin needed for ``confidence`` of every rule of the model (its load case).

    Parameters
    ----------
    model : Model
        One load case's model (its rules are those that apply in that case).
    confidence : float
        One-sided confidence, 0.5 ≤ P < 1.
    mc : MonteCarloResult, optional
        From :func:`rules_monte_carlo` on the same model; adds the Monte Carlo columns.
    inputs : UncertaintyInputs, optional
    """
    if not 0.5 <= confidence < 1.0:
        raise UsageError(f"confidence must lie in [0.5, 1), got {confidence}")
    inp = inputs or uncertainty_inputs(model)
    sens = sensitivities(model, inp)
    masks = rule_subsets(model)
    z = NormalDist().inv_cdf(confidence)
    phi = NormalDist().cdf
    sampled = rule_margin_samples(model, mc) if mc is not None else {}
    out = []
    for rule, result in zip(model.rules, check_rules(model), strict=True):
        est = rss_of(_rule_sensitivity(rule, sens, masks.get(rule.name)), inp, Quantity(rule.name, result.unit, ""))
        u = est.u
        if rule.check is RuleCheck.FRONT_FRACTION:
            lo = rule.minimum if rule.minimum is not None else 0.0
            hi = rule.maximum if rule.maximum is not None else 1.0
            p = _prob(result.value - lo, u, phi) + _prob(hi - result.value, u, phi) - 1.0
        else:
            p = _prob(result.margin, u, phi)
        extra: dict[str, float] = {}
        if rule.name in sampled:
            s = sampled[rule.name]
            tol = AT_LIMIT_RTOL * abs(result.value - result.margin) if result.unit != "fraction" else 0.0
            pm = float(np.mean(s >= -tol))
            extra = {"probability_mc": pm, "probability_mc_se": float(np.sqrt(pm * (1.0 - pm) / len(s))),
                     "required_margin_mc": result.margin - float(np.quantile(s, 1.0 - confidence))}
        out.append(RuleConfidence(model.case, rule.name, result.check, result.unit, result.value, result.margin, u,
                                  max(0.0, p), z * u, confidence, **extra))
    return out


def _prob(margin: float, u: float, phi: object) -> float:
    if u <= 0.0:
        return 1.0 if margin >= 0.0 else 0.0
    return float(phi(margin / u))  # type: ignore[operator]


def rule_margins(
    model: Model, confidence: float = 0.95, *, method: str = "rss", samples: int = 20000, seed: int | None = 0
) -> dict[str, float]:
    """The margin each rule needs so that the car passes it with the given one-sided confidence.

    A rule is passed with confidence P when its nominal margin (as :func:`massmodel.vehicle.balance.check_rules`
    reports it) is at least the returned value. Intended for ballast sizing: aim at ``limit + margin`` instead of
    the bare limit.

    Parameters
    ----------
    model : Model
        One load case's model.
    confidence : float
        One-sided confidence, 0.5 ≤ P < 1 (0.95: z = 1.645).
    method : {"rss", "mc"}
        "rss": z_P · u with the RSS u (normal approximation); "mc": nominal margin minus the (1 − P) quantile of
        the Monte Carlo margins (``samples``, ``seed``).

    Returns
    -------
    dict of str to float
        Rule name → needed margin in the rule's SI unit (kg for masses and axle loads, a fraction for the front
        share, m for the CG height); 0 for a rule whose value has no uncertainty.
    """
    if method not in ("rss", "mc"):
        raise UsageError(f"method must be 'rss' or 'mc', got {method!r}")
    mc = rules_monte_carlo(model, samples, seed) if method == "mc" else None
    rows = rule_confidence(model, confidence, mc)
    return {r.name: (r.required_margin_mc if method == "mc" else r.required_margin_rss) for r in rows}  # type: ignore[misc]
