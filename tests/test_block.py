"""Ballast block geometry: exact volume, centroid and inertia with holes, counterbores and chamfers.

Independent oracle: OpenCascade (via OCP) volume properties of the same solid built with cadquery's own
chamfer and counterbore-hole operations (``edges().chamfer()``, ``cboreHole``), not with this module's code.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from conftest import assert_close
from massmodel.ballast.block import (
    BlockError,
    BlockGeometry,
    Chamfer,
    Counterbore,
    HolePattern,
    tetra_moments,
)

cq = pytest.importorskip("cadquery")


def occ_props(solid):
    """Volume (m³), centroid (m) and unit-density inertia about the centroid (m⁵) from OpenCascade."""
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps

    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(getattr(solid, "wrapped", solid), props, 1e-14)  # a cadquery or an OCP shape
    c = props.CentreOfMass()
    m = props.MatrixOfInertia()
    tensor = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15
    return props.Mass() * 1e-9, np.array([c.X(), c.Y(), c.Z()]) * 1e-3, tensor


def oracle_block(size_mm, chamfer_mm=None, edges="xyz", points_mm=(), hole_mm=None, cbore=None, end=">Z"):
    """The block built with cadquery's own operations: box, chamfer, counterbored holes from one face."""
    a, b, c = size_mm
    wp = cq.Workplane("XY").box(a, b, c)
    if chamfer_mm:
        wp = wp.edges(" or ".join(f"|{e.upper()}" for e in edges)).chamfer(chamfer_mm)
    if points_mm:
        face = wp.faces(end).workplane(centerOption="CenterOfBoundBox")
        pts = list(points_mm) if end == ">Z" else [(x, -y) for x, y in points_mm]  # "<Z" plane looks from below
        face = face.pushPoints(pts)
        if cbore:
            wp = face.cboreHole(hole_mm, cbore[0], cbore[1])
        else:
            wp = face.hole(hole_mm)
    return wp.val()


def test_unit_tetrahedron_moments():
    # Standard simplex: ∫ x^a y^b z^c dV = a! b! c! / (a+b+c+3)! (Dirichlet integral, closed form)
    vol, first, second = tetra_moments([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]])
    assert vol == pytest.approx(1 / 6, rel=1e-15)
    assert_close(first, [1 / 24] * 3, 1e-15)
    assert_close(second, np.full((3, 3), 1 / 120) + np.eye(3) * (1 / 60 - 1 / 120), 1e-15)


@pytest.mark.parametrize(
    ("edges", "formula"),
    [
        # Inclusion-exclusion of the 45° chamfer prisms (derived in massmodel/ballast/block.py):
        ("xyz", lambda a, b, c, s: a * b * c - 2 * s * s * (a + b + c) + 16 / 3 * s**3),
        ("z", lambda a, b, c, s: a * b * c - 2 * s * s * c),
        ("xy", lambda a, b, c, s: a * b * c - 2 * s * s * (a + b) + 8 / 3 * s**3),
        ("yz", lambda a, b, c, s: a * b * c - 2 * s * s * (b + c) + 8 / 3 * s**3),
    ],
)
def test_chamfer_volume_closed_form_and_occ(edges, formula):
    a, b, c, s = 0.1, 0.05, 0.02, 0.003
    g = BlockGeometry((a, b, c), chamfer=Chamfer(s, edges))
    assert g.volume() == pytest.approx(formula(a, b, c, s), rel=1e-13)
    vol, cen, tensor = occ_props(oracle_block((100, 50, 20), 3.0, edges))
    assert g.volume() == pytest.approx(vol, rel=1e-12)
    assert np.abs(g.centroid()).max() < 1e-15 and np.abs(cen).max() < 1e-14  # symmetric solid: centred
    assert_close(g.inertia_per_density(), tensor, 1e-11)


