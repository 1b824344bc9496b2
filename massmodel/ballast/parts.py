"""Sized ballast pieces as model components and as ``[[part]]`` tables of a model file.

A block without chamfers, or chamfered only on the edges along one axis, is written exactly with the model file's
own primitives: a ``box`` of the block's material with ``cylinder`` cut-outs for the holes and counterbores and
``wedge`` cut-outs for the chamfer prisms (they are disjoint, so the loader's superposition is exact). Chamfers on
edges along two or three axes overlap at the corners, which cut-outs cannot express; such a block is written with
its exact mass properties (``measured = { mass, cg, inertia }``, maturity "calculated"), the box drawn for display,
and a note saying so.
"""

from __future__ import annotations

import itertools
import json
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.frames import Pose
from massmodel.core.materials import Material
from massmodel.core.model import Component, Cutout, MassSource, Maturity
from massmodel.core.shapes import Box, Cylinder, Wedge

from .block import AXES, BlockGeometry, face_axes
from .sizing import PlacedPiece

__all__ = ["BALLAST_COLOUR", "representable", "piece_cutouts", "piece_component", "part_table", "euler_xyz_deg"]

FloatArray = npt.NDArray[np.float64]
BALLAST_COLOUR = "#9c7a1c"  # added ballast in pictures and exports (a dull brass)


def representable(geometry: BlockGeometry) -> bool:
    """Whether the model file's primitives express the block exactly (no chamfer, or chamfers along one axis)."""
    return geometry.chamfer is None or len(geometry.chamfer.edges) == 1


