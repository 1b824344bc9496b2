"""The model's one engine (massmodel.core.batch behind Model.arrays, Model.mass_properties, group roll-ups and the
report) against the per-part path computed the old way (each Component.props, combined with
massprops.combine_arrays), and against OpenCascade (OCP GProp_GProps over the placed B-rep solids) as an independent
oracle; the compiled roll-up kernel (numba) against the numpy path."""

from __future__ import annotations

import importlib.util
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from conftest import assert_close, assert_props_close, random_rotations
from massmodel.core import batch, closed_forms
from massmodel.core.frames import Pose, RotationKind, reflection_across_plane, rotation_from_sequence
from massmodel.core.massprops import MassProperties, combine_arrays
from massmodel.core.model import Component, Cutout, MassSource, Maturity, Model, in_group
from massmodel.core.shapes import (
    SHAPE_KINDS,
    Box,
    Cone,
    Cylinder,
    Extrusion,
    Frustum,
    Hemisphere,
    PointMass,
    Sphere,
    Torus,
    Tube,
    Wedge,
)
from massmodel.modelfile.loader import load_model
from massmodel.report.summary import build_report

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"


def old_way(components) -> MassProperties:
    """The per-part path as before the engine: each part's own props, combined with combine_arrays."""
    return MassProperties(*combine_arrays(np.array([c.props.mass for c in components]),
                                          np.array([c.props.center for c in components]),
                                          np.array([c.props.inertia for c in components])))


def rot(axes: str, *degrees: float) -> np.ndarray:
    return rotation_from_sequence(RotationKind.EXTRINSIC, axes, tuple(math.radians(d) for d in degrees))


def mixed_model() -> Model:
    """Every mass source, cut-outs, an extrusion, a point mass, shared shapes and mirrored copies."""
    mirror = Pose(reflection_across_plane([0.0, 1.0, 0.0]), np.zeros(3))
    plate = Box(0.2, 0.12, 0.01)
    holes = (Cutout(Cylinder(0.004, 0.01), Pose(np.eye(3), [0.08, 0.045, 0.0])),
             Cutout(Box(0.05, 0.03, 0.004), Pose(np.eye(3), [0.0, 0.0, 0.003])))
    tube = Tube(0.03, 0.026, 0.8)
    parts = [
        ("frame/left/plate", plate, Pose(rot("xyz", 10, -20, 30), [0.4, 0.3, 0.1]), MassSource.MATERIAL,
         {"density": 2700.0, "material": "aluminium", "cutouts": holes}),
        ("frame/left/tube", tube, Pose(rot("y", 90), [0.0, 0.35, 0.2]), MassSource.DENSITY, {"density": 7850.0}),
        ("frame/right/tube", tube, mirror * Pose(rot("y", 90), [0.0, 0.35, 0.2]), MassSource.DENSITY,
         {"density": 7850.0}),
        ("body/nose", Cone(0.2, 0.5), Pose(rot("y", -90), [1.2, 0.0, 0.1]), MassSource.MASS, {"mass": 3.5}),
        ("body/wing", Wedge(0.3, 0.05, 1.2), Pose(rot("zx", 5, 90), [-1.4, 0.0, 0.7]), MassSource.MASS,
         {"mass": 6.0}),
        ("body/floor", Extrusion(((0, 0), (1.0, 0), (1.2, 0.6), (0, 0.5)), 0.004), Pose(np.eye(3), [-1, -0.3, 0]),
         MassSource.DENSITY, {"density": 1550.0}),
        ("power/engine", Box(0.5, 0.4, 0.45), Pose(rot("z", 3), [-0.9, 0.0, 0.25]), MassSource.MEASURED,
         {"mass": 96.0, "measured_cg": np.array([0.01, 0.0, -0.03]),
          "measured_inertia": np.array([[3.1, 0.05, -0.2], [0.05, 4.2, 0.01], [-0.2, 0.01, 3.9]])}),
        ("power/battery", Sphere(0.1), Pose(np.eye(3), [-0.5, 0.2, 0.1]), MassSource.MEASURED,
         {"mass": 12.0, "measured_cg": np.array([0.0, 0.01, 0.0])}),
        ("power/ecu", PointMass(), Pose(np.eye(3), [-0.3, -0.2, 0.3]), MassSource.MASS, {"mass": 0.8}),
        ("wheels/front/left", Torus(0.25, 0.08), Pose(rot("x", 90), [0.0, 0.75, 0.25]), MassSource.MASS,
         {"mass": 9.0}),
        ("wheels/front/right", Torus(0.25, 0.08), mirror * Pose(rot("x", 90), [0.0, 0.75, 0.25]), MassSource.MASS,
         {"mass": 9.0}),
        ("ballast/block", Frustum(0.05, 0.03, 0.1), Pose(np.eye(3), [-1.0, 0.0, 0.02]), MassSource.DENSITY,
         {"density": 17800.0}),
        ("ballast/cap", Hemisphere(0.04), Pose(rot("xyz", 33, 12, -70), [-1.1, 0.05, 0.03]), MassSource.DENSITY,
         {"density": 17800.0}),
    ]
    comps = tuple(Component(path, shape, pose, source, Maturity.CALCULATED, "#808080", **kw)
                  for path, shape, pose, source, kw in parts)
    return Model("mixed", comps)


