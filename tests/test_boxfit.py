"""Tests for massmodel.cad.boxfit: the closed-form fit of a box block in a box slot against the exact check.

Oracle: OpenCascade (OCP) through :func:`massmodel.cad.contact.fit_in_slot` — the volume of the boolean
block − slot (BRepAlgoAPI_Cut, BRepGProp) and the distance from the block to the slot's shell
(BRepExtrema_DistShapeShape) — on the B-rep solids of the same boxes, placed by the same poses. The closest points are
checked for their meaning with OpenCascade too: each lies on its solid's boundary and they are `clearance` apart.
Closed forms written here: the volume outside is a slab of the block (elementary).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from massmodel.ballast.block import BlockGeometry, Chamfer, Counterbore, HolePattern
from massmodel.cad.boxfit import BoxBlock, box_fit, signed_permutation
from massmodel.core.frames import Pose

pytest.importorskip("OCP")

from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeVertex  # noqa: E402
from OCP.BRepClass3d import BRepClass3d_SolidClassifier  # noqa: E402
from OCP.BRepExtrema import BRepExtrema_DistShapeShape  # noqa: E402
from OCP.gp import gp_Pnt  # noqa: E402
from OCP.TopAbs import TopAbs_IN, TopAbs_ON, TopAbs_SHELL  # noqa: E402
from OCP.TopExp import TopExp_Explorer  # noqa: E402

from massmodel.cad.contact import fit_in_slot  # noqa: E402
from massmodel.cad.primitives import to_solid  # noqa: E402
from massmodel.cad.solids import place_solid  # noqa: E402
from massmodel.core.shapes import Box  # noqa: E402


def _signed_permutations() -> list[np.ndarray]:
    out = []
    for order in ((0, 1, 2), (0, 2, 1), (1, 0, 2), (1, 2, 0), (2, 0, 1), (2, 1, 0)):
        for signs in np.ndindex(2, 2, 2):
            p = np.zeros((3, 3))
            for row, col in enumerate(order):
                p[row, col] = 1.0 if signs[row] else -1.0
            out.append(p)
    return out


PERMUTATIONS = _signed_permutations()  # all 48, mirrored ones (det = −1) included


def _distance_to_boundary_mm(point_m: np.ndarray, solid) -> float:
    """OpenCascade distance (mm) from a point to the shell(s) of a solid: 0 when the point is on its boundary."""
    vertex = BRepBuilderAPI_MakeVertex(gp_Pnt(*(float(c) * 1e3 for c in point_m))).Vertex()
    best = np.inf
    explorer = TopExp_Explorer(solid, TopAbs_SHELL)
    while explorer.More():
        dist = BRepExtrema_DistShapeShape(vertex, explorer.Current())
        best = min(best, dist.Value())
        explorer.Next()
    return best


def _in_solid(point_m: np.ndarray, solid) -> bool:
    """OpenCascade's solid classifier: the point lies in the solid or on its boundary (to 1e-7 mm)."""
    classifier = BRepClass3d_SolidClassifier(solid)
    classifier.Perform(gp_Pnt(*(float(c) * 1e3 for c in point_m)), 1e-7)
    return classifier.State() in (TopAbs_IN, TopAbs_ON)


def _assert_same_meaning(ours, exact, block_solid, slot_solid) -> None:
    assert ours.fits == exact.fits
    assert ours.outside_volume == pytest.approx(exact.outside_volume, rel=1e-9, abs=1e-15)
    assert ours.clearance == pytest.approx(exact.clearance, abs=1e-10)  # OpenCascade's distance: ~1e-7 mm
    assert ours.required_clearance == exact.required_clearance
    assert ours.reason == exact.reason
    # the closest points: `clearance` apart, one on the block's boundary, one on the slot's shell
    assert np.linalg.norm(ours.closest_block - ours.closest_envelope) == pytest.approx(ours.clearance, abs=1e-12)
    assert _distance_to_boundary_mm(ours.closest_envelope, slot_solid) < 1e-6
    if ours.clearance > 0.0:
        assert _distance_to_boundary_mm(ours.closest_block, block_solid) < 1e-6
    else:  # they meet: one common point, on the slot's shell and in the (closed) block
        assert _in_solid(ours.closest_block, block_solid)


