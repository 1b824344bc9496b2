"""Mass-properties value object and pure functions.

Closed forms are written in the tests (Machinery's Handbook, 31st ed., pp. 253-254; Goldstein, Classical Mechanics,
3rd ed., §5.3 for the parallel-axis theorem). Invariants are checked as properties with hypothesis.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import assert_close, assert_props_close
from massmodel.core.frames import RotationKind, rotation_from_sequence
from massmodel.core.massprops import (
    InertiaError,
    MassProperties,
    combine,
    combine_arrays,
    inertia_about_point,
    inertia_in_axes,
    principal_axes,
    products_positive,
    radii_of_gyration,
    transform,
    translate,
    validate_inertia,
)


def box_props(m, a, b, c, center=(0.0, 0.0, 0.0)):
    # Machinery's Handbook 31st ed. p. 253 / docs/references.md §1: I_a = m(b² + c²)/12 and cyclic.
    return MassProperties(m, center, np.diag([m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12]))


def test_value_object_is_immutable_and_copies_input():
    center = np.array([1.0, 2.0, 3.0])
    mp = MassProperties(2.0, center, np.eye(3))
    center[0] = 99.0
    assert mp.center.tolist() == [1.0, 2.0, 3.0]
    with pytest.raises(ValueError):
        mp.center[0] = 5.0
    with pytest.raises(AttributeError):
        mp.mass = 3.0  # type: ignore[misc]


@pytest.mark.parametrize(
    "tensor, message",
    [
        (np.array([[1.0, 0.5, 0], [0.0, 1.0, 0], [0, 0, 1.0]]), "not symmetric"),
        (np.diag([1.0, 1.0, -0.1]), "not positive semi-definite"),
        (np.diag([1.0, 1.0, 3.0]), "triangle inequality"),
        (np.full((3, 3), np.nan), "non-finite"),
        (np.eye(2), "3x3"),
    ],
)
def test_impossible_tensors_are_refused(tensor, message):
    with pytest.raises(InertiaError, match=message):
        validate_inertia(tensor)


def test_negative_mass_is_refused():
    with pytest.raises(InertiaError, match="mass"):
        MassProperties(-1.0, [0, 0, 0], np.zeros((3, 3)))


def test_two_point_masses_dumbbell():
    # Two 1 kg points at x = ±1 m: I_yy = I_zz = Σ m x² = 2 kg·m², I_xx = 0 (closed form).
    mp = combine([MassProperties.point(1.0, [-1, 0, 0]), MassProperties.point(1.0, [1, 0, 0])])
    assert mp.mass == 2.0
    assert_close(mp.center, [0, 0, 0])
    assert_close(mp.inertia, np.diag([0.0, 2.0, 2.0]))


def test_parallel_axis_about_point():
    # Cuboid about one corner, edges along the axes: moments m(b² + c²)/3 and cyclic, products -m ab/4 and cyclic
    # (tensor convention). The moments are Machinery's Handbook 31st ed. p. 253 (axis along an edge); the products
    # follow from I_xy = -∫xy dm = -m (a/2)(b/2) (Goldstein et al. §5.3, worked by hand).
    m, a, b, c = 3.0, 0.4, 0.2, 0.1
    mp = box_props(m, a, b, c, center=(a / 2, b / 2, c / 2))
    expected = np.array([
        [m * (b * b + c * c) / 3, -m * a * b / 4, -m * a * c / 4],
        [-m * a * b / 4, m * (a * a + c * c) / 3, -m * b * c / 4],
        [-m * a * c / 4, -m * b * c / 4, m * (a * a + b * b) / 3],
    ])
    assert_close(inertia_about_point(mp, [0, 0, 0]), expected, 1e-12)


def test_cube_split_into_eight_recombines():
    m, s = 8.0, 0.2
    whole = box_props(m, s, s, s, center=(1.0, -2.0, 0.5))
    parts = [
        box_props(m / 8, s / 2, s / 2, s / 2, center=(1.0 + dx * s / 4, -2.0 + dy * s / 4, 0.5 + dz * s / 4))
        for dx in (-1, 1) for dy in (-1, 1) for dz in (-1, 1)
    ]
    assert_props_close(combine(parts), whole, 1e-12)


def test_products_sign_conventions():
    # docs/references.md §5: positive P_xy = +∫xy dm vs tensor I_xy = -∫xy dm.
    mp = combine([MassProperties.point(1.0, [1, 1, 0]), MassProperties.point(1.0, [-1, -1, 0])])
    assert mp.inertia[0, 1] == pytest.approx(-2.0)  # -Σ m x y
    assert products_positive(mp.inertia)[0, 1] == pytest.approx(2.0)
    assert_close(products_positive(products_positive(mp.inertia)), mp.inertia)


def test_principal_axes_right_handed_and_sorted(rng):
    r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", (0.3, -0.7, 1.1))
    tensor = r @ np.diag([1.0, 2.0, 2.5]) @ r.T
    moments, axes = principal_axes(tensor)
    assert_close(moments, [1.0, 2.0, 2.5], 1e-12)
    assert np.dot(np.cross(axes[0], axes[1]), axes[2]) == pytest.approx(1.0)
    for k in range(3):
        assert_close(tensor @ axes[k], moments[k] * axes[k], 1e-12)


def test_inertia_in_axes_is_passive():
    tensor = np.diag([1.0, 2.0, 3.0])
    swapped = inertia_in_axes(tensor, [[0, 1, 0], [1, 0, 0], [0, 0, -1]])
    assert_close(swapped, np.diag([2.0, 1.0, 3.0]))


def test_radius_of_gyration_solid_sphere():
    # Solid sphere: k = sqrt(2/5) R (Machinery's Handbook, 31st ed., p. 237).
    m, r = 5.0, 0.1
    mp = MassProperties(m, [0, 0, 0], np.eye(3) * 0.4 * m * r * r)
    assert_close(radii_of_gyration(mp), [np.sqrt(0.4) * r] * 3, 1e-12)


def test_combine_arrays_far_from_origin_keeps_precision():
    # Two unit points 1 m apart placed 10 km from the origin: I_yy = 0.5 kg·m² exactly.
    c = np.array([[1e4, 0, 0], [1e4 + 1, 0, 0]])
    m, center, inertia = combine_arrays([1.0, 1.0], c, np.zeros((2, 3, 3)))
    assert center[0] == pytest.approx(1e4 + 0.5, abs=1e-9)
    assert inertia[1, 1] == pytest.approx(0.5, abs=1e-9)


def test_empty_combination_is_zero():
    assert combine([]).mass == 0.0


angles = st.floats(-np.pi, np.pi, allow_nan=False)
coords = st.floats(-2.0, 2.0, allow_nan=False)
sizes = st.floats(0.01, 1.0)


@st.composite
def bodies(draw):
    n = draw(st.integers(2, 6))
    out = []
    for _ in range(n):
        r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", tuple(draw(angles) for _ in range(3)))
        box = box_props(draw(st.floats(0.1, 10.0)), draw(sizes), draw(sizes), draw(sizes))
        out.append(transform(box, r, [draw(coords) for _ in range(3)]))
    return out


@settings(max_examples=40, deadline=None, derandomize=True)
@given(bodies(), st.randoms(use_true_random=False))
def test_combine_is_order_free_and_associative(parts, random):
    whole = combine(parts)
    shuffled = list(parts)
    random.shuffle(shuffled)
    assert_props_close(combine(shuffled), whole, 1e-10)
    k = len(parts) // 2
    assert_props_close(combine([combine(parts[:k]), combine(parts[k:])]), whole, 1e-10)


@settings(max_examples=40, deadline=None, derandomize=True)
@given(bodies(), angles, angles, angles, coords)
def test_principal_moments_invariant_under_rotation_and_translate_round_trip(parts, a, b, c, d):
    whole = combine(parts)
    r = rotation_from_sequence(RotationKind.INTRINSIC, "zyx", (a, b, c))
    moved = transform(whole, r, [d, -d, 2 * d])
    assert_close(principal_axes(moved.inertia)[0], principal_axes(whole.inertia)[0], 1e-10)
    back = translate(translate(whole, [d, 1.0, -d]), [-d, -1.0, d])
    assert_props_close(back, whole, 1e-12)


def test_mirror_flips_the_products_that_involve_the_mirrored_axis():
    # Reflection y -> -y: I_xy and I_yz change sign, I_xz and the moments do not (Goldstein §5.3 by hand).
    r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", (0.4, 0.5, 0.6))
    mp = transform(box_props(2.0, 0.3, 0.2, 0.1), r, [0.1, 0.5, 0.2])
    m = transform(mp, np.diag([1.0, -1.0, 1.0]), [0, 0, 0])
    assert_close(m.center, mp.center * [1, -1, 1])
    sign = np.array([[1, -1, 1], [-1, 1, -1], [1, -1, 1]])
    assert_close(m.inertia, mp.inertia * sign, 1e-12)