@pytest.fixture(scope="module")
def demo() -> Model:
    return load_model(DEMO)


@pytest.mark.parametrize("which", ["demo", "mixed"])
def test_part_arrays_match_each_component(demo: Model, which: str) -> None:
    model = demo if which == "demo" else mixed_model()
    masses, centers, tensors = model.arrays()
    for c, m, x, t in zip(model.components, masses, centers, tensors, strict=True):
        assert m == pytest.approx(c.props.mass, rel=1e-13), c.path
        assert_close(x, c.props.center, 1e-12, c.path)
        assert_close(t, c.props.inertia, 1e-12, c.path)


@pytest.mark.parametrize("which", ["demo", "mixed"])
def test_roll_ups_match_the_per_part_path(demo: Model, which: str) -> None:
    model = demo if which == "demo" else mixed_model()
    assert_props_close(model.mass_properties(), old_way(model.components), 1e-12)
    for g, n, mp in model.group_properties():
        members = [c for c in model.components if in_group(c.path, g)]
        assert n == len(members)
        assert_props_close(mp, old_way(members), 1e-12)
    first = model.components[0].path.split("/")[0]
    kept = [c for c in model.components if not in_group(c.path, first)]
    assert_props_close(model.mass_properties(exclude=[first]), old_way(kept), 1e-12)


def test_the_demo_report_numbers_match_the_per_part_path(demo: Model) -> None:
    report = build_report(demo)
    expected = old_way(demo.components)
    assert report["mass_kg"] == pytest.approx(expected.mass, rel=1e-12)
    assert_close(report["cg_m"], expected.center, 1e-12, "cg")
    assert_close(report["inertia_cg_kg_m2"], expected.inertia, 1e-12, "inertia")
    for entry in report["groups"]:
        want = old_way([c for c in demo.components if in_group(c.path, entry["path"])])
        assert entry["mass_kg"] == pytest.approx(want.mass, rel=1e-12), entry["path"]
        assert_close(entry["inertia_cg_kg_m2"], want.inertia, 1e-12, entry["path"])
    for entry, c in zip(report["components"], demo.components, strict=True):
        assert entry["mass_kg"] == pytest.approx(c.props.mass, rel=1e-13)
    for maturity, kg in report["maturity_kg"].items():
        assert kg == pytest.approx(sum(c.props.mass for c in demo.components if c.maturity.value == maturity),
                                   rel=1e-12, abs=1e-12)


def test_the_model_engine_matches_opencascade() -> None:
    """Oracle: OCP BRepGProp volume integration of each placed B-rep solid (cut-outs as B-rep booleans),
    accumulated with GProp_GProps.Add(props, density); SI via massmodel.cad.solids (mm inside)."""
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps

    from massmodel.cad.solids import component_solid

    model = mixed_model()
    density_parts = [c for c in model.components if c.source in (MassSource.DENSITY, MassSource.MATERIAL)]
    sub = model.with_components(density_parts)
    total = GProp_GProps()
    for c in density_parts:
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(component_solid(c), props)
        total.Add(props, float(c.density))
    g = total.CentreOfMass()
    m = total.MatrixOfInertia()
    got = sub.mass_properties()
    assert got.mass == pytest.approx(total.Mass() * 1e-9, rel=1e-9)
    assert_close(got.center, np.array([g.X(), g.Y(), g.Z()]) * 1e-3, 1e-9, "cg")
    assert_close(got.inertia, np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15, 1e-9,
                 "inertia")


