"""The ``[[part]]`` tables of a model file: each part's shape, pose, mass source and cut-outs, and the copies its
mirrored groups and patterns make."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from functools import lru_cache
from typing import Any

import numpy as np

from massmodel.core.frames import Pose
from massmodel.core.massprops import InertiaError
from massmodel.core.materials import Material
from massmodel.core.model import Component, Cutout, MassSource

from .fields import (
    FILE_SHAPE_KINDS,
    PALETTE,
    PART_FIELDS,
    PLACEMENT_FIELDS,
    FieldReader,
    GroupFrame,
    colour_of,
    enclosing_groups,
    flag,
    maturity_of,
    path_of,
    shape_keys,
)

__all__ = ["part_components"]


def _swap_side(path: str) -> str | None:
    segs = path.split("/")
    swapped = [{"left": "right", "right": "left"}.get(s, s) for s in segs]
    return "/".join(swapped) if swapped != segs else None


def part_components(
    rd: FieldReader,
    table: dict[str, Any],
    index: int,
    groups: Mapping[str, GroupFrame],
    materials: Mapping[str, Material],
    mirror: Pose,
    frames: dict[str, Pose],
) -> list[Component]:
    """The components one [[part]] table makes (its mirror and pattern copies included); ``frames`` remembers the
    model-frame pose of each group path."""
    path = path_of(rd, table, "part", index)
    item = f"part '{path}'"
    rd.shape_kind(table, item)
    rd.check_fields(table, _part_fields(table.get("shape")), item)
    shape = rd.shape(table, item)
    local_pose = rd.pose(table, item)
    cutouts = _cutouts(rd, table, item, shape)

    sources = [k for k in ("material", "density", "mass", "measured") if k in table]
    if len(sources) != 1:
        raise rd.error(
            item, sources[1] if len(sources) > 1 else "material",
            "give exactly one mass source: material, density, mass or measured"
            + (f" (found {' and '.join(sources)})" if sources else " (none found)"),
        )
    source = MassSource(sources[0])
    kw: dict[str, Any] = {}
    if source is MassSource.MATERIAL:
        key = table["material"]
        if not isinstance(key, str):
            raise rd.error(item, "material", f"expected a material name such as 'aluminium_6061_t6', got {key!r:.60}")
        if key not in materials:
            import difflib

            close = difflib.get_close_matches(str(key), list(materials), n=3)
            raise rd.error(item, "material", f"unknown material {key!r}" + (f"; did you mean {', '.join(close)}?" if close else
                           "; `massmodel materials` lists the library"))
        kw.update(material=key, density=materials[key].density)
    elif source is MassSource.DENSITY:
        kw["density"] = rd.quantity(table["density"], "density", item, "density")
        if kw["density"] <= 0.0:
            raise rd.error(item, "density", "must be positive")
    elif source is MassSource.MASS:
        kw["mass"] = rd.quantity(table["mass"], "mass", item, "mass")
        if kw["mass"] <= 0.0:
            raise rd.error(item, "mass", "must be positive")
    else:
        meas = table["measured"]
        if not isinstance(meas, dict):
            raise rd.error(item, "measured", "expected a table with 'mass', 'cg' and optionally 'inertia'")
        for key in ("mass", "cg"):
            if key not in meas:
                raise rd.error(item, f"measured.{key}", "is missing (measured properties need 'mass' and 'cg')")
        extra = sorted(set(meas) - {"mass", "cg", "inertia"})
        if extra:
            raise rd.error(item, f"measured.{extra[0]}", "unknown field; allowed: mass, cg, inertia")
        kw["mass"] = rd.quantity(meas["mass"], "mass", item, "measured.mass")
        if kw["mass"] <= 0.0:
            raise rd.error(item, "measured.mass", "must be positive")
        kw["measured_cg"] = rd.vector(meas["cg"], "length", item, "measured.cg")
        if "inertia" in meas:
            rows = meas["inertia"]
            if not isinstance(rows, list) or len(rows) != 3:
                raise rd.error(item, "measured.inertia", "expected 3 rows of 3 values (kg*m^2, tensor convention)")
            kw["measured_inertia"] = np.array(
                [rd.vector(r, "inertia", item, f"measured.inertia[{i}]") for i, r in enumerate(rows)]
            )
    if getattr(shape, "closed", True) is False and source is not MassSource.MEASURED:
        raise rd.error(
            item, source.value,
            f"the mesh '{shape.file}' is not closed ({shape.problem}), so it has no trustworthy volume or inertia and "
            "cannot carry a material, density or mass; fix the mesh, or give `measured` properties to show it as is",
        )
    if shape.volume() <= 0.0 and source in (MassSource.MATERIAL, MassSource.DENSITY):
        raise rd.error(item, source.value, "a point has no volume: give it a 'mass' or 'measured' properties")

    enclosing = enclosing_groups(path, groups)
    maturity = None
    if "maturity" in table:
        maturity = maturity_of(rd, table["maturity"], item)
    else:
        maturity = next((g.maturity for g in reversed(enclosing) if g.maturity is not None), None)
    if maturity is None:
        raise rd.error(item, "maturity", "is missing (give it here or on an enclosing [[group]])")
    if "colour" in table:
        colour = colour_of(rd, table["colour"], item)
    else:
        colour = next((g.colour for g in reversed(enclosing) if g.colour is not None), None) or PALETTE[
            sum(map(ord, path.split("/")[0])) % len(PALETTE)
        ]
    parent = path.rpartition("/")[0]
    group_pose = frames.get(parent)
    if group_pose is None:
        group_pose = Pose.identity()
        for g in enclosing:
            group_pose = group_pose * g.pose
        frames[parent] = group_pose

    copies: list[tuple[str, Pose]] = []
    if "pattern" in table:
        pat = table["pattern"]
        if not isinstance(pat, dict) or set(pat) != {"count", "step"}:
            raise rd.error(item, "pattern", "expected { count = N, step = [dx, dy, dz] }")
        count = pat["count"]
        if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= 10000:
            raise rd.error(item, "pattern.count", f"expected a whole number from 1 to 10000, got {count!r}")
        step = rd.vector(pat["step"], "length", item, "pattern.step")
        for k in range(count):
            copies.append((f"{path}-{k + 1}", group_pose * Pose.from_translation(k * step) * local_pose))
    else:
        copies.append((path, group_pose * local_pose if enclosing else local_pose))
    if flag(rd, table, "mirror", item) or any(g.mirror for g in enclosing):
        mirrored = []
        for p, pose in copies:
            other = _swap_side(p)
            if other is None:
                raise rd.error(item, "mirror", "a mirrored part needs a path segment 'left' or 'right' to swap")
            mirrored.append((other, mirror * pose))
        copies.extend(mirrored)

    slot = rd.text(table, "slot", item)
    note = rd.text(table, "note", item) or ""
    out = []
    for p, pose in copies:
        try:
            out.append(Component(
                path=p, shape=shape, pose=pose, source=source, maturity=maturity, colour=colour,
                cutouts=cutouts, slot=slot, note=note,
                origin=f"{rd.file}: {item}" + (f" (copy '{p}')" if p != path else ""), **kw,
            ))
        except InertiaError as exc:
            raise rd.error(item, "measured.inertia", str(exc).split(": ", 2)[-1]) from None
        except ValueError as exc:
            raise rd.error(item, source.value, str(exc).split(": ", 2)[-1]) from None
    return out


def _part_fields(kind: Any) -> set[str]:
    """The fields a [[part]] of shape ``kind`` may have (one set a shape kind, made once)."""
    if not isinstance(kind, str):
        return PART_FIELDS
    fields = _PART_FIELDS_OF.get(kind)
    if fields is None:
        fields = _PART_FIELDS_OF[kind] = PART_FIELDS | shape_keys(kind)
    return fields


_PART_FIELDS_OF: dict[str, set[str]] = {}  # read only by TableReader.check_fields


def _cutouts(rd: FieldReader, table: Mapping[str, Any], item: str, parent: Any) -> tuple[Cutout, ...]:
    raw = table.get("cut", [])
    if not isinstance(raw, list) or not all(isinstance(t, dict) for t in raw):
        raise rd.error(item, "cut", "expected a list of tables like { shape = \"cylinder\", radius = ..., at = [...] }")
    if not raw:
        return ()
    cuts: list[Cutout] = []
    boxes: list[np.ndarray] = []
    scale = float(np.max(np.abs(parent.bounds()))) or 1.0
    for i, ct in enumerate(raw):
        prefix = f"cut[{i}]."
        rd.shape_kind(ct, item, prefix)
        allowed = {"shape"} | PLACEMENT_FIELDS | shape_keys(ct.get("shape"))
        unknown = sorted(set(ct) - allowed)
        if unknown:
            raise rd.error(item, prefix + unknown[0], f"unknown field; allowed: {', '.join(sorted(allowed))}")
        if ct.get("shape") in FILE_SHAPE_KINDS:
            raise rd.error(item, prefix + "shape", "a cut-out is a primitive shape (model holes from a file in the file)")
        shape = rd.shape(ct, item, prefix)
        if shape.volume() <= 0.0:
            raise rd.error(item, prefix + "shape", "a cut-out needs a volume")
        pose = rd.pose(ct, item, prefix)
        pts = pose.apply(_surface_samples(shape))
        inside = parent.contains(pts, tol=1e-9 * scale)
        if not np.all(inside):
            worst = pts[~inside][0] * 1000.0
            raise rd.error(
                item, prefix.rstrip("."),
                f"the cut-out leaves its parent {parent.kind} (its surface point "
                f"[{worst[0]:.3f}, {worst[1]:.3f}, {worst[2]:.3f}] mm, part frame, lies outside)",
            )
        cuts.append(Cutout(shape, pose))
        boxes.append(np.array([pts.min(axis=0), pts.max(axis=0)]))
    _check_cutouts_disjoint(rd, item, cuts, boxes)
    return tuple(cuts)


@lru_cache(maxsize=512)
def _surface_samples(shape: Any) -> np.ndarray:
    """About 400 points on a cut-out's surface (shapes are immutable and hashable; the same hole recurs)."""
    points = shape.surface_points(400)
    points.setflags(write=False)
    return points


