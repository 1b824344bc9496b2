"""Fit of a box-shaped block in a box slot in closed form (numpy only): the same :class:`FitResult` as the exact
OpenCascade check :func:`massmodel.cad.contact.fit_in_slot`, without loading the CAD kernel.

When it applies
    The slot is a box and the block is a box (or a box with material taken away inside it, see :class:`BoxBlock`),
    and the block's axes are the slot's axes up to order and sign: the rotation from the block frame to the slot frame
    is a signed permutation matrix to 1e-12 in every entry. Then, in the slot's frame, the block's box is the interval
    box spanned by its 8 corners, and:

    * inside: every corner lies within the slot's walls. Nothing lies outside; the distance from the block to the
      slot's shell is the smallest of the six wall gaps (each wall faces a face of the block squarely, and that face
      has material on its plane); the closest points are a point of that face and its foot on the wall. A block with
      material taken away may lie 1e-12 m past a wall (the round-off of placing it flush; less than the sliver volume
      outside for faces under 1 m²) and count as touching it.
    * otherwise, for a whole box only: the volume outside is the block's volume minus the product of the interval
      overlaps; the distance is 0 when the boxes meet (the block crosses, touches or holds the shell; both closest
      points are then one point of the slot's shell within the block, as OpenCascade reports a meeting) and the
      distance between the two boxes when they are apart.

    Anything else (another rotation, a block with material taken away that is not inside) returns None: the caller
    uses the exact OpenCascade check. The tolerances are those of the exact check: outside volumes below
    :data:`massmodel.cad.contact.SLIVER_MM3` count as none, and the block fits when nothing lies outside and the
    distance is at least the clearance less 1e-9 m.

Lengths in metres; poses map the block (slot) frame, centred on its box, to the model frame
(:mod:`massmodel.core.frames`).

References
----------
Interval arithmetic of axis-aligned boxes (elementary): the intersection of two boxes is the box of the intersections
of their intervals, and the distance between disjoint boxes is the norm of the per-axis gaps. The same AABB overlap
and closest-point tests are in Ericson, C. (2005). Real-Time Collision Detection, Morgan Kaufmann, §4.2 and §5.1.3
(section numbers from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core.frames import Pose

from .contact import FIT_TOL, SLIVER_MM3, FitResult

__all__ = ["CLOSED_FORM", "PERMUTATION_TOL", "ROUND_OFF", "BoxBlock", "box_fit", "signed_permutation"]

FloatArray = npt.NDArray[np.float64]

#: largest difference of a rotation's entries from 0 or ±1 for it to count as a signed permutation
PERMUTATION_TOL = 1e-12
CLOSED_FORM = "closed form"  # FitResult.method
ROUND_OFF = 1e-12  # m: a drilled or chamfered block this far past a wall is flush with it (see box_fit)


@dataclass(frozen=True)
class BoxBlock:
    """A block for the closed-form fit: a box, possibly with material taken away inside it.

    Parameters
    ----------
    size : (3,) float
        Box edges along the block axes, m.
    pose : Pose
        Block frame (centred on the box) in the model frame.
    whole : bool
        True when the solid is the whole box; False when material is taken away (chamfers, holes) so that the solid
        lies within the box and still has material on the plane of each of the six box faces.
    face_points : (3, 2, 3) float, optional
        ``face_points[k, s]``: a point of the solid on the box face across block axis ``k`` on the low (s = 0) or
        high (s = 1) side, m, block frame. Default: the face centres (right for a whole box).
    """

    size: tuple[float, float, float]
    pose: Pose
    whole: bool = True
    face_points: FloatArray | None = field(default=None, repr=False)

    def __post_init__(self) -> None:
        size = np.asarray(self.size, dtype=float)
        if size.shape != (3,) or not np.all(np.isfinite(size) & (size > 0.0)):
            raise ValueError(f"block size must be three positive lengths, got {self.size!r}")
        half = 0.5 * size
        if self.face_points is None:
            pts = np.zeros((3, 2, 3))
            for k in range(3):
                pts[k, 0, k], pts[k, 1, k] = -half[k], half[k]
        else:
            pts = np.array(self.face_points, dtype=float)
            if pts.shape != (3, 2, 3):
                raise ValueError("face_points must be a (3, 2, 3) array")
        pts.setflags(write=False)
        object.__setattr__(self, "size", tuple(float(s) for s in size))
        object.__setattr__(self, "face_points", pts)


def signed_permutation(rotation: npt.ArrayLike, tol: float = PERMUTATION_TOL) -> FloatArray | None:
    """The signed permutation matrix a rotation equals to ``tol`` in every entry, or None.

    Parameters
    ----------
    rotation : (3, 3) float
    tol : float

    Returns
    -------
    (3, 3) float or None
        Entries exactly 0 or ±1, one non-zero per row and column.
    """
    r = np.asarray(rotation, dtype=float)
    p = np.round(r)
    if np.max(np.abs(r - p)) > tol or not np.all(np.abs(p) <= 1.0):
        return None
    if not (np.all(np.abs(p).sum(axis=0) == 1.0) and np.all(np.abs(p).sum(axis=1) == 1.0)):
        return None
    return p


def box_fit(block: BoxBlock, slot_size: npt.ArrayLike, slot_pose: Pose, clearance: float) -> FitResult | None:
    """Closed-form fit of a box block in a box slot, or None where only the exact check applies.

    Parameters
    ----------
    block : BoxBlock
    slot_size : (3,) float
        Slot box edges along the slot axes, m.
    slot_pose : Pose
        Slot frame (centred on the box) in the model frame.
    clearance : float
        Required gap to the slot walls, m.

    Returns
    -------
    FitResult or None
        Identical in meaning to :func:`massmodel.cad.contact.fit_in_slot` on the same solids (closest points, m,
        model frame; where many pairs are closest, one of them); None when the rotation between the two frames is
        not a signed permutation, or when a block that is not a whole box is not inside the slot.
    """
    r_slot = np.asarray(slot_pose.linear, dtype=float)
    perm = signed_permutation(r_slot.T @ np.asarray(block.pose.linear, dtype=float))
    if perm is None:
        return None
    half_slot = 0.5 * np.asarray(slot_size, dtype=float)
    half = 0.5 * np.asarray(block.size)
    centre = r_slot.T @ (np.asarray(block.pose.translation, dtype=float) - np.asarray(slot_pose.translation))
    signs = np.array([[sx, sy, sz] for sx in (-1.0, 1.0) for sy in (-1.0, 1.0) for sz in (-1.0, 1.0)])
    corners = centre + (signs * half) @ perm.T  # the 8 corners in the slot frame
    lo, hi = corners.min(axis=0), corners.max(axis=0)

    def to_model(q: FloatArray) -> FloatArray:
        return r_slot @ q + np.asarray(slot_pose.translation, dtype=float)

    gaps = np.concatenate([lo + half_slot, half_slot - hi])  # low walls x, y, z, then high walls
    # A whole box past a wall is measured exactly below; a block with material taken away is let ROUND_OFF past a
    # wall (the round-off of placing it flush) only where that leaves less than the sliver volume outside.
    faces_m2 = float(np.max(4.0 * np.array([half[1] * half[2], half[0] * half[2], half[0] * half[1]])))
    slack = ROUND_OFF if not block.whole and faces_m2 * ROUND_OFF * 1e9 < SLIVER_MM3 else 0.0
    if np.all(gaps >= -slack):  # inside: the 8 corners within the walls
        m = int(np.argmin(gaps))
        k, side = m % 3, (1.0 if m >= 3 else -1.0)
        axis = int(np.flatnonzero(perm[k])[0])  # the block axis along slot axis k
        face = 1 if side * perm[k, axis] > 0.0 else 0
        on_block = centre + perm @ block.face_points[axis, face]  # type: ignore[index]
        on_wall = on_block.copy()
        gap = max(float(gaps[m]), 0.0)  # a face past its wall by round-off touches it
        if gap > 0.0:
            on_wall[k] = side * half_slot[k]
        return FitResult(gap >= clearance - FIT_TOL, 0.0, gap, clearance, to_model(on_block), to_model(on_wall),
                         CLOSED_FORM)
    if not block.whole:
        return None
    overlap = np.minimum(hi, half_slot) - np.maximum(lo, -half_slot)
    outside_m3 = float(np.prod(2.0 * half) - np.prod(np.clip(overlap, 0.0, None)))
    outside = 0.0 if outside_m3 * 1e9 < SLIVER_MM3 else outside_m3
    if np.all(overlap >= 0.0):  # the boxes meet: the block crosses, touches or holds the slot's shell
        point = np.clip(centre, np.maximum(lo, -half_slot), np.minimum(hi, half_slot))
        k = int(np.flatnonzero((hi > half_slot) | (lo < -half_slot))[0])
        point[k] = half_slot[k] if hi[k] > half_slot[k] else -half_slot[k]
        return FitResult(outside == 0.0 and clearance <= FIT_TOL, outside, 0.0, clearance, to_model(point),
                         to_model(point), CLOSED_FORM)
    on_block = np.clip(0.5 * (np.maximum(lo, -half_slot) + np.minimum(hi, half_slot)), lo, hi)
    on_wall = np.clip(on_block, -half_slot, half_slot)
    gap = float(np.linalg.norm(on_block - on_wall))
    return FitResult(outside == 0.0 and gap >= clearance - FIT_TOL, outside, gap, clearance, to_model(on_block),
                     to_model(on_wall), CLOSED_FORM)