def test_arrays_of_foreign_components_use_their_own_props(demo: Model) -> None:
    other = mixed_model().components[:2]
    masses, centers, _ = demo.arrays(other)
    assert masses.tolist() == [c.props.mass for c in other]
    own = demo.components[3:5]
    m2, c2, _ = demo.arrays(own)
    assert_close(c2, [c.props.center for c in own], 1e-12)


def test_props_are_made_on_demand_and_errors_stay_eager() -> None:
    c = Component("a/b", Box(0.1, 0.2, 0.3), Pose(rot("z", 30), [1, 2, 3]), MassSource.DENSITY,
                  Maturity.CALCULATED, "#808080", density=1000.0)
    assert c._props is None  # nothing built for a plain primitive until asked
    # closed form written here: a box of 0.1 x 0.2 x 0.3 m at 1000 kg/m^3 weighs 6 kg; I_zz = m (a^2 + b^2) / 12
    assert c.props.mass == pytest.approx(6.0, rel=1e-15)
    assert c.props_local.inertia[2, 2] == pytest.approx(6.0 * (0.01 + 0.04) / 12.0, rel=1e-15)
    with pytest.raises(ValueError, match="component 'a/c': a density source needs a positive density"):
        Component("a/c", Box(0.1, 0.2, 0.3), Pose.identity(), MassSource.DENSITY, Maturity.CALCULATED, "#808080",
                  density=-1.0)
    with pytest.raises(ValueError, match="mass must be finite"):
        Component("a/d", Box(0.1, 0.2, 0.3), Pose.identity(), MassSource.DENSITY, Maturity.CALCULATED, "#808080",
                  density=math.inf)
    with pytest.raises(ValueError, match="field 'measured.inertia': not positive semi-definite"):
        Component("a/e", Box(0.1, 0.2, 0.3), Pose.identity(), MassSource.MEASURED, Maturity.MEASURED, "#808080",
                  mass=2.0, measured_cg=np.zeros(3), measured_inertia=np.diag([1.0, 1.0, -1.0]))


# ---------------------------------------------------------------------------------------------------------------
# the compiled roll-up kernel against the numpy path

needs_numba = pytest.mark.skipif(importlib.util.find_spec("numba") is None,
                                 reason="numba is not installed: only the numpy kernel exists here")


def random_batches(rng: np.random.Generator, n: int, far: float = 0.0) -> list[batch.Batch]:
    out = []
    for kind, fields in batch.BATCH_KINDS.items():
        dims = rng.uniform(0.01, 0.5, (n, len(fields)))
        if kind in ("tube", "spherical_shell", "torus"):
            dims[:, 1] = dims[:, 0] * rng.uniform(0.05, 0.95, n)
        r = random_rotations(rng, n)
        out.append(batch.Batch(kind, dims, rng.uniform(500.0, 19300.0, n), r.copy(),
                               rng.uniform(-3.0, 3.0, (n, 3)) + far))
    return out


@needs_numba
@pytest.mark.parametrize(("n", "block", "far"), [(1, batch.BLOCK, 0.0), (300, 64, 0.0), (300, 1000, 1e4)])
@pytest.mark.parametrize("validate", [True, False])
def test_numba_and_numpy_kernels_agree(rng, n: int, block: int, far: float, validate: bool) -> None:
    for b in random_batches(rng, n, far):
        args = (b.kind, b.dims, b.densities, b.rotations, b.translations)
        fast = batch.aggregate(*args, block=block, kernel="numba", validate=validate)
        slow = batch.aggregate(*args, block=block, kernel="numpy", validate=validate)
        assert_props_close(fast, slow, 1e-12)
    batches = random_batches(rng, n, far)
    assert_props_close(batch.aggregate_batches(batches, kernel="numba"),
                       batch.aggregate_batches(batches, kernel="numpy"), 1e-12)


@needs_numba
@pytest.mark.parametrize("bad", [3, 70])
def test_the_numba_kernel_names_a_bad_rotation_like_numpy(rng, bad: int) -> None:
    b = random_batches(rng, 100)[0]
    rotations = b.rotations.copy()
    rotations[bad] *= 1.001
    messages = []
    for kernel in ("numba", "numpy"):
        with pytest.raises(batch.BatchError) as info:
            batch.aggregate(b.kind, b.dims, b.densities, rotations, b.translations, block=64, kernel=kernel)
        messages.append(str(info.value))
    assert messages[0] == messages[1]
    assert f"rotations[{bad}] is not orthogonal" in messages[0]
    rotations[bad] = np.nan
    with pytest.raises(batch.BatchError, match=rf"rotations\[{bad}\] is not orthogonal"):
        batch.aggregate(b.kind, b.dims, b.densities, rotations, b.translations, block=64, kernel="numba")


