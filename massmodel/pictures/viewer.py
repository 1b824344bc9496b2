"""Pictures of a mass model through VTK: off-screen on the CPU, or in an interactive window (pyvista).

Every view uses a parallel (orthographic) projection, as an engineering drawing does, so lengths parallel to the
sheet keep one scale (pixels per metre) and the side, top and front views line up on the sheet. A view is a
:class:`ViewCamera` (focal point, direction toward the camera, screen-up vector, scale, size in pixels); its
:meth:`ViewCamera.project` maps model points to pixels and is what the sheet uses to place labels.

The scene is drawn in three layers of one render window:

- layer 0: the parts (one actor for the opaque parts, only their faces that face the camera, see
  :func:`facing_parts`; one semi-transparent actor for the parts that hide the CG or a ballast block in this view;
  colours per cell), their ink outlines, the ground plane, axle lines, wheel contact points and the axis triad;
- layer 1: slot wire envelopes, ballast outlines, principal axes of inertia and group CG markers (drawn over the
  parts, so they stay visible);
- layer 2: the total CG marker, unlit, so its colour in the picture is exactly :data:`~massmodel.pictures.scene.CG_COLOUR`.

Off-screen rendering needs no display: set ``VTK_DEFAULT_OPENGL_WINDOW=vtkEGLRenderWindow`` (done here when
unset) so VTK uses EGL (Mesa llvmpipe on a machine without a GPU).
"""

from __future__ import annotations

import os
import sys
import time
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError, UserError

from .scene import (
    BALLAST_COLOUR,
    CG_COLOUR,
    INK,
    SLOT_COLOUR,
    Scene,
    hidden_by,
)

__all__ = [
    "VIEW_NAMES",
    "VIEW_TITLES",
    "ViewCamera",
    "view_camera",
    "view_span",
    "render_views",
    "display_available",
    "NoDisplayError",
    "show_interactive",
    "renderer_problem",
]

FloatArray = npt.NDArray[np.float64]

VIEW_NAMES = ("side", "top", "front", "iso")
VIEW_TITLES = {
    "side": "SIDE · seen from the right",
    "top": "TOP · seen from above",
    "front": "FRONT · seen from ahead",
    "iso": "ISOMETRIC · from front right, above",
}
# (toward the camera, screen up) as coefficients of (forward, left, up)
_VIEW_DIRECTIONS = {
    "side": ((0.0, -1.0, 0.0), (0.0, 0.0, 1.0)),
    "top": ((0.0, 0.0, 1.0), (0.0, 1.0, 0.0)),
    "front": ((1.0, 0.0, 0.0), (0.0, 0.0, 1.0)),
    "iso": ((1.0, -1.0, 1.0), (0.0, 0.0, 1.0)),
}
TRIAD_COLOURS = ("#8e3b46", "#4b7f52", "#35508a")  # forward, left, up
TRANSLUCENT_OPACITY = 0.26
PANEL_BACKGROUND = "#fbf9f4"
CG_MARKER_PX = 9.0  # radius of the total CG marker on screen, px
GROUP_MARKER_PX = 6.5


class NoDisplayError(UserError, OSError):
    """No display to open a window on."""


