"""Pictures of a mass model through VTK (pyvista): off-screen on the CPU, or in an interactive window.

Every view uses a parallel (orthographic) projection, as an engineering drawing does, so lengths parallel to the
sheet keep one scale (pixels per metre) and the side, top and front views line up on the sheet. A view is a
:class:`ViewCamera` (focal point, direction toward the camera, screen-up vector, scale, size in pixels); its
:meth:`ViewCamera.project` maps model points to pixels and is what the sheet uses to place labels.

The scene is drawn in three layers of one render window:

- layer 0: the parts (one actor for the opaque parts, one semi-transparent actor for the parts that hide the CG or
  a ballast block in this view; colours per cell), their ink outlines, the ground plane, axle lines, wheel contact
  points and the axis triad;
- layer 1: slot wire envelopes, ballast outlines, principal axes of inertia and group CG markers (drawn over the
  parts, so they stay visible);
- layer 2: the total CG marker, unlit, so its colour in the picture is exactly :data:`~massmodel.scene.CG_COLOUR`.

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

from .scene import (
    BALLAST_COLOUR,
    CG_COLOUR,
    INK,
    SLOT_COLOUR,
    Scene,
    hex_to_rgb,
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
CG_MARKER_PX = 9.0  # radius of the total CG marker on screen, px
GROUP_MARKER_PX = 6.5


class NoDisplayError(OSError):
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
    low, high = scene.extent()
    rect = scene.ground_rectangle()
    corners = np.array([[a, b, c] for a in (low[0], high[0]) for b in (low[1], high[1]) for c in (low[2], high[2])])
    pts = corners @ scene.basis
    return np.vstack([pts, rect]) if rect is not None else pts


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
        raise ValueError(f"unknown view {name!r}; views: {', '.join(VIEW_NAMES)}")
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
    os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    try:
        import pyvista as pv
    except ImportError as exc:  # pragma: no cover - pyvista is a dependency
        return f"pyvista cannot be imported: {exc}"
    try:
        pl = pv.Plotter(off_screen=True, window_size=(16, 16))
        pl.add_mesh(pv.Sphere())
        pl.render()
        img = pl.screenshot(return_img=True)
        pl.close()
    except Exception as exc:  # VTK raises many kinds when no OpenGL context exists
        return f"VTK could not open an off-screen OpenGL context: {exc}"
    if img is None or img.shape[:2] != (16, 16):
        return "VTK returned no image from an off-screen render"
    return None


def _faces_flat(faces: npt.NDArray[np.int64]) -> npt.NDArray[np.int64]:
    return np.hstack([np.full((len(faces), 1), 3, np.int64), faces]).ravel()


def _poly(scene: Scene, mask: npt.NDArray[np.bool_]) -> Any:
    import pyvista as pv

    faces = scene.faces[mask]
    poly = pv.PolyData(scene.vertices, _faces_flat(faces) if len(faces) else None)
    if len(faces):
        poly.cell_data["rgb"] = scene.part_colours[scene.owner[mask]]
    return poly


def _lines(segments: FloatArray) -> Any:
    """PolyData of line segments (K, 2, 3)."""
    import pyvista as pv

    seg = np.asarray(segments, float).reshape(-1, 2, 3)
    pts = seg.reshape(-1, 3)
    n = len(seg)
    cells = np.hstack([np.full((n, 1), 2), np.arange(2 * n).reshape(n, 2)]).ravel()
    return pv.PolyData(pts, lines=cells) if n else pv.PolyData()


def _rgb(colour: str) -> tuple[float, float, float]:
    r, g, b = hex_to_rgb(colour)
    return r / 255.0, g / 255.0, b / 255.0


def _static_props(scene: Scene) -> list[tuple[Any, dict[str, Any]]]:
    """Meshes of layer 0 that do not change between views: ground, axle lines, contact points, triad."""
    import pyvista as pv

    out: list[tuple[Any, dict[str, Any]]] = []
    f, lft, up = scene.forward, scene.left, scene.up
    rect = scene.ground_rectangle()
    if rect is not None:
        out.append((pv.PolyData(rect, np.array([4, 0, 1, 2, 3])), {"color": "#e9e3d3", "lighting": False}))
        lift = 0.001 * up
        grid = []
        f0, f1 = (rect @ f).min(), (rect @ f).max()
        l0, l1 = (rect @ lft).min(), (rect @ lft).max()
        g = scene.ground
        for s in np.arange(np.ceil(f0 / 0.5) * 0.5, f1, 0.5):
            grid.append([s * f + l0 * lft + g * up + lift, s * f + l1 * lft + g * up + lift])
        for s in np.arange(np.ceil(l0 / 0.5) * 0.5, l1, 0.5):
            grid.append([f0 * f + s * lft + g * up + lift, f1 * f + s * lft + g * up + lift])
        out.append((_lines(np.array(grid)), {"color": "#d3c9b2", "line_width": 1, "lighting": False}))
        edge = np.array([[rect[k] + lift, rect[(k + 1) % 4] + lift] for k in range(4)])
        out.append((_lines(edge), {"color": "#a89d85", "line_width": 1.5, "lighting": False}))
    if scene.contact_points is not None and scene.axle_stations is not None:
        cp = scene.contact_points
        axles = []
        for a, b in ((cp[0], cp[1]), (cp[2], cp[3])):
            ext = 0.08 * (a - b)
            axles.append([a + ext + 0.002 * up, b - ext + 0.002 * up])
        top = scene.extent()[1][2]
        for p in (cp[0], cp[2]):
            base = p - (p @ lft) * lft
            axles.append([base, base + (top - scene.ground if scene.ground is not None else 0.5) * up])
        out.append((_lines(np.array(axles)), {"color": INK, "line_width": 1.5, "lighting": False}))
        for p in cp:
            cone = pv.Cone(center=p + 0.03 * up, direction=-up, height=0.06, radius=0.035, resolution=24)
            out.append((cone, {"color": INK, "lighting": False}))
    # axis triad beside the rear-right corner of the drawing, on the ground
    origin, length = triad_origin(scene)
    for vec, colour in zip((f, lft, up), TRIAD_COLOURS, strict=True):
        arrow = pv.Arrow(start=origin, direction=vec, scale=length, tip_length=0.25, tip_radius=0.06, shaft_radius=0.02)
        out.append((arrow, {"color": colour, "ambient": 0.45, "diffuse": 0.6, "specular": 0.0}))
    return out


def triad_origin(scene: Scene) -> tuple[FloatArray, float]:
    """Origin (3,) m and arrow length (m) of the drawn axis triad."""
    low, _ = scene.extent()
    return (low[0] - 0.15) * scene.forward + (low[1] - 0.15) * scene.left + low[2] * scene.up, 0.3


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


def _overlay_props(scene: Scene, cam: ViewCamera | None) -> list[tuple[Any, dict[str, Any]]]:
    """Meshes of layer 1 (slots, ballast outlines, principal axes, group CGs) sized for ``cam``."""
    import pyvista as pv

    out: list[tuple[Any, dict[str, Any]]] = []
    px = 1.0 / cam.scale if cam is not None else 0.004
    for _name, edges in scene.slot_edges:
        out.append((_lines(edges), {"color": SLOT_COLOUR, "line_width": 2.0, "lighting": False}))
    if scene.ballast:
        mask = np.isin(scene.edge_owner, scene.ballast)
        if mask.any():
            out.append((_lines(scene.edges[mask]), {"color": BALLAST_COLOUR, "line_width": 3.0, "lighting": False}))
    if scene.options.principal_axes and scene.mass > 0:
        f = principal_axis_factor(scene)
        seg = [[scene.cg - f * r * a, scene.cg + f * r * a] for a, r in zip(scene.axes, scene.radii, strict=True)]
        out.append((_lines(np.array(seg)), {"color": INK, "line_width": 2.0, "lighting": False}))
        for a, r in zip(scene.axes, scene.radii, strict=True):
            for s in (-1.0, 1.0):
                tick = pv.Sphere(radius=2.5 * px, center=scene.cg + s * f * r * a, theta_resolution=10, phi_resolution=8)
                out.append((tick, {"color": INK, "lighting": False}))
    for g in scene.group_markers:
        octa = pv.PlatonicSolid("octahedron", radius=GROUP_MARKER_PX * px, center=g.center)
        out.append((octa, {"color": g.colour, "show_edges": True, "edge_color": INK, "line_width": 1.2,
                           "ambient": 0.5, "diffuse": 0.6, "specular": 0.0}))
    return out


def _cg_marker(scene: Scene, cam: ViewCamera | None) -> Any:
    import pyvista as pv

    r = CG_MARKER_PX / cam.scale if cam is not None else 0.02
    return pv.Sphere(radius=r, center=scene.cg, theta_resolution=28, phi_resolution=20)


def _targets(scene: Scene, cam: ViewCamera) -> tuple[list[FloatArray], list[int]]:
    """Sample points that must stay visible in this view: the CG marker disc and every ballast block."""
    r = CG_MARKER_PX / cam.scale
    ang = np.linspace(0.0, 2 * np.pi, 8, endpoint=False)
    disc = scene.cg + r * (np.cos(ang)[:, None] * cam.right + np.sin(ang)[:, None] * cam.up)
    targets = [np.vstack([scene.cg, disc])]
    for i in scene.ballast:
        v = scene.vertices[np.unique(scene.faces[scene.owner == i])]
        c = 0.5 * (v.min(axis=0) + v.max(axis=0))
        targets.append(np.vstack([c, c + 0.6 * (v[:: max(1, len(v) // 12)] - c)]))
    return targets, scene.ballast


def _split_for_view(scene: Scene, cam: ViewCamera | None) -> npt.NDArray[np.bool_]:
    """Face mask of the parts drawn semi-transparent in this view (they hide the CG or a ballast block)."""
    if cam is None:
        return np.zeros(len(scene.faces), bool)
    targets, own = _targets(scene, cam)
    hidden = hidden_by(scene, cam.toward, targets[:1]) | hidden_by(scene, cam.toward, targets[1:], skip=own)
    hidden -= set(scene.ballast)
    return np.isin(scene.owner, sorted(hidden))


class _Stage:
    """One pyvista plotter with the three layers; re-aimed and re-filled for every view."""

    def __init__(self, scene: Scene, off_screen: bool, size: tuple[int, int]) -> None:
        os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
        import pyvista as pv
        from vtkmodules.vtkRenderingCore import vtkLight, vtkRenderer

        self.scene = scene
        self.pl = pv.Plotter(off_screen=off_screen, window_size=size, lighting="three lights")
        # two MSAA samples: smooth enough lines at a fraction of the cost of eight on a software renderer
        self.pl.ren_win.SetMultiSamples(2)
        self.pl.set_background("#fbf9f4")
        self.pl.camera_set = True  # the cameras are set here; keep pyvista from resetting them on first render
        self.pl.renderer.SetUseDepthPeeling(False)
        self.layers = [self.pl.renderer]
        self.pl.ren_win.SetNumberOfLayers(3)
        for k in (1, 2):
            ren = vtkRenderer()
            ren.SetLayer(k)
            ren.InteractiveOff()
            ren.SetActiveCamera(self.pl.renderer.GetActiveCamera())
            light = vtkLight()
            light.SetLightTypeToHeadlight()
            ren.AddLight(light)
            self.pl.ren_win.AddRenderer(ren)
            self.layers.append(ren)
        for mesh, kw in _static_props(scene):
            self.pl.add_mesh(mesh, render=False, **kw)
        self._view_actors: list[tuple[Any, Any]] = []

    def _add(self, layer: int, mesh: Any, **kw: Any) -> None:
        import pyvista as pv

        if mesh.n_points == 0:
            return
        if layer == 0:
            actor = self.pl.add_mesh(mesh, render=False, **kw)
            self._view_actors.append((self.layers[0], actor))
            return
        mapper = pv.DataSetMapper(mesh)
        actor = pv.Actor(mapper=mapper)
        prop = actor.prop
        prop.color = kw.get("color", INK)
        prop.line_width = kw.get("line_width", 1.0)
        if kw.get("lighting", True) is False:
            prop.lighting = False
        else:
            prop.ambient = kw.get("ambient", 0.3)
            prop.diffuse = kw.get("diffuse", 0.7)
            prop.specular = kw.get("specular", 0.0)
        if kw.get("show_edges"):
            prop.show_edges = True
            prop.edge_color = kw.get("edge_color", INK)
        mapper.scalar_visibility = False
        self.layers[layer].AddActor(actor)
        self._view_actors.append((self.layers[layer], actor))

    def fill(self, cam: ViewCamera | None) -> None:
        """Put the view-dependent actors in for camera ``cam`` (None: the interactive view)."""
        for ren, actor in self._view_actors:
            ren.RemoveActor(actor)
        self._view_actors.clear()
        scene = self.scene
        clear = _split_for_view(scene, cam) if cam is not None else _split_interactive(scene)
        part_kw = {"scalars": "rgb", "rgb": True, "ambient": 0.38, "diffuse": 0.62, "specular": 0.0}
        self._add(0, _poly(scene, ~clear), **part_kw)
        if clear.any():
            self._add(0, _poly(scene, clear), opacity=TRANSLUCENT_OPACITY, **part_kw)
        clear_parts = np.unique(scene.owner[clear])
        e_clear = np.isin(scene.edge_owner, clear_parts)
        self._add(0, _lines(scene.edges[~e_clear]), color=INK, line_width=1.0, lighting=False)
        if e_clear.any():
            self._add(0, _lines(scene.edges[e_clear]), color="#9aa1a6", line_width=1.0, lighting=False, opacity=0.6)
        for mesh, kw in _overlay_props(scene, cam):
            self._add(1, mesh, **kw)
        self._add(2, _cg_marker(scene, cam), color=CG_COLOUR, lighting=False)

    def aim(self, cam: ViewCamera) -> None:
        self.pl.ren_win.SetSize(cam.width, cam.height)
        c = self.pl.renderer.GetActiveCamera()
        c.ParallelProjectionOn()
        c.SetFocalPoint(*cam.focal)
        c.SetPosition(*(cam.focal + 50.0 * cam.toward))
        c.SetViewUp(*cam.up)
        c.SetParallelScale(cam.parallel_scale)
        c.SetClippingRange(1.0, 100.0)

    def snap(self) -> npt.NDArray[np.uint8]:
        self.pl.render()
        img = self.pl.screenshot(return_img=True)
        return np.asarray(img)[:, :, :3].copy()

    def close(self) -> None:
        self.pl.close()


def _split_interactive(scene: Scene) -> npt.NDArray[np.bool_]:
    """For the interactive window: parts hiding the CG from the isometric direction are see-through."""
    cam = view_camera(scene, "iso", 1200, 800)
    return _split_for_view(scene, cam)


@dataclass(frozen=True, slots=True)
class RenderedView:
    """One rendered view: its camera, the RGB image (H, W, 3) uint8 and VTK's composite projection matrix."""

    camera: ViewCamera
    image: npt.NDArray[np.uint8]
    vtk_matrix: FloatArray
    seconds: float


