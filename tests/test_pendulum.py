"""Pendulum reductions against check values, closed forms and numerically integrated equations of motion."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from massmodel.measure.pendulum import (
    amplitude_factor,
    bifilar_inertia,
    compare_with_model,
    compound_inertia_about_pivot,
    reduce_pendulum,
    trifilar_inertia,
)
from massmodel.measure.session import Comparison, Fixture, MeasurementFileError, PendulumKind, PendulumTest
from massmodel.modelfile.loader import loads_model

G0 = 9.80665  # m/s², standard gravity (NIST SP 811)


def make_test(kind, periods, body_mass, fixture=None, compare=None, gravity=G0, amplitude=None, uncertainty=None,
              **geometry) -> PendulumTest:
    fields = {k: geometry.get(k) for k in ("wire_length", "wire_spacing", "wire_radius", "pivot_to_cg")}
    return PendulumTest(
        name="t", kind=kind, body_mass=body_mass, periods=np.atleast_1d(np.asarray(periods, dtype=float)),
        fixture=fixture, gravity=gravity, gravity_given=gravity != G0, amplitude=amplitude,
        uncertainty=dict(uncertainty or {}), compare=compare, note="", origin="s.toml: pendulum 't'", **fields,
    )


def test_bifilar_check_value():
    # docs/references.md §6 (V): m = 10 kg, D = 0.5 m, L = 2 m, T = 2 s -> I = 0.31051 kg m^2
    # (Jardin & Mueller, AIAA 2007-6822: I = m g T^2 D^2 / (16 pi^2 L)).
    assert bifilar_inertia(10.0, 2.0, 0.5, 2.0, G0) == pytest.approx(0.31051, abs=5e-6)
    res = reduce_pendulum(make_test(PendulumKind.BIFILAR, [2.0, 2.01, 1.99], 10.0, wire_spacing=0.5, wire_length=2.0))
    assert res.inertia_axis.value == pytest.approx(bifilar_inertia(10.0, 2.0, 0.5, 2.0, G0), rel=1e-12)
    # u from the scatter of the periods: I ~ T^2, so u_I = 2 I u_T / T with u_T = s / sqrt(n) (GUM 4.2, 5.1)
    u_t = np.std([2.0, 2.01, 1.99], ddof=1) / np.sqrt(3)
    assert res.inertia_axis.u == pytest.approx(2 * res.inertia_axis.value * u_t / 2.0, rel=1e-6)
    s = res.sensitivities  # I = m g T^2 D^2 / (16 pi^2 L): power-law partials
    i = res.inertia_axis.value
    assert s["wire_spacing"] == pytest.approx(2 * i / 0.5, rel=1e-7)
    assert s["wire_length"] == pytest.approx(-i / 2.0, rel=1e-7)
    assert s["body_mass"] == pytest.approx(i / 10.0, rel=1e-7)


def test_trifilar_is_the_bifilar_law_with_spacing_twice_the_radius():
    # m g R^2 T^2 / (4 pi^2 L) = m g T^2 (2R)^2 / (16 pi^2 L) (Korr & Hyer 1962; Jardin & Mueller 2007).
    assert trifilar_inertia(37.0, 2.3, 0.6, 2.4, G0) == pytest.approx(bifilar_inertia(37.0, 2.3, 1.2, 2.4, G0), rel=1e-14)


def trifilar_period(inertia, mass, radius, length, amplitude):
    """Period from Lagrange's equations of a trifilar pendulum with straight inextensible wires (derived here):
    the platform rises u(phi) = L - sqrt(L^2 - 4 R^2 sin^2(phi/2)); T = (I + m u'^2)/2 phidot^2, V = m g u."""

    def u1(p):
        return radius**2 * np.sin(p) / np.sqrt(length**2 - 4 * radius**2 * np.sin(p / 2) ** 2)

    def rhs(_t, y):
        p, w = y
        d2 = (u1(p + 1e-6) - u1(p - 1e-6)) / 2e-6
        return [w, -(mass * u1(p) * d2 * w**2 + mass * G0 * u1(p)) / (inertia + mass * u1(p) ** 2)]

    def down(_t, y):
        return y[0]

    down.direction = -1
    sol = solve_ivp(rhs, (0, 4), [amplitude, 0.0], events=down, rtol=1e-11, atol=1e-13)
    t = sol.t_events[0]
    return float(t[1] - t[0])


def test_trifilar_against_its_equations_of_motion():
    i, m, r, L = 4.2, 55.0, 0.7, 2.5
    period = trifilar_period(i, m, r, L, np.radians(0.5))
    assert trifilar_inertia(m, period, r, L, G0) == pytest.approx(i, rel=1e-4)


def test_platform_subtracted():
    # Platform alone, then platform with body: I_body = I_total - I_platform (Korr & Hyer 1962).
    r, L = 0.7, 2.5
    i_p, m_p, i_b, m_b = 5.0, 20.0, 3.0, 30.0
    t_total = 2 * np.pi * np.sqrt((i_b + i_p) * L / ((m_b + m_p) * G0 * r**2))
    t_p = 2 * np.pi * np.sqrt(i_p * L / (m_p * G0 * r**2))
    fx = Fixture(m_p, np.array([t_p]), None, None)
    res = reduce_pendulum(make_test(PendulumKind.TRIFILAR, [t_total], m_b, fixture=fx, wire_radius=r, wire_length=L))
    assert res.inertia_fixture == pytest.approx(i_p, rel=1e-12)
    assert res.inertia_axis.value == pytest.approx(i_b, rel=1e-12)
    assert res.inertia_axis.u is None  # one period, no stated uncertainty


def test_compound_pendulum_slender_rod():
    # Slender rod pivoted at one end: I_pivot = m l^2 / 3, I_cg = m l^2 / 12 (Machinery's Handbook, 31st ed.,
    # p. 253-254, cylinder with r -> 0); I_pivot = m g d T^2 / (4 pi^2) (Gracey, NACA TN 1629, from memory).
    m, length = 2.0, 1.0
    d = length / 2
    period = 2 * np.pi * np.sqrt((m * length**2 / 3) / (m * G0 * d))
    assert compound_inertia_about_pivot(m * d, period, G0) == pytest.approx(m * length**2 / 3, rel=1e-14)
    res = reduce_pendulum(make_test(PendulumKind.COMPOUND, [period], m, pivot_to_cg=d))
    assert res.inertia_axis.value == pytest.approx(m * length**2 / 3, rel=1e-12)
    assert res.inertia_cg.value == pytest.approx(m * length**2 / 12, rel=1e-12)
    # d I_cg / d d = m g T^2 / (4 pi^2) - 2 m d
    assert res.sensitivities["pivot_to_cg"] == pytest.approx(m * G0 * period**2 / (4 * np.pi**2) - 2 * m * d, rel=1e-6)


def test_compound_amplitude_correction_against_the_equation_of_motion():
    # I theta'' = -m g d sin(theta), integrated numerically at 20 deg; the elliptic-integral factor
    # (Landau & Lifshitz, Mechanics, §11, from memory) recovers the small-swing inertia.
    i, m, d, amp = 30.0, 40.0, 0.8, np.radians(20.0)

    def rhs(_t, y):
        return [y[1], -m * G0 * d * np.sin(y[0]) / i]

    def down(_t, y):
        return y[0]

    down.direction = -1
    sol = solve_ivp(rhs, (0, 5), [amp, 0.0], events=down, rtol=1e-12, atol=1e-14)
    period = float(sol.t_events[0][1] - sol.t_events[0][0])
    res = reduce_pendulum(make_test(PendulumKind.COMPOUND, [period], m, pivot_to_cg=d, amplitude=amp))
    assert res.inertia_axis.value == pytest.approx(i, rel=1e-8)
    uncorrected = reduce_pendulum(make_test(PendulumKind.COMPOUND, [period], m, pivot_to_cg=d))
    assert uncorrected.inertia_axis.value / i == pytest.approx(amplitude_factor(amp) ** 2, rel=1e-8)
    # series T/T0 = 1 + theta0^2/16 + 11 theta0^4/3072 + ... (from memory)
    assert amplitude_factor(amp) == pytest.approx(1 + amp**2 / 16 + 11 * amp**4 / 3072, rel=1e-5)


def test_compound_with_swing_frame():
    # Body and frame swing together: (m_b d_b + m_f d_f) g T^2 / (4 pi^2) = I_b,pivot + I_f,pivot.
    m_b, d_b, i_b_cg = 40.0, 0.8, 2.5
    m_f, d_f, i_f = 15.0, 0.6, 7.0
    i_b = i_b_cg + m_b * d_b**2
    t = 2 * np.pi * np.sqrt((i_b + i_f) / ((m_b * d_b + m_f * d_f) * G0))
    t_f = 2 * np.pi * np.sqrt(i_f / (m_f * d_f * G0))
    fx = Fixture(m_f, np.array([t_f, t_f]), None, d_f)
    res = reduce_pendulum(make_test(PendulumKind.COMPOUND, [t, t], m_b, fixture=fx, pivot_to_cg=d_b))
    assert res.inertia_fixture == pytest.approx(i_f, rel=1e-12)
    assert res.inertia_cg.value == pytest.approx(i_b_cg, rel=1e-10)
    assert res.inertia_cg.u == 0.0  # two equal periods: zero scatter


def test_bad_fixture_and_pivot_distance():
    with pytest.raises(MeasurementFileError) as info:
        reduce_pendulum(make_test(PendulumKind.BIFILAR, [2.0], 10.0, fixture=Fixture(1.0, None, 0.5, None),
                                  wire_spacing=0.5, wire_length=2.0))
    assert (info.value.file, info.value.item, info.value.field) == ("s.toml", "pendulum 't'", "fixture")
    with pytest.raises(MeasurementFileError) as info:
        reduce_pendulum(make_test(PendulumKind.COMPOUND, [1.0], 10.0, pivot_to_cg=0.8))
    assert info.value.field == "pivot_to_cg" and "inconsistent" in info.value.message


MODEL = """
[model]
name = "box"
[vehicle]
wheelbase = "2 m"
track_front = "1.4 m"
track_rear = "1.4 m"
[[part]]
path = "body/block"
shape = "box"
size = ["0.6 m", "0.4 m", "0.2 m"]
mass = "12 kg"
maturity = "measured"
at = ["-1 m", "0.1 m", "0 m"]
"""


def test_comparison_with_the_model_about_the_cg_and_a_point():
    # Box about its vertical CG axis: m (a^2 + b^2) / 12 (Machinery's Handbook, 31st ed., pp. 253-254);
    # about a parallel axis through P: + m r^2 with r the horizontal distance (parallel-axis theorem).
    model = loads_model(MODEL)
    i_cg = 12.0 * (0.6**2 + 0.4**2) / 12
    t = make_test(PendulumKind.BIFILAR, [2.0], 12.0, wire_spacing=0.5, wire_length=2.0,
                  compare=Comparison(None, "up", None, ("body",), ()))
    res = reduce_pendulum(t)
    c = compare_with_model(res, t, model)
    assert c.model_inertia == pytest.approx(i_cg, rel=1e-12)
    assert c.difference == pytest.approx(res.inertia_axis.value - i_cg, rel=1e-12)
    assert c.about_cg and c.model_mass == pytest.approx(12.0) and not c.notes
    p = np.array([-1.3, 0.5, 0.7])
    t2 = make_test(PendulumKind.COMPOUND, [2.5], 12.0, pivot_to_cg=0.5,
                   compare=Comparison(np.array([1.0, 0.0, 0.0]), "[1, 0, 0]", p, ("",), ()))
    c2 = compare_with_model(reduce_pendulum(t2), t2, model)
    box_x = 12.0 * (0.4**2 + 0.2**2) / 12
    assert c2.model_inertia == pytest.approx(box_x + 12.0 * (0.4**2 + 0.7**2), rel=1e-12)
    assert c2.model_pivot_to_cg == pytest.approx(np.hypot(0.4, 0.7), rel=1e-12)
    t3 = make_test(PendulumKind.BIFILAR, [2.0], 12.0, wire_spacing=0.5, wire_length=2.0,
                   compare=Comparison(None, "up", None, ("nothing",), ()))
    with pytest.raises(MeasurementFileError) as info:
        compare_with_model(reduce_pendulum(t3), t3, model)
    assert info.value.field == "compare.groups"
