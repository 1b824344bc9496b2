"""Components and assemblies against OpenCascade (via OCP), an independent oracle.

* Cut-outs (holes, pockets) by superposition vs the B-rep boolean difference of the same solids:
  ``massmodel.cad.solids.solid_volume_properties(component_solid(c), density)`` (BRepAlgoAPI_Cut, then
  BRepGProp.VolumeProperties_s).
* Random assemblies of random primitives in random (also mirrored) poses vs OCP ``GProp_GProps.Add(props, density)``
  over the placed solids; MatrixOfInertia is about the combined centre of mass, off-diagonals −∫xy dm, the same
  convention as massmodel.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps

from conftest import assert_close
from massmodel.cad.solids import component_solid, solid_volume_properties
from massmodel.core.frames import Pose, RotationKind, reflection_across_plane, rotation_from_sequence
from massmodel.core.model import Component, Cutout, MassSource, Maturity, Model
from massmodel.core.shapes import (
    Box,
    Cone,
    Cylinder,
    Ellipsoid,
    Extrusion,
    Frustum,
    Hemisphere,
    Sphere,
    SphericalShell,
    Torus,
    Tube,
    Wedge,
)

EXTRINSIC = RotationKind.EXTRINSIC


def rot(axes: str, *degrees: float) -> np.ndarray:
    return rotation_from_sequence(EXTRINSIC, axes, tuple(math.radians(d) for d in degrees))


def part(shape, pose: Pose, cuts=(), density: float = 2700.0, path: str = "p", **kw) -> Component:
    source = kw.pop("source", MassSource.DENSITY)
    return Component(path, shape, pose, source, Maturity.CALCULATED, "#808080", cutouts=tuple(cuts),
                     density=density if source is MassSource.DENSITY else None, **kw)


def at(x: float, y: float, z: float, linear: np.ndarray | None = None) -> Pose:
    return Pose(np.eye(3) if linear is None else linear, np.array([x, y, z]))


def occ_of(component: Component, density: float) -> tuple[float, np.ndarray, np.ndarray]:
    return solid_volume_properties(component_solid(component), density)


def assert_matches_occ(c: Component, density: float, rtol: float = 1e-9) -> None:
    """Oracle: OpenCascade B-rep boolean + volume integration of the same component."""
    mass, center, inertia = occ_of(c, density)
    assert c.props.mass == pytest.approx(mass, rel=rtol)
    scale = max(1.0, float(np.max(np.abs(center))))
    assert np.max(np.abs(c.props.center - center)) <= rtol * scale
    assert_close(c.props.inertia, inertia, rtol, "inertia")


PLATE_CUTS = (
    # four bolt holes through a 200 x 120 x 10 mm plate
    *(Cutout(Cylinder(0.004, 0.010), at(sx * 0.08, sy * 0.045, 0.0)) for sx in (-1, 1) for sy in (-1, 1)),
    Cutout(Box(0.05, 0.03, 0.004), at(0.0, 0.0, 0.003)),  # a pocket milled 4 mm deep into the top face
    Cutout(Sphere(0.003), at(-0.04, 0.0, 0.0)),  # an internal void
    Cutout(Cone(0.004, 0.005), at(0.04, 0.0, 0.005, rot("x", 180.0))),  # a countersink from the top face
    Cutout(Wedge(0.02, 0.01, 0.01), at(0.05, -0.04, -0.005)),  # a chamfer-like notch, through
)


@pytest.mark.parametrize(
    "pose",
    [Pose.identity(), at(0.5, -0.2, 0.1, rot("xyz", 17.0, -29.0, 63.0)),
     Pose(reflection_across_plane([0, 1, 0]), [0, 0, 0]) * at(0.3, 0.6, 0.0, rot("zyx", 40.0, 10.0, -5.0))],
    ids=["identity", "rotated", "mirrored"],
)
def test_plate_with_holes_and_pockets_matches_opencascade(pose: Pose) -> None:
    c = part(Box(0.2, 0.12, 0.01), pose, PLATE_CUTS, density=2700.0)
    assert c.volume < 0.2 * 0.12 * 0.01
    assert_matches_occ(c, 2700.0)


def test_more_parents_with_cut_outs_match_opencascade() -> None:
    bracket = Extrusion(((0, 0), (0.12, 0), (0.12, 0.02), (0.02, 0.02), (0.02, 0.09), (0, 0.09)), 0.03)
    cases = [
        # a round bar with a coaxial bore from one end and a cross passage clear of it (its flat ends stay
        # inside the round surface: 2 sqrt(30² - 5²) = 59.2 mm > 58 mm)
        part(Cylinder(0.03, 0.2), at(0.1, 0.2, 0.3, rot("y", 90.0)),
             [Cutout(Cylinder(0.01, 0.06), at(0, 0, 0.07)),
              Cutout(Cylinder(0.005, 0.058), at(0, 0, -0.05, rot("x", 90.0)))], density=7850.0),
        # an L-bracket with two holes in each leg
        part(bracket, at(-0.3, 0.1, 0.0, rot("xyz", 10.0, 20.0, 30.0)),
             [Cutout(Cylinder(0.004, 0.02), at(x, 0.01, 0.015, rot("x", 90.0))) for x in (0.06, 0.1)]
             + [Cutout(Cylinder(0.004, 0.02), at(0.01, y, 0.015, rot("y", 90.0))) for y in (0.05, 0.075)],
             density=4430.0),
        # a sphere with a cube-shaped cavity and a frustum-shaped pocket
        part(Sphere(0.05), at(0, 0, 0, rot("z", 33.0)),
             [Cutout(Box(0.02, 0.02, 0.02), at(0.0, 0.0, -0.015)),
              Cutout(Frustum(0.01, 0.005, 0.02), at(0.0, 0.0, 0.02))], density=11340.0),
        # a thick tube with a ring groove inside the wall (a torus cut-out)
        part(Tube(0.05, 0.03, 0.1), at(0, 0.4, 0, rot("x", 90.0)),
             [Cutout(Torus(0.04, 0.005), at(0.0, 0.0, 0.02))], density=2810.0),
    ]
    for c in cases:
        assert_matches_occ(c, c.density)


def test_measured_mass_with_cut_outs_scales_the_net_shape() -> None:
    c = part(Box(0.2, 0.12, 0.01), at(0, 0, 0, rot("z", 30.0)), PLATE_CUTS, source=MassSource.MASS, mass=0.5)
    mass, center, inertia = occ_of(c, 1.0)  # OCP at unit density gives the net volume; scale to the mass
    assert c.volume == pytest.approx(mass, rel=1e-9)
    assert c.props.mass == 0.5
    assert_close(c.props.center, center, 1e-9)
    assert_close(c.props.inertia, inertia * (0.5 / mass), 1e-9)
    assert c.implied_density == pytest.approx(0.5 / mass, rel=1e-9)


# --------------------------------------------------------------------------------------------------------------
# Random assemblies vs GProp_GProps.Add
# --------------------------------------------------------------------------------------------------------------

size = st.floats(0.02, 0.4)
SHAPES = st.one_of(
    st.builds(Box, size, size, size),
    st.builds(Cylinder, size, size),
    st.builds(lambda r, k, h: Tube(r, r * k, h), size, st.floats(0.1, 0.9), size),
    st.builds(Sphere, size),
    st.builds(lambda r, k: SphericalShell(r, r * k), size, st.floats(0.1, 0.9)),
    st.builds(Hemisphere, size),
    st.builds(Cone, size, size),
    st.builds(Frustum, size, size, size),
    st.builds(Wedge, size, size, size),
    st.builds(lambda r, k: Torus(r, r * k), size, st.floats(0.1, 0.9)),
    st.builds(Ellipsoid, size, size, size),
)
ANGLE = st.floats(-180.0, 180.0)
COORD = st.floats(-1.5, 1.5)
PLACED = st.tuples(SHAPES, st.tuples(ANGLE, ANGLE, ANGLE), st.tuples(COORD, COORD, COORD), st.booleans(),
                   st.floats(500.0, 19300.0))


def occ_assembly(components: list[Component]) -> tuple[float, np.ndarray, np.ndarray]:
    """Oracle: OCP GProp_GProps.Add(props, density) over the placed solids (mm), returned in SI."""
    total = GProp_GProps()
    for c in components:
        props = GProp_GProps()
        solid = component_solid(c)
        if c.shape.kind == "ellipsoid":  # a NURBS solid: the adaptive integrator is needed for 1e-10 accuracy
            BRepGProp.VolumeProperties_s(solid, props, 1e-14)
        else:
            BRepGProp.VolumeProperties_s(solid, props)
        total.Add(props, c.density)
    g = total.CentreOfMass()
    m = total.MatrixOfInertia()
    inertia = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15
    return total.Mass() * 1e-9, np.array([g.X(), g.Y(), g.Z()]) * 1e-3, inertia


@settings(max_examples=25, derandomize=True, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(PLACED, min_size=1, max_size=6))
def test_random_assembly_matches_opencascade(placed) -> None:
    components = []
    for i, (shape, angles, xyz, mirrored, density) in enumerate(placed):
        linear = rot("xyz", *angles)
        if mirrored:  # a mirrored copy: reflection across the centre plane after the rotation
            linear = reflection_across_plane([0.0, 1.0, 0.0]) @ linear
        components.append(part(shape, Pose(linear, np.array(xyz)), density=density, path=f"part{i}"))
    model = Model("random", tuple(components))
    mp = model.mass_properties()
    mass, center, inertia = occ_assembly(components)
    assert mp.mass == pytest.approx(mass, rel=1e-9)
    assert np.max(np.abs(mp.center - center)) <= 1e-9 * max(1.0, float(np.max(np.abs(center))))
    assert_close(mp.inertia, inertia, 1e-9, "inertia about the combined CG")


def test_frustum_with_equal_radii_is_a_cylinder_in_cad() -> None:
    # found by the random assembly test: the CAD kernel refuses a cone with two equal radii
    c = part(Frustum(0.05, 0.05, 0.1), at(0.0, 0.0, 0.0, rot("x", 30.0)), density=1000.0)
    assert_matches_occ(c, 1000.0)
    assert c.props.mass == pytest.approx(1000.0 * math.pi * 0.05**2 * 0.1, rel=1e-12)