def _axis_rotation(k: int) -> FloatArray:
    """Rotation taking the local z axis (a cylinder's axis) onto axis k."""
    if k == 2:
        return np.eye(3)
    if k == 0:  # Ry(+90 deg): z -> +x
        return np.array([[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [-1.0, 0.0, 0.0]])
    return np.array([[1.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])  # Rx(-90 deg): z -> +y


def piece_cutouts(g: BlockGeometry) -> list[Cutout]:
    """Holes, counterbores and (single-axis) chamfer wedges of a block as cut-outs in the block frame."""
    cuts: list[Cutout] = []
    half = 0.5 * np.array(g.size)
    h = g.holes
    if h is not None:
        k = AXES.index(h.axis)
        i, j = face_axes(h.axis)
        rot = _axis_rotation(k)
        depth = h.counterbore.depth if h.counterbore else 0.0
        for p, q in h.centres((g.size[i], g.size[j])):
            c = np.zeros(3)
            c[i], c[j] = p, q
            bore = c.copy()
            bore[k] = -h.counterbore_end * 0.5 * depth
            cuts.append(Cutout(Cylinder(h.radius, 2.0 * half[k] - depth), Pose(rot, bore)))
            if h.counterbore:
                cb = c.copy()
                cb[k] = h.counterbore_end * (half[k] - 0.5 * depth)
                cuts.append(Cutout(Cylinder(0.5 * h.counterbore.diameter, depth), Pose(rot, cb)))
    if g.chamfer is not None:
        if not representable(g):
            raise ValueError("chamfers on edges along more than one axis cannot be written as cut-outs")
        s = g.chamfer.size
        k = AXES.index(g.chamfer.edges)
        i, j = (k + 1) % 3, (k + 2) % 3
        for si, sj in itertools.product((1.0, -1.0), repeat=2):
            origin = np.zeros(3)
            origin[i], origin[j], origin[k] = si * half[i], sj * half[j], -half[k]
            ei, ej, ek = np.eye(3)[i], np.eye(3)[j], np.eye(3)[k]
            lx, ly = -si * ei, -sj * ej
            if si * sj < 0:
                lx, ly = ly, lx
            rot = np.column_stack([lx, ly, ek])
            cuts.append(Cutout(Wedge(s, s, 2.0 * half[k]), Pose(rot, origin)))
    return cuts


def piece_component(piece: PlacedPiece, material: Material, path: str, slot: str, note: str = "") -> Component:
    """The piece as a model component (model-frame pose), exact either way (see the module notes)."""
    g = piece.geometry
    box = Box(*g.size)
    if representable(g):
        return Component(path=path, shape=box, pose=piece.pose, source=MassSource.MATERIAL,
                         maturity=Maturity.CALCULATED, colour=BALLAST_COLOUR, cutouts=tuple(piece_cutouts(g)),
                         material=material.key, density=material.density, slot=slot, note=note,
                         origin=f"ballast block '{path}'")
    rho = material.density
    return Component(path=path, shape=box, pose=piece.pose, source=MassSource.MEASURED,
                     maturity=Maturity.CALCULATED, colour=BALLAST_COLOUR, mass=rho * g.volume(),
                     measured_cg=g.centroid(), measured_inertia=rho * g.inertia_per_density(), slot=slot, note=note,
                     origin=f"ballast block '{path}'")


def euler_xyz_deg(linear: npt.ArrayLike) -> list[float]:
    """Extrinsic x-y-z angles (deg) of a rotation matrix, as a model file's ``rotate`` writes them.

    Extrinsic "xyz" with angles (a, b, c) is ``R = Rz(c) Ry(b) Rx(a)`` (see :mod:`massmodel.core.frames`), scipy's
    lower-case "xyz".
    """
    from scipy.spatial.transform import Rotation

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # gimbal lock at ±90 deg still gives a valid triple
        angles = Rotation.from_matrix(np.asarray(linear, dtype=float)).as_euler("xyz", degrees=True)
    return [0.0 if abs(a) < 1e-12 else float(a) for a in angles]


def _mm_text(x: float) -> str:
    v = round(x * 1e3, 9)
    return f"{0.0 if v == 0 else v:.9g} mm"


def _pose_fields(pose: Pose) -> dict[str, Any]:
    out: dict[str, Any] = {"at": [_mm_text(float(v)) for v in pose.translation]}
    if not np.allclose(pose.linear, np.eye(3), atol=1e-15):
        out["rotate"] = {"extrinsic": "xyz", "angles": [f"{a:.12g} deg" for a in euler_xyz_deg(pose.linear)]}
    return out


def part_table(piece: PlacedPiece, material: Material, path: str, slot: str, frame: Pose, note: str) -> dict[str, Any]:
    """The ``[[part]]`` table of a piece, its pose given in ``frame`` (the enclosing group frame, model frame)."""
    g = piece.geometry
    local = frame.inverse() * piece.pose
    table: dict[str, Any] = {"path": path, "shape": "box", "size": [_mm_text(s) for s in g.size]}
    if representable(g):
        table["material"] = material.key
    else:
        rho = material.density
        inertia = rho * g.inertia_per_density()
        inertia = np.where(np.abs(inertia) < 1e-13 * float(np.max(np.abs(inertia))), 0.0, inertia)  # round-off
        table["measured"] = {
            "mass": f"{rho * g.volume():.12g} kg",
            "cg": [_mm_text(float(v) if abs(v) > 1e-15 else 0.0) for v in g.centroid()],
            "inertia": [[f"{inertia[r, c]:.12g} kg*m^2" for c in range(3)] for r in range(3)],
        }
    table["maturity"] = "calculated"
    table["colour"] = BALLAST_COLOUR
    table.update(_pose_fields(local))
    if representable(g):
        cuts = []
        for cut in piece_cutouts(g):
            entry: dict[str, Any] = {"shape": cut.shape.kind}
            if isinstance(cut.shape, Cylinder):
                entry.update(radius=_mm_text(cut.shape.radius), length=_mm_text(cut.shape.length))
            else:
                entry.update(leg_x=_mm_text(cut.shape.leg_x), leg_y=_mm_text(cut.shape.leg_y),
                             length=_mm_text(cut.shape.length))
            entry.update(_pose_fields(cut.pose))
            cuts.append(entry)
        if cuts:
            table["cut"] = cuts
    table["slot"] = slot
    if not representable(g):
        note += ("; mass properties exact at the nominal density, written explicitly because chamfers on edges along "
                 "more than one axis cannot be written as cut-outs")
    table["note"] = note
    return table


def toml_value(value: Any) -> str:
    """A TOML literal for the plain values used in part tables (str, bool, int, float, list, dict)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)  # a JSON string is a TOML basic string (newlines escaped too)
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{k} = {toml_value(v)}" for k, v in value.items()) + " }"
    if isinstance(value, Sequence):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    raise TypeError(f"no TOML form for {value!r}")


def toml_table(header: str, table: dict[str, Any]) -> str:
    """A ``[[header]]`` table; a list of cut-out tables is written one per line."""
    lines = [f"[[{header}]]"]
    for key, value in table.items():
        if key == "cut":
            lines.append("cut = [")
            lines.extend(f"  {toml_value(v)}," for v in value)
            lines.append("]")
        else:
            lines.append(f"{key} = {toml_value(value)}")
    return "\n".join(lines)


__all__ += ["toml_value", "toml_table"]
