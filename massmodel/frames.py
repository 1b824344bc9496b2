"""Frames, poses and rotations: the conventions of massmodel, written once.

Conventions
-----------
* Axes are right-handed. Lengths in metres, angles in radians.
* A :class:`Pose` maps coordinates in a child frame to coordinates in its parent frame:
  ``p_parent = pose.linear @ p_child + pose.translation``.
* Composition follows the scipy rule "``p * q`` is ``q`` followed by ``p``": ``(p * q).apply(x) ==
  p.apply(q.apply(x))``. A part inside a group has the model-frame pose ``pose_group_in_model * pose_part_in_group``.
* ``Pose.linear`` is orthogonal. Its determinant is +1 for a rotation and −1 for a mirrored copy (a reflection
  across the vehicle centre plane composed with a rotation); mass properties transform the same way for both
  (``I' = R I Rᵀ``).
* Rotations from a sequence of elementary angles name their kind explicitly: *extrinsic* (each rotation about the
  fixed parent axes, applied in the order written) or *intrinsic* (each about the axes as already rotated).
  Extrinsic "xyz" with angles (a, b, c) is ``R = Rz(c) @ Ry(b) @ Rx(a)``, which equals intrinsic "zyx" with angles
  (c, b, a); this matches scipy's lower-case "xyz" (extrinsic) and upper-case "ZYX" (intrinsic) and cadquery's
  ``Location((x, y, z), (rx, ry, rz))``.
* Inertia tensors use the tensor convention: off-diagonal entries are −∫xy dm (see :mod:`massmodel.massprops`).

References
----------
Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed., §4.4 (Euler angles; active vs passive rotations).
"""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = [
    "RotationKind",
    "Pose",
    "elementary_rotation",
    "rotation_from_sequence",
    "reflection_across_plane",
    "is_orthogonal",
]

FloatArray = npt.NDArray[np.float64]


class RotationKind(enum.Enum):
    """Whether the axes of a rotation sequence are fixed (extrinsic) or move with the body (intrinsic)."""

    EXTRINSIC = "extrinsic"
    INTRINSIC = "intrinsic"


def elementary_rotation(axis: str, angle: float) -> FloatArray:
    """Active rotation matrix about one coordinate axis.

    Parameters
    ----------
    axis : {"x", "y", "z"}
        Axis of rotation.
    angle : float
        Angle, rad, right-hand rule.

    Returns
    -------
    (3, 3) float
        Rotation matrix ``R`` with ``R @ v`` the rotated vector.
    """
    c, s = np.cos(angle), np.sin(angle)
    if axis == "x":
        return np.array([[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]])
    if axis == "y":
        return np.array([[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]])
    if axis == "z":
        return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
    raise ValueError(f"rotation axis must be 'x', 'y' or 'z', not {axis!r}")


