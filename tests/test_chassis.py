"""Chassis estimates: sprung/unsprung split, roll stiffness, lateral and longitudinal transfer, aero, cross weight.

Reference values are closed forms written out here (sources beside each check; "from memory" where the equation
was not read while writing this) or independent derivations (a rigid plate on four springs solved with numpy).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from massmodel.modelfile.loader import ModelFileError, loads_model
from massmodel.vehicle.balance import static_balance
from massmodel.vehicle.chassis import split_mass
from massmodel.vehicle.roll import (
    G0,
    cross_weight_adjustment,
    lateral_transfer,
    longitudinal_transfer,
    roll_properties,
)
from massmodel.vehicle.transfer import load_transfer

# A body of 300 kg at 400 mm above the ground, 1100 mm behind the front axle, and four unsprung point masses at
# wheel-centre height (300 mm): 10 kg each at the front, 12 kg each at the rear.
CAR = """
[model]
name = "test car"
[units]
length = "mm"
mass = "kg"
[vehicle]
wheelbase = "2500 mm"
track_front = "{tf} mm"
track_rear = "{tr} mm"
ground_level = "-300 mm"
[[part]]
path = "body"
shape = "point"
mass = "300 kg"
maturity = "measured"
at = [-1100, 0, 100]
[[part]]
path = "wheels/fl"
shape = "point"
mass = "10 kg"
maturity = "measured"
at = [0, "{tf} / 2", 0]
[[part]]
path = "wheels/fr"
shape = "point"
mass = "10 kg"
maturity = "measured"
at = [0, "-{tf} / 2", 0]
[[part]]
path = "wheels/rl"
shape = "point"
mass = "12 kg"
maturity = "measured"
at = [-2500, "{tr} / 2", 0]
[[part]]
path = "wheels/rr"
shape = "point"
mass = "12 kg"
maturity = "measured"
at = [-2500, "-{tr} / 2", 0]
[chassis]
unsprung = {unsprung}
[chassis.front]
roll_centre_height = "{zf} mm"
{front}
[chassis.rear]
roll_centre_height = "{zr} mm"
{rear}
"""


def car(tf=1500, tr=1400, zf=40, zr=60, unsprung='["wheels"]', front='roll_stiffness = "500 N*m/deg"',
        rear='roll_stiffness = "700 N*m/deg"', extra=""):
    return loads_model(CAR.format(tf=tf, tr=tr, zf=zf, zr=zr, unsprung=unsprung, front=front, rear=rear) + extra)


def parts(model):
    return split_mass(model.components, model.vehicle, model.chassis), model.vehicle, model.chassis


def test_sprung_and_unsprung_split_by_hand():
    split, _, _ = parts(car())
    np.testing.assert_allclose(split.corner_mass, [10, 10, 12, 12])
    np.testing.assert_allclose(split.corner_cg_height, [0.3] * 4)
    assert split.sprung_mass == pytest.approx(300.0)
    assert split.sprung_cg_height == pytest.approx(0.4)
    assert split.sprung_cg_behind_front_axle == pytest.approx(1.1)


def test_shared_links_counted_by_their_share_and_most_specific_entry_wins():
    m = car(unsprung='["wheels/fl"]\nshared = ["wheels"]\nsprung = ["wheels/rr"]\nshared_unsprung_share = 0.25\n'
                     'shared_share_source = "test value"')
    split, _, _ = parts(m)
    # fl fully unsprung (its own entry), fr and rl a quarter (the group entry), rr sprung (its own entry)
    np.testing.assert_allclose(split.corner_mass, [10, 2.5, 3.0, 0.0])
    total_moment_z = 300 * 0.4 + 10 * 0.3 + 10 * 0.3 + 24 * 0.3
    sprung = 344 - 15.5
    assert split.sprung_mass == pytest.approx(sprung)
    assert split.sprung_cg_height == pytest.approx((total_moment_z - 15.5 * 0.3) / sprung)


def test_lateral_transfer_closed_form():
    # Milliken & Milliken, Race Car Vehicle Dynamics (SAE 1995), ch. 18 (from memory):
    # dW_f = a_y/t_f * [m_uf z_uf + m_s (b_s/L) z_rf + m_s h_s K_f/(K_f+K_r)], rear alike with a_s/L, z_rr, K_r;
    # h_s = H_s - (z_rf + (z_rr - z_rf) a_s/L).
    split, vehicle, spec = parts(car())
    ay = 1.3 * G0
    L, tf, tr = 2.5, 1.5, 1.4
    ms, hs_cg, a_s = 300.0, 0.4, 1.1
    zf, zr = 0.040, 0.060
    kf, kr = 500 * 180 / math.pi, 700 * 180 / math.pi
    hs = hs_cg - (zf + (zr - zf) * a_s / L)
    front = ay / tf * (20 * 0.3 + ms * (L - a_s) / L * zf + ms * hs * kf / (kf + kr))
    rear = ay / tr * (24 * 0.3 + ms * a_s / L * zr + ms * hs * kr / (kf + kr))
    lt = lateral_transfer(split, vehicle, spec, ay)
    np.testing.assert_allclose(lt.total, [front, rear], rtol=1e-12)
    np.testing.assert_allclose(lt.unsprung, [ay * 20 * 0.3 / tf, ay * 24 * 0.3 / tr], rtol=1e-12)
    assert lt.front_share == pytest.approx(front / (front + rear))
    np.testing.assert_allclose(lt.corner_change, [-front, front, -rear, rear], rtol=1e-12)
    # roll gradient m_s h_s/(K_f + K_r) (Milliken, from memory) and with the CG shift (Gillespie 1992, ch. 7,
    # from memory): m_s h_s/(K_f + K_r - m_s g h_s)
    rp = roll_properties(split, vehicle, spec)
    assert rp.roll_gradient == pytest.approx(ms * hs / (kf + kr))
    assert rp.roll_gradient_with_cg_shift == pytest.approx(ms * hs / (kf + kr - ms * G0 * hs))
    assert lt.roll_angle == pytest.approx(ms * hs / (kf + kr) * ay)


def test_total_equals_rigid_overturning_moment_for_equal_tracks():
    # statics (V): the sum over both axles of transfer * track is m a_y h, whatever the split
    m = car(tf=1450, tr=1450)
    split, vehicle, spec = parts(m)
    bal = static_balance(m.mass_properties(), vehicle)
    ay = 1.1 * G0
    lt = lateral_transfer(split, vehicle, spec, ay)
    assert float(lt.total.sum()) * 1.45 == pytest.approx(bal.mass * ay * bal.cg_height, rel=1e-12)


@pytest.mark.parametrize("kf, kr", [(600, 600), (900, 300)])
def test_zero_roll_centres_and_no_unsprung_mass_reduce_to_the_rigid_result(kf, kr):
    # with z_rf = z_rr = 0 and no unsprung mass, the elastic split alone remains: the rigid-body transfer of
    # massmodel.vehicle.transfer with the front share K_f/(K_f + K_r) (Milliken & Milliken 1995, ch. 18)
    m = car(zf=0, zr=0, unsprung="[]", front=f'roll_stiffness = "{kf} N*m/deg"',
            rear=f'roll_stiffness = "{kr} N*m/deg"')
    split, vehicle, spec = parts(m)
    rigid = load_transfer(static_balance(m.mass_properties(), vehicle), vehicle, 0.0, 1.4, kf / (kf + kr))
    lt = lateral_transfer(split, vehicle, spec, 1.4 * G0)
    np.testing.assert_allclose(lt.total / G0, [rigid.lateral_transfer_front, rigid.lateral_transfer_rear],
                               rtol=1e-12)
    assert lt.front_share == pytest.approx(kf / (kf + kr) * 1.4 / 1.5 / (kf / (kf + kr) * 1.4 / 1.5
                                                                         + kr / (kf + kr) * 1.4 / 1.4))


def test_all_lateral_transfer_at_one_axle_when_the_other_has_no_roll_stiffness():
    m = car(zf=0, zr=0, unsprung="[]", rear='roll_stiffness = "0 N*m/deg"', front='roll_stiffness = "900 N*m/deg"')
    split, vehicle, spec = parts(m)
    bal = static_balance(m.mass_properties(), vehicle)
    lt = lateral_transfer(split, vehicle, spec, G0)
    assert lt.total[1] == 0.0
    assert lt.front_share == 1.0
    assert lt.total[0] == pytest.approx(bal.mass * G0 * bal.cg_height / 1.5, rel=1e-12)


def test_roll_stiffness_from_springs_and_bar_by_virtual_roll():
    # independent derivation (V): roll the axle by a small angle, sum the couples of the two springs and the bar
    ks, mr, kb, mrb, t = 80e3, 0.8, 20e3, 0.6, 1.5
    m = car(front=f'spring_rate = "{ks / 1e3} N/mm"\nspring_motion_ratio = {mr}\nbar_rate = "{kb / 1e3} N/mm"\n'
                  f'bar_motion_ratio = {mrb}')
    split, vehicle, spec = parts(m)
    phi = 1e-3
    z = phi * t / 2  # left wheel up, right down
    spring_force = ks * (mr * z) * mr  # spring force at the spring, through the motion ratio to the wheel
    bar_force = kb * (mrb * 2 * z) * mrb  # the bar twists by the difference of its two arm ends' travels
    couple = 2 * (spring_force + bar_force) * (t / 2)
    assert spec.front.roll_stiffness_on(t) == pytest.approx(couple / phi, rel=1e-12)
    assert roll_properties(split, vehicle, spec).roll_stiffness_front == pytest.approx(couple / phi, rel=1e-12)


def test_aero_loads_closed_form():
    # F = 1/2 rho C A v^2 (rho = 1.225 kg/m^3, ISA sea level); drag at h_d reacted at the ground moves D h_d / L
    m = car(extra='[chassis.aero]\ndownforce_coefficient = 2.0\ndrag_coefficient = 0.8\nreference_area = "1.2 m^2"\n'
                  'air_density = "1.225 kg/m^3"\nfront_share = 0.45\ndrag_height = "500 mm"\n')
    aero = m.chassis.aero
    v = 40.0
    down = 0.5 * 1.225 * 2.0 * 1.2 * v**2
    drag = 0.5 * 1.225 * 0.8 * 1.2 * v**2
    assert aero.loads(v) == pytest.approx((down, drag))
    shift = drag * 0.5 / 2.5
    np.testing.assert_allclose(aero.corner_loads(v, 2.5), [(0.45 * down - shift) / 2] * 2
                               + [(0.55 * down + shift) / 2] * 2, rtol=1e-12)
    # loads given at a reference speed scale with v^2 and agree with the coefficient form
    m2 = car(extra=f'[chassis.aero]\nreference_speed = "50 m/s"\ndownforce_at_reference = "{down * 50**2 / v**2} N"\n'
                   f'drag_at_reference = "{drag * 50**2 / v**2} N"\nfront_share = 0.45\ndrag_height = "500 mm"\n')
    assert m2.chassis.aero.loads(v) == pytest.approx((down, drag), rel=1e-12)


def test_longitudinal_transfer_and_anti_features():
    # m a_x h / L (Gillespie 1992, ch. 2, from memory); the anti share only splits it (Milliken & Milliken 1995,
    # ch. 17, from memory); pitch from the spring deflections: (dF_f/(2 k_f) - dF_r/(2 k_r)) / L
    m = car(front='spring_rate = "60 N/mm"\nanti = 0.25', rear='spring_rate = "80 N/mm"\nanti = 0.4')
    bal = static_balance(m.mass_properties(), m.vehicle)
    ax = -1.2 * G0
    lo = longitudinal_transfer(bal.mass, bal.cg_height, m.vehicle, m.chassis, ax)
    dx = bal.mass * ax * bal.cg_height / 2.5
    assert lo.transfer == pytest.approx(dx)
    assert (lo.anti_share, lo.geometric, lo.elastic) == pytest.approx((0.25, 0.25 * dx, 0.75 * dx))
    front_gain = -0.75 * dx  # through the front springs
    rear_loss = dx  # the rear has no anti-lift
    assert lo.pitch_angle == pytest.approx((front_gain / (2 * 60e3) - rear_loss / (2 * 80e3)) / 2.5)
    assert lo.pitch_angle > 0  # nose down under braking
    drive = longitudinal_transfer(bal.mass, bal.cg_height, m.vehicle, m.chassis, 0.5 * G0)
    assert drive.anti_share == 0.4 and drive.pitch_angle < 0


def _plate_solution(k_w, k_b, tracks, L, corner, e):
    """Rigid plate on four springs (+ one bar per axle): corner-load change from a preload e at one corner (V)."""
    tf, tr = tracks
    x = np.array([0.0, 0.0, -L, -L])
    y = np.array([tf / 2, -tf / 2, tr / 2, -tr / 2])
    A = np.column_stack([np.ones(4), y, x])  # corner displacement = heave + roll*y + pitch*x
    Ks = np.diag([k_w[0], k_w[0], k_w[1], k_w[1]])
    Kb = np.zeros((4, 4))
    for i, kb in ((0, k_b[0]), (2, k_b[1])):
        Kb[i:i + 2, i:i + 2] = [[kb, -kb], [-kb, kb]]
    K = Ks + Kb
    pre = np.zeros(4)
    pre[corner] = e
    q = np.linalg.solve(A.T @ K @ A, A.T @ Ks @ pre)
    return Ks @ pre - K @ A @ q


@pytest.mark.parametrize("corner", ["FL", "FR", "RL", "RR"])
def test_cross_weight_adjustment_against_a_rigid_plate_on_four_springs(corner):
    m = car(front='spring_rate = "70 N/mm"\nspring_motion_ratio = 0.9\nbar_rate = "30 N/mm"\nbar_motion_ratio = 0.5',
            rear='spring_rate = "95 N/mm"\nspring_motion_ratio = 0.8\nbar_rate = "12 N/mm"\nbar_motion_ratio = 0.7')
    loads = np.array([900.0, 960.0, 1230.0, 1150.0])
    adj = cross_weight_adjustment(loads, m.vehicle, m.chassis, corner, 0.5, thread_pitch=1.5e-3)
    j = ("FL", "FR", "RL", "RR").index(corner)
    k_w = (70e3 * 0.81, 95e3 * 0.64)
    k_b = (30e3 * 0.25, 12e3 * 0.49)
    f = _plate_solution(k_w, k_b, (1.5, 1.4), 2.5, j, adj.wheel_equivalent)
    np.testing.assert_allclose(adj.corner_change, f, rtol=1e-9, atol=1e-9)
    after = loads + f
    assert (after[1] + after[2]) / after.sum() == pytest.approx(0.5, abs=1e-12)
    mr = 0.9 if j < 2 else 0.8
    assert adj.platform_change == pytest.approx(adj.wheel_equivalent * mr)
    assert adj.turns == pytest.approx(adj.platform_change / 1.5e-3)


def test_cross_weight_needs_spring_rates():
    m = car()
    with pytest.raises(ValueError, match=r"\[chassis.front\], field 'spring_rate'"):
        cross_weight_adjustment(np.ones(4), m.vehicle, m.chassis, "FL", 0.5)


@pytest.mark.parametrize("kwargs, item, field", [
    ({"front": 'spring_rate = "-60 N/mm"'}, "[chassis.front]", "spring_rate"),
    ({"rear": 'roll_stiffness = "-5 N*m/deg"'}, "[chassis.rear]", "roll_stiffness"),
    ({"zf": 450, "zr": 420}, "[chassis.front]", "roll_centre_height"),
    ({"zf": 380, "zr": 520}, "[chassis.rear]", "roll_centre_height"),
    ({"front": 'roll_stiffness = "500 N*m/deg"\ncornering_stiffness = "30000 N/rad"'}, "[chassis.rear]",
     "cornering_stiffness"),
    ({"front": 'roll_stiffness = "500 N*m/deg"\nanti = 1.5'}, "[chassis.front]", "anti"),
    ({"front": 'spring_rate = "60 kg"'}, "[chassis.front]", "spring_rate"),
    ({"unsprung": '["wheelz"]'}, "[chassis]", "unsprung[0]"),
    ({"front": 'roll_stiffness = "1 N*m/deg"', "rear": 'roll_stiffness = "1 N*m/deg"'}, "[chassis]",
     "roll_stiffness"),
])
def test_bad_chassis_input_names_file_item_and_field(kwargs, item, field):
    with pytest.raises(ModelFileError) as info:
        car(**kwargs)
    assert (info.value.file, info.value.item, info.value.field) == ("<text>", item, field)
    assert "\n" not in str(info.value)