@dataclass(frozen=True, slots=True)
class ViewCamera:
    """A parallel-projection camera.

    Parameters
    ----------
    name : str
        One of :data:`VIEW_NAMES`.
    focal : (3,) float
        Model point at the image centre, m.
    toward : (3,) float
        Unit vector from the focal point toward the camera (the viewing direction is ``-toward``).
    up : (3,) float
        Unit screen-up vector, orthogonal to ``toward``.
    scale : float
        Pixels per metre for lengths parallel to the image plane.
    width, height : int
        Image size, px.
    """

    name: str
    focal: FloatArray
    toward: FloatArray
    up: FloatArray
    scale: float
    width: int
    height: int

    @property
    def right(self) -> FloatArray:
        """Unit screen-right vector: viewing direction × up."""
        return np.cross(-self.toward, self.up)

    @property
    def parallel_scale(self) -> float:
        """VTK's parallel scale: half the image height in model units, m."""
        return self.height / (2.0 * self.scale)

    def project(self, points: npt.ArrayLike) -> FloatArray:
        """Model points (N, 3) m → pixel coordinates (N, 2): x to the right, y down from the top-left corner."""
        p = np.atleast_2d(np.asarray(points, float)) - self.focal
        x = 0.5 * self.width + self.scale * (p @ self.right)
        y = 0.5 * self.height - self.scale * (p @ self.up)
        return np.stack([x, y], axis=1)

    def depth(self, points: npt.ArrayLike) -> FloatArray:
        """Distance toward the camera of points (N, 3), m (larger = nearer)."""
        return (np.atleast_2d(np.asarray(points, float)) - self.focal) @ self.toward


def _view_axes(scene: Scene, name: str) -> tuple[FloatArray, FloatArray]:
    toward_c, up_c = _VIEW_DIRECTIONS[name]
    toward = np.asarray(toward_c) @ scene.basis
    toward = toward / np.linalg.norm(toward)
    up = np.asarray(up_c) @ scene.basis
    up = up - (up @ toward) * toward
    return toward, up / np.linalg.norm(up)


def _extent_corners(scene: Scene) -> FloatArray:
    """Corners of everything drawn: the parts' box in vehicle directions, the ground and the axis triad, (K, 3) m."""
    low, high = scene.extent()
    rect = scene.ground_rectangle()
    corners = np.array([[a, b, c] for a in (low[0], high[0]) for b in (low[1], high[1]) for c in (low[2], high[2])])
    origin, length = triad_origin(scene)
    pts = [corners @ scene.basis, origin + length * np.vstack([np.zeros(3), scene.basis])]
    if rect is not None:
        pts.append(rect)
    return np.vstack(pts)


def view_span(scene: Scene, name: str) -> tuple[float, float]:
    """Width and height (m) of everything drawn, seen in view ``name``."""
    toward, up = _view_axes(scene, name)
    right = np.cross(-toward, up)
    pts = _extent_corners(scene)
    return float(np.ptp(pts @ right)), float(np.ptp(pts @ up))


def view_camera(
    scene: Scene, name: str, width: int, height: int, scale: float | None = None, margin_px: float = 40.0
) -> ViewCamera:
    """The camera of view ``name`` for an image of ``width`` × ``height`` px.

    The focal point is the centre of everything drawn (the same point in every view, so views of one scale line
    up). ``scale`` (px/m) defaults to the largest that fits the drawing inside ``margin_px`` on every side.
    """
    if name not in _VIEW_DIRECTIONS:
        raise UsageError(f"unknown view {name!r}; views: {', '.join(VIEW_NAMES)}")
    toward, up = _view_axes(scene, name)
    pts = _extent_corners(scene)
    focal = 0.5 * (pts.min(axis=0) + pts.max(axis=0))
    if scale is None:
        w, h = view_span(scene, name)
        scale = min((width - 2 * margin_px) / max(w, 1e-6), (height - 2 * margin_px) / max(h, 1e-6))
    return ViewCamera(name, focal, toward, up, float(scale), int(width), int(height))


# --- VTK -------------------------------------------------------------------------------------------------------

def renderer_problem() -> str | None:
    """Why no off-screen renderer can start here (None when one can)."""
    try:
        from . import vtkbits as vb
    except ImportError as exc:  # pragma: no cover - VTK comes with pyvista, a dependency
        return f"VTK cannot be imported: {exc}"
    try:
        win, ren = vb.offscreen_window(16, 16, "#ffffff", samples=0)
        ren.AddActor(vb.actor(vb.sphere(np.zeros(3), 1.0), "#000000"))
        img = vb.grab(win)
        win.Finalize()
    except Exception as exc:  # VTK raises many kinds when no OpenGL context exists
        return f"VTK could not open an off-screen OpenGL context: {exc}"
    if img.shape[:2] != (16, 16):
        return "VTK returned no image from an off-screen render"
    return None