@pytest.mark.parametrize("edges", ["xyz", "z", "x", "xy"])
@pytest.mark.parametrize("end", [">Z", "<Z"])
def test_holes_counterbores_chamfers_against_occ(edges, end):
    # An asymmetric hole pattern (three points) so that the centroid moves and products of inertia appear.
    points = [(-30.0, 10.0), (25.0, -12.0), (40.0, 14.0)]
    pattern = HolePattern("points", 3, 0.0085, axis="z", points=tuple((x * 1e-3, y * 1e-3) for x, y in points),
                          counterbore=Counterbore(0.014, 0.006), counterbore_end=1 if end == ">Z" else -1)
    g = BlockGeometry((0.11, 0.05, 0.025), holes=pattern, chamfer=Chamfer(0.0015, edges))
    vol, cen, tensor = occ_props(oracle_block((110, 50, 25), 1.5, edges, points, 8.5, (14.0, 6.0), end))
    assert g.volume() == pytest.approx(vol, rel=1e-12)
    assert_close(g.centroid(), cen, 1e-10)
    assert_close(g.inertia_per_density(), tensor, 1e-10)
    # the removed volumes add up: box − chamfers − holes
    removed = g.removed_volume()
    assert g.gross_volume() - removed["chamfers_m3"] - removed["holes_m3"] == pytest.approx(g.volume(), rel=1e-13)
    r, rc, h, d = 0.00425, 0.007, 0.025, 0.006
    assert removed["holes_m3"] == pytest.approx(3 * math.pi * (r * r * (h - d) + rc * rc * d), rel=1e-13)


@pytest.mark.parametrize("axis", ["x", "y"])
def test_holes_along_other_axes_match_the_cad_solid(axis):
    # The block's own CAD solid (box, cadquery chamfer, OpenCascade boolean cuts) integrated by OpenCascade.
    pattern = HolePattern("grid", 4, 0.006, axis=axis, pitch=0.02, pitch2=0.012, columns=2,
                          counterbore=Counterbore(0.01, 0.004), counterbore_end=-1)
    g = BlockGeometry((0.06, 0.07, 0.045), holes=pattern, chamfer=Chamfer(0.001, "xyz"))
    vol, cen, tensor = occ_props(g.to_solid())
    assert g.volume() == pytest.approx(vol, rel=1e-12)
    assert_close(g.centroid(), cen, 1e-10)
    assert_close(g.inertia_per_density(), tensor, 1e-10)


@pytest.mark.parametrize("edges", ["xyz", "z", "x", "xy"])
@pytest.mark.parametrize("end", [">Z", "<Z"])
def test_the_block_solid_is_the_cadquery_built_block(edges, end):
    # The block's own solid (OCP: box, BRepFilletAPI_MakeChamfer, boolean cuts) against the same block built with
    # cadquery's operations (oracle_block): the OpenCascade booleans both ways leave no volume, so the two solids
    # coincide (same origin, orientation, sizes, chamfers, holes and counterbore end).
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps
    from OCP.TopoDS import TopoDS_Shape

    points = [(-30.0, 10.0), (25.0, -12.0), (40.0, 14.0)]
    pattern = HolePattern("points", 3, 0.0085, axis="z", points=tuple((x * 1e-3, y * 1e-3) for x, y in points),
                          counterbore=Counterbore(0.014, 0.006), counterbore_end=1 if end == ">Z" else -1)
    ours = BlockGeometry((0.11, 0.05, 0.025), holes=pattern, chamfer=Chamfer(0.0015, edges)).to_solid()
    assert isinstance(ours, TopoDS_Shape)
    theirs = oracle_block((110, 50, 25), 1.5, edges, points, 8.5, (14.0, 6.0), end).wrapped
    for a, b in ((ours, theirs), (theirs, ours)):
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(BRepAlgoAPI_Cut(a, b).Shape(), props)
        assert abs(props.Mass()) < 1e-6  # mm³, of a block of some 1.3e5 mm³


