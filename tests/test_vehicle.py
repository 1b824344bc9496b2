"""Static axle and corner loads and rule checks against worked examples."""

from __future__ import annotations

import numpy as np
import pytest

from massmodel.core.massprops import MassProperties
from massmodel.core.model import Vehicle
from massmodel.vehicle.balance import static_balance

G0 = 9.80665  # m/s², standard gravity (NIST SP 811)


def iso_vehicle(wheelbase=2.5, tf=1.5, tr=1.4, station=0.0, ground=0.0):
    return Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), wheelbase, tf, tr, station, ground)


def test_jazar_example_40_longitudinal_cg():
    # Jazar, Vehicle Dynamics: Theory and Application (Springer 2008), Ch. 2, Example 40 (docs/references.md §3):
    # l = 2.34 m, Fz1 = 2000 N, Fz2 = 1800 N per wheel -> a1 = 1.1084 m, a2 = 1.2316 m.
    wheelbase = 2.34
    front_n, rear_n = 2 * 2000.0, 2 * 1800.0
    m = (front_n + rear_n) / G0
    a1 = wheelbase * rear_n / (front_n + rear_n)  # the inverse of the static balance; checked against the book below
    assert a1 == pytest.approx(1.1084, abs=5e-5)
    bal = static_balance(MassProperties.point(m, [-a1, 0, 0.5]), iso_vehicle(wheelbase=wheelbase))
    assert bal.front * G0 == pytest.approx(front_n, rel=1e-12)
    assert bal.rear * G0 == pytest.approx(rear_n, rel=1e-12)
    assert bal.cg_ahead_of_rear_axle == pytest.approx(1.2316, abs=5e-5)


def test_corner_loads_lever_rule():
    # Rigid chassis, no diagonal preload: each axle splits by the lever rule (common practice, no source).
    v = iso_vehicle(wheelbase=2.0, tf=1.6, tr=1.2, station=1.0, ground=-0.3)
    mp = MassProperties.point(500.0, [0.2, 0.1, 0.0])  # 0.8 m behind the front axle, 0.1 m left, 0.3 m high
    bal = static_balance(mp, v)
    front = 500.0 * 1.2 / 2.0
    rear = 500.0 * 0.8 / 2.0
    assert bal.front == pytest.approx(front)
    assert bal.corners.tolist() == pytest.approx(
        [front * (0.8 + 0.1) / 1.6, front * (0.8 - 0.1) / 1.6, rear * (0.6 + 0.1) / 1.2, rear * (0.6 - 0.1) / 1.2]
    )
    assert bal.cg_height == pytest.approx(0.3)
    assert bal.front_fraction == pytest.approx(0.6)
    assert bal.corners.sum() == pytest.approx(500.0)


def test_sae_axes_give_the_same_loads():
    # SAE J670e: x forward, y right, z down (docs/references.md §4). The same car described in both frames.
    iso = iso_vehicle(station=0.0, ground=0.0)
    sae = Vehicle(np.array([1.0, 0, 0]), np.array([0, -1.0, 0]), np.array([0, 0, -1.0]), 2.5, 1.5, 1.4, 0.0, 0.0)
    p = np.array([-1.1, 0.05, 0.3])
    a = static_balance(MassProperties.point(400.0, p), iso)
    b = static_balance(MassProperties.point(400.0, p * [1, -1, -1]), sae)
    assert a.corners.tolist() == pytest.approx(b.corners.tolist())
    assert a.cg_height == pytest.approx(b.cg_height)