Prop = tuple[int, Any]  # (layer, vtkActor)


def _static_props(scene: Scene) -> list[Prop]:
    """Layer-0 actors that do not change between views: ground, axle lines, contact points, triad."""
    from . import vtkbits as vb

    out: list[Prop] = []
    f, lft, up = scene.forward, scene.left, scene.up
    rect = scene.ground_rectangle()
    if rect is not None and scene.ground is not None:
        out.append((0, vb.actor(vb.polygon(rect), "#e9e3d3", lighting=False)))
        lift = 0.001 * up
        grid = []
        f0, f1 = (rect @ f).min(), (rect @ f).max()
        l0, l1 = (rect @ lft).min(), (rect @ lft).max()
        g = scene.ground
        for s in np.arange(np.ceil(f0 / 0.5) * 0.5, f1, 0.5):
            grid.append([s * f + l0 * lft + g * up + lift, s * f + l1 * lft + g * up + lift])
        for s in np.arange(np.ceil(l0 / 0.5) * 0.5, l1, 0.5):
            grid.append([f0 * f + s * lft + g * up + lift, f1 * f + s * lft + g * up + lift])
        out.append((0, vb.actor(vb.lines(np.array(grid)), "#d3c9b2", lighting=False)))
        edge = np.array([[rect[k] + lift, rect[(k + 1) % 4] + lift] for k in range(4)])
        out.append((0, vb.actor(vb.lines(edge), "#a89d85", line_width=1.5, lighting=False)))
    if scene.contact_points is not None:
        cp = scene.contact_points
        axles = []
        for a, b in ((cp[0], cp[1]), (cp[2], cp[3])):
            ext = 0.08 * (a - b)
            axles.append([a + ext + 0.002 * up, b - ext + 0.002 * up])
        top = scene.extent()[1][2]
        for p in (cp[0], cp[2]):
            base = p - (p @ lft) * lft
            axles.append([base, base + (top - (scene.ground or 0.0)) * up])
        out.append((0, vb.actor(vb.lines(np.array(axles)), INK, line_width=1.5, lighting=False)))
        for p in cp:
            out.append((0, vb.actor(vb.cone(p + 0.03 * up, -up, 0.06, 0.035), INK, lighting=False)))
    origin, length = triad_origin(scene)
    for vec, colour in zip((f, lft, up), TRIAD_COLOURS, strict=True):
        out.append((0, vb.actor(vb.arrow(origin, vec, length), colour, ambient=0.45, diffuse=0.6)))
    return out


def triad_origin(scene: Scene) -> tuple[FloatArray, float]:
    """Origin (3,) m and arrow length (m) of the drawn axis triad: beside the rear-right corner, on the ground.

    The arrows are 12 % of the longest dimension of the drawing (0.3 m for a car), at most 0.4 m.
    """
    low, high = scene.extent()
    length = float(min(max(0.12 * np.max(high - low), 1e-3), 0.4))
    gap = 0.5 * length
    return (low[0] - gap) * scene.forward + (low[1] - gap) * scene.left + low[2] * scene.up, length


def principal_axis_factor(scene: Scene) -> float:
    """Drawn half-length of the principal axes as a multiple of the radii of gyration: 1, 0.5, 0.25 or 0.125,
    the largest that keeps the longest axis within 0.6 × the smallest dimension of the drawing."""
    low, high = scene.extent()
    dims = high - low
    limit = 0.6 * float(dims[dims > 0].min()) if np.any(dims > 0) else 1.0
    k = float(scene.radii.max()) if scene.radii.size else 0.0
    for f in (1.0, 0.5, 0.25):
        if f * k <= limit:
            return f
    return 0.125


