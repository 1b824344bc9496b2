"""Linear single-track model: closed forms written here and scipy's ODE solver as an independent oracle.

Sources (equations from memory): Gillespie, Fundamentals of Vehicle Dynamics (SAE 1992), ch. 6 — understeer gradient
K = W_f/C_f - W_r/C_r, characteristic speed sqrt(g L / K), critical speed sqrt(-g L / K), yaw-rate gain
u / (L + K u^2); Pacejka, Tyre and Vehicle Dynamics, ch. 1 and Milliken & Milliken, Race Car Vehicle Dynamics
(SAE 1995), ch. 5 — the two-state equations; Jazar, Vehicle Dynamics (Springer 2008), ch. 10.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from massmodel.vehicle.chassis import AxleSuspension
from massmodel.vehicle.single_track import SingleTrack, state_matrices, step_yaw_rate, yaw_response

G0 = 9.80665
CAR = dict(mass=450.0, yaw_inertia=420.0, a=1.5, b=1.1, cornering_front=38000.0, cornering_rear=60000.0)


def test_understeer_gradient_and_characteristic_speed():
    st = SingleTrack(**CAR)
    L = 2.6
    wf, wr = 450 * G0 * 1.1 / L, 450 * G0 * 1.5 / L  # axle weights, N
    K_per_g = wf / 38000 - wr / 60000  # rad per g (Gillespie ch. 6)
    assert st.understeer_gradient * G0 == pytest.approx(K_per_g, rel=1e-12)
    assert K_per_g > 0
    v_ch = math.sqrt(G0 * L / K_per_g)
    u = v_ch
    assert yaw_response(st, u).yaw_rate_gain == pytest.approx(u / (L + K_per_g / G0 * u**2), rel=1e-12)
    # at the characteristic speed the yaw-rate gain is half the neutral car's, u / (2 L)
    assert yaw_response(st, u).yaw_rate_gain == pytest.approx(v_ch / (2 * L), rel=1e-12)


def test_neutral_steer_when_axle_weight_over_cornering_stiffness_is_equal():
    # W_f/C_f = W_r/C_r gives K = 0: gain u/L at every speed, no characteristic speed
    cf = 40000.0
    cr = cf * 1.5 / 1.1  # C_r/C_f = W_r/W_f = a/b
    st = SingleTrack(450.0, 420.0, 1.5, 1.1, cf, cr)
    assert st.understeer_gradient == pytest.approx(0.0, abs=1e-15)
    for u in (10.0, 40.0, 80.0):
        assert yaw_response(st, u).yaw_rate_gain == pytest.approx(u / 2.6, rel=1e-12)


def test_oversteer_has_no_steady_state_above_the_critical_speed():
    st = SingleTrack(450.0, 420.0, 1.5, 1.1, 60000.0, 38000.0)
    K = st.understeer_gradient
    assert K < 0
    v_crit = math.sqrt(-2.6 / K)
    assert yaw_response(st, 0.9 * v_crit).yaw_rate_gain is not None
    above = yaw_response(st, 1.1 * v_crit)
    assert above.yaw_rate_gain is None and above.natural_frequency is None


def test_natural_frequency_and_damping_closed_form():
    # det and trace of the state matrix written out (standard derivation, e.g. Pacejka ch. 1; from memory):
    # w_n^2 = C_f C_r L^2/(m I_z u^2) + (b C_r - a C_f)/I_z;  2 zeta w_n = (C_f+C_r)/(m u) + (a^2 C_f + b^2 C_r)/(I_z u)
    st = SingleTrack(**CAR)
    m, iz, a, b, cf, cr = 450.0, 420.0, 1.5, 1.1, 38000.0, 60000.0
    u = 30.0
    wn2 = cf * cr * 2.6**2 / (m * iz * u**2) + (b * cr - a * cf) / iz
    two_zeta_wn = (cf + cr) / (m * u) + (a * a * cf + b * b * cr) / (iz * u)
    yr = yaw_response(st, u)
    assert yr.natural_frequency == pytest.approx(math.sqrt(wn2), rel=1e-12)
    assert yr.damping_ratio == pytest.approx(two_zeta_wn / (2 * math.sqrt(wn2)), rel=1e-12)


@pytest.mark.parametrize("u", [15.0, 35.0, 60.0])
def test_step_response_against_scipy_solve_ivp(u):
    # the same equations integrated by scipy (independent oracle): m(v_y' + u r) = F_f + F_r, I_z r' = a F_f - b F_r
    m, iz, a, b, cf, cr = 450.0, 420.0, 1.5, 1.1, 38000.0, 60000.0
    st = SingleTrack(m, iz, a, b, cf, cr)
    delta = math.radians(1.0)

    def rhs(t, x):
        vy, r = x
        ff = cf * (delta - (vy + a * r) / u)
        fr = cr * (-(vy - b * r) / u)
        return [(ff + fr) / m - u * r, (a * ff - b * fr) / iz]

    sol = solve_ivp(rhs, (0.0, 3.0), [0.0, 0.0], method="DOP853", rtol=1e-11, atol=1e-13, dense_output=True)
    t = np.linspace(0.0, 3.0, 61)
    np.testing.assert_allclose(step_yaw_rate(st, u, t, delta), sol.sol(t)[1], rtol=1e-7, atol=1e-10)
    yr = yaw_response(st, u)
    r_ss = yr.yaw_rate_gain * delta
    assert sol.sol(3.0)[1] == pytest.approx(r_ss, rel=1e-6)
    t90 = brentq(lambda s: sol.sol(s)[1] - 0.9 * r_ss, 1e-6, 3.0 if yr.damping_ratio >= 1 else
                 min(3.0, math.pi / yr.natural_frequency / math.sqrt(max(1e-9, 1 - yr.damping_ratio**2))), xtol=1e-12)
    assert yr.time_to_90 == pytest.approx(t90, abs=1e-6)


def test_state_matrix_needs_a_forward_speed():
    with pytest.raises(ValueError, match="positive forward speed"):
        state_matrices(SingleTrack(**CAR), 0.0)


def test_per_tyre_cornering_stiffness_follows_the_load():
    # C(F) = C_ref [1 + eps (F/F_ref - 1)] per tyre (massmodel's linear load sensitivity): moving load to an axle
    # raises its cornering stiffness less than in proportion when eps < 1
    axle = AxleSuspension(0.03, roll_stiffness=1.0, tyre_cornering_stiffness=20000.0, tyre_reference_load=1000.0,
                          tyre_load_sensitivity=0.6)
    assert axle.axle_cornering_stiffness(2000.0) == pytest.approx(40000.0)
    assert axle.axle_cornering_stiffness(2400.0) == pytest.approx(2 * 20000 * (1 + 0.6 * 0.2))
    proportional = AxleSuspension(0.03, roll_stiffness=1.0, tyre_cornering_stiffness=20000.0,
                                  tyre_reference_load=1000.0, tyre_load_sensitivity=1.0)
    assert proportional.axle_cornering_stiffness(2400.0) == pytest.approx(2 * 20000 * 1.2)
