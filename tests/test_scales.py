"""Corner-weight reduction against closed forms, a worked example and independent routes."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from massmodel.core.massprops import MassProperties
from massmodel.core.model import Vehicle
from massmodel.measure.scales import (
    Geometry,
    balance_from_corners,
    pad_offsets,
    ratio_with_uncertainty,
    reduce_weighings,
    resolve_geometry,
)
from massmodel.measure.session import CarGeometry, MeasurementFileError, Weighing, loads_session
from massmodel.vehicle.balance import static_balance

G0 = 9.80665  # m/s², standard gravity (NIST SP 811)


def weighing(loads, label="1", pads=None) -> Weighing:
    return Weighing(label, np.asarray(loads, dtype=float), pads, "", f"t: weighing '{label}'")


def geometry(wheelbase=2.6, tf=1.5, tr=1.4) -> Geometry:
    return Geometry(wheelbase, tf, tr, {"wheelbase": "test", "track_front": "test", "track_rear": "test"})


def iso_vehicle(wheelbase=2.6, tf=1.5, tr=1.4, station=0.0, ground=-0.3) -> Vehicle:
    return Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), wheelbase, tf, tr, station, ground)


def test_jazar_example_40_from_scale_readings_in_newton():
    # Jazar, Vehicle Dynamics: Theory and Application (Springer 2008), Ch. 2, Example 40 (docs/references.md §3):
    # l = 2.34 m, Fz1 = 2000 N, Fz2 = 1800 N per wheel -> a1 = 1.1084 m, a2 = 1.2316 m.
    s = loads_session('[session]\nname = "j"\n[[weighing]]\nreadings = ["2000 N", "2000 N", "1800 N", "1800 N"]\n')
    corners = reduce_weighings(s.weighings)
    bal = balance_from_corners(corners, geometry(wheelbase=2.34))
    assert bal.behind_front_axle.value == pytest.approx(1.1084, abs=5e-5)
    assert 2.34 - bal.behind_front_axle.value == pytest.approx(1.2316, abs=5e-5)
    assert bal.mass.value == pytest.approx(7600.0 / G0, rel=1e-12)
    assert bal.left_of_centre.value == pytest.approx(0.0, abs=1e-15)  # exactly 0 up to summation rounding
    assert bal.mass.u is None  # one weighing, no pad uncertainty


def test_closed_forms_for_cg_and_cross_weight():
    # Moments about the front axle line and about the centre plane (Jazar 2008, ch. 2, per side; equation numbers from memory):
    # a1 = L (RL + RR) / W, y = [tf (FL - FR) + tr (RL - RR)] / (2 W); cross = (FR + RL) / W.
    fl, fr, rl, rr = 92.4, 94.1, 126.8, 124.2
    w = fl + fr + rl + rr
    L, tf, tr = 2.62, 1.46, 1.42
    bal = balance_from_corners(reduce_weighings([weighing([fl, fr, rl, rr])]), geometry(L, tf, tr))
    assert bal.behind_front_axle.value == pytest.approx(L * (rl + rr) / w, rel=1e-14)
    assert bal.left_of_centre.value == pytest.approx((tf * (fl - fr) + tr * (rl - rr)) / (2 * w), rel=1e-13)
    assert bal.cross_fraction.value == pytest.approx((fr + rl) / w, rel=1e-14)
    assert bal.front_fraction.value == pytest.approx((fl + fr) / w, rel=1e-14)
    assert bal.left_fraction.value == pytest.approx((fl + rl) / w, rel=1e-14)


def test_cg_equals_the_moment_balance_over_the_contact_points():
    # Independent route: the load-weighted mean of the contact points (vector moment balance) is the CG's
    # ground projection (statics, common practice, no source).
    v = iso_vehicle(station=0.4)
    loads = np.array([101.0, 97.5, 131.2, 135.0])
    bal = balance_from_corners(reduce_weighings([weighing(loads)]), geometry(v.wheelbase, v.track_front, v.track_rear))
    proj = (loads[:, None] * v.contact_points()).sum(axis=0) / loads.sum()
    assert bal.station(v).value == pytest.approx(proj[0], rel=1e-13)
    assert bal.left_of_centre.value == pytest.approx(proj[1], abs=1e-15)


def test_round_trip_with_the_static_balance():
    # Corners of a point mass by the lever rule (massmodel.vehicle.balance) reduce back to its CG exactly, with no preload.
    v = iso_vehicle()
    mp = MassProperties.point(437.0, [-1.43, 0.021, 0.05])
    corners = static_balance(mp, v).corners
    bal = balance_from_corners(reduce_weighings([weighing(corners)]), geometry(v.wheelbase, v.track_front, v.track_rear))
    assert bal.station(v).value == pytest.approx(-1.43, rel=1e-13)
    assert bal.left_of_centre.value == pytest.approx(0.021, rel=1e-12)
    assert bal.wedge == pytest.approx(0.0, abs=1e-12)
    assert bal.no_preload_corners.tolist() == pytest.approx(corners.tolist(), rel=1e-13)


def test_diagonal_preload_pattern_is_recovered_and_leaves_the_cg_alone():
    # The statically indeterminate share of four loads: (w, -w, -w tf/tr, +w tf/tr) changes no force or moment.
    v = iso_vehicle()
    base = static_balance(MassProperties.point(430.0, [-1.5, -0.01, 0.0]), v).corners
    w = 2.3
    wedge = np.array([w, -w, -w * v.track_front / v.track_rear, w * v.track_front / v.track_rear])
    g = geometry(v.wheelbase, v.track_front, v.track_rear)
    bal0 = balance_from_corners(reduce_weighings([weighing(base)]), g)
    bal = balance_from_corners(reduce_weighings([weighing(base + wedge)]), g)
    assert bal.wedge == pytest.approx(w, rel=1e-12)
    assert bal.behind_front_axle.value == pytest.approx(bal0.behind_front_axle.value, rel=1e-14)
    assert bal.left_of_centre.value == pytest.approx(bal0.left_of_centre.value, rel=1e-11)
    assert bal.cross_fraction.value == pytest.approx(bal0.cross_fraction.value - w * (1 + 1.5 / 1.4) / 430.0, rel=1e-12)


def test_repeat_weighings_average_and_uncertainty():
    # MIL-W-3947B: actual weight = mean of independent weighings; GUM 4.2: u(mean) = s / sqrt(n).
    rows = np.array([[92.1, 94.0, 126.9, 124.0], [92.5, 93.8, 126.6, 124.4], [92.3, 94.3, 126.8, 124.1]])
    corners = reduce_weighings([weighing(r, str(i)) for i, r in enumerate(rows)], pad_uncertainty=0.1)
    assert corners.loads.tolist() == pytest.approx(rows.mean(axis=0).tolist(), rel=1e-14)
    s = rows.std(axis=0, ddof=1)
    assert corners.std.tolist() == pytest.approx(s.tolist(), rel=1e-12)
    assert corners.uncertainty.tolist() == pytest.approx(np.sqrt(s**2 / 3 + 0.01).tolist(), rel=1e-12)
    assert corners.total == pytest.approx(rows.sum(axis=1).mean(), rel=1e-14)
    assert corners.total_uncertainty == pytest.approx(float(np.sqrt(np.sum(s**2 / 3 + 0.01))), rel=1e-12)


def test_ratio_uncertainty_against_numerical_differentiation():
    # GUM 5.1.2 with sensitivities found numerically here (central differences, independent of the closed form).
    c = np.array([0.73, -0.73, 0.71, -0.71])
    f = np.array([92.0, 94.0, 127.0, 124.0])
    u = np.array([0.11, 0.2, 0.13, 0.09])
    est = ratio_with_uncertainty(c, f, u)
    grad = []
    for i in range(4):
        h = np.zeros(4)
        h[i] = 1e-5
        grad.append(((c @ (f + h)) / (f + h).sum() - (c @ (f - h)) / (f - h).sum()) / 2e-5)
    assert est.u == pytest.approx(float(np.sqrt(np.sum((np.array(grad) * u) ** 2))), rel=1e-7)


def test_pad_offsets_from_rotated_pads():
    # Additive model reading = F[corner] + b[pad]; with the pads rotated the offsets are identifiable (Σ b = 0).
    loads = np.array([92.0, 94.0, 127.0, 124.0])
    b = {"A": 0.3, "B": -0.1, "C": 0.05, "D": -0.25}
    order = ["A", "B", "C", "D"]
    pads, rows = [], []
    for k in range(3):
        p = [order[(c + k) % 4] for c in range(4)]
        pads.append(p)
        rows.append(loads + np.array([b[x] for x in p]))
    found = pad_offsets(np.array(rows), pads)
    assert found is not None
    assert [found[x] for x in order] == pytest.approx([b[x] for x in order], abs=1e-12)
    assert pad_offsets(np.array(rows), [order] * 3) is None  # pads never moved: not identifiable


def test_geometry_from_session_or_model_and_inconsistent_wheelbase():
    v = iso_vehicle(wheelbase=2.62, tf=1.46, tr=1.42)
    g = resolve_geometry(CarGeometry(wheelbase=2.625), v, "s.toml")
    assert (g.wheelbase, g.track_front, g.track_rear) == (2.625, 1.46, 1.42)
    assert g.source["wheelbase"] == "session [car]" and g.source["track_rear"] == "model [vehicle]"
    with pytest.raises(MeasurementFileError) as info:
        resolve_geometry(CarGeometry(wheelbase=2.65), v, "s.toml")
    e = info.value
    assert (e.file, e.item, e.field) == ("s.toml", "[car]", "wheelbase")
    assert "differs from the model's [vehicle] wheelbase 2620.0 mm by 30.0 mm" in e.message
    with pytest.raises(MeasurementFileError) as info:
        resolve_geometry(CarGeometry(wheelbase=2.6), None, "s.toml")
    assert info.value.field == "track_front" and "is missing" in info.value.message
    assert resolve_geometry(CarGeometry(wheelbase=2.65, tolerance=0.05), v, "s.toml").wheelbase == 2.65


@settings(max_examples=60, deadline=None)
@given(
    st.floats(-2.5, -0.1), st.floats(-0.2, 0.2), st.floats(50.0, 900.0), st.floats(-5.0, 5.0),
)
def test_property_reduction_inverts_the_static_balance_with_any_preload(x, y, mass, w):
    # Property: corners of any point mass inside the wheelbase (lever rule, massmodel.vehicle.balance) plus any diagonal
    # preload reduce back to the same CG, mass and preload (statics; common practice, no source).
    v = iso_vehicle()
    corners = static_balance(MassProperties.point(mass, [x, y, 0.0]), v).corners
    corners = corners + np.array([w, -w, -w * v.track_front / v.track_rear, w * v.track_front / v.track_rear])
    if np.any(corners <= 0.0):
        return
    bal = balance_from_corners(reduce_weighings([weighing(corners)]), geometry(v.wheelbase, v.track_front, v.track_rear))
    assert bal.mass.value == pytest.approx(mass, rel=1e-12)
    assert bal.station(v).value == pytest.approx(x, rel=1e-9, abs=1e-12)
    assert bal.left_of_centre.value == pytest.approx(y, rel=1e-9, abs=1e-12)
    assert bal.wedge == pytest.approx(w, rel=1e-9, abs=1e-9)