def _faces_prop(scene: Scene, points: Any, faces: npt.NDArray[np.int64], opacity: float) -> list[Prop]:
    """A layer-0 actor of some faces (on the scene's shared VTK points): one mesh with the per-cell colours of
    their parts."""
    from . import vtkbits as vb

    if len(faces) == 0:
        return []
    poly = vb.polydata(points, scene.faces[faces], scene.part_colours[scene.owner[faces]])
    return [(0, vb.actor(poly, cell_colours=True, opacity=opacity, ambient=0.38, diffuse=0.62))]


def _edges_prop(scene: Scene, points: Any, edges: npt.NDArray[np.int64], see_through: bool) -> list[Prop]:
    """A layer-0 actor of some outline edges: ink, or light grey on see-through parts."""
    from . import vtkbits as vb

    if len(edges) == 0:
        return []
    if scene.edge_index is not None:
        poly = vb.edge_lines(points, scene.edge_index[edges])
    else:
        poly = vb.lines(scene.edges[edges])
    if see_through:
        return [(0, vb.actor(poly, "#9aa1a6", opacity=0.6, lighting=False))]
    return [(0, vb.actor(poly, INK, lighting=False))]


def facing_parts(scene: Scene, cam: ViewCamera | None,
                 clear: npt.NDArray[np.int64]) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.int64]]:
    """Faces and outline edges drawn opaque in a view: those of the parts not in ``clear`` that can be seen.

    A closed part with its faces outward hides, in a parallel view, every face turned away from the camera
    (outward normal · toward < 0) behind its own front faces, and every edge between two such faces: leaving them
    out halves what the renderer draws. Edge-on faces, open edges, every face of a part that may be seen from inside
    (:meth:`~massmodel.pictures.scene.Scene.two_sided_parts`) and every face of the interactive view (``cam`` None,
    turned by the user), or of a scene that does not know its edges' faces, are kept.

    Returns
    -------
    faces, edges : (K,) int
        Indices into ``scene.faces`` and ``scene.edges``.
    """
    face_on = np.ones(len(scene.faces), bool)
    edge_on = np.ones(len(scene.edges), bool)
    if cam is not None and scene.edge_faces is not None:
        face_on = scene.face_normals() @ np.asarray(cam.toward, float) >= 0.0
        two_sided = scene.two_sided_parts()
        if len(two_sided):
            face_on[scene.part_faces(two_sided)] = True
        if len(scene.edges):
            ef = scene.edge_faces
            edge_on = face_on[ef[:, 0]] | (ef[:, 1] < 0) | face_on[np.maximum(ef[:, 1], 0)]
    if len(clear):
        face_on[scene.part_faces(clear)] = False
        edge_on &= ~np.isin(scene.edge_owner, clear)
    return np.flatnonzero(face_on), np.flatnonzero(edge_on)


def nearest_first(scene: Scene, cam: ViewCamera | None, faces: npt.NDArray[np.int64]) -> npt.NDArray[np.int64]:
    """``faces`` (indices into ``scene.faces``, ascending) in drawing order: part by part, the part whose box reaches
    nearest the camera first, each part's faces in their own order.

    Drawn in this order, most of what lies behind is rejected by the depth test before it is shaded (the renderer
    tests depth early), so a view of many overlapping parts draws faster. The picture is the same, except where two
    parts' faces lie exactly in one plane and overlap: there the depth test keeps whichever comes first. Faces are
    left as they are for the interactive view (``cam`` None) and for a scene that does not know its parts' face
    ranges.
    """
    if cam is None or scene.face_start is None or len(faces) == 0:
        return faces
    from .merge import gather_ranges

    boxes = scene.boxes()
    toward = np.asarray(cam.toward, float)
    near = np.maximum(boxes[:, 0] * toward, boxes[:, 1] * toward).sum(axis=1)  # the box's nearest corner, m
    order = np.argsort(-near, kind="stable")
    counts = np.bincount(scene.owner[faces], minlength=len(boxes))  # faces of each part among ``faces``
    starts = np.cumsum(counts) - counts
    return faces[gather_ranges(starts[order], counts[order])]


