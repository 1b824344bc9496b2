"""The data of the page's 3-D view: the display meshes of :mod:`massmodel.pictures.scene`, one mesh per group.

The page's viewer script (``massmodel/page/js/viewer.js``) reads this payload from a JSON element: lengths in metres
in the model axes, arrays as base64 of little-endian float32 (positions, line segments) and uint32 (triangle
indices). Each top-level group is one mesh so that the page can hide it; the marks are the total CG, the principal
axes (each drawn ± its radius of gyration from the CG), the axle lines between the contact points, the ground
rectangle and the slot envelopes' sharp edges.
"""

from __future__ import annotations

import base64
from dataclasses import dataclass
from typing import Any

import numpy as np

from massmodel.core.model import Model
from massmodel.core.shapes import PointMass
from massmodel.pictures.scene import (
    CG_COLOUR,
    INK,
    SLOT_COLOUR,
    Scene,
    SceneOptions,
    build_scene,
    group_key,
)

__all__ = ["ViewGroup", "scene_payload", "view_groups", "BACKGROUND", "GROUND_COLOUR"]

BACKGROUND = "#f4f1ea"  # warm paper behind the car (the page's own look)
GROUND_COLOUR = "#9a9385"


def _b64(array: np.ndarray, dtype: str) -> str:
    return base64.b64encode(np.ascontiguousarray(array, dtype=dtype).tobytes()).decode("ascii")


@dataclass(frozen=True)
class ViewGroup:
    """One top-level group as the 3-D view draws it."""

    name: str
    colour: str
    mass: float  # kg
    parts: int
    triangles: int


def view_groups(scene: Scene) -> list[tuple[ViewGroup, np.ndarray, np.ndarray]]:
    """Split the scene's merged mesh into one mesh per top-level group.

    Returns
    -------
    list of (ViewGroup, (V, 3) float vertices in m, (F, 3) int faces indexing those vertices)
        In the order of the scene's legend when colouring by group, else sorted by name.
    """
    comps = scene.model.components
    keys = np.array([group_key(c.path, 1) or "(top level)" for c in comps], dtype=object)
    face_group = keys[scene.owner]
    out = []
    for name in sorted(set(keys.tolist())):
        members = np.flatnonzero(keys == name)
        mask = face_group == name
        if not mask.any():
            continue
        faces = scene.faces[mask]
        used, inverse = np.unique(faces, return_inverse=True)
        colour = "#" + "".join(f"{int(v):02x}" for v in scene.part_colours[members[0]])
        mass = float(sum(comps[i].props.mass for i in members))
        group = ViewGroup(name, colour, mass, len(members), int(len(faces)))
        out.append((group, scene.vertices[used], inverse.reshape(-1, 3)))
    return out


def _principal_segments(scene: Scene) -> np.ndarray:
    segs = []
    for axis, radius in zip(scene.axes, scene.radii, strict=True):
        r = max(float(radius), 1e-3)
        segs.append([scene.cg - r * axis, scene.cg + r * axis])
    return np.array(segs, float)


def _axle_segments(scene: Scene) -> np.ndarray | None:
    if scene.contact_points is None:
        return None
    p = scene.contact_points  # front left, front right, rear left, rear right
    return np.array([[p[0], p[1]], [p[2], p[3]]], float)


def _ground_segments(scene: Scene) -> np.ndarray | None:
    rect = scene.ground_rectangle()
    if rect is None:
        return None
    return np.array([[rect[i], rect[(i + 1) % 4]] for i in range(4)], float)


def scene_payload(model: Model, chord_tolerance: float = 0.002) -> tuple[dict[str, Any], list[ViewGroup]] | None:
    """The viewer's JSON payload for ``model``, or None when the model has no part with a shape to draw.

    Parameters
    ----------
    model : Model
    chord_tolerance : float
        Largest distance between a display mesh and the exact surface, m.

    Returns
    -------
    (dict, list of ViewGroup) or None
    """
    if all(isinstance(c.shape, PointMass) for c in model.components):
        return None
    scene = build_scene(model, SceneOptions(chord_tolerance=chord_tolerance, group_cgs=False, labels=False))
    groups = view_groups(scene)
    low, high = scene.vertices.min(axis=0), scene.vertices.max(axis=0)
    span = float(np.linalg.norm(high - low))
    payload: dict[str, Any] = {
        "unit": "m",
        "frame": "model axes",
        "forward": scene.forward.tolist(),
        "left": scene.left.tolist(),
        "up": scene.up.tolist(),
        "bounds": [low.tolist(), high.tolist()],
        "background": BACKGROUND,
        "ink": INK,
        "cg_colour": CG_COLOUR,
        "slot_colour": SLOT_COLOUR,
        "ground_colour": GROUND_COLOUR,
        "marker_radius": 0.012 * span,
        "cg": scene.cg.tolist(),
        "principal_axes": _b64(_principal_segments(scene).reshape(-1), "<f4"),
        "groups": [
            {
                "name": g.name,
                "colour": g.colour,
                "mass_kg": g.mass,
                "positions": _b64(v.reshape(-1), "<f4"),
                "indices": _b64(f.reshape(-1), "<u4"),
            }
            for g, v, f in groups
        ],
        "slots": [{"name": name, "segments": _b64(seg.reshape(-1), "<f4")} for name, seg in scene.slot_edges],
    }
    axles = _axle_segments(scene)
    payload["axles"] = _b64(axles.reshape(-1), "<f4") if axles is not None else None
    ground = _ground_segments(scene)
    payload["ground"] = _b64(ground.reshape(-1), "<f4") if ground is not None else None
    return payload, [g for g, _, _ in groups]
