"""Tests for massmodel.cad.solids: placed B-rep solids and meshes of components, mirrored poses included.

Oracle: OpenCascade's volume integrals (BRepGProp, about the centre of mass, off-diagonals −∫xy dm) of the placed
solids against the model's closed-form mass properties (massmodel.core.shapes, checked against the handbook in
tests/test_shapes.py); trimesh's volume and centre of mass for the meshes.
"""

from __future__ import annotations

import numpy as np
import pytest

from conftest import assert_close
from massmodel.cad.primitives import solids_of
from massmodel.cad.solids import (
    component_local_mesh,
    component_local_solid,
    component_solid,
    has_solid,
    solid_bounds,
    solid_volume_properties,
    split_pose,
    tessellate,
)
from massmodel.core.frames import Pose, RotationKind, reflection_across_plane, rotation_from_sequence
from massmodel.modelfile.loader import loads_model

# A wedge (no mirror symmetry) with a cut-out, mirrored through a group, and rotated: the hardest placement case.
MODEL = """
[model]
name = "mirror"
[units]
length = "mm"
angle = "deg"
[[group]]
path = "side/left"
at = [100, 250, 30]
rotate = { extrinsic = "xyz", angles = [10, -20, 35] }
mirror = true
[[part]]
path = "side/left/gusset"
shape = "wedge"
leg_x = 80
leg_y = 50
length = 12
density = "2700 kg/m^3"
maturity = "calculated"
at = [5, -7, 3]
rotate = { extrinsic = "z", angles = [15] }
cut = [ { shape = "cylinder", radius = 6, length = 12, at = [20, 12, 6] } ]
[[part]]
path = "loom"
shape = "point"
mass = "1 kg"
maturity = "estimated"
"""


@pytest.fixture(scope="module")
def model():
    return loads_model(MODEL)


def test_split_pose_writes_an_improper_pose_as_rotation_times_mirror(rng):
    for _ in range(20):
        r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", tuple(rng.uniform(-3, 3, 3)))
        pose = Pose(r @ reflection_across_plane(rng.normal(size=3)), rng.normal(size=3))
        mirror, proper = split_pose(pose)
        assert mirror is not None
        assert_close(proper.linear @ mirror, pose.linear, 1e-12)
        assert_close(mirror @ mirror, np.eye(3), 1e-12)
        assert np.isclose(np.linalg.det(proper.linear), 1.0) and np.isclose(np.linalg.det(mirror), -1.0)
        assert_close(proper.translation, pose.translation, 0.0)
    assert split_pose(Pose.identity())[0] is None


@pytest.mark.parametrize("path", ["side/left/gusset", "side/right/gusset"])
def test_placed_solid_carries_the_models_mass_properties(model, path):
    from OCP.TopAbs import TopAbs_SOLID
    from OCP.TopoDS import TopoDS_Shape

    c = model.component(path)
    solid = component_solid(c)
    local, _ = component_local_solid(c)
    for shape in (solid, local):  # OCP shapes, no cadquery wrapper (the contract for the exporters)
        assert isinstance(shape, TopoDS_Shape) and len(solids_of(shape)) == 1
        assert solids_of(shape)[0].ShapeType() == TopAbs_SOLID
    mass, center, inertia = solid_volume_properties(solid, c.density)
    assert_close(mass, c.props.mass, 1e-12, "mass")
    assert_close(center, c.props.center, 1e-12, "CG")
    assert_close(inertia, c.props.inertia, 1e-10, "inertia")


def test_mirrored_copy_is_the_reflection_of_the_left_one(model):
    left = model.component("side/left/gusset")
    right = model.component("side/right/gusset")
    assert right.pose.is_mirrored and not left.pose.is_mirrored
    flip = np.diag([1.0, -1.0, 1.0])  # the centre plane y = 0 (no vehicle: left is +y)
    box_left = solid_bounds(component_solid(left))
    box_right = solid_bounds(component_solid(right))
    assert_close(np.sort((box_left @ flip)[:, 1]), box_right[:, 1], 1e-9)
    assert_close(box_left[:, [0, 2]], box_right[:, [0, 2]], 1e-9)


@pytest.mark.parametrize("path", ["side/left/gusset", "side/right/gusset"])
def test_mesh_of_a_mirrored_part_is_outward_and_watertight(model, path):
    c = model.component(path)
    _, proper = split_pose(c.pose)
    mesh = component_local_mesh(c, 2e-5)
    assert mesh.is_watertight and mesh.volume > 0.0
    # triangles within 0.02 mm of the surface: |dV| <= area x tolerance
    assert abs(mesh.volume - c.volume) <= mesh.area * 2e-5
    assert_close(proper.apply(mesh.center_mass), c.props.center, 1e-4)


def test_point_mass_has_no_solid(model):
    loom = model.component("loom")
    assert not has_solid(loom)
    with pytest.raises(ValueError, match="'loom' has no solid \\(a point mass\\)"):
        component_solid(loom)


def test_tessellate_a_box_exactly():
    import cadquery as cq
    import trimesh

    v, f = tessellate(cq.Solid.makeBox(10, 20, 30).wrapped, 0.1)  # an OCP shape, built by cadquery
    mesh = trimesh.Trimesh(v, f, process=True)
    assert len(f) == 12 and mesh.is_watertight
    assert_close(mesh.volume, 6000.0, 1e-12)