def _fixed_marks(scene: Scene) -> list[Prop]:
    """Layer-1 actors that do not change with the view: slot envelopes and ballast outlines."""
    from . import vtkbits as vb

    out: list[Prop] = []
    for _name, edges in scene.slot_edges:
        out.append((1, vb.actor(vb.lines(edges), SLOT_COLOUR, line_width=2.0, lighting=False)))
    if scene.ballast:
        mask = np.isin(scene.edge_owner, scene.ballast)
        if mask.any():
            out.append((1, vb.actor(vb.lines(scene.edges[mask]), BALLAST_COLOUR, line_width=3.0, lighting=False)))
    return out


def _view_props(scene: Scene, points: Any, cam: ViewCamera | None, clear: npt.NDArray[np.int64]) -> list[Prop]:
    """Actors that change with the view: the parts that face the camera (opaque; :func:`facing_parts`), the parts
    in ``clear`` (see-through, every face), their outlines, and the principal axes, group CG markers and the CG
    (sized in pixels)."""
    from . import vtkbits as vb

    faces, edges = facing_parts(scene, cam, clear)
    out = _faces_prop(scene, points, nearest_first(scene, cam, faces), 1.0)
    out += _faces_prop(scene, points, scene.part_faces(clear), TRANSLUCENT_OPACITY)
    out += _edges_prop(scene, points, edges, False)
    out += _edges_prop(scene, points, np.flatnonzero(np.isin(scene.edge_owner, clear)), True)
    px = 1.0 / cam.scale if cam is not None else 0.004
    if scene.options.principal_axes and scene.mass > 0:
        f = principal_axis_factor(scene)
        seg = [[scene.cg - f * r * a, scene.cg + f * r * a] for a, r in zip(scene.axes, scene.radii, strict=True)]
        out.append((1, vb.actor(vb.lines(np.array(seg)), INK, line_width=2.0, lighting=False)))
        for a, r in zip(scene.axes, scene.radii, strict=True):
            for sign in (-1.0, 1.0):
                tick = vb.sphere(scene.cg + sign * f * r * a, 2.5 * px, resolution=10)
                out.append((1, vb.actor(tick, INK, lighting=False)))
    for g in scene.group_markers:  # a CG in empty space (wheels, suspension) small, so it is not read as a place
        octa = vb.octahedron(g.center, GROUP_MARKER_PX * px * (1.0 if g.in_material else 0.55))
        out.append((1, vb.actor(octa, g.colour, edges=INK, line_width=1.2, ambient=0.5, diffuse=0.6)))
    r = CG_MARKER_PX * px if cam is not None else 0.02
    out.append((2, vb.actor(vb.sphere(scene.cg, r, resolution=28), CG_COLOUR, lighting=False)))
    return out