@lru_cache(maxsize=1)
def _overlap_grid(n: int = 24) -> np.ndarray:
    """(n³, 3) sample points in the unit cube, offset so that they miss the faces."""
    offsets = (np.arange(n) + 0.5 + 0.1234567) / (n + 1)
    return np.stack(np.meshgrid(offsets, offsets, offsets, indexing="ij"), axis=-1).reshape(-1, 3)


def _check_cutouts_disjoint(rd: FieldReader, item: str, cuts: Sequence[Cutout], boxes: Sequence[np.ndarray]) -> None:
    """Overlapping cut-outs would be subtracted twice. For each pair whose bounding boxes (part frame) overlap, test a
    sampling grid over the common box (offset so that it misses shared faces); an overlap thinner than about 1/24 of
    that box may escape this test.
    """
    if len(cuts) < 2:
        return
    unit = _overlap_grid()
    for i in range(len(cuts)):
        for j in range(i + 1, len(cuts)):
            lo = np.maximum(boxes[i][0], boxes[j][0])
            hi = np.minimum(boxes[i][1], boxes[j][1])
            if np.any(hi <= lo):
                continue
            pts = lo + unit * (hi - lo)
            both = cuts[i].shape.contains(cuts[i].pose.inverse().apply(pts), tol=0.0) & cuts[j].shape.contains(
                cuts[j].pose.inverse().apply(pts), tol=0.0
            )
            if np.any(both):
                raise rd.error(item, f"cut[{j}]", f"overlaps cut[{i}] (each cut-out must remove material of its own)")