def test_plain_box_matches_handbook():
    # Cuboid: I_x = m(b² + c²)/12 and cyclic (Machinery's Handbook 31st ed. pp.253-254)
    a, b, c = 0.2, 0.1, 0.03
    g = BlockGeometry((a, b, c))
    v = a * b * c
    assert_close(g.inertia_per_density(), np.diag([v * (b * b + c * c), v * (a * a + c * c), v * (a * a + b * b)]) / 12)


def test_hole_patterns():
    line = HolePattern("line", 3, 0.008, pitch=0.05)
    assert_close(line.centres((0.2, 0.1)), [[-0.05, 0.0], [0.0, 0.0], [0.05, 0.0]], 1e-15)
    assert_close(line.centres((0.1, 0.2)), [[0.0, -0.05], [0.0, 0.0], [0.0, 0.05]], 1e-15)
    circle = HolePattern("circle", 4, 0.008, pcd=0.1)
    assert_close(circle.centres((0.2, 0.2)), [[0.05, 0], [0, 0.05], [-0.05, 0], [0, -0.05]], 1e-15)
    grid = HolePattern("grid", 6, 0.008, pitch=0.04, pitch2=0.02, columns=3)
    assert sorted(map(tuple, np.round(grid.centres((0.2, 0.2)), 12))) == [
        (-0.04, -0.01), (-0.04, 0.01), (0.0, -0.01), (0.0, 0.01), (0.04, -0.01), (0.04, 0.01)]


@pytest.mark.parametrize(
    ("kwargs", "field", "words"),
    [
        ({"size": (0.05, 0.05, 0.02), "holes": HolePattern("line", 1, 0.06)}, "holes.diameter", "larger than the block"),
        ({"size": (0.05, 0.05, 0.02), "holes": HolePattern("line", 2, 0.01, pitch=0.042)}, "holes", "do not fit"),
        ({"size": (0.1, 0.05, 0.02), "holes": HolePattern("line", 2, 0.01, pitch=0.008)}, "holes.pitch", "overlap"),
        ({"size": (0.1, 0.05, 0.004), "chamfer": Chamfer(0.002)}, "chamfer.size", "too big"),
        ({"size": (0.1, 0.05, 0.004), "holes": HolePattern("line", 1, 0.008, counterbore=Counterbore(0.012, 0.004))},
         "counterbore.depth", "less than the block"),
        # a hole 1.5 mm from the side with a 2 mm chamfer would cut into the chamfer
        ({"size": (0.1, 0.05, 0.02), "chamfer": Chamfer(0.002), "holes": HolePattern("line", 1, 0.01,
          points=(), pitch=None)}, None, None),
    ],
)
def test_bad_blocks_are_clear_errors(kwargs, field, words):
    if field is None:  # the last case is valid: the centred hole is far from the sides
        BlockGeometry(**kwargs)
        with pytest.raises(BlockError) as err:
            BlockGeometry((0.1, 0.05, 0.02), chamfer=Chamfer(0.002),
                          holes=HolePattern("points", 1, 0.01, points=((0.0435, 0.0),)))
        assert err.value.field == "holes" and "chamfer size 2.000 mm" in str(err.value)
        return
    with pytest.raises(BlockError) as err:
        BlockGeometry(**kwargs)
    assert err.value.field == field
    assert words in str(err.value)


def test_bad_patterns():
    with pytest.raises(BlockError, match="needs 'pitch'"):
        HolePattern("line", 2, 0.008)
    with pytest.raises(BlockError, match="divide the hole count"):
        HolePattern("grid", 5, 0.008, pitch=0.01, pitch2=0.01, columns=2)
    with pytest.raises(BlockError, match="larger than the hole"):
        HolePattern("line", 1, 0.008, counterbore=Counterbore(0.006, 0.002))
    with pytest.raises(BlockError, match="axis letters"):
        Chamfer(0.001, "w")