def render_views(scene: Scene, cameras: Sequence[ViewCamera]) -> list[RenderedView]:
    """Render the scene off-screen once per camera (one render window, re-aimed)."""
    if not cameras:
        return []
    first = cameras[0]
    stage = _Stage(scene, off_screen=True, size=(first.width, first.height))
    out = []
    try:
        for cam in cameras:
            t0 = time.perf_counter()
            stage.fill(cam)
            stage.aim(cam)
            img = stage.snap()
            vcam = stage.pl.renderer.GetActiveCamera()
            m = vcam.GetCompositeProjectionTransformMatrix(cam.width / cam.height, -1.0, 1.0)
            matrix = np.array([[m.GetElement(i, j) for j in range(4)] for i in range(4)])
            if img.shape[:2] != (cam.height, cam.width):
                raise OSError(f"the renderer returned a {img.shape[1]}x{img.shape[0]} image for a "
                              f"{cam.width}x{cam.height} view")
            out.append(RenderedView(cam, img, matrix, time.perf_counter() - t0))
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
    stage = _Stage(scene, off_screen=off_screen, size=window_size)
    stage.fill(None)
    pl = stage.pl
    pl.add_text("\n".join(title_lines), position="upper_left", font_size=10, color=INK)
    entries = [[f"{e.label}" + (f"  {e.mass:.1f} kg" if e.mass is not None else ""), e.colour] for e in scene.legend]
    if entries:
        pl.add_legend(entries, bcolor="#f3efe4", border=True, size=(0.22, 0.04 * len(entries)), loc="lower right")
    cg = scene.report["cg_m"]
    pl.add_point_labels(
        np.array([scene.cg]), [f"CG ({cg[0]:.3f}, {cg[1]:.3f}, {cg[2]:.3f}) m"], font_size=14,
        text_color=CG_COLOUR, point_color=CG_COLOUR, point_size=1, shape_color="#fbf9f4", always_visible=True,
    )
    if scene.group_markers:
        pl.add_point_labels(
            np.array([g.center for g in scene.group_markers]), [g.name for g in scene.group_markers],
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
