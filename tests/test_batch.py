"""massmodel.core.batch (arrays of primitives) against the per-component path (Component.props, Model.mass_properties),
which uses the closed forms of massmodel.core.shapes one part at a time; both must agree to 1e-12."""

from __future__ import annotations

import numpy as np
import pytest

from conftest import assert_close, assert_props_close, random_rotations
from massmodel.core import batch
from massmodel.core.frames import Pose
from massmodel.core.model import Component, MassSource, Maturity, Model
from massmodel.core.shapes import SHAPE_KINDS


def random_batch(rng: np.random.Generator, kind: str, n: int) -> batch.Batch:
    fields = batch.BATCH_KINDS[kind]
    dims = rng.uniform(0.01, 0.5, (n, len(fields)))
    if kind in ("tube", "spherical_shell", "torus"):
        dims[:, 1] = dims[:, 0] * rng.uniform(0.05, 0.95, n)
    return batch.Batch(kind, dims, rng.uniform(500.0, 19300.0, n), random_rotations(rng, n),
                       rng.uniform(-3.0, 3.0, (n, 3)))


def components(b: batch.Batch) -> list[Component]:
    cls = SHAPE_KINDS[b.kind]
    return [Component(f"{b.kind}/{i}", cls(*b.dims[i]), Pose(b.rotations[i], b.translations[i]), MassSource.DENSITY,
                      Maturity.CALCULATED, "#808080", density=float(b.densities[i])) for i in range(len(b.dims))]


def test_batch_kinds_are_the_shape_fields() -> None:
    assert set(batch.BATCH_KINDS) == set(SHAPE_KINDS) - {"extrusion", "point"}
    assert batch.BATCH_KINDS["frustum"] == ("base_radius", "top_radius", "height")
    assert batch.BATCH_KINDS["box"] == ("size_x", "size_y", "size_z")


@pytest.mark.parametrize("kind", sorted(batch.BATCH_KINDS))
def test_per_part_properties_match_the_component_path(rng, kind: str) -> None:
    b = random_batch(rng, kind, 60)
    comps = components(b)
    unit = batch.unit_properties(kind, b.dims)
    for i in (0, 17, 59):
        shape = comps[i].shape
        assert unit.volume[i] == pytest.approx(shape.volume(), rel=1e-13)
        assert_close(unit.tensors()[i], shape.inertia_per_density(), 1e-13)
        if unit.centroid is None:
            assert not np.any(shape.centroid())
        else:
            assert_close(unit.centroid[i], shape.centroid(), 1e-13)
    masses, centers, tensors = batch.placed_properties(kind, b.dims, b.densities, b.rotations, b.translations)
    assert_close(masses, [c.props.mass for c in comps], 1e-12)
    assert np.max(np.abs(centers - [c.props.center for c in comps])) <= 1e-12 * 3.0
    for got, c in zip(tensors, comps, strict=True):
        assert_close(got, c.props.inertia, 1e-12)


@pytest.mark.parametrize("kind", sorted(batch.BATCH_KINDS))
@pytest.mark.parametrize("block", [7, batch.BLOCK])
def test_aggregate_matches_the_model(rng, kind: str, block: int) -> None:
    b = random_batch(rng, kind, 50)
    expected = Model("m", tuple(components(b))).mass_properties()
    got = batch.aggregate(kind, b.dims, b.densities, b.rotations, b.translations, block=block)
    assert_props_close(got, expected, 1e-12)


def test_aggregate_batches_over_kinds(rng) -> None:
    batches = [random_batch(rng, kind, 20) for kind in batch.BATCH_KINDS]
    expected = Model("m", tuple(c for b in batches for c in components(b))).mass_properties()
    assert_props_close(batch.aggregate_batches(batches), expected, 1e-12)
    assert batch.aggregate_batches([]).mass == 0.0


def test_far_from_the_origin_keeps_precision(rng) -> None:
    b = random_batch(rng, "box", 200)
    far = batch.Batch("box", b.dims, b.densities, b.rotations, b.translations + [1e4, -2e4, 5e3])
    near = batch.aggregate("box", b.dims, b.densities, b.rotations, b.translations, block=64)
    moved = batch.aggregate("box", far.dims, far.densities, far.rotations, far.translations, block=64)
    assert_close(moved.inertia, near.inertia, 1e-9)  # the tensor about the CG does not depend on where the CG is


@pytest.mark.parametrize(
    ("change", "fragment"),
    [
        (lambda b: ("blob", b.dims, b.densities, b.rotations, b.translations), "not a batch kind"),
        (lambda b: ("box", b.dims[:, :2], b.densities, b.rotations, b.translations), "shape (N, 3)"),
        (lambda b: ("box", np.where(np.arange(3) == 1, 0.0, b.dims), b.densities, b.rotations, b.translations),
         "dims[0, 1] (size_y of part 0) must be a finite length > 0 m"),
        (lambda b: ("box", np.where(np.arange(3) == 2, np.nan, b.dims), b.densities, b.rotations, b.translations),
         "dims[0, 2]"),
        (lambda b: ("tube", np.c_[b.dims[:, :1], b.dims[:, :1] * 2, b.dims[:, 2:]], b.densities, b.rotations,
                    b.translations), "inner_radius"),
        (lambda b: ("box", b.dims, -b.densities, b.rotations, b.translations), "densities[0]"),
        (lambda b: ("box", b.dims, b.densities, b.rotations * 1.001, b.translations), "rotations[0] is not orthogonal"),
        (lambda b: ("box", b.dims, b.densities, np.where(np.arange(4)[:, None, None] == 3, np.nan, b.rotations),
                    b.translations), "rotations[3] is not orthogonal"),
        (lambda b: ("box", b.dims, b.densities, b.rotations, b.translations[:, :2]), "translations must have shape"),
        (lambda b: ("box", b.dims, b.densities, b.rotations, b.translations + [0, np.inf, 0]), "translations[0]"),
    ],
)
def test_bad_arrays_are_named(rng, change, fragment: str) -> None:
    b = random_batch(rng, "box", 4)
    args = change(b)
    for fn in (batch.placed_properties, batch.aggregate):
        with pytest.raises(batch.BatchError, match=None) as info:
            fn(*args)
        assert fragment in str(info.value)
