"""Moments of inertia from pendulum tests: bifilar, trifilar and compound pendulum reductions.

* Bifilar: the body hangs on two parallel vertical wires of length L, a distance D apart, with its CG midway; it
  twists about the vertical axis between the wires. ``I = m g T² D² / (16 π² L)``.
* Trifilar: a platform hangs on three equal parallel wires of length L at radius R from the axis; body and
  platform twist together. ``I = m g R² T² / (4 π² L)``, platform included, then the platform's own inertia
  (swung empty) subtracted.
* Compound: the body (on a swing frame) swings about a fixed horizontal pivot axis with its CG a distance d below
  it. ``I_pivot = m g d T² / (4 π²)``; ``I_cg = I_pivot − m d²``; with a frame, ``m d`` is the sum of body and frame
  first moments and the frame's pivot inertia (swung empty) is subtracted before the parallel-axis step. A finite
  swing amplitude θ0 lengthens the period by ``2 K(sin²(θ0/2)) / π`` (complete elliptic integral of the first kind,
  exact for a rigid body about a fixed axis); the measured periods are divided by that factor.

``m`` is the whole swinging mass (body plus fixture), T the period of one full oscillation, g the local gravity
(standard gravity 9.80665 m/s² unless the session gives ``local_gravity``). SI throughout: kg, m, s, kg·m².

References
----------
.. [1] Jardin & Mueller, "Optimized measurements of UAV mass moment of inertia with a bifilar pendulum", AIAA
   2007-6822 (bifilar formula).
.. [2] Korr & Hyer, "A trifilar pendulum for the determination of moments of inertia", Frankford Arsenal report
   R-1653 (1962) (trifilar formula; platform included, then subtracted).
.. [3] Gracey, "The experimental determination of the moments of inertia of airplanes by a simplified
   compound-pendulum method", NACA TN 1629 (1948) (compound pendulum; formula from memory).
.. [4] Landau & Lifshitz, *Mechanics*, 3rd ed. (1976), §11 problem 1 (period of a pendulum at finite amplitude,
   ``T = 4 sqrt(l/g) K(sin(θ0/2))``) — from memory.
.. [5] JCGM 100:2008 (GUM), §4.2 (standard uncertainty of a mean) and §5.1 (propagation).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core.massprops import inertia_about_point
from massmodel.core.model import Model
from massmodel.core.uncertainty import Estimate, central_partials, rss

from .session import Comparison, MeasurementFileError, PendulumKind, PendulumTest

__all__ = [
    "bifilar_inertia",
    "trifilar_inertia",
    "compound_inertia_about_pivot",
    "amplitude_factor",
    "PendulumResult",
    "ModelComparison",
    "reduce_pendulum",
    "compare_with_model",
]

FloatArray = npt.NDArray[np.float64]
_TWO_PI_SQ = 4.0 * np.pi**2


def bifilar_inertia(mass: float, period: float, wire_spacing: float, wire_length: float, gravity: float) -> float:
    """Inertia about the vertical axis midway between two wires, kg·m².

    Parameters
    ----------
    mass : float
        Swinging mass, kg.
    period : float
        s.
    wire_spacing : float
        D, m.
    wire_length : float
        L, m.
    gravity : float
        m/s².

    Returns
    -------
    float
        ``m g T² D² / (16 π² L)``.

    References
    ----------
    Jardin & Mueller, AIAA 2007-6822 (module References [1]).
    """
    return mass * gravity * period**2 * wire_spacing**2 / (16.0 * np.pi**2 * wire_length)


def trifilar_inertia(mass: float, period: float, wire_radius: float, wire_length: float, gravity: float) -> float:
    """Inertia about the platform's vertical axis, kg·m²: ``m g R² T² / (4 π² L)``.

    References
    ----------
    Korr & Hyer, Frankford Arsenal R-1653 (1962) (module References [2]).
    """
    return mass * gravity * wire_radius**2 * period**2 / (_TWO_PI_SQ * wire_length)


def compound_inertia_about_pivot(first_moment: float, period: float, gravity: float) -> float:
    """Inertia about the pivot axis, kg·m²: ``(m d) g T² / (4 π²)``.

    Parameters
    ----------
    first_moment : float
        ``m d``, kg·m: the swinging mass times the distance from the pivot axis to its CG (a sum over body and frame).
    period : float
        Small-swing period, s.
    gravity : float
        m/s².

    References
    ----------
    Gracey, NACA TN 1629 (1948) (module References [3]).
    """
    return first_moment * gravity * period**2 / _TWO_PI_SQ


def amplitude_factor(amplitude: float) -> float:
    """Period at amplitude θ0 over the small-swing period: ``2 K(sin²(θ0/2)) / π`` (scipy's ``ellipk(m)``, m = k²).

    References
    ----------
    Landau & Lifshitz, *Mechanics*, §11 (module References [4]).
    """
    from scipy.special import ellipk

    return float(2.0 * ellipk(np.sin(0.5 * amplitude) ** 2) / np.pi)


def _mean(periods: FloatArray) -> Estimate:
    n = periods.size
    return Estimate(float(periods.mean()), float(periods.std(ddof=1) / np.sqrt(n)) if n >= 2 else None)


@dataclass(frozen=True, slots=True)
class PendulumResult:
    """Reduction of one pendulum test.

    Attributes
    ----------
    name : str
    kind : PendulumKind
    period : Estimate
        Mean measured period, s, with its standard error (n ≥ 2).
    count : int
        Number of periods.
    fixture_period : Estimate or None
        Mean period of the fixture swung empty, s.
    inertia_system : float
        Body and fixture about the pendulum axis (the pivot axis for a compound pendulum), kg·m².
    inertia_fixture : float or None
        Fixture about the same axis, kg·m².
    inertia_axis : Estimate
        Body alone about the pendulum axis (the pivot axis for a compound pendulum), kg·m².
    inertia_cg : Estimate or None
        Compound pendulum: body about the parallel axis through its CG, kg·m².
    sensitivities : dict
        Input → ∂I/∂input of the headline result (``inertia_cg`` for compound, else ``inertia_axis``), SI.
    budget : dict
        Input → contribution ``|∂I/∂x| u_x``, kg·m².
    gravity : float
        m/s².
    gravity_given : bool
        Whether the session gave a local gravity (else standard gravity).
    amplitude_factor : float or None
        Compound pendulum: the factor the periods were divided by.
    """

    name: str
    kind: PendulumKind
    period: Estimate
    count: int
    fixture_period: Estimate | None
    inertia_system: float
    inertia_fixture: float | None
    inertia_axis: Estimate
    inertia_cg: Estimate | None
    sensitivities: dict[str, float]
    budget: dict[str, float]
    gravity: float
    gravity_given: bool
    amplitude_factor: float | None = None
    origin: str = ""

    @property
    def headline(self) -> Estimate:
        """The result compared with a model about the CG axis: ``inertia_cg`` (compound) or ``inertia_axis``."""
        return self.inertia_cg if self.inertia_cg is not None else self.inertia_axis


def _reduction(test: PendulumTest, p: Mapping[str, float]) -> tuple[float, float | None, float, float | None]:
    """(system, fixture, body about the axis, body about its CG or None) for inputs ``p`` (see reduce_pendulum)."""
    g = test.gravity
    fx = test.fixture
    m_b = p["body_mass"]
    m_f = p.get("fixture_mass", 0.0)
    t = p["period"]
    t_f = p.get("fixture_period")
    if test.kind is PendulumKind.COMPOUND:
        d_b = p["pivot_to_cg"]
        d_f = fx.pivot_to_cg if fx is not None and fx.pivot_to_cg is not None else 0.0
        system = compound_inertia_about_pivot(m_b * d_b + m_f * d_f, t, g)
        fixture = None
        if fx is not None:
            fixture = fx.inertia if fx.inertia is not None else compound_inertia_about_pivot(m_f * d_f, t_f or 0.0, g)
        body = system - (fixture or 0.0)
        return system, fixture, body, body - m_b * d_b**2
    if test.kind is PendulumKind.BIFILAR:
        def law(m: float, period: float) -> float:
            return bifilar_inertia(m, period, p["wire_spacing"], p["wire_length"], g)
    else:
        def law(m: float, period: float) -> float:
            return trifilar_inertia(m, period, p["wire_radius"], p["wire_length"], g)
    system = law(m_b + m_f, t)
    fixture = None
    if fx is not None:
        fixture = fx.inertia if fx.inertia is not None else law(m_f, t_f or 0.0)
    return system, fixture, system - (fixture or 0.0), None


def reduce_pendulum(test: PendulumTest) -> PendulumResult:
    """Reduce one pendulum test: inertia of the body with the fixture subtracted, its uncertainty and sensitivities.

    The period's standard uncertainty is ``sqrt(s²/n + u_period²)`` (the scatter of the timed periods and the
    stated timing uncertainty); the fixture's period the same. Sensitivities are central differences of the whole
    reduction (GUM §5.1.3).

    Raises
    ------
    MeasurementFileError
        When the fixture's inertia is not below the total, or the CG inertia of a compound pendulum comes out
        negative (inconsistent pivot distance, masses or periods).
    """
    fx = test.fixture
    factor = amplitude_factor(test.amplitude) if test.amplitude is not None else None
    periods = test.periods / (factor or 1.0)
    period = _mean(periods)
    fperiod = None
    if fx is not None and fx.periods is not None:
        fperiod = _mean(fx.periods / (factor or 1.0))
    x0: dict[str, float] = {"body_mass": test.body_mass, "period": period.value}
    for key in ("wire_length", "wire_spacing", "wire_radius", "pivot_to_cg"):
        value = getattr(test, key)
        if value is not None:
            x0[key] = value
    if fx is not None:
        x0["fixture_mass"] = fx.mass
        if fperiod is not None:
            x0["fixture_period"] = fperiod.value
    system, fixture, body, body_cg = _reduction(test, x0)
    file, item = test.origin.split(": ", 1)
    if fixture is not None and not body > 0.0:
        raise MeasurementFileError(
            file, item, "fixture",
            f"the fixture's inertia {fixture:.5g} kg*m^2 is not below the total {system:.5g} kg*m^2 about the same "
            "axis: check the fixture's mass and periods",
        )
    if body_cg is not None and not body_cg > 0.0:
        raise MeasurementFileError(
            file, item, "pivot_to_cg",
            f"the inertia about the body's CG comes out {body_cg:.5g} kg*m^2 (I_pivot {body:.5g} - m d^2 "
            f"{body - body_cg:.5g}): the pivot distance, masses and periods are inconsistent",
        )

    def headline(p: Mapping[str, float]) -> float:
        r = _reduction(test, p)
        return r[3] if r[3] is not None else r[2]

    def about_axis(p: Mapping[str, float]) -> float:
        return _reduction(test, p)[2]

    steps = {k: (1e-6 if k in ("period", "fixture_period") else 1e-6 * max(abs(v), 1.0)) for k, v in x0.items()}
    sens = central_partials(headline, x0, steps)
    u_inputs: dict[str, float] = {k: v for k, v in test.uncertainty.items()}
    u_period_stated = test.uncertainty.get("period", 0.0)
    u_inputs["period"] = rss([period.u or 0.0, u_period_stated])
    if fperiod is not None:
        u_inputs["fixture_period"] = rss([fperiod.u or 0.0, u_period_stated])
    budget = {k: abs(sens[k]) * u for k, u in u_inputs.items() if k in sens and u > 0.0}
    known = period.u is not None or bool(test.uncertainty)
    u_headline = rss(budget.values()) if known else None
    u_axis = u_headline
    if body_cg is not None and known:
        sens_axis = central_partials(about_axis, x0, steps)
        u_axis = rss(abs(sens_axis[k]) * u for k, u in u_inputs.items() if k in sens_axis)

    return PendulumResult(
        name=test.name, kind=test.kind, period=period, count=int(periods.size), fixture_period=fperiod,
        inertia_system=system, inertia_fixture=fixture,
        inertia_axis=Estimate(body, u_axis),
        inertia_cg=Estimate(body_cg, u_headline) if body_cg is not None else None,
        sensitivities=sens, budget=budget, gravity=test.gravity, gravity_given=test.gravity_given,
        amplitude_factor=factor, origin=test.origin,
    )


@dataclass(frozen=True, slots=True)
class ModelComparison:
    """The model's inertia about the test's axis beside the measured one.

    Attributes
    ----------
    axis : (3,) float
        Unit vector, model axes.
    axis_name : str
    point : (3,) float
        A point of the axis, model frame, m (the selection's CG when the test compares about the CG).
    about_cg : bool
    groups, exclude : tuple of str
    model_mass : float
        Mass of the selected components, kg (beside the test's body mass).
    model_inertia : float
        ``n · I_P · n``, kg·m².
    measured : Estimate
        kg·m².
    model_pivot_to_cg : float or None
        Compound pendulum compared about a point: the distance from that axis to the model CG, m.
    """

    axis: FloatArray
    axis_name: str
    point: FloatArray
    about_cg: bool
    groups: tuple[str, ...]
    exclude: tuple[str, ...]
    model_mass: float
    model_inertia: float
    measured: Estimate
    model_pivot_to_cg: float | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def difference(self) -> float:
        """Measured minus model, kg·m²."""
        return self.measured.value - self.model_inertia

    @property
    def relative(self) -> float:
        """(measured − model) / model."""
        return self.difference / self.model_inertia if self.model_inertia else float("nan")


def compare_with_model(result: PendulumResult, test: PendulumTest, model: Model) -> ModelComparison:
    """The model's inertia about the axis of the test (through the selection's CG or a given point).

    Uses :func:`massmodel.core.massprops.inertia_about_point` and the axis direction ``n``: ``I_axis = n · I_P · n``.
    About the CG the headline result is compared (the CG inertia of a compound pendulum); about a point the body's
    inertia about the pendulum axis (the pivot axis of a compound pendulum).

    Raises
    ------
    MeasurementFileError
        When the test has no ``compare`` table, names a vehicle direction for a model without [vehicle], or selects
        no components.
    """
    file, item = test.origin.split(": ", 1)
    cmp: Comparison | None = test.compare
    if cmp is None:
        raise MeasurementFileError(file, item, "compare", "is missing: say which axis of the model to compare with")
    if cmp.axis is None:
        if model.vehicle is None:
            raise MeasurementFileError(file, item, "compare.axis",
                                       f"'{cmp.axis_name}' needs a model with a [vehicle] section; give [x, y, z]")
        axis = np.asarray(getattr(model.vehicle, cmp.axis_name), dtype=float)
    else:
        axis = cmp.axis
    comps = model.select(cmp.groups, cmp.exclude)
    if not comps:
        raise MeasurementFileError(file, item, "compare.groups",
                                   f"selects no components of the model {model.source or model.name}")
    mp = model.mass_properties(cmp.groups, cmp.exclude)
    about_cg = cmp.through is None
    point = mp.center if about_cg else np.asarray(cmp.through, dtype=float)
    tensor = mp.inertia if about_cg else inertia_about_point(mp, point)
    value = float(axis @ tensor @ axis)
    measured = result.headline if about_cg else result.inertia_axis
    pivot_d = None
    notes: list[str] = []
    if not about_cg and test.kind is PendulumKind.COMPOUND:
        r = mp.center - point
        pivot_d = float(np.linalg.norm(r - (r @ axis) * axis))
    if abs(mp.mass - test.body_mass) > 0.01 * test.body_mass:
        notes.append(f"the selected model mass {mp.mass:.3f} kg differs from the tested body_mass "
                     f"{test.body_mass:.3f} kg by more than 1 %")
    return ModelComparison(
        axis=axis, axis_name=cmp.axis_name, point=np.asarray(point, dtype=float), about_cg=about_cg,
        groups=cmp.groups, exclude=cmp.exclude, model_mass=mp.mass, model_inertia=value, measured=measured,
        model_pivot_to_cg=pivot_d, notes=tuple(notes),
    )