def _targets(scene: Scene, cam: ViewCamera) -> list[FloatArray]:
    """Sample points that must stay visible in this view: the CG marker disc, then each ballast block."""
    r = CG_MARKER_PX / cam.scale
    ang = np.linspace(0.0, 2 * np.pi, 8, endpoint=False)
    disc = scene.cg + r * (np.cos(ang)[:, None] * cam.right + np.sin(ang)[:, None] * cam.up)
    targets = [np.vstack([scene.cg, disc])]
    for i in scene.ballast:
        v = scene.vertices[np.unique(scene.faces[scene.part_faces([i])])]
        c = 0.5 * (v.min(axis=0) + v.max(axis=0))
        targets.append(np.vstack([c, c + 0.6 * (v[:: max(1, len(v) // 12)] - c)]))
    return targets


def see_through(scene: Scene, cam: ViewCamera) -> npt.NDArray[np.int64]:
    """Components drawn see-through in this view (sorted): the parts that hide the CG or a ballast block."""
    targets = _targets(scene, cam)
    hidden = hidden_by(scene, cam.toward, targets[:1])
    if len(targets) > 1:
        hidden |= hidden_by(scene, cam.toward, targets[1:], skip=scene.ballast)
    hidden -= set(scene.ballast)
    return np.array(sorted(hidden), np.int64)


class _Stage:
    """A render window with three layers, re-filled and re-aimed for every view.

    The marks that do not change with the view are put in once; the parts (as they face each camera, see
    :func:`facing_parts`) and the marks sized in pixels are made again for each view.

    Off-screen it is a bare VTK window (fast to start); for the interactive window it borrows a pyvista
    plotter's window and renderer.
    """

    def __init__(self, scene: Scene, size: tuple[int, int], plotter: Any = None) -> None:
        from . import vtkbits as vb

        self.scene = scene
        self.points = vb.shared_points(scene.vertices)  # one array of points for every view's parts and outlines
        if plotter is None:
            self.window, base = vb.offscreen_window(size[0], size[1], PANEL_BACKGROUND)
        else:
            self.window, base = plotter.ren_win, plotter.renderer
        self.layers = [base, vb.layer_renderer(self.window, base, 1), vb.layer_renderer(self.window, base, 2)]
        for layer, act in _static_props(scene) + _fixed_marks(scene):
            self.layers[layer].AddActor(act)
        self._view_actors: list[Prop] = []
        self.triangles = 0

    def fill(self, cam: ViewCamera | None, clear: npt.NDArray[np.int64]) -> None:
        """Put in the view-dependent actors for camera ``cam`` (None: the interactive view), with the parts
        ``clear`` see-through."""
        for layer, act in self._view_actors:
            self.layers[layer].RemoveActor(act)
        self._view_actors = _view_props(self.scene, self.points, cam, clear)
        for layer, act in self._view_actors:
            self.layers[layer].AddActor(act)
        self.triangles = sum(int(act.GetMapper().GetInput().GetNumberOfPolys()) for layer, act in self._view_actors
                             if layer == 0)  # the parts' triangles in this view (opaque and see-through)

    def aim(self, cam: ViewCamera) -> None:
        self.window.SetSize(cam.width, cam.height)
        c = self.layers[0].GetActiveCamera()
        c.ParallelProjectionOn()
        c.SetFocalPoint(*cam.focal)
        c.SetPosition(*(cam.focal + 50.0 * cam.toward))
        c.SetViewUp(*cam.up)
        c.SetParallelScale(cam.parallel_scale)
        c.SetClippingRange(1.0, 100.0)

    def snap(self) -> npt.NDArray[np.uint8]:
        from . import vtkbits as vb

        return vb.grab(self.window)

    def composite_matrix(self, cam: ViewCamera) -> FloatArray:
        m = self.layers[0].GetActiveCamera().GetCompositeProjectionTransformMatrix(cam.width / cam.height, -1.0, 1.0)
        return np.array([[m.GetElement(i, j) for j in range(4)] for i in range(4)])

    def close(self) -> None:
        self.window.Finalize()


@dataclass(frozen=True, slots=True)
class RenderedView:
    """One rendered view: its camera, the RGB image (H, W, 3) uint8 and VTK's composite projection matrix
    (model coordinates → normalised device coordinates) of the camera it was drawn with; ``seconds`` the time spent
    drawing it (actors, render, pixels), ``ray_seconds`` the time of its see-through ray tests, s; ``triangles``
    the number of the parts' triangles drawn (those facing the camera, and every face of the see-through parts)."""

    camera: ViewCamera
    image: npt.NDArray[np.uint8]
    vtk_matrix: FloatArray
    seconds: float
    ray_seconds: float = 0.0
    triangles: int = 0


def render_views(scene: Scene, cameras: Sequence[ViewCamera]) -> list[RenderedView]:
    """Render the scene off-screen once per camera (one render window, re-aimed)."""
    if not cameras:
        return []
    first = cameras[0]
    stage = _Stage(scene, (first.width, first.height))
    out = []
    try:
        for cam in cameras:
            t0 = time.perf_counter()
            see = see_through(scene, cam)
            t_rays = time.perf_counter() - t0
            t0 = time.perf_counter()
            stage.fill(cam, see)
            stage.aim(cam)
            img = stage.snap()
            if img.shape[:2] != (cam.height, cam.width):
                raise OSError(f"the renderer returned a {img.shape[1]}x{img.shape[0]} image for a "
                              f"{cam.width}x{cam.height} view")
            out.append(RenderedView(cam, img, stage.composite_matrix(cam), time.perf_counter() - t0, t_rays,
                                    stage.triangles))
    finally:
        stage.close()
    return out


# --- interactive -------------------------------------------------------------------------------------------------

def display_available() -> bool:
    """Whether a window can be opened: DISPLAY or WAYLAND_DISPLAY set (Linux and other X/Wayland systems);
    assumed true on Windows and macOS."""
    if sys.platform.startswith(("win", "darwin")):
        return True
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def show_interactive(
    scene: Scene, title_lines: Sequence[str], off_screen: bool = False, window_size: tuple[int, int] = (1400, 900)
) -> Any:
    """Open the scene in an interactive window (or build it off-screen and return the plotter, for tests).

    Raises
    ------
    NoDisplayError
        When no display exists and ``off_screen`` is False.
    """
    if not off_screen and not display_available():
        raise NoDisplayError(
            "no display found (DISPLAY and WAYLAND_DISPLAY are unset), so no window can open; "
            "use 'massmodel render MODEL -o FILE.png' for a picture instead"
        )
    if not off_screen and os.environ.get("VTK_DEFAULT_OPENGL_WINDOW") == "vtkEGLRenderWindow":
        del os.environ["VTK_DEFAULT_OPENGL_WINDOW"]  # a window needs the platform's own OpenGL window class
    import pyvista as pv

    pl = pv.Plotter(off_screen=off_screen, window_size=list(window_size), lighting="light kit")
    pl.set_background(PANEL_BACKGROUND)  # type: ignore[arg-type]  # pyvista's decorator hides the signature
    stage = _Stage(scene, window_size, plotter=pl)
    stage.fill(None, see_through(scene, view_camera(scene, "iso", 1200, 800)))  # parts hiding the CG from iso
    pl.add_text("\n".join(title_lines), position="upper_left", font_size=10, color=INK)
    entries = [[f"{e.label}" + (f"  {e.mass:.1f} kg" if e.mass is not None else ""), e.colour] for e in scene.legend]
    if entries:
        pl.add_legend(entries, bcolor="#f3efe4", border=True,  # type: ignore[arg-type]
                      size=(0.22, 0.04 * len(entries)), loc="lower right")
    cg = scene.report["cg_m"]
    pl.add_point_labels(
        np.array([scene.cg]), [f"CG ({cg[0]:.3f}, {cg[1]:.3f}, {cg[2]:.3f}) m"], font_size=14,
        text_color=CG_COLOUR, point_color=CG_COLOUR, point_size=1, shape_color="#fbf9f4", always_visible=True,
    )
    named = [g for g in scene.group_markers if g.in_material]
    if named:
        pl.add_point_labels(
            np.array([g.center for g in named]), [g.name for g in named],
            font_size=10, text_color=INK, point_size=1, shape_opacity=0.6, shape_color="#fbf9f4",
            always_visible=True,
        )
    cam = view_camera(scene, "iso", *window_size)
    pl.camera.position = tuple(cam.focal + 50.0 * cam.toward)
    pl.camera.focal_point = tuple(cam.focal)
    pl.camera.up = tuple(cam.up)
    pl.camera.parallel_projection = True
    pl.camera.parallel_scale = cam.parallel_scale
    if off_screen:
        return pl
    pl.show(title=f"massmodel · {scene.model.name}")
    return None
