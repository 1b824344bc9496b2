"""CG height from an axle-lift test (ISO 10392:2011 procedure).

One axle is lifted in steps (at least three) and lowered again while the other stays on the scales; the suspension
is blocked so that the body does not move on its springs. Tilting the car by θ moves load onto the axle on the
scales in proportion to tan θ:

    ΔF = W (h − r_s) tan θ / L,   so   h = r_s + L (F′ − F) / (W tan θ)

with F, F′ the load on the axle that stays on the scales (level, lifted), W the total weight, L the level
wheelbase, r_s the static loaded tyre radius (wheel-centre height, the same front and rear) and sin θ = H / L for a
rise H of the lifted wheel centres. The CG height comes from a least-squares line of load against tan θ through
all readings and the level reading (the slope is ``W (h − r_s) / L``), with the standard error of the slope; the
per-reading values ``h_i`` show the scatter. Loads are mass-equivalent kg; lengths m; angles rad.

References
----------
.. [1] ISO 10392:2011, *Road vehicles with two axles — Determination of centre of gravity* (procedure: lift one
   axle in at least three steps and lower it again; suspension blocked; plot the load against tan θ).
.. [2] Jazar, *Vehicle Dynamics: Theory and Application*, Springer (2008), eq. 2.32 (the same relation, as
   transcribed in course notes).
.. [3] Montgomery & Runger, *Applied Statistics and Probability for Engineers*, ch. 11 (simple linear regression:
   ``se(b) = s / sqrt(Σ(x − x̄)²)``, ``s² = Σ r² / (n − 2)``) — from memory.
.. [4] JCGM 100:2008 (GUM), §5.1 (sensitivity coefficients, propagation of uncertainty).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Vehicle
from massmodel.core.uncertainty import Estimate, central_partials, rss

from .session import CarGeometry, LiftDirection, LiftSeries, MeasurementFileError

__all__ = [
    "load_change",
    "cg_height_from_load_change",
    "angle_from_rise",
    "LineFit",
    "fit_line",
    "LiftResult",
    "CombinedHeight",
    "lift_inputs",
    "reduce_series",
    "combine_heights",
    "SENSITIVITY_UNITS",
    "COMMON_INPUTS",
]

FloatArray = npt.NDArray[np.float64]

#: How sensitivities are shown: input → (display unit of the input, factor from SI to it).
SENSITIVITY_UNITS: dict[str, tuple[str, float]] = {
    "angle": ("deg", np.pi / 180.0),  # per degree of angle error (SI derivative × rad per deg)
    "rise": ("mm", 1e-3),
    "wheelbase": ("mm", 1e-3),
    "tyre_loaded_radius": ("mm", 1e-3),
    "mass": ("kg", 1.0),
}


def load_change(weight: float, wheelbase: float, cg_height: float, tyre_radius: float, angle: float) -> float:
    """Load moved onto the axle on the scales when the other is lifted by ``angle``.

    Parameters
    ----------
    weight : float
        Total weight W (N, or mass-equivalent kg; the result has the same unit).
    wheelbase : float
        Level wheelbase L, m.
    cg_height : float
        CG height above the ground h, m.
    tyre_radius : float
        Static loaded tyre radius r_s, m.
    angle : float
        Lift angle θ, rad.

    Returns
    -------
    float
        ``ΔF = W (h − r_s) tan θ / L``.

    References
    ----------
    ISO 10392:2011; Jazar (2008), eq. 2.32 (module References).
    """
    return weight * (cg_height - tyre_radius) * float(np.tan(angle)) / wheelbase


def cg_height_from_load_change(
    weight: float, wheelbase: float, delta_load: float, tyre_radius: float, angle: float
) -> float:
    """``h = r_s + L ΔF / (W tan θ)``, m (the inverse of :func:`load_change`)."""
    return tyre_radius + wheelbase * delta_load / (weight * float(np.tan(angle)))


def angle_from_rise(rise: float | FloatArray, wheelbase: float) -> float | FloatArray:
    """Lift angle from the rise H of the lifted wheel centres: ``θ = arcsin(H / L)``, rad.

    Raises
    ------
    ValueError
        When ``H ≥ L`` (no such tilt).
    """
    h = np.asarray(rise, dtype=float)
    if np.any(h >= wheelbase) or np.any(h <= 0.0):
        raise UsageError(f"a rise must lie between 0 and the wheelbase {wheelbase * 1e3:.1f} mm (sin θ = H / L)")
    out = np.arcsin(h / wheelbase)
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True, slots=True)
class LineFit:
    """Least-squares line ``y = intercept + slope x`` with standard errors (None with no degrees of freedom)."""

    slope: float
    intercept: float
    slope_se: float | None
    intercept_se: float | None
    residual_std: float | None
    dof: int
    residuals: FloatArray


def fit_line(x: npt.ArrayLike, y: npt.ArrayLike) -> LineFit:
    """Ordinary least squares of ``y`` on ``x`` with intercept.

    References
    ----------
    Montgomery & Runger, ch. 11 (module References [3]).
    """
    xa = np.asarray(x, dtype=float)
    ya = np.asarray(y, dtype=float)
    n = xa.size
    if n < 2 or np.ptp(xa) == 0.0:
        raise UsageError("a line fit needs at least two different x values")
    xm, ym = xa.mean(), ya.mean()
    sxx = float(np.sum((xa - xm) ** 2))
    slope = float(np.sum((xa - xm) * (ya - ym)) / sxx)
    intercept = float(ym - slope * xm)
    res = ya - (intercept + slope * xa)
    dof = n - 2
    if dof < 1:
        return LineFit(slope, intercept, None, None, None, dof, res)
    s = float(np.sqrt(np.sum(res**2) / dof))
    return LineFit(slope, intercept, s / np.sqrt(sxx), s * float(np.sqrt(1.0 / n + xm**2 / sxx)), s, dof, res)


@dataclass(frozen=True, slots=True)
class LiftResult:
    """The CG height from one axle-lift series.

    Attributes
    ----------
    name, lifted, staying : str
    wheelbase, tyre_radius : float
        Inputs used, m.
    total_mass, level_load : float
        W and the level load F on the axle on the scales, kg.
    angles : (n,) float
        Lift angles, rad (from the rises where the rises were given).
    loads : (n,) float
        Loads on the axle on the scales, kg.
    directions : tuple of LiftDirection
    fit : LineFit
        Load (kg) against tan θ, level reading included.
    height : Estimate
        From the fit, standard error of the fit, m above the ground.
    height_total : Estimate
        The same with the stated input uncertainties added (root sum of squares), m.
    interval95 : (float, float) or None
        95 % interval of the fit part (Student t with the fit's degrees of freedom), m.
    point_heights : (n,) float
        ``h_i`` of each reading, m.
    by_direction : dict
        'lifting' / 'lowering' → Estimate of h from the readings taken that way (with the level reading), m.
    sensitivities : dict
        Input → ∂h/∂input, SI (m per rad, m per m, m per kg); see :data:`SENSITIVITY_UNITS`.
    budget : dict
        Input → contribution ``|∂h/∂x| u_x`` of the stated uncertainty, m.
    origin : str
    """

    name: str
    lifted: str
    staying: str
    wheelbase: float
    tyre_radius: float
    total_mass: float
    level_load: float
    angles: FloatArray
    loads: FloatArray
    directions: tuple[LiftDirection, ...]
    fit: LineFit
    height: Estimate
    height_total: Estimate
    interval95: tuple[float, float] | None
    point_heights: FloatArray
    by_direction: dict[str, Estimate]
    sensitivities: dict[str, float]
    budget: dict[str, float] = field(default_factory=dict)
    origin: str = ""

    @property
    def point_scatter(self) -> float | None:
        """Sample standard deviation of the per-reading heights, m (None for one reading)."""
        return float(np.std(self.point_heights, ddof=1)) if self.point_heights.size > 1 else None


def lift_inputs(
    series: LiftSeries, car: CarGeometry, vehicle: Vehicle | None, session_file: str
) -> tuple[float, float]:
    """Wheelbase and loaded tyre radius for a series: its own values, else the session's [car], else the model's.

    A series wheelbase must agree with [car] or the model, and [car] with the model, within the [car] tolerance.

    Raises
    ------
    MeasurementFileError
        Naming the file, the series and the field.
    """
    item = series.origin.split(": ", 1)[-1]
    if car.wheelbase is not None and vehicle is not None and abs(car.wheelbase - vehicle.wheelbase) > car.tolerance:
        raise MeasurementFileError(
            session_file, "[car]", "wheelbase",
            f"{car.wheelbase * 1e3:.1f} mm is inconsistent with the model's [vehicle] wheelbase "
            f"{vehicle.wheelbase * 1e3:.1f} mm (differs by {abs(car.wheelbase - vehicle.wheelbase) * 1e3:.1f} mm, "
            f"tolerance {car.tolerance * 1e3:.1f} mm)",
        )
    other = car.wheelbase if car.wheelbase is not None else (vehicle.wheelbase if vehicle is not None else None)
    other_name = "[car] wheelbase" if car.wheelbase is not None else "the model's [vehicle] wheelbase"
    if series.wheelbase is not None:
        if other is not None and abs(series.wheelbase - other) > car.tolerance:
            raise MeasurementFileError(
                session_file, item, "wheelbase",
                f"{series.wheelbase * 1e3:.1f} mm is inconsistent with {other_name} {other * 1e3:.1f} mm "
                f"(differs by {abs(series.wheelbase - other) * 1e3:.1f} mm, tolerance {car.tolerance * 1e3:.1f} mm)",
            )
        wheelbase = series.wheelbase
    elif other is not None:
        wheelbase = other
    else:
        raise MeasurementFileError(session_file, item, "wheelbase",
                                   "is missing (give it here or in [car], or name a model with a [vehicle])")
    radius = series.tyre_loaded_radius if series.tyre_loaded_radius is not None else car.tyre_loaded_radius
    if radius is None:
        raise MeasurementFileError(session_file, item, "tyre_loaded_radius",
                                   "is missing (the static loaded radius of the tyres; give it here or in [car])")
    if radius >= wheelbase:
        raise MeasurementFileError(session_file, item, "tyre_loaded_radius",
                                   f"{radius * 1e3:.1f} mm is not below the wheelbase {wheelbase * 1e3:.1f} mm")
    for r in series.readings:
        if r.rise is not None and r.rise >= wheelbase:
            raise MeasurementFileError(
                session_file, item, f"{r.field}.rise",
                f"a rise of {r.rise * 1e3:.1f} mm is inconsistent with the wheelbase {wheelbase * 1e3:.1f} mm "
                "(sin θ = rise / wheelbase cannot exceed 1): check the rise and the wheelbase",
            )
    return wheelbase, radius


def _heights(
    tan: FloatArray, loads: FloatArray, level: float, weight: float, wheelbase: float, radius: float
) -> tuple[LineFit, float]:
    fit = fit_line(np.concatenate([[0.0], tan]), np.concatenate([[level], loads]))
    return fit, radius + wheelbase * fit.slope / weight


def reduce_series(series: LiftSeries, wheelbase: float, tyre_radius: float) -> LiftResult:
    """Reduce one axle-lift series to the CG height with its uncertainty and sensitivities.

    Parameters
    ----------
    series : LiftSeries
        Readings (angles or rises), level loads, stated input uncertainties.
    wheelbase : float
        Level wheelbase L, m (from :func:`lift_inputs`).
    tyre_radius : float
        Static loaded tyre radius r_s, m.

    Returns
    -------
    LiftResult

    Notes
    -----
    Sensitivities are central differences of the whole reduction (GUM §5.1.3): 'angle' shifts every given angle by
    the same amount (an inclinometer offset), 'rise' every given rise; 'wheelbase' also changes the angles found
    from rises; 'mass' changes W alone. With one angle given directly they equal the closed forms
    ``∂h/∂r_s = 1``, ``∂h/∂L = (h − r_s)/L``, ``∂h/∂θ = −2 (h − r_s)/sin 2θ``, ``∂h/∂W = −(h − r_s)/W``.
    """
    staying = series.staying
    level = series.level_front if staying == "front" else series.level_rear
    weight = series.level_front + series.level_rear
    loads = np.array([r.load for r in series.readings])
    given_angle = np.array([r.angle if r.angle is not None else np.nan for r in series.readings])
    given_rise = np.array([r.rise if r.rise is not None else np.nan for r in series.readings])
    uses_angle = bool(np.any(np.isfinite(given_angle)))
    uses_rise = bool(np.any(np.isfinite(given_rise)))
    item = series.origin.split(": ", 1)[-1]
    file = series.origin.split(": ", 1)[0]
    for key, used in (("angle", uses_angle), ("rise", uses_rise)):
        if key in series.uncertainty and not used:
            raise MeasurementFileError(file, item, f"uncertainty.{key}",
                                       f"no reading gives a {key}, so its uncertainty does not apply")

    def angles_of(p: Mapping[str, float]) -> FloatArray:
        th = given_angle + p.get("angle", 0.0)
        if uses_rise:
            rises = given_rise + p.get("rise", 0.0)
            mask = np.isfinite(rises)
            th = np.where(mask, np.arcsin(np.clip(np.where(mask, rises, 0.0) / p["wheelbase"], -1.0, 1.0)), th)
        return th

    def height_of(p: Mapping[str, float]) -> float:
        return _heights(np.tan(angles_of(p)), loads, level, p["mass"], p["wheelbase"], p["tyre_loaded_radius"])[1]

    x0 = {"angle": 0.0, "rise": 0.0, "wheelbase": wheelbase, "tyre_loaded_radius": tyre_radius, "mass": weight}
    angles = angles_of(x0)
    tan = np.tan(angles)
    fit, h = _heights(tan, loads, level, weight, wheelbase, tyre_radius)
    se = wheelbase * fit.slope_se / weight if fit.slope_se is not None else None
    interval = None
    if se is not None:
        from scipy import stats

        k = float(stats.t.ppf(0.975, fit.dof))
        interval = (h - k * se, h + k * se)
    steps = {"wheelbase": 1e-5, "tyre_loaded_radius": 1e-5, "mass": 1e-3}
    if uses_angle:
        steps["angle"] = 1e-6
    if uses_rise:
        steps["rise"] = 1e-6
    sens = central_partials(height_of, x0, steps)
    budget = {k: abs(sens[k]) * u for k, u in series.uncertainty.items()}
    total_u = rss([se or 0.0, *budget.values()]) if (se is not None or budget) else None
    point = tyre_radius + wheelbase * (loads - level) / (weight * tan)
    by_dir: dict[str, Estimate] = {}
    dirs = tuple(r.direction for r in series.readings)
    for d in LiftDirection:
        mask = np.array([x is d for x in dirs])
        if mask.sum() >= 2 and mask.sum() < len(dirs):
            f_d, h_d = _heights(tan[mask], loads[mask], level, weight, wheelbase, tyre_radius)
            by_dir[d.value] = Estimate(h_d, wheelbase * f_d.slope_se / weight if f_d.slope_se is not None else None)
    return LiftResult(
        name=series.name, lifted=series.lifted, staying=staying, wheelbase=wheelbase, tyre_radius=tyre_radius,
        total_mass=weight, level_load=level, angles=angles, loads=loads, directions=dirs, fit=fit,
        height=Estimate(h, se), height_total=Estimate(h, total_u), interval95=interval, point_heights=point,
        by_direction=by_dir, sensitivities=sens, budget=budget, origin=series.origin,
    )


#: Inputs shared by every series of a session (one tyre radius, one wheelbase, one set of scales): their errors
#: shift all series alike, so they are not averaged down when series are combined. Angles and rises are read per
#: series and treated as independent.
COMMON_INPUTS = ("tyre_loaded_radius", "wheelbase", "mass")


@dataclass(frozen=True, slots=True)
class CombinedHeight:
    """CG height from several series.

    The series are weighted by ``1/u_i²`` with ``u_i`` their independent uncertainty (fit and per-series inputs);
    the shared inputs (:data:`COMMON_INPUTS`) are added afterwards as fully correlated terms. ``chi2`` =
    Σ ((h_i − h̄)/u_i)² with ``len(results) − 1`` degrees of freedom: well above that number, the series disagree
    by more than their independent uncertainties.
    """

    height: Estimate
    chi2: float | None
    dof: int
    common: dict[str, float] = field(default_factory=dict)

    @property
    def consistent(self) -> bool | None:
        """Whether chi² stays below its 99 % point (None for one series or unknown uncertainties)."""
        if self.chi2 is None or self.dof < 1:
            return None
        from scipy import stats

        return bool(self.chi2 <= float(stats.chi2.ppf(0.99, self.dof)))


def combine_heights(results: Sequence[LiftResult]) -> CombinedHeight:
    """Weighted mean of the series' CG heights with shared inputs treated as fully correlated.

    References
    ----------
    Taylor, *An Introduction to Error Analysis*, 2nd ed. (1997), §7.2 (weighted average, ``u = 1/sqrt(Σ w)``) —
    from memory; GUM §5.2 (correlated inputs: fully correlated contributions add linearly).
    """
    if not results:
        raise UsageError("no axle-lift series to combine")
    if len(results) == 1:
        r = results[0]
        return CombinedHeight(r.height_total, None, 0,
                              {k: v for k, v in r.budget.items() if k in COMMON_INPUTS})
    hs = np.array([r.height.value for r in results])
    indep = []
    for r in results:
        if r.height.u is None:
            return CombinedHeight(Estimate(float(hs.mean()), None), None, len(results) - 1)
        indep.append(rss([r.height.u, *(v for k, v in r.budget.items() if k not in COMMON_INPUTS)]))
    ua = np.array(indep)
    if np.any(ua == 0.0):
        return CombinedHeight(Estimate(float(hs.mean()), None), None, len(results) - 1)
    w = 1.0 / ua**2
    wn = w / w.sum()
    mean = float(np.sum(wn * hs))
    chi2 = float(np.sum(((hs - mean) / ua) ** 2))
    common: dict[str, float] = {}
    for key in COMMON_INPUTS:
        terms = [wn[i] * r.sensitivities[key] * (r.budget[key] / abs(r.sensitivities[key]))
                 for i, r in enumerate(results) if key in r.budget and r.sensitivities.get(key)]
        if terms:
            common[key] = abs(float(sum(terms)))
    u = rss([float(1.0 / np.sqrt(w.sum())), *common.values()])
    return CombinedHeight(Estimate(mean, u), chi2, len(results) - 1, common)