def _case(rng: np.random.Generator, kind: str):
    """A random slot (any rotation) and a box block in a random signed permutation of its axes, placed as ``kind``."""
    slot_size = rng.uniform(0.05, 0.3, 3)
    slot_pose = Pose(Rotation.random(random_state=rng).as_matrix(), rng.uniform(-1.0, 1.0, 3))
    perm = PERMUTATIONS[rng.integers(len(PERMUTATIONS))]
    # a clearance of 0 or more; the distance tolerance is tried with one (without, a block a few 1e-9 m past a wall
    # leaves some 0.001 mm³ outside, where the boolean's own fuzz decides whether it counts)
    tol_case = kind in ("within_tol", "short")
    clearance = float(rng.choice([1e-4 if tol_case else 0.0, rng.uniform(1e-4, 0.003)]))
    h = 0.5 * slot_size
    if kind == "contains":
        block_size = np.abs(perm.T) @ (slot_size + rng.uniform(0.002, 0.02, 3))
    else:
        block_size = np.abs(perm.T) @ (slot_size * rng.uniform(0.2, 0.8, 3))
    e = np.abs(perm) @ (0.5 * block_size)  # half extents along the slot axes
    room = h - e - clearance
    centre = rng.uniform(-1.0, 1.0, 3) * np.maximum(room - 1e-4, 0.0)
    k, side = int(rng.integers(3)), float(rng.choice([-1.0, 1.0]))
    if kind == "touches":  # one wall gap exactly the clearance
        centre[k] = side * room[k]
    elif kind == "within_tol":  # 0.5e-9 m short of the clearance: still fits
        centre[k] = side * (room[k] + 0.5e-9)
    elif kind == "short":  # 5e-9 m short: does not fit
        centre[k] = side * (room[k] + 5e-9)
    elif kind == "protrudes":
        centre[k] = side * (h[k] - e[k] + rng.uniform(0.001, 1.5 * e[k]))
    elif kind == "apart":
        centre[k] = side * (h[k] + e[k] + rng.uniform(0.001, 0.05))
    elif kind == "contains":
        centre = rng.uniform(-1e-3, 1e-3, 3)
    block_pose = Pose(slot_pose.linear @ perm, slot_pose.translation + slot_pose.linear @ centre)
    return block_size, block_pose, slot_size, slot_pose, clearance, (k, side)


KINDS = ["fits", "touches", "within_tol", "short", "protrudes", "apart", "contains"]


@pytest.mark.parametrize("kind", KINDS)
def test_closed_form_equals_the_opencascade_check(kind):
    rng = np.random.default_rng(20261204 + KINDS.index(kind))
    for _ in range(12):
        block_size, block_pose, slot_size, slot_pose, clearance, _ = _case(rng, kind)
        ours = box_fit(BoxBlock(tuple(block_size), block_pose), slot_size, slot_pose, clearance)
        block_solid = place_solid(to_solid(Box(*block_size)), block_pose)
        slot_solid = place_solid(to_solid(Box(*slot_size)), slot_pose)
        exact = fit_in_slot(block_solid, slot_solid, clearance)
        assert ours is not None
        _assert_same_meaning(ours, exact, block_solid, slot_solid)
        if kind in ("fits", "touches", "within_tol"):
            assert ours.fits
        if kind in ("short", "protrudes", "apart", "contains"):
            assert not ours.fits


def test_protrusion_on_each_side_is_the_slab_outside():
    # closed form: a block pushed d past one wall has d x (its two other edges) outside the slot
    rng = np.random.default_rng(7)
    slot_size = np.array([0.2, 0.12, 0.08])
    slot_pose = Pose(Rotation.from_euler("xyz", [10.0, -35.0, 70.0], degrees=True).as_matrix(), [0.3, -0.1, 0.2])
    block_size = np.array([0.05, 0.04, 0.03])
    for k in range(3):
        for side in (-1.0, 1.0):
            perm = PERMUTATIONS[rng.integers(len(PERMUTATIONS))]
            e = np.abs(perm) @ (0.5 * block_size)
            d = 0.004
            centre = np.zeros(3)
            centre[k] = side * (0.5 * slot_size[k] - e[k] + d)
            pose = Pose(slot_pose.linear @ perm, slot_pose.translation + slot_pose.linear @ centre)
            fit = box_fit(BoxBlock(tuple(block_size), pose), slot_size, slot_pose, 0.001)
            across = np.prod(2.0 * np.delete(e, k))
            assert fit is not None and not fit.fits and fit.clearance == 0.0
            assert fit.outside_volume == pytest.approx(d * across, rel=1e-9)
            assert f"{d * across * 1e9:.1f} mm^3 of the block lies outside the slot" == fit.reason


def test_another_rotation_is_left_to_the_exact_check():
    slot_pose = Pose.identity()
    tilted = Pose(Rotation.from_euler("z", 1e-6).as_matrix(), [0.0, 0.0, 0.0])  # 1e-6 rad: not a permutation
    assert box_fit(BoxBlock((0.01, 0.01, 0.01), tilted), (0.1, 0.1, 0.1), slot_pose, 0.0) is None
    assert signed_permutation(Rotation.from_euler("z", 1e-13).as_matrix()) is not None  # within 1e-12
    assert signed_permutation(np.ones((3, 3)) / 3.0) is None