@needs_numba
def test_kernel_choice() -> None:
    batch.kernel_for(1, "numba")  # loads the compiled kernel, after which "auto" uses it from NUMBA_MIN_PARTS
    assert batch.kernel_for(batch.NUMBA_MIN_PARTS - 1, "auto") == "numpy"
    assert batch.kernel_for(batch.NUMBA_MIN_PARTS, "auto") == "numba"
    assert batch.kernel_for(10, "numpy") == "numpy"
    with pytest.raises(batch.BatchError, match="kernel must be one of auto, numpy, numba"):
        batch.kernel_for(10, "fortran")


def test_the_compiled_loop_runs_as_plain_python(rng) -> None:
    """The kernel's source, run by the interpreter, gives the numpy path's result (the compiled code is that
    source)."""
    for b in random_batches(rng, 5):
        ref = np.empty(3)
        sums, bad = closed_forms.placed_sums_loop(batch.KIND_IDS[b.kind], b.dims, b.densities, b.rotations,
                                            b.translations, ref, True, batch.ORTHOGONALITY_TOL)
        assert bad == 0
        got = MassProperties(*batch.sums_to_properties(sums, ref))
        assert_props_close(got, batch.aggregate(b.kind, b.dims, b.densities, b.rotations, b.translations,
                                                kernel="numpy"), 1e-12)


def test_numba_is_not_imported_by_the_core_or_an_aggregate_that_would_not_repay_it() -> None:
    n = 200_000
    script = ("import sys, numpy as np, massmodel\nfrom massmodel.core import batch\n"
              f"batch.aggregate('box', np.ones(({n}, 3)), np.ones({n}), np.tile(np.eye(3), ({n}, 1, 1)), "
              f"np.zeros(({n}, 3)))\n"
              "print('numba' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", script], cwd=REPO, env={**os.environ, "PYTHONPATH": str(REPO)},
                         capture_output=True, text=True, timeout=120, check=True)
    assert out.stdout.strip() == "False"


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_nested_models_match_the_per_part_path(seed: int) -> None:
    """Random primitives of every batch kind, random mass sources, nested groups, shared shapes and mirrored
    copies: totals, every group and selections agree with the per-part path to 1e-12."""
    rng = np.random.default_rng(seed)
    comps = []
    shapes = []
    for b in random_batches(rng, 12):
        shapes.extend(SHAPE_KINDS[b.kind](*(float(v) for v in dims)) for dims in b.dims)
    rotations = random_rotations(rng, len(shapes))
    for i, shape in enumerate(shapes):
        if i % 7 == 3:
            shape = shapes[i - 1]  # a shared shape object, as patterned copies share theirs
        group = f"g{rng.integers(3)}/s{rng.integers(4)}" + ("/deep" if i % 5 == 0 else "")
        pose = Pose(rotations[i], rng.uniform(-2.0, 2.0, 3) + [0.0, 0.0, 1e3 if seed == 3 else 0.0])
        if i % 3 == 0:
            kw = {"source": MassSource.MASS, "mass": float(rng.uniform(0.1, 20.0))}
        else:
            kw = {"source": MassSource.DENSITY, "density": float(rng.uniform(500.0, 19300.0))}
        source = kw.pop("source")
        comps.append(Component(f"{group}/p{i}", shape, pose, source, Maturity.ESTIMATED, "#808080", **kw))
    model = Model("random", tuple(comps))
    assert_props_close(model.mass_properties(), old_way(model.components), 1e-12)
    for g, n, mp in model.group_properties():
        members = [c for c in model.components if in_group(c.path, g)]
        assert n == len(members)
        assert_props_close(mp, old_way(members), 1e-12)
    kept = [c for c in model.components if in_group(c.path, "g1") and not in_group(c.path, "g1/s2")]
    if kept:
        assert_props_close(model.mass_properties(["g1"], ["g1/s2"]), old_way(kept), 1e-12)
