"""Ballast block geometry: a box with fastener holes, optional counterbores and edge chamfers, in closed form.

The block frame is centred on the box, edges along the axes (like :class:`massmodel.core.shapes.Box`). Volume, centroid
and the inertia tensor are exact: the solid is written as a signed sum of simple pieces, each integrated in closed
form, and the sum is exact because the pieces cancel where they overlap (inclusion–exclusion):

``block = box − Σ edge prisms + Σ corner pyramids − Σ corner triple pieces − Σ corner set-backs − Σ holes``

* Each chamfered edge removes a right triangular prism with legs ``s`` (the chamfer size, 45°) running the full
  edge length.
* Where two chamfered edges meet at a corner their prisms overlap in a square pyramid (apex on the third edge),
  counted twice above, so it is added back once.
* Where three chamfered edges meet, the triple overlap of the prisms (volume ``s³/4``) is subtracted again, and the
  corner is closed by a small triangular face through the ends of the three chamfer lines (the plane
  ``d₁ + d₂ + d₃ = 2s``, with ``dᵢ`` the distances to the corner's faces, as OpenCascade's chamfer builds it);
  the tetrahedron that face cuts off (volume ``s³/12``) is subtracted.
* Holes are cylinders through the block along one axis; a counterbore replaces the outer part of a hole by a wider
  cylinder. Holes must keep clear of the chamfers and of each other, so they never overlap another piece.

For a box ``a × b × c`` with all twelve edges chamfered by ``s`` this gives
``V = abc − 2s²(a + b + c) + (16/3)s³``; with only the four edges along one axis ``V = abc − 2s²·(that edge length)``.

Polyhedral pieces are integrated as tetrahedra: for a tetrahedron with vertices ``p₀…p₃`` and signed volume ``V``,
``∫ x dV = V (Σpᵢ)/4`` and ``∫ x xᵀ dV = V/20 (Σ pᵢpᵢᵀ + (Σpᵢ)(Σpᵢ)ᵀ)``.

Conventions: SI (m, m³); ``inertia_per_density`` in kg·m² per kg/m³ about the centroid, block axes, tensor
convention (off-diagonals −∫xy dV). ``to_solid()`` gives an OpenCascade solid (OCP) in MILLIMETRES.

References
----------
.. [1] Tonon, F. (2004). Explicit exact formulas for the 3-D tetrahedron inertia tensor in terms of its vertex
   coordinates. Journal of Mathematics and Statistics 1(1), 8–11 (the covariance form used here is equivalent).
.. [2] Machinery's Handbook, 31st ed., Industrial Press (2020), pp.253-254 (cuboid and cylinder moments).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UserError

__all__ = [
    "AXES",
    "BlockError",
    "Counterbore",
    "HolePattern",
    "Chamfer",
    "BlockGeometry",
    "face_axes",
    "tetra_moments",
]

FloatArray = npt.NDArray[np.float64]
AXES = "xyz"
PATTERN_KINDS = ("line", "grid", "circle", "points")


class BlockError(UserError, ValueError):
    """An impossible or inconsistent block definition; ``field`` names the offending input."""

    def __init__(self, message: str, field: str) -> None:
        super().__init__(message)
        self.field = field


def face_axes(axis: str) -> tuple[int, int]:
    """Indices (i, j) of the two axes across a hole along ``axis``, in cyclic order (z → x, y; x → y, z; y → z, x)."""
    k = AXES.index(axis)
    return (k + 1) % 3, (k + 2) % 3


def _mm(x: float) -> str:
    return f"{x * 1e3:.3f} mm"


@dataclass(frozen=True, slots=True)
class Counterbore:
    """A wider, shallower bore at the outer end of each hole (for a cap-screw head).

    Parameters
    ----------
    diameter : float
        m, larger than the hole.
    depth : float
        m, less than the block along the hole axis.
    """

    diameter: float
    depth: float

    def __post_init__(self) -> None:
        for name in ("diameter", "depth"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0.0):
                raise BlockError(f"counterbore {name} must be a positive length, got {v!r}", f"counterbore.{name}")


@dataclass(frozen=True, slots=True)
class HolePattern:
    """Fastener holes through the block along one of its axes.

    Parameters
    ----------
    kind : {"line", "grid", "circle", "points"}
        ``line``: ``count`` holes centred on the face, ``pitch`` apart along ``along`` (default: the longer face
        side); ``grid``: ``count`` = columns × rows with ``pitch`` and ``pitch2`` (columns along the first face axis);
        ``circle``: ``count`` holes equally spaced on a pitch circle of diameter ``pcd``, the first on the first face
        axis; ``points``: explicit centres.
    count : int
        Number of holes.
    diameter : float
        Hole diameter, m.
    axis : {"x", "y", "z"}
        Block axis the holes run along (through the whole block).
    pitch, pitch2 : float or None
        Hole spacing, m.
    columns : int or None
        Grid columns (rows = count / columns).
    pcd : float or None
        Pitch-circle diameter, m.
    along : str or None
        Line direction, one of the two face axes.
    points : tuple of (float, float)
        Explicit centres on the face axes (see :func:`face_axes`), m, from the face centre.
    counterbore : Counterbore or None
        Optional counterbore at the outer end.
    counterbore_end : {+1, -1}
        Which end of the hole axis carries the counterbore.
    """

    kind: str
    count: int
    diameter: float
    axis: str = "z"
    pitch: float | None = None
    pitch2: float | None = None
    columns: int | None = None
    pcd: float | None = None
    along: str | None = None
    points: tuple[tuple[float, float], ...] = ()
    counterbore: Counterbore | None = None
    counterbore_end: int = 1

    def __post_init__(self) -> None:
        if self.kind not in PATTERN_KINDS:
            raise BlockError(f"hole pattern must be one of {', '.join(PATTERN_KINDS)}, got {self.kind!r}", "holes.pattern")
        if self.axis not in AXES:
            raise BlockError(f"hole axis must be x, y or z, got {self.axis!r}", "holes.axis")
        if isinstance(self.count, bool) or not isinstance(self.count, int) or not 1 <= self.count <= 64:
            raise BlockError(f"hole count must be a whole number from 1 to 64, got {self.count!r}", "holes.count")
        if not (math.isfinite(self.diameter) and self.diameter > 0.0):
            raise BlockError(f"hole diameter must be a positive length, got {self.diameter!r}", "holes.diameter")
        if self.counterbore is not None and not self.counterbore.diameter > self.diameter:
            raise BlockError(
                f"counterbore diameter {_mm(self.counterbore.diameter)} must be larger than the hole "
                f"({_mm(self.diameter)})", "counterbore.diameter")
        if self.counterbore_end not in (1, -1):
            raise BlockError("counterbore end must be +1 or -1", "counterbore.end")
        i, j = face_axes(self.axis)
        if self.along is not None and self.along not in (AXES[i], AXES[j]):
            raise BlockError(f"a line of holes along {self.axis} runs along {AXES[i]} or {AXES[j]}, not {self.along!r}",
                             "holes.along")
        need = {"line": ("pitch",) if self.count > 1 else (), "grid": ("pitch", "pitch2", "columns"),
                "circle": ("pcd",) if self.count > 1 else (), "points": ()}[self.kind]
        for name in need:
            if getattr(self, name) is None:
                raise BlockError(f"a {self.kind} pattern of {self.count} holes needs '{name}'", f"holes.{name}")
        for name in ("pitch", "pitch2", "pcd"):
            v = getattr(self, name)
            if v is not None and not (math.isfinite(v) and v > 0.0):
                raise BlockError(f"holes {name} must be a positive length, got {v!r}", f"holes.{name}")
        if self.kind == "grid":
            cols = self.columns
            if isinstance(cols, bool) or not isinstance(cols, int) or cols < 1 or self.count % cols:
                raise BlockError(f"grid columns ({cols!r}) must divide the hole count ({self.count})", "holes.columns")
        if self.kind == "points" and len(self.points) != self.count:
            raise BlockError(f"{len(self.points)} hole points given for a count of {self.count}", "holes.points")

    @property
    def radius(self) -> float:
        """Hole radius, m."""
        return 0.5 * self.diameter

    @property
    def outer_radius(self) -> float:
        """Radius of the widest part of a hole (the counterbore if any), m."""
        return 0.5 * (self.counterbore.diameter if self.counterbore else self.diameter)

    def centres(self, face: Sequence[float]) -> FloatArray:
        """Hole centres on the face axes (see :func:`face_axes`), (count, 2) float, m, from the face centre.

        Parameters
        ----------
        face : (2,) float
            Face side lengths along the two face axes, m (used to orient a line pattern).
        """
        n = self.count
        if self.kind == "points":
            return np.array(self.points, dtype=float).reshape(n, 2)
        if self.kind == "circle":
            if n == 1:
                return np.zeros((1, 2))
            t = 2.0 * np.pi * np.arange(n) / n
            return 0.5 * float(self.pcd or 0.0) * np.column_stack([np.cos(t), np.sin(t)])
        if self.kind == "line":
            i, j = face_axes(self.axis)
            along = (0 if face[0] >= face[1] else 1) if self.along is None else (0 if self.along == AXES[i] else 1)
            s = (np.arange(n) - 0.5 * (n - 1)) * float(self.pitch or 0.0)
            out = np.zeros((n, 2))
            out[:, along] = s
            return out
        cols = int(self.columns or 1)
        rows = n // cols
        u = (np.arange(cols) - 0.5 * (cols - 1)) * float(self.pitch or 0.0)
        v = (np.arange(rows) - 0.5 * (rows - 1)) * float(self.pitch2 or 0.0)
        uu, vv = np.meshgrid(u, v, indexing="xy")
        return np.column_stack([uu.ravel(), vv.ravel()])

    def describe(self) -> str:
        """One line: count, diameter, axis, pattern, counterbore."""
        text = f"{self.count} x dia {self.diameter * 1e3:.2f} mm through along {self.axis}, {self.kind}"
        if self.kind in ("line", "grid") and self.pitch:
            text += f" pitch {self.pitch * 1e3:.1f}" + (f" x {self.pitch2 * 1e3:.1f}" if self.pitch2 else "") + " mm"
        if self.kind == "circle" and self.pcd:
            text += f" on PCD {self.pcd * 1e3:.1f} mm"
        if self.counterbore:
            text += (f", counterbore dia {self.counterbore.diameter * 1e3:.2f} x {self.counterbore.depth * 1e3:.2f} mm "
                     f"at the {'+' if self.counterbore_end > 0 else '-'}{self.axis} end")
        return text


@dataclass(frozen=True, slots=True)
class Chamfer:
    """45° chamfers of equal legs ``size`` on the block edges parallel to the axes in ``edges``.

    Parameters
    ----------
    size : float
        Chamfer leg, m.
    edges : str
        Axis letters whose parallel edges are chamfered: "xyz" for all twelve edges, "z" for the four edges along z.
    """

    size: float
    edges: str = "xyz"

    def __post_init__(self) -> None:
        if not (isinstance(self.size, (int, float)) and math.isfinite(self.size) and self.size > 0.0):
            raise BlockError(f"chamfer size must be a positive length, got {self.size!r}", "chamfer.size")
        letters = "".join(sorted(set(self.edges)))
        if not letters or any(ch not in AXES for ch in letters):
            raise BlockError(f"chamfer edges must be axis letters from 'xyz' (e.g. \"xyz\" for all edges), got "
                             f"{self.edges!r}", "chamfer.edges")
        object.__setattr__(self, "edges", letters)

    def describe(self) -> str:
        which = "all edges" if self.edges == "xyz" else "edges along " + " and ".join(self.edges)
        return f"{self.size * 1e3:.2f} mm x 45 deg on {which}"


def tetra_moments(p: npt.ArrayLike) -> tuple[float, FloatArray, FloatArray]:
    """Volume and moments of a tetrahedron.

    Parameters
    ----------
    p : (4, 3) float
        Vertices, m (any order).

    Returns
    -------
    volume : float
        m³ (positive).
    first : (3,) float
        ∫ x dV, m⁴.
    second : (3, 3) float
        ∫ x xᵀ dV about the origin, m⁵.

    References
    ----------
    Tonon (2004), J. Math. Stat. 1(1): exact tetrahedron moments from the vertex coordinates.
    """
    v = np.asarray(p, dtype=float).reshape(4, 3)
    vol = abs(float(np.linalg.det(v[1:] - v[0]))) / 6.0
    s = v.sum(axis=0)
    second = vol / 20.0 * (v.T @ v + np.outer(s, s))
    return vol, vol * s / 4.0, second


def _polytope(tets: npt.ArrayLike, signs: npt.ArrayLike) -> tuple[float, FloatArray, FloatArray]:
    """Signed sums of tetrahedron moments, vectorised: ``tets`` (T, 4, 3), ``signs`` (T,) of ±1."""
    v = np.asarray(tets, dtype=float).reshape(-1, 4, 3)
    sg = np.asarray(signs, dtype=float).reshape(-1)
    vol = np.abs(np.linalg.det(v[:, 1:] - v[:, :1])) / 6.0 * sg
    s = v.sum(axis=1)
    first = (vol[:, None] * s).sum(axis=0) / 4.0
    second = np.einsum("t,tki,tkj->ij", vol, v, v) + np.einsum("t,ti,tj->ij", vol, s, s)
    return float(vol.sum()), first, second / 20.0


def _cylinder(radius: float, length: float, axis: int, centre: FloatArray) -> tuple[float, FloatArray, FloatArray]:
    """Solid cylinder moments about the origin (Machinery's Handbook: ∫x_axis² = V L²/12, ∫x_across² = V r²/4)."""
    vol = math.pi * radius * radius * length
    diag = np.full(3, vol * radius * radius / 4.0)
    diag[axis] = vol * length * length / 12.0
    return vol, vol * centre, np.diag(diag) + vol * np.outer(centre, centre)


@dataclass(frozen=True, slots=True)
class _Piece:
    sign: int
    what: str
    volume: float
    first: FloatArray
    second: FloatArray


@dataclass(frozen=True, eq=False)
class BlockGeometry:
    """A ballast block: box ``size`` with optional holes and chamfers, in the block frame (centred).

    Parameters
    ----------
    size : (3,) float
        Edge lengths along x, y, z, m.
    holes : HolePattern or None
        Fastener holes.
    chamfer : Chamfer or None
        Edge chamfers.

    Raises
    ------
    BlockError
        Sizes not positive, chamfer too big for the box, holes outside the block, into the chamfers, overlapping
        each other, or a counterbore as deep as the block.
    """

    size: tuple[float, float, float]
    holes: HolePattern | None = None
    chamfer: Chamfer | None = None
    _pieces: tuple[_Piece, ...] = field(init=False, repr=False)

    def __post_init__(self) -> None:
        size = tuple(float(s) for s in self.size)
        if len(size) != 3:
            raise BlockError("a block needs three sizes (x, y, z)", "size")
        for name, s in zip(AXES, size, strict=True):
            if not (math.isfinite(s) and s > 0.0):
                raise BlockError(f"block size along {name} must be a positive length, got {s!r} m", f"size_{name}")
        object.__setattr__(self, "size", size)
        self._validate()
        object.__setattr__(self, "_pieces", tuple(self._build_pieces()))

    # --- validation ----------------------------------------------------------------------------------------
    def _validate(self) -> None:
        half = 0.5 * np.array(self.size)
        s = self.chamfer.size if self.chamfer else 0.0
        if self.chamfer:
            for k in range(3):
                # the edges touching a face across axis k are chamfered when any other axis is in the edge set
                if any(AXES[e] in self.chamfer.edges for e in range(3) if e != k) and not s < half[k]:
                    raise BlockError(
                        f"chamfer {_mm(s)} is too big for a block {_mm(self.size[k])} thick along {AXES[k]} "
                        f"(it must be less than half of it)", "chamfer.size")
        h = self.holes
        if h is None:
            return
        k = AXES.index(h.axis)
        i, j = face_axes(h.axis)
        face = (self.size[i], self.size[j])
        centres = h.centres(face)
        if h.outer_radius * 2.0 >= min(face):
            raise BlockError(
                f"holes of dia {_mm(2 * h.outer_radius)} are larger than the block face "
                f"{_mm(face[0])} x {_mm(face[1])}", "holes.diameter")
        if h.counterbore and not h.counterbore.depth < self.size[k]:
            raise BlockError(
                f"counterbore depth {_mm(h.counterbore.depth)} must be less than the block along {h.axis} "
                f"({_mm(self.size[k])})", "counterbore.depth")
        r = h.outer_radius
        for n, (p, q) in enumerate(centres):
            wall = min(half[i] - abs(p), half[j] - abs(q)) - r
            if wall < s - 1e-12 or wall <= 0.0:
                need = f"at least the chamfer size {_mm(s)}" if s > 0 else "more than zero"
                raise BlockError(
                    f"hole {n + 1} at ({p * 1e3:.2f}, {q * 1e3:.2f}) mm with radius {_mm(r)} leaves a wall of "
                    f"{_mm(wall)} to the block side along {AXES[i] if half[i] - abs(p) < half[j] - abs(q) else AXES[j]}"
                    f" (needs {need}): the holes do not fit in a block {_mm(face[0])} x {_mm(face[1])}",
                    "holes")
        for a, b in itertools.combinations(range(len(centres)), 2):
            gap = float(np.hypot(*(centres[a] - centres[b]))) - 2.0 * r
            if gap <= 0.0:
                raise BlockError(f"holes {a + 1} and {b + 1} overlap (centres {_mm(gap + 2 * r)} apart, "
                                 f"dia {_mm(2 * r)})", "holes.pitch")

    # --- closed-form pieces --------------------------------------------------------------------------------
    def _build_pieces(self) -> list[_Piece]:
        a = np.array(self.size)
        half = 0.5 * a
        vol = float(np.prod(a))
        pieces = [_Piece(+1, "box", vol, np.zeros(3), np.diag(vol * a * a / 12.0))]
        if self.chamfer:
            pieces.extend(self._chamfer_pieces(half, self.chamfer))
        if self.holes:
            pieces.extend(self._hole_pieces(half, self.holes))
        return pieces

    @staticmethod
    def _chamfer_pieces(half: FloatArray, ch: Chamfer) -> list[_Piece]:
        """All chamfer terms as one signed piece (its volume is minus the volume the chamfers remove)."""
        s = ch.size
        axes = [AXES.index(e) for e in ch.edges]
        tets: list[tuple[FloatArray, ...]] = []
        signs: list[float] = []
        # edge prisms, full length, removed (three tetrahedra each)
        for k in axes:
            i, j = (k + 1) % 3, (k + 2) % 3
            for si, sj in itertools.product((1.0, -1.0), repeat=2):
                lo, hi = [], []
                for di, dj in ((0.0, 0.0), (s, 0.0), (0.0, s)):
                    p = np.zeros(3)
                    p[i] = si * (half[i] - di)
                    p[j] = sj * (half[j] - dj)
                    p[k] = -half[k]
                    lo.append(p)
                    q = p.copy()
                    q[k] = half[k]
                    hi.append(q)
                tets += [(lo[0], lo[1], lo[2], hi[0]), (lo[1], lo[2], hi[0], hi[1]), (lo[2], hi[0], hi[1], hi[2])]
                signs += [-1.0] * 3
        # corner corrections
        for corner in itertools.product((1.0, -1.0), repeat=3):
            sg = np.array(corner)

            def at(d: npt.ArrayLike, sg: FloatArray = sg) -> FloatArray:
                return sg * (half - np.asarray(d, dtype=float))

            for k1, k2 in itertools.combinations(axes, 2):  # two prisms overlap in a square pyramid: add it back
                k3 = 3 - k1 - k2
                base = []
                for d1, d2 in ((0.0, 0.0), (s, 0.0), (s, s), (0.0, s)):
                    d = np.zeros(3)
                    d[k1], d[k2] = d1, d2
                    base.append(at(d))
                apex_d = np.zeros(3)
                apex_d[k3] = s
                apex = at(apex_d)
                tets += [(base[0], base[1], base[2], apex), (base[0], base[2], base[3], apex)]
                signs += [1.0, 1.0]
            if len(axes) == 3:  # triple overlap (s³/4) taken off again, and the corner set-back (s³/12)
                o, ea, eb, ec = at((0, 0, 0)), at((s, 0, 0)), at((0, s, 0)), at((0, 0, s))
                dm = at((0.5 * s, 0.5 * s, 0.5 * s))
                tets += [(o, ea, eb, ec), (ea, eb, ec, dm), (at((s, s, 0)), at((s, 0, s)), at((0, s, s)), dm)]
                signs += [-1.0, -1.0, -1.0]
        vol, first, second = _polytope(np.array(tets), np.array(signs))
        return [_Piece(+1, "chamfers", vol, first, second)]

    def _hole_pieces(self, half: FloatArray, h: HolePattern) -> list[_Piece]:
        k = AXES.index(h.axis)
        i, j = face_axes(h.axis)
        centres = h.centres((self.size[i], self.size[j]))
        out: list[_Piece] = []
        depth = h.counterbore.depth if h.counterbore else 0.0
        length = 2.0 * half[k]
        for p, q in centres:
            c = np.zeros(3)
            c[i], c[j] = p, q
            bore = c.copy()
            bore[k] = -h.counterbore_end * 0.5 * depth  # the plain bore is shifted away from the counterbore end
            out.append(_Piece(-1, "hole", *_cylinder(h.radius, length - depth, k, bore)))
            if h.counterbore:
                cb = c.copy()
                cb[k] = h.counterbore_end * (half[k] - 0.5 * depth)
                out.append(_Piece(-1, "counterbore", *_cylinder(0.5 * h.counterbore.diameter, depth, k, cb)))
        return out

    # --- mass properties -----------------------------------------------------------------------------------
    @cached_property
    def _moments(self) -> tuple[float, FloatArray, FloatArray]:
        vol = sum(p.sign * p.volume for p in self._pieces)
        first = sum((p.sign * p.first for p in self._pieces), np.zeros(3))
        second = sum((p.sign * p.second for p in self._pieces), np.zeros((3, 3)))
        return float(vol), np.asarray(first), np.asarray(second)

    def volume(self) -> float:
        """Net volume, m³."""
        return self._moments[0]

    def gross_volume(self) -> float:
        """Volume of the plain box, m³."""
        return float(np.prod(self.size))

    def removed_volume(self) -> dict[str, float]:
        """Volume taken away by chamfers and by holes (counterbores included), m³."""
        chamfer = -sum(p.sign * p.volume for p in self._pieces if p.what == "chamfers")
        holes = sum(p.volume for p in self._pieces if p.what in ("hole", "counterbore"))
        return {"chamfers_m3": float(chamfer), "holes_m3": float(holes)}

    def centroid(self) -> FloatArray:
        """Centroid, (3,) float, m, block frame."""
        vol, first, _ = self._moments
        return first / vol

    def inertia_per_density(self) -> FloatArray:
        """Inertia tensor at unit density about the centroid, block axes, tensor convention, (3, 3) m⁵."""
        vol, first, second = self._moments
        c = first / vol
        about_origin = np.trace(second) * np.eye(3) - second
        shift = vol * (float(c @ c) * np.eye(3) - np.outer(c, c))
        out = about_origin - shift
        return 0.5 * (out + out.T)

    def face_points(self) -> FloatArray:
        """A point of the solid on each of the six box faces, (3, 2, 3) float, m, block frame.

        ``[k, 0]`` lies on the face across axis ``k`` at −size/2, ``[k, 1]`` at +size/2: the face centre, or, on the two
        faces the holes open into, the corner of the face's flat part (in from each edge by the chamfer leg when that
        edge is chamfered). The holes keep at least the chamfer size from the face's edges (checked when the block is
        made), so that corner is material. Used by the closed-form fit check (:mod:`massmodel.cad.boxfit`).
        """
        half = 0.5 * np.array(self.size)
        edges = self.chamfer.edges if self.chamfer else ""
        s = self.chamfer.size if self.chamfer else 0.0
        pierced = AXES.index(self.holes.axis) if self.holes else None
        out = np.zeros((3, 2, 3))
        for k in range(3):
            i, j = (k + 1) % 3, (k + 2) % 3
            for side, sign in enumerate((-1.0, 1.0)):
                out[k, side, k] = sign * half[k]
                if k == pierced:  # the face's edges at ±half[i] run along j, those at ±half[j] along i
                    out[k, side, i] = half[i] - (s if AXES[j] in edges else 0.0)
                    out[k, side, j] = half[j] - (s if AXES[i] in edges else 0.0)
        return out

    # --- CAD ----------------------------------------------------------------------------------------------
    def to_solid(self) -> Any:
        """The block as an OpenCascade solid (``OCP.TopoDS.TopoDS_Shape``) in MILLIMETRES, block frame: the box, then
        the chamfers (OpenCascade's ``BRepFilletAPI_MakeChamfer``, equal legs), then the holes cut."""
        from OCP.BRepPrimAPI import BRepPrimAPI_MakeBox, BRepPrimAPI_MakeCylinder
        from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt

        from massmodel.cad.primitives import chamfer_edges, cut_shape

        a, b, c = (s * 1e3 for s in self.size)
        solid: Any = BRepPrimAPI_MakeBox(gp_Ax2(gp_Pnt(-a / 2.0, -b / 2.0, -c / 2.0), gp_Dir(0.0, 0.0, 1.0)),
                                         a, b, c).Shape()
        if self.chamfer:
            solid = chamfer_edges(solid, self.chamfer.size * 1e3, [AXES.index(e) for e in self.chamfer.edges])
        h = self.holes
        if h is None:
            return solid
        k = AXES.index(h.axis)
        i, j = face_axes(h.axis)
        half_k = 0.5 * self.size[k] * 1e3
        direction = gp_Dir(*(1.0 if n == k else 0.0 for n in range(3)))

        def cylinder(radius_mm: float, length_mm: float, start: Sequence[float]) -> Any:
            return BRepPrimAPI_MakeCylinder(gp_Ax2(gp_Pnt(*start), direction), radius_mm, length_mm).Shape()

        for p, q in h.centres((self.size[i], self.size[j])):
            start = [0.0, 0.0, 0.0]
            start[i], start[j], start[k] = p * 1e3, q * 1e3, -half_k - 1.0
            solid = cut_shape(solid, cylinder(h.radius * 1e3, 2 * half_k + 2.0, start))
            if h.counterbore:
                depth = h.counterbore.depth * 1e3
                cb_start = list(start)
                cb_start[k] = h.counterbore_end * (half_k - depth) if h.counterbore_end > 0 else -half_k - 1.0
                solid = cut_shape(solid, cylinder(0.5 * h.counterbore.diameter * 1e3, depth + 1.0, cb_start))
        return solid

    def describe(self) -> str:
        """One line: sizes, chamfer, holes."""
        text = " x ".join(f"{s * 1e3:.2f}" for s in self.size) + " mm"
        if self.chamfer:
            text += f"; chamfer {self.chamfer.describe()}"
        if self.holes:
            text += f"; holes {self.holes.describe()}"
        return text
