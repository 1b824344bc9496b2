"""The fuel-burn track against CG, loads and margins computed by hand at full, half and empty."""

from __future__ import annotations

import numpy as np
import pytest

from massmodel.modelfile.loader import source_from_text
from massmodel.studies.fuel import fuel_track

# A 300 kg body (a point) at x = -1.0 m, z = 0.1 m and a box of fuel in a 0.3 m x 0.5 m cell standing on z = 0 at
# x = -1.5 m: the fuel's height is h = m_f / (rho a b) and its centre at h / 2. Front axle x = 0, rear x = -2 m,
# ground z = -0.2 m.
TANK = """
[model]
name = "fuel test"
[units]
length = "m"
mass = "kg"
[parameters]
fuel_mass = "30 kg"
fuel_density = "750 kg/m^3"
fuel_height = "fuel_mass / fuel_density / (0.3 m * 0.5 m)"
[vehicle]
wheelbase = "2 m"
track_front = "1.4 m"
track_rear = "1.4 m"
front_axle_station = "0 m"
ground_level = "-0.2 m"
[[part]]
path = "body"
shape = "point"
mass = "300 kg"
maturity = "measured"
at = [-1.0, 0, 0.1]
[[part]]
path = "fuel/petrol"
shape = "box"
size = [0.3, 0.5, "fuel_height"]
density = "fuel_density"
maturity = "calculated"
at = [-1.5, 0, "fuel_height / 2"]
[[rule]]
name = "front axle"
check = "min_axle_load"
axle = "front"
limit = "152 kg"
"""


def _by_hand(m_f: float) -> tuple[float, float, float, float]:
    """(mass, x_cg, z_cg, front load) with m_f kg of fuel: first moments of a body and a box (common practice)."""
    h = m_f / 750.0 / 0.15
    mass = 300.0 + m_f
    x = (300.0 * -1.0 + m_f * -1.5) / mass
    z = (300.0 * 0.1 + m_f * h / 2.0) / mass
    front = mass * (x + 2.0) / 2.0  # moments about the rear axle (Jazar 2008, ch. 2; from memory)
    return mass, x, z, front


def test_track_matches_hand_values_at_full_half_and_empty() -> None:
    t = fuel_track(source_from_text(TANK), steps=3)
    np.testing.assert_array_equal(t.fuel, [30.0, 15.0, 0.0])
    for k, m_f in enumerate((30.0, 15.0, 0.0)):
        mass, x, z, front = _by_hand(m_f)
        assert t.column("mass")[k] == pytest.approx(mass, abs=1e-12)
        assert t.column("cg_x")[k] == pytest.approx(x, abs=1e-12)
        assert t.column("cg_z")[k] == pytest.approx(z, abs=1e-12)
        assert t.column("cg_height")[k] == pytest.approx(z + 0.2, abs=1e-12)
        assert t.column("front_axle")[k] == pytest.approx(front, abs=1e-9)
        assert t.column("front_share")[k] == pytest.approx(front / mass, abs=1e-12)
        assert t.column("margin_front_axle")[k] == pytest.approx(front - 152.0, abs=1e-9)
    # full: 157.5 kg on the front axle, half: 153.75 kg, empty: 150 kg (worked out from _by_hand)
    assert [round(v, 9) for v in t.column("front_axle")] == [157.5, 153.75, 150.0]
    assert t.worst() == [(t.outputs.index(next(o for o in t.outputs if o.rule == 0)), 2)]
    assert t.left_out == ("fuel/petrol",)  # a box of height 0 is no solid: the empty point leaves the fuel out


def test_track_with_an_empty_load_above_zero_builds_every_point() -> None:
    t = fuel_track(source_from_text(TANK), full=20.0, empty=5.0, steps=4)
    assert t.left_out == ()
    for k, m_f in enumerate((20.0, 15.0, 10.0, 5.0)):
        assert t.column("cg_z")[k] == pytest.approx(_by_hand(m_f)[2], abs=1e-12)


def test_a_part_that_does_not_scale_with_the_load_is_not_silently_dropped() -> None:
    text = TANK.replace('density = "fuel_density"', 'mass = "fuel_mass + 1 kg"')
    with pytest.raises(ValueError, match="does not scale with fuel_mass"):
        fuel_track(source_from_text(text), steps=2)


def test_bad_steps_and_loads() -> None:
    with pytest.raises(ValueError, match="at least 2"):
        fuel_track(source_from_text(TANK), steps=1)
    with pytest.raises(ValueError, match="below the empty load"):
        fuel_track(source_from_text(TANK), full=1.0, empty=2.0)
