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
* Inertia tensors use the tensor convention: off-diagonal entries are −∫xy dm (see :mod:`massmodel.core.massprops`).

References
----------
Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed., §4.4 (Euler angles; active vs passive rotations).
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = [
    "IDENTITY",
    "RotationKind",
    "Pose",
    "elementary_rotation",
    "rotation_from_sequence",
    "reflection_across_plane",
    "is_orthogonal",
]

FloatArray = npt.NDArray[np.float64]

#: The (3, 3) identity, read-only and shared by every pose without a rotation (a product with it is the other factor's
#: matrix, shared too: a model of many parts keeps one matrix per distinct rotation instead of one per part).
IDENTITY: FloatArray = np.eye(3)
IDENTITY.setflags(write=False)


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
    return np.array(_elementary(axis, float(angle)))


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
    result = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]
    for axis, angle in zip(axes, angles, strict=True):
        step = _elementary(axis, angle)
        # Extrinsic: each new rotation is applied in the fixed frame (pre-multiply);
        # intrinsic: about the moving axes (post-multiply).
        result = _matmul(step, result) if kind is RotationKind.EXTRINSIC else _matmul(result, step)
    return np.array(result)


def _elementary(axis: str, angle: float) -> list[list[float]]:
    """The rotation about one axis as nested lists (:func:`rotation_from_sequence` multiplies the sequence out on
    floats: it runs per part)."""
    c, s = math.cos(angle), math.sin(angle)
    if axis == "x":
        return [[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]]
    if axis == "y":
        return [[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]]
    if axis == "z":
        return [[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]]
    raise ValueError(f"rotation axis must be 'x', 'y' or 'z', not {axis!r}")


def _matmul(a: list[list[float]], b: list[list[float]]) -> list[list[float]]:
    """``a @ b`` of 3×3 nested lists, each entry summed left to right as ``a[i][0] * b[0][j] + a[i][1] * b[1][j]
    + a[i][2] * b[2][j]`` (written out: it runs three times a part)."""
    (a00, a01, a02), (a10, a11, a12), (a20, a21, a22) = a
    (b00, b01, b02), (b10, b11, b12), (b20, b21, b22) = b
    return [
        [a00 * b00 + a01 * b10 + a02 * b20, a00 * b01 + a01 * b11 + a02 * b21, a00 * b02 + a01 * b12 + a02 * b22],
        [a10 * b00 + a11 * b10 + a12 * b20, a10 * b01 + a11 * b11 + a12 * b21, a10 * b02 + a11 * b12 + a12 * b22],
        [a20 * b00 + a21 * b10 + a22 * b20, a20 * b01 + a21 * b11 + a22 * b21, a20 * b02 + a21 * b12 + a22 * b22],
    ]


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
    """True when ``matrix`` is a 3×3 orthogonal matrix (rotation or reflection) to ``tol``.

    The test of ``numpy.allclose(m @ m.T, E, atol=tol)`` (so a relative tolerance of 1e-5 on the unit diagonal),
    written out on the nine floats because it runs for every pose a model file makes. NaN fails.
    """
    m = np.asarray(matrix, dtype=float)
    if m.shape != (3, 3):
        return False
    r = m.tolist()
    for i in range(3):
        for j in range(i, 3):
            g = r[i][0] * r[j][0] + r[i][1] * r[j][1] + r[i][2] * r[j][2]
            ok = abs(g - 1.0) <= tol + 1e-5 if i == j else abs(g) <= tol
            if not ok:
                return False
    return True


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
        if not all(math.isfinite(x) for x in (*linear.ravel().tolist(), *translation.tolist())):
            raise ValueError("pose must be finite")
        linear.setflags(write=False)
        translation.setflags(write=False)
        object.__setattr__(self, "linear", linear)
        object.__setattr__(self, "translation", translation)

    @classmethod
    def _trusted(cls, linear: FloatArray, translation: FloatArray) -> Pose:
        """A pose from arrays known to be valid (products and inverses of valid poses): no checks, no copies."""
        pose = object.__new__(cls)
        linear.setflags(write=False)
        translation.setflags(write=False)
        object.__setattr__(pose, "linear", linear)
        object.__setattr__(pose, "translation", translation)
        return pose

    @classmethod
    def identity(cls) -> Pose:
        """The pose that leaves coordinates unchanged (one shared instance: poses are immutable)."""
        return _IDENTITY_POSE

    @classmethod
    def from_translation(cls, translation: npt.ArrayLike) -> Pose:
        """A pure translation, m."""
        t = np.array(translation, dtype=float).reshape(3)
        if not np.isfinite(t).all():
            raise ValueError("pose must be finite")
        return cls._trusted(IDENTITY, t)

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
        # a product of orthogonal matrices is orthogonal: no new checks (round-off grows by ~1e-16 per product);
        # a factor without rotation leaves the other's (read-only) matrix as it is, shared
        if other.linear is IDENTITY:
            linear = self.linear
        elif self.linear is IDENTITY:
            linear = other.linear
        else:
            linear = self.linear @ other.linear
        return Pose._trusted(linear, self.linear @ other.translation + self.translation)

    def inverse(self) -> Pose:
        """The pose mapping parent coordinates back to the child frame."""
        return Pose._trusted(self.linear.T.copy(), -(self.linear.T @ self.translation))

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


_IDENTITY_POSE = Pose._trusted(IDENTITY, np.zeros(3))