def rotation_from_sequence(kind: RotationKind, axes: str, angles: tuple[float, ...]) -> FloatArray:
    """Rotation matrix from an explicit sequence of elementary rotations.

    Parameters
    ----------
    kind : RotationKind
        EXTRINSIC: rotate about the fixed parent axes in the order written.
        INTRINSIC: rotate about the body's own (already rotated) axes in the order written.
    axes : str
        One to three letters from "xyz", e.g. "xyz" or "zyx"; an axis may repeat (e.g. "zxz").
    angles : tuple of float
        One angle per letter, rad.

    Returns
    -------
    (3, 3) float
        Active rotation matrix mapping child to parent coordinates.

    Examples
    --------
    >>> r = rotation_from_sequence(RotationKind.EXTRINSIC, "z", (np.pi / 2,))
    >>> np.round(r @ [1.0, 0.0, 0.0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    if len(axes) != len(angles) or not 1 <= len(axes) <= 3:
        raise ValueError(f"rotation sequence {axes!r} needs one angle per axis, got {len(angles)} angles")
    result = np.eye(3)
    for axis, angle in zip(axes, angles, strict=True):
        step = elementary_rotation(axis, angle)
        # Extrinsic: each new rotation is applied in the fixed frame (pre-multiply);
        # intrinsic: about the moving axes (post-multiply).
        result = step @ result if kind is RotationKind.EXTRINSIC else result @ step
    return result


def reflection_across_plane(normal: npt.ArrayLike) -> FloatArray:
    """Householder reflection ``E - 2 n nᵀ`` across the plane through the origin with unit normal ``n``.

    Parameters
    ----------
    normal : (3,) float
        Plane normal (normalised here), e.g. the vehicle's left direction for the centre plane.
    """
    n = np.asarray(normal, dtype=float)
    n = n / np.linalg.norm(n)
    return np.eye(3) - 2.0 * np.outer(n, n)


def is_orthogonal(matrix: npt.ArrayLike, tol: float = 1e-9) -> bool:
    """True when ``matrix`` is a 3×3 orthogonal matrix (rotation or reflection) to ``tol``."""
    m = np.asarray(matrix, dtype=float)
    return m.shape == (3, 3) and bool(np.allclose(m @ m.T, np.eye(3), atol=tol))


@dataclass(frozen=True, slots=True, eq=False)
class Pose:
    """Placement of a child frame in its parent: ``p_parent = linear @ p_child + translation``.

    Parameters
    ----------
    linear : (3, 3) float
        Orthogonal matrix; det +1 (rotation) or −1 (mirrored copy).
    translation : (3,) float
        Origin of the child frame in parent coordinates, m.
    """

    linear: FloatArray
    translation: FloatArray

    def __post_init__(self) -> None:
        linear = np.array(self.linear, dtype=float)
        translation = np.array(self.translation, dtype=float).reshape(3)
        if not is_orthogonal(linear):
            raise ValueError("pose matrix must be orthogonal (a rotation or a reflection)")
        if not (np.all(np.isfinite(linear)) and np.all(np.isfinite(translation))):
            raise ValueError("pose must be finite")
        linear.setflags(write=False)
        translation.setflags(write=False)
        object.__setattr__(self, "linear", linear)
        object.__setattr__(self, "translation", translation)

    @classmethod
    def identity(cls) -> Pose:
        """The pose that leaves coordinates unchanged."""
        return cls(np.eye(3), np.zeros(3))

    @classmethod
    def from_translation(cls, translation: npt.ArrayLike) -> Pose:
        """A pure translation, m."""
        return cls(np.eye(3), np.asarray(translation, dtype=float))

    @property
    def is_mirrored(self) -> bool:
        """True when the pose contains a reflection (det = −1)."""
        return bool(np.linalg.det(self.linear) < 0.0)

    def apply(self, points: npt.ArrayLike) -> FloatArray:
        """Map points (3,) or (N, 3) from child to parent coordinates, m."""
        p = np.asarray(points, dtype=float)
        return p @ self.linear.T + self.translation

    def apply_vector(self, vectors: npt.ArrayLike) -> FloatArray:
        """Map direction vectors (3,) or (N, 3) from child to parent axes (no translation)."""
        return np.asarray(vectors, dtype=float) @ self.linear.T

    def __mul__(self, other: Pose) -> Pose:
        """``self * other`` is ``other`` followed by ``self``."""
        return Pose(self.linear @ other.linear, self.linear @ other.translation + self.translation)

    def inverse(self) -> Pose:
        """The pose mapping parent coordinates back to the child frame."""
        return Pose(self.linear.T, -(self.linear.T @ self.translation))

    def matrix4(self) -> FloatArray:
        """Homogeneous 4×4 matrix of this pose (translation in m)."""
        m = np.eye(4)
        m[:3, :3] = self.linear
        m[:3, 3] = self.translation
        return m

    def almost_equal(self, other: Pose, tol: float = 1e-12) -> bool:
        """Whether two poses agree entry by entry to ``tol``."""
        return bool(
            np.allclose(self.linear, other.linear, atol=tol)
            and np.allclose(self.translation, other.translation, atol=tol)
        )

    def __repr__(self) -> str:
        return f"Pose(linear={self.linear.tolist()}, translation={self.translation.tolist()})"
