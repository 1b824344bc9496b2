"""How sure is the model: uncertainty of mass, CG, inertia, axle and corner loads and rule margins.

* :mod:`~massmodel.uncertainty.inputs`: each part's standard uncertainties (from the model file or from the defaults
  by maturity), the shared density error of every material with a density band, and the growth allowance.
* :mod:`~massmodel.uncertainty.rss`: first-order propagation by root sum of squares (Zimmerman & Nakai, SAWE Paper
  3360, 2005; GUM §5.1.2 and §5.2).
* :mod:`~massmodel.uncertainty.montecarlo`: seedable Monte Carlo over samples × parts, in bounded memory.
* :mod:`~massmodel.uncertainty.sampler`: its compiled sampler (numba; imported lazily, only by ``montecarlo``).
* :mod:`~massmodel.uncertainty.rules`: probability of passing each rule, and the margin a rule needs for a chosen
  confidence (:func:`rule_margins`).

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`.
"""

from .inputs import MATURITY_DEFAULTS, MaturityDefault, UncertaintyInputs, growth_summary, uncertainty_inputs
from .montecarlo import MonteCarloResult, monte_carlo
from .rss import QUANTITIES, Quantity, rss_uncertainties
from .rules import RuleConfidence, rule_confidence, rule_margins

__all__ = [
    "MATURITY_DEFAULTS",
    "MaturityDefault",
    "UncertaintyInputs",
    "uncertainty_inputs",
    "growth_summary",
    "QUANTITIES",
    "Quantity",
    "rss_uncertainties",
    "MonteCarloResult",
    "monte_carlo",
    "RuleConfidence",
    "rule_confidence",
    "rule_margins",
]
