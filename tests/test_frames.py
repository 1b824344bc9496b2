"""Poses and rotation sequences against scipy's Rotation (independent oracle) and hand geometry."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from conftest import assert_close
from massmodel.core.frames import (
    Pose,
    RotationKind,
    elementary_rotation,
    reflection_across_plane,
    rotation_from_sequence,
)


@pytest.mark.parametrize("seq", ["xyz", "zyx", "zxz", "y", "xy"])
def test_sequences_match_scipy(seq):
    angles = (0.3, -1.1, 2.0)[: len(seq)]
    # scipy: lower-case = extrinsic, upper-case = intrinsic (scipy.spatial.transform.Rotation.from_euler docs).
    assert_close(rotation_from_sequence(RotationKind.EXTRINSIC, seq, angles),
                 Rotation.from_euler(seq, angles).as_matrix(), 1e-14)
    assert_close(rotation_from_sequence(RotationKind.INTRINSIC, seq, angles),
                 Rotation.from_euler(seq.upper(), angles).as_matrix(), 1e-14)


@pytest.mark.parametrize("axis", ["x", "y", "z"])
def test_elementary_rotation_matches_scipy(axis):
    # scipy.spatial.transform.Rotation.from_euler (active, right-hand rule) as the independent oracle
    assert_close(elementary_rotation(axis, 0.7), Rotation.from_euler(axis, 0.7).as_matrix(), 1e-15)
    with pytest.raises(ValueError, match="rotation axis"):
        elementary_rotation("w", 0.7)


def test_extrinsic_xyz_equals_intrinsic_zyx_reversed():
    a = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", (0.1, 0.2, 0.3))
    b = rotation_from_sequence(RotationKind.INTRINSIC, "zyx", (0.3, 0.2, 0.1))
    assert_close(a, b, 1e-14)


def test_quarter_turn_about_z_maps_x_to_y():
    r = rotation_from_sequence(RotationKind.EXTRINSIC, "z", (np.pi / 2,))
    assert_close(r @ [1, 0, 0], [0, 1, 0], 1e-15)


def test_composition_order_and_inverse():
    p = Pose(rotation_from_sequence(RotationKind.EXTRINSIC, "z", (np.pi / 2,)), [1.0, 0, 0])
    q = Pose.from_translation([0, 0, 2.0])
    x = np.array([0.5, 0.0, 0.0])
    assert_close((p * q).apply(x), p.apply(q.apply(x)), 1e-15)
    assert_close((p * q).apply(x), [1.0, 0.5, 2.0], 1e-15)
    assert (p * p.inverse()).almost_equal(Pose.identity())


def test_reflection_is_a_pose_with_negative_determinant():
    m = Pose(reflection_across_plane([0, 1, 0]), [0, 0, 0])
    assert m.is_mirrored
    assert_close(m.apply([1, 2, 3]), [1, -2, 3])


def test_non_orthogonal_matrix_is_refused():
    with pytest.raises(ValueError, match="orthogonal"):
        Pose(np.diag([1.0, 2.0, 1.0]), [0, 0, 0])


def test_written_out_product_equals_the_summed_product():
    # frames._matmul is written out for speed; every entry must be the same left-to-right sum of three products as
    # the loop form (bit for bit, signed zeros included: a rotation by 0 has entries -0.0)
    from massmodel.core.frames import _matmul

    rng = np.random.default_rng(3)
    for k in range(500):
        a, b = (rng.normal(size=(3, 3)).tolist() for _ in range(2))
        if k % 2:
            a[1][2], b[0][1], b[2][0] = -0.0, 0.0, -0.0
        want = [[a[i][0] * b[0][j] + a[i][1] * b[1][j] + a[i][2] * b[2][j] for j in range(3)] for i in range(3)]
        assert np.array(_matmul(a, b)).tobytes() == np.array(want).tobytes()
