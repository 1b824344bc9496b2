"""Measured values with standard uncertainties, and sensitivities by central differences.

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data — Guide to the expression of uncertainty in measurement*
   (GUM), §5.1.2 (law of propagation of uncertainty for independent inputs, ``u_y² = Σ (∂f/∂x_i)² u²(x_i)``) and
   §5.1.3 (sensitivity coefficients ∂f/∂x_i, which may be found numerically). Section numbers of the GUM cited in
   massmodel are from memory.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import UsageError

__all__ = ["Estimate", "PartUncertainty", "central_partials", "rss"]


@dataclass(frozen=True, slots=True)
class Estimate:
    """A value with its standard uncertainty (``u`` is None when it cannot be stated), SI."""

    value: float
    u: float | None = None

    def to_dict(self, unit: str) -> dict[str, Any]:
        """``{"value", "standard_uncertainty", "unit"}`` for JSON."""
        return {"value": self.value, "standard_uncertainty": self.u, "unit": unit}

    def text(self, scale: float = 1.0, digits: int = 1, unit: str = "") -> str:
        """``"12.3 ± 0.4 mm"`` (``value * scale``), or without ± when ``u`` is unknown."""
        tail = f" {unit}" if unit else ""
        if self.u is None:
            return f"{self.value * scale:.{digits}f}{tail} (uncertainty unknown)"
        return f"{self.value * scale:.{digits}f} ± {self.u * scale:.{digits}f}{tail}"


@dataclass(frozen=True, slots=True)
class PartUncertainty:
    """Standard uncertainties (coverage factor k = 1) of one part's mass properties, and its growth allowance.

    Every value is SI. The errors of different parts are independent; the density error shared by every part of one
    material with a density band is not stored here (see :mod:`massmodel.uncertainty.inputs`).

    Parameters
    ----------
    mass : float
        Standard uncertainty of the part's mass, kg.
    cg : (3,) tuple of float
        Standard uncertainty of each CG coordinate, m, model axes.
    inertia : float
        Relative standard uncertainty of the part's own inertia tensor about its CG (a fraction: 0.1 for 10 %).
    growth : float
        Mass growth allowance, a fraction of the mass (a predicted change, not an uncertainty).
    origin : str
        Where the values came from ("file, item" or "default for <maturity>"), for messages and reports.
    """

    mass: float
    cg: tuple[float, float, float]
    inertia: float
    growth: float
    origin: str = ""

    def __post_init__(self) -> None:
        cg = tuple(float(v) for v in self.cg)
        if len(cg) != 3:
            raise UsageError(f"{self.origin or 'part uncertainty'}: cg needs three values (x, y, z)")
        object.__setattr__(self, "cg", cg)
        for name, value in (("mass", self.mass), ("inertia", self.inertia), ("growth", self.growth),
                            ("cg", min(cg))):
            if not (value >= 0.0 and np.isfinite(value)):
                raise UsageError(f"{self.origin or 'part uncertainty'}: {name} must be a finite value >= 0")


def central_partials(
    f: Callable[[Mapping[str, float]], float], x: Mapping[str, float], steps: Mapping[str, float]
) -> dict[str, float]:
    """∂f/∂x_k by central differences, for each key of ``steps``.

    Parameters
    ----------
    f : callable
        Takes a mapping of the inputs, returns a float.
    x : mapping
        The point (SI values).
    steps : mapping
        Step per input, in the input's unit (small against the input's own scale, large against round-off).

    Returns
    -------
    dict
        Input name → derivative (unit of f per unit of the input).

    References
    ----------
    GUM §5.1.3 (numerical sensitivity coefficients); central difference error O(h²).
    """
    out = {}
    for key, h in steps.items():
        up = dict(x)
        dn = dict(x)
        up[key] = x[key] + h
        dn[key] = x[key] - h
        out[key] = (f(up) - f(dn)) / (2.0 * h)
    return out


def rss(terms: Iterable[float]) -> float:
    """Root sum of squares (independent contributions, GUM §5.1.2)."""
    return float(np.sqrt(sum(float(t) ** 2 for t in terms)))