BLOCKS = {
    "chamfered": BlockGeometry((0.06, 0.04, 0.025), chamfer=Chamfer(0.003)),
    "chamfered_z": BlockGeometry((0.06, 0.04, 0.025), chamfer=Chamfer(0.004, "z")),
    "holes": BlockGeometry((0.06, 0.04, 0.025), holes=HolePattern("grid", 4, 0.0065, "z", pitch=0.03, pitch2=0.02,
                                                                   columns=2)),
    "centre_hole": BlockGeometry((0.05, 0.05, 0.02), chamfer=Chamfer(0.002), holes=HolePattern("line", 1, 0.01, "z")),
    "holes_chamfer_cbore": BlockGeometry(
        (0.07, 0.05, 0.03), chamfer=Chamfer(0.002, "xy"),
        holes=HolePattern("line", 2, 0.0065, "x", pitch=0.025, counterbore=Counterbore(0.011, 0.006))),
}


@pytest.mark.parametrize("name", sorted(BLOCKS))
def test_a_block_with_chamfers_and_holes_inside_the_slot(name):
    # the solid lies within its box and has material on every face plane: inside the slot, the closed form holds
    g = BLOCKS[name]
    rng = np.random.default_rng(11)
    for axis, block_side in np.ndindex(3, 2):  # each of the six block faces is the one nearest a wall once
        slot_size = np.abs(rng.uniform(1.1, 1.6, 3) * np.max(g.size))
        slot_pose = Pose(Rotation.random(random_state=rng).as_matrix(), rng.uniform(-0.5, 0.5, 3))
        perm = PERMUTATIONS[rng.integers(len(PERMUTATIONS))]
        e = np.abs(perm) @ (0.5 * np.array(g.size))
        clearance = 0.002
        centre = rng.uniform(-0.5, 0.5, 3) * (0.5 * slot_size - e - clearance)
        k = int(np.flatnonzero(perm[:, axis])[0])  # block axis `axis` lies along slot axis k
        side = perm[k, axis] * (1.0 if block_side else -1.0)
        centre[k] = side * (0.5 * slot_size[k] - e[k] - clearance)  # that face at exactly its clearance
        pose = Pose(slot_pose.linear @ perm, slot_pose.translation + slot_pose.linear @ centre)
        block = BoxBlock(g.size, pose, whole=False, face_points=g.face_points())
        ours = box_fit(block, slot_size, slot_pose, clearance)
        block_solid = place_solid(g.to_solid(), pose)
        slot_solid = place_solid(to_solid(Box(*slot_size)), slot_pose)
        assert ours is not None and ours.fits
        _assert_same_meaning(ours, fit_in_slot(block_solid, slot_solid, clearance), block_solid, slot_solid)


def test_a_block_with_holes_not_inside_is_left_to_the_exact_check():
    g = BLOCKS["holes"]
    pose = Pose.from_translation([0.03, 0.0, 0.0])  # pokes out of a 0.08 m slot by 0.02 m
    block = BoxBlock(g.size, pose, whole=False, face_points=g.face_points())
    assert box_fit(block, (0.08, 0.08, 0.08), Pose.identity(), 0.0) is None


@pytest.mark.parametrize("depth", [1e-9, 1e-8, 1e-6])
@pytest.mark.parametrize("angles", [(0.0, 0.0, 0.0), (20.0, 30.0, 40.0)])
def test_a_box_a_hair_past_a_wall_is_measured_like_the_boolean(depth, angles):
    # A 100 mm cube `depth` past the +x wall of a 200 mm slot: depth x 100 x 100 mm outside (closed form), which the
    # OpenCascade boolean finds too; 1e-9 m gives 0.01 mm³, above the 0.001 mm³ sliver: it does not fit.
    rot = Rotation.from_euler("xyz", angles, degrees=True).as_matrix()
    slot_pose = Pose(rot, [0.1, 0.2, 0.3])
    pose = Pose(rot, slot_pose.translation + rot @ np.array([0.05 + depth, 0.0, 0.0]))
    ours = box_fit(BoxBlock((0.1, 0.1, 0.1), pose), (0.2, 0.2, 0.2), slot_pose, 0.0)
    block_solid = place_solid(to_solid(Box(0.1, 0.1, 0.1)), pose)
    slot_solid = place_solid(to_solid(Box(0.2, 0.2, 0.2)), slot_pose)
    assert ours is not None and not ours.fits
    assert ours.outside_volume == pytest.approx(depth * 0.01, rel=1e-6)
    _assert_same_meaning(ours, fit_in_slot(block_solid, slot_solid, 0.0), block_solid, slot_solid)


def test_a_drilled_block_flush_with_a_wall_by_round_off_is_inside():
    g = BLOCKS["holes"]
    half = 0.5 * np.array(g.size)
    for past, expected in ((1e-13, True), (1e-9, None)):  # round-off: flush; 1e-9 m: left to the exact check
        pose = Pose.from_translation([0.05 - half[0] + past, 0.0, 0.0])
        fit = box_fit(BoxBlock(g.size, pose, whole=False, face_points=g.face_points()), (0.1, 0.1, 0.1),
                      Pose.identity(), 0.0)
        assert (fit.fits if fit is not None else None) is expected
        if fit is not None:
            assert fit.clearance == 0.0 and fit.outside_volume == 0.0
