"""Tests for massmodel.cad.occ_files: the STEP and STL writers of a few named solids, on OCP alone.

Round trips read the files back with independent readers as oracles: cadquery's STEP assembly importer (names,
colours, solids and their volumes), trimesh's STL reader (volume, watertightness). Closed forms: box and cylinder
volumes (elementary). The STEP length unit is read from the file's text: ISO 10303-41 writes millimetres as
``SI_UNIT(.MILLI.,.METRE.)``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from massmodel.cad.occ_files import write_step_solids, write_stl_solids
from massmodel.cad.primitives import to_solid
from massmodel.cad.solids import place_solid
from massmodel.core.frames import Pose
from massmodel.core.shapes import Box, Cylinder

cq = pytest.importorskip("cadquery")
trimesh = pytest.importorskip("trimesh")

BOX = Box(0.1, 0.05, 0.02)
ROD = Cylinder(0.01, 0.08)
COLOUR = (0x8a / 255.0, 0x93 / 255.0, 0x9b / 255.0)  # sRGB


def _solids():
    return [("ballast.plate_1", place_solid(to_solid(BOX), Pose.from_translation([0.2, 0.0, 0.0])), COLOUR),
            ("ballast.rod", place_solid(to_solid(ROD), Pose.from_translation([0.0, 0.1, 0.0])), (1.0, 0.0, 0.0))]


def test_step_round_trip_keeps_names_colours_volumes_and_mm(tmp_path):
    path = tmp_path / "blocks.step"
    write_step_solids(path, _solids(), "ballast")
    assert "SI_UNIT(.MILLI.,.METRE.)" in path.read_text()
    assy = cq.Assembly.importStep(str(path))
    children = {c.name: c for c in assy.children}
    assert sorted(children) == ["ballast.plate_1", "ballast.rod"]
    box_mm3 = 100 * 50 * 20
    rod_mm3 = math.pi * 10**2 * 80
    assert children["ballast.plate_1"].toCompound().Volume() == pytest.approx(box_mm3, rel=1e-9)
    assert children["ballast.rod"].toCompound().Volume() == pytest.approx(rod_mm3, rel=1e-9)
    centre = children["ballast.plate_1"].toCompound().Center()
    assert (centre.x, centre.y, centre.z) == pytest.approx((200.0, 0.0, 0.0), abs=1e-9)  # model frame, mm
    # cadquery reads the colour back as sRGB components (as it wrote them); STEP stores sRGB
    got = children["ballast.plate_1"].color.toTuple()[:3]
    assert got == pytest.approx(COLOUR, abs=2e-3)
    assert children["ballast.rod"].color.toTuple()[:3] == pytest.approx((1.0, 0.0, 0.0), abs=2e-3)


def test_stl_of_several_solids_is_watertight_in_mm(tmp_path):
    path = tmp_path / "blocks.stl"
    write_stl_solids(path, [s for _, s, _ in _solids()], 0.01, 0.05)
    mesh = trimesh.load(path)
    assert mesh.is_watertight
    box_mm3, rod_mm3 = 100 * 50 * 20, math.pi * 10**2 * 80
    assert mesh.volume == pytest.approx(box_mm3 + rod_mm3, rel=1e-4)  # flat faces exact, the rod within 0.01 mm
    assert np.allclose(mesh.bounds, [[-10.0, -25.0, -40.0], [250.0, 110.0, 40.0]], atol=1e-6)


def test_the_step_writer_prints_nothing(tmp_path):
    # OpenCascade's writer prints a statistics banner (with the temporary file's name) on the process's stdout unless
    # something silenced its messenger (importing cadquery does: hence a fresh interpreter without it); the commands
    # that write a block's STEP show their own lines only
    import os
    import subprocess
    import sys
    from pathlib import Path

    code = ("import sys; from massmodel.cad.occ_files import write_step_solids; "
            "from massmodel.cad.primitives import to_solid; from massmodel.core.shapes import Box; "
            "write_step_solids(sys.argv[1], [('b', to_solid(Box(0.1, 0.05, 0.02)), (0.5, 0.5, 0.5))], 'ballast'); "
            "print('cadquery' in sys.modules)")
    out = tmp_path / "blocks.step"
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])}
    run = subprocess.run([sys.executable, "-c", code, str(out)], capture_output=True, text=True, env=env, timeout=300)
    assert run.returncode == 0, run.stderr[-2000:]
    assert (run.stdout, run.stderr) == ("False\n", "")
    assert out.stat().st_size > 0
