"""Common parts of the shapes read from geometry files: errors, stored mass properties, point checks.

Used by `massmodel.cad.step_shape` and `massmodel.cad.mesh_shape`; numpy only (trimesh loads when sampling).
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import sys
import tempfile
from collections.abc import Iterator
from typing import Any

import numpy as np

from massmodel.core.shapes import ShapeError

__all__ = ["MESH_SUFFIXES", "STEP_SUFFIXES", "STEP_UNIT_NAMES", "GeometryFileError"]

STEP_SUFFIXES = (".step", ".stp")
MESH_SUFFIXES = (".stl", ".obj", ".glb")
# Length-unit names OpenCascade reports for a STEP file (STEPControl_Reader.FileUnits), metres per unit.
STEP_UNIT_NAMES = {
    "millimetre": 1e-3, "millimeter": 1e-3, "centimetre": 1e-2, "centimeter": 1e-2, "metre": 1.0, "meter": 1.0,
    "micrometre": 1e-6, "micrometer": 1e-6, "micron": 1e-6, "kilometre": 1e3, "kilometer": 1e3,
    "inch": 0.0254, "foot": 0.3048, "mil": 2.54e-5,
}
OVERLAP_MM3 = 1e-3  # solids of one STEP file sharing more than this are refused


class GeometryFileError(ShapeError):
    """A geometry file that cannot be used; ``field`` names the model-file field to fix ('file' or 'unit')."""

    def __init__(self, message: str, field: str = "file", kind: str | None = None) -> None:
        super().__init__(message, field, kind)


@contextlib.contextmanager
def _native_output() -> Iterator[list[str]]:
    """Capture what native code writes to file descriptors 1 and 2 (OpenCascade prints parse errors there); the
    captured text (ANSI colours removed) is appended to the yielded list when the block ends."""
    lines: list[str] = []
    for stream in (sys.stdout, sys.stderr):  # Python's own buffered text goes out first, not into the sink
        stream.flush()
    saved = [os.dup(1), os.dup(2)]
    with tempfile.TemporaryFile(mode="w+b") as sink:
        try:
            os.dup2(sink.fileno(), 1)
            os.dup2(sink.fileno(), 2)
            yield lines
        finally:
            os.dup2(saved[0], 1)
            os.dup2(saved[1], 2)
            for fd in saved:
                os.close(fd)
            sink.seek(0)
            text = sink.read().decode("utf-8", "replace")
            lines.extend(ln.strip(" *") for ln in re.sub(r"\x1b\[[0-9;]*m", "", text).splitlines() if ln.strip(" *"))


def _check_points(points: np.ndarray, tol: float, kind: str) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    if p.ndim != 2 or p.shape[1] != 3:
        raise ValueError(f"points must have shape (N, 3), got {p.shape}")
    if not (math.isfinite(tol) and tol >= 0.0):
        raise ShapeError(f"tol ({tol} m) must be finite and >= 0", "tol", kind)
    return p


def _check_count(n: int, kind: str) -> int:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise ShapeError(f"n must be a whole number >= 1, got {n!r}", "n", kind)
    return int(n)


def _spread(points: np.ndarray, n: int) -> np.ndarray:
    """About ``n`` rows of ``points`` taken evenly by index (all of them when there are fewer)."""
    if len(points) <= n:
        return points
    return points[np.unique(np.linspace(0, len(points) - 1, n).round().astype(int))]


def _mesh_surface_points(mesh: Any, n: int) -> np.ndarray:
    """About ``n`` points on a mesh's triangles: its vertices (evenly thinned), topped up with seeded samples."""
    import trimesh

    v = np.asarray(mesh.vertices, dtype=float)
    if len(v) >= n:
        return _spread(v, n)
    extra, _ = trimesh.sample.sample_surface(mesh, n - len(v), seed=20261201)
    return np.vstack([v, np.asarray(extra, dtype=float)])


def _readonly(a: Any) -> np.ndarray:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out



class _StoredProperties:
    """The mass-properties accessors of a shape read from a file: the values are computed once when the file is read
    (by OpenCascade or trimesh) and stored in the fields ``_volume``, ``_centroid``, ``_inertia`` and ``_bounds``,
    all in the file frame, SI. An open mesh stores zero volume and inertia and its bounding-box centre."""

    __slots__ = ()
    _volume: float
    _centroid: np.ndarray
    _inertia: np.ndarray
    _bounds: np.ndarray

    def volume(self) -> float:
        """Volume, m³."""
        return self._volume

    def centroid(self) -> np.ndarray:
        """Centroid, (3,) float, m, file frame."""
        return self._centroid

    def inertia_per_density(self) -> np.ndarray:
        """Inertia at unit density about the centroid, (3, 3) float, m⁵, file axes, tensor convention."""
        return self._inertia

    def bounds(self) -> np.ndarray:
        """Axis-aligned bounding box, (2, 3) float, m, file frame."""
        return self._bounds

