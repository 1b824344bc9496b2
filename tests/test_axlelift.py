"""Axle-lift CG height: the ISO 10392 relation, the fit and its stated uncertainty, sensitivities, bad input."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from massmodel.core.model import Vehicle
from massmodel.core.uncertainty import Estimate
from massmodel.measure.axlelift import (
    angle_from_rise,
    cg_height_from_load_change,
    combine_heights,
    fit_line,
    lift_inputs,
    load_change,
    reduce_series,
)
from massmodel.measure.session import (
    CarGeometry,
    LiftDirection,
    LiftReading,
    LiftSeries,
    MeasurementFileError,
)

G0 = 9.80665  # m/s², standard gravity (NIST SP 811)


def test_round_trip_check_values():
    # docs/references.md §3 (V): m = 1000 kg, L = 2.5 m, h = 0.50 m, r_s = 0.30 m, theta = 20 deg -> dF = 285.546 N.
    theta = np.radians(20.0)
    df = load_change(1000.0 * G0, 2.5, 0.50, 0.30, theta)
    assert df == pytest.approx(285.546, abs=5e-4)
    assert cg_height_from_load_change(1000.0 * G0, 2.5, df, 0.30, theta) == pytest.approx(0.50, rel=1e-14)
    # the same in mass-equivalent kg, as massmodel carries loads
    assert load_change(1000.0, 2.5, 0.50, 0.30, theta) == pytest.approx(285.546 / G0, rel=2e-6)


def test_angle_from_rise():
    # sin(theta) = H / L (ISO 10392 geometry, docs/references.md §3)
    assert angle_from_rise(0.5 * 2.6, 2.6) == pytest.approx(np.pi / 6, rel=1e-15)
    with pytest.raises(ValueError, match="between 0 and the wheelbase"):
        angle_from_rise(2.7, 2.6)


def test_fit_line_standard_errors():
    # Simple linear regression (Montgomery & Runger, ch. 11, from memory), checked against scipy.stats.linregress.
    x = np.array([0.0, 0.1, 0.2, 0.3, 0.2, 0.1])
    y = np.array([500.0, 504.1, 507.8, 512.2, 508.1, 503.8])
    f = fit_line(x, y)
    ref = stats.linregress(x, y)
    assert f.slope == pytest.approx(ref.slope, rel=1e-12)
    assert f.intercept == pytest.approx(ref.intercept, rel=1e-12)
    assert f.slope_se == pytest.approx(ref.stderr, rel=1e-10)
    assert f.intercept_se == pytest.approx(ref.intercept_stderr, rel=1e-10)
    assert f.dof == 4


def series(angles=None, rises=None, loads=(), lifted="rear", level=(500.0, 700.0), directions=None,
           uncertainty=None, wheelbase=None, radius=None) -> LiftSeries:
    n = len(loads)
    directions = directions or [LiftDirection.LIFTING] * n
    readings = []
    for i in range(n):
        a = None if angles is None else angles[i]
        h = None if rises is None else rises[i]
        readings.append(LiftReading(a, h, float(loads[i]), directions[i], f"reading[{i}]"))
    return LiftSeries("test", lifted, level[0], level[1], tuple(readings), wheelbase, radius,
                      dict(uncertainty or {}), "", "s.toml: axle_lift 'test'")


def synthetic(h, angles, w_front=500.0, w_rear=700.0, L=2.6, r=0.3, noise=0.0, rng=None, lifted="rear"):
    """Loads on the axle on the scales; with noise, the level reading is noisy too (its error is returned)."""
    w = w_front + w_rear
    level = w_front if lifted == "rear" else w_rear
    loads = level + np.array([load_change(w, L, h, r, a) for a in angles])
    if noise:
        # the level reading is the first point of the same fit: its error shifts every load change
        loads = loads + rng.normal(scale=noise, size=loads.size) - rng.normal(scale=noise)
    return loads


ANGLES = np.radians([5.0, 10.0, 15.0, 20.0, 15.0, 10.0, 5.0])


def test_exact_data_gives_the_height_and_the_closed_form_sensitivities():
    h, L, r = 0.55, 2.6, 0.3
    loads = synthetic(h, ANGLES, L=L, r=r)
    res = reduce_series(series(angles=ANGLES, loads=loads), L, r)
    assert res.height.value == pytest.approx(h, rel=1e-12)
    assert res.point_heights.tolist() == pytest.approx([h] * 7, rel=1e-12)
    assert res.fit.residual_std == pytest.approx(0.0, abs=1e-9)
    # d h / d r_s = 1, d h / d L = (h - r_s) / L, d h / d W = -(h - r_s) / W (from h = r_s + L k / W)
    assert res.sensitivities["tyre_loaded_radius"] == pytest.approx(1.0, rel=1e-8)
    assert res.sensitivities["wheelbase"] == pytest.approx((h - r) / L, rel=1e-7)
    assert res.sensitivities["mass"] == pytest.approx(-(h - r) / 1200.0, rel=1e-6)


def test_angle_sensitivity_closed_form_at_one_angle():
    # One angle: h = r + L dF / (W tan theta) -> d h / d theta = -2 (h - r) / sin(2 theta).
    h, L, r, th = 0.5, 2.5, 0.3, np.radians(12.0)
    angles = np.full(3, th)
    res = reduce_series(series(angles=angles, loads=synthetic(h, angles, L=L, r=r)), L, r)
    assert res.sensitivities["angle"] == pytest.approx(-2 * (h - r) / np.sin(2 * th), rel=1e-6)


def test_rise_sensitivity_closed_form_at_one_rise():
    # theta = asin(H / L): d h / d H = (d h / d theta) / (L cos theta); and d h / d L gains the term through theta.
    h, L, r, rise = 0.5, 2.5, 0.3, 0.4
    th = np.arcsin(rise / L)
    rises = np.full(3, rise)
    res = reduce_series(series(rises=rises, loads=synthetic(h, np.full(3, th), L=L, r=r)), L, r)
    dh_dth = -2 * (h - r) / np.sin(2 * th)
    assert res.height.value == pytest.approx(h, rel=1e-12)
    assert res.sensitivities["rise"] == pytest.approx(dh_dth / (L * np.cos(th)), rel=1e-6)
    dth_dl = -rise / (L**2 * np.cos(th))
    assert res.sensitivities["wheelbase"] == pytest.approx((h - r) / L + dh_dth * dth_dl, rel=1e-6)


def test_noisy_synthetic_data_recovered_within_the_stated_uncertainty(rng):
    h = 0.55
    loads = synthetic(h, ANGLES, noise=0.3, rng=rng)
    res = reduce_series(series(angles=ANGLES, loads=loads), 2.6, 0.3)
    assert res.height.u is not None and res.height.u > 0.0
    assert abs(res.height.value - h) <= 3.0 * res.height.u
    lo, hi = res.interval95
    assert lo < res.height.value < hi
    assert hi - res.height.value == pytest.approx(stats.t.ppf(0.975, 6) * res.height.u, rel=1e-12)


def test_stated_uncertainty_has_the_right_coverage(rng):
    # Over many noisy data sets the fit's standard error covers the true height as often as Student's t says
    # (scipy.stats as the oracle): P(|h - h_true| <= se) = 2 F_t(1; dof) - 1.
    h, n_sets = 0.55, 800
    hits = 0
    for _ in range(n_sets):
        res = reduce_series(series(angles=ANGLES, loads=synthetic(h, ANGLES, noise=0.3, rng=rng)), 2.6, 0.3)
        hits += abs(res.height.value - h) <= res.height.u
    expected = 2 * stats.t.cdf(1.0, 6) - 1
    sigma = np.sqrt(expected * (1 - expected) / n_sets)
    assert abs(hits / n_sets - expected) < 4 * sigma


def test_front_lift_and_uncertainty_budget():
    h = 0.52
    loads = synthetic(h, ANGLES, lifted="front")
    s = series(angles=ANGLES, loads=loads, lifted="front", uncertainty={"angle": np.radians(0.1), "tyre_loaded_radius": 0.002})
    res = reduce_series(s, 2.6, 0.3)
    assert res.staying == "rear" and res.level_load == 700.0
    assert res.height.value == pytest.approx(h, rel=1e-12)
    assert res.budget["tyre_loaded_radius"] == pytest.approx(0.002, rel=1e-8)
    assert res.budget["angle"] == pytest.approx(abs(res.sensitivities["angle"]) * np.radians(0.1), rel=1e-12)
    assert res.height_total.u == pytest.approx(np.hypot(res.budget["angle"], 0.002), rel=1e-6)


def test_lifting_and_lowering_fitted_apart():
    up = np.radians([5.0, 10.0, 15.0, 20.0])
    down = np.radians([15.0, 10.0, 5.0])
    loads = np.concatenate([synthetic(0.55, up), synthetic(0.55, down) + 0.4])  # friction: lowering reads higher
    dirs = [LiftDirection.LIFTING] * 4 + [LiftDirection.LOWERING] * 3
    res = reduce_series(series(angles=np.concatenate([up, down]), loads=loads, directions=dirs), 2.6, 0.3)
    assert res.by_direction["lifting"].value == pytest.approx(0.55, rel=1e-12)
    assert res.by_direction["lowering"].value > 0.55


def test_combined_series_weighted_mean_with_a_shared_tyre_radius():
    # Weighted mean with weights 1/u^2 of the independent parts (Taylor, An Introduction to Error Analysis, §7.2,
    # from memory); the shared tyre radius is fully correlated and adds linearly (GUM §5.2), not averaged down.
    ua, ub, ur = np.radians(0.1), np.radians(0.2), 0.002
    a = reduce_series(series(angles=ANGLES, loads=synthetic(0.55, ANGLES),
                             uncertainty={"angle": ua, "tyre_loaded_radius": ur}), 2.6, 0.3)
    b = reduce_series(series(angles=ANGLES, loads=synthetic(0.56, ANGLES, lifted="front"), lifted="front",
                             uncertainty={"angle": ub, "tyre_loaded_radius": ur}), 2.6, 0.3)
    c = combine_heights([a, b])
    w1 = 1 / (a.sensitivities["angle"] * ua) ** 2
    w2 = 1 / (b.sensitivities["angle"] * ub) ** 2
    mean = (w1 * 0.55 + w2 * 0.56) / (w1 + w2)
    assert c.height.value == pytest.approx(mean, rel=1e-9)
    assert c.height.u == pytest.approx(np.sqrt(1 / (w1 + w2) + ur**2), rel=1e-6)
    assert c.common["tyre_loaded_radius"] == pytest.approx(ur, rel=1e-6)
    assert c.chi2 == pytest.approx((0.55 - mean) ** 2 * w1 + (0.56 - mean) ** 2 * w2, rel=1e-6)
    assert c.consistent is False  # 10 mm apart with millimetre uncertainties
    assert combine_heights([a]).height == Estimate(a.height_total.value, a.height_total.u)


def iso_vehicle(wheelbase=2.6):
    return Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), wheelbase, 1.5, 1.4, 0.0, -0.3)


def test_inconsistent_wheelbase_and_rise_errors():
    s = series(rises=[0.2, 0.4, 0.6], loads=[501, 502, 503], wheelbase=2.7, radius=0.3)
    with pytest.raises(MeasurementFileError) as info:
        lift_inputs(s, CarGeometry(), iso_vehicle(2.6), "s.toml")
    e = info.value
    assert (e.file, e.item, e.field) == ("s.toml", "axle_lift 'test'", "wheelbase")
    assert "inconsistent with the model's [vehicle] wheelbase 2600.0 mm" in e.message
    s = series(rises=[0.2, 0.4, 2.65], loads=[501, 502, 503], radius=0.3)
    with pytest.raises(MeasurementFileError) as info:
        lift_inputs(s, CarGeometry(wheelbase=2.6), None, "s.toml")
    assert info.value.field == "reading[2].rise" and "cannot exceed 1" in info.value.message
    with pytest.raises(MeasurementFileError) as info:
        lift_inputs(series(rises=[0.2, 0.4, 0.6], loads=[501, 502, 503]), CarGeometry(wheelbase=2.6), None, "s.toml")
    assert info.value.field == "tyre_loaded_radius"
    assert lift_inputs(series(rises=[0.2, 0.4, 0.6], loads=[1, 2, 3], radius=0.3), CarGeometry(), iso_vehicle(), "s") == (2.6, 0.3)
    with pytest.raises(MeasurementFileError) as info:  # the session's [car] against the model
        lift_inputs(series(rises=[0.2, 0.4, 0.6], loads=[1, 2, 3], radius=0.3), CarGeometry(wheelbase=2.64),
                    iso_vehicle(2.6), "s.toml")
    assert (info.value.item, info.value.field) == ("[car]", "wheelbase")


def test_uncertainty_of_an_unused_input_is_an_error():
    s = series(angles=ANGLES, loads=synthetic(0.55, ANGLES), uncertainty={"rise": 0.001})
    with pytest.raises(MeasurementFileError) as info:
        reduce_series(s, 2.6, 0.3)
    assert (info.value.item, info.value.field) == ("axle_lift 'test'", "uncertainty.rise")
