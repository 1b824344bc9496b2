"""Thin adaptor to VTK: poly data from numpy arrays, marker sources, actors, an off-screen window and its pixels.

Used by :mod:`massmodel.pictures.viewer` instead of pyvista's plotting layer for the off-screen pictures, because importing
only the VTK modules needed here starts several times faster than pyvista's plotting package (which also imports
matplotlib's pyplot) and the off-screen sheet must start fast in a fresh process. The interactive window keeps
pyvista. Import this module only where VTK is needed.
"""

from __future__ import annotations

import os
from typing import Any

import numpy as np
import numpy.typing as npt
import vtkmodules.vtkRenderingOpenGL2  # noqa: F401  (registers the OpenGL classes)
from vtkmodules.util.numpy_support import numpy_to_vtk, numpy_to_vtkIdTypeArray, vtk_to_numpy
from vtkmodules.vtkCommonCore import vtkPoints
from vtkmodules.vtkCommonDataModel import vtkCellArray, vtkPolyData
from vtkmodules.vtkCommonTransforms import vtkTransform
from vtkmodules.vtkFiltersGeneral import vtkTransformPolyDataFilter
from vtkmodules.vtkFiltersSources import (
    vtkArrowSource,
    vtkConeSource,
    vtkPlatonicSolidSource,
    vtkSphereSource,
)
from vtkmodules.vtkRenderingCore import (
    vtkActor,
    vtkLight,
    vtkLightKit,
    vtkPolyDataMapper,
    vtkRenderer,
    vtkRenderWindow,
    vtkWindowToImageFilter,
)

__all__ = [
    "shared_points",
    "polydata",
    "edge_lines",
    "lines",
    "polygon",
    "sphere",
    "cone",
    "arrow",
    "octahedron",
    "actor",
    "offscreen_window",
    "layer_renderer",
    "grab",
]

FloatArray = npt.NDArray[np.float64]


def _cell_array(connectivity: npt.NDArray[np.int64], per_cell: int) -> Any:
    conn = np.ascontiguousarray(connectivity, dtype=np.int64).ravel()
    offsets = np.arange(0, len(conn) + 1, per_cell, dtype=np.int64)
    cells = vtkCellArray()
    cells.SetData(numpy_to_vtkIdTypeArray(offsets, deep=True), numpy_to_vtkIdTypeArray(conn, deep=True))
    return cells


def _points(vertices: FloatArray) -> Any:
    pts = vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(vertices, dtype=np.float64), deep=True))
    return pts


def shared_points(vertices: FloatArray) -> Any:
    """VTK points (V, 3) m to build several poly data on (:func:`polydata`, :func:`edge_lines`): the renderer
    uploads one array of points once for all the actors and views that use it."""
    return _points(vertices)


def polydata(vertices: FloatArray | Any, triangles: npt.NDArray[np.int64],
             cell_rgb: npt.NDArray[np.uint8] | None = None) -> Any:
    """Triangles (F, 3) on vertices (V, 3) m (or on :func:`shared_points`), optionally with one RGB colour (F, 3)
    uint8 per triangle."""
    poly = vtkPolyData()
    poly.SetPoints(vertices if isinstance(vertices, vtkPoints) else _points(vertices))
    poly.SetPolys(_cell_array(triangles, 3))
    if cell_rgb is not None:
        colours = numpy_to_vtk(np.ascontiguousarray(cell_rgb, dtype=np.uint8), deep=True)
        colours.SetName("rgb")
        poly.GetCellData().SetScalars(colours)
    return poly


def lines(segments: FloatArray) -> Any:
    """Line segments (K, 2, 3), m."""
    seg = np.asarray(segments, float).reshape(-1, 2, 3)
    poly = vtkPolyData()
    poly.SetPoints(_points(seg.reshape(-1, 3)))
    poly.SetLines(_cell_array(np.arange(2 * len(seg), dtype=np.int64), 2))
    return poly


def edge_lines(points: Any, pairs: npt.NDArray[np.int64]) -> Any:
    """Line segments between pairs (K, 2) of :func:`shared_points`."""
    poly = vtkPolyData()
    poly.SetPoints(points)
    poly.SetLines(_cell_array(pairs, 2))
    return poly


def polygon(corners: FloatArray) -> Any:
    """One flat polygon through ``corners`` (K, 3), m."""
    poly = vtkPolyData()
    poly.SetPoints(_points(corners))
    poly.SetPolys(_cell_array(np.arange(len(corners), dtype=np.int64), len(corners)))
    return poly


def _transformed(source: Any, matrix: FloatArray) -> Any:
    t = vtkTransform()
    t.SetMatrix([float(v) for v in np.asarray(matrix, float).ravel()])
    f = vtkTransformPolyDataFilter()
    f.SetInputConnection(source.GetOutputPort())
    f.SetTransform(t)
    f.Update()
    out = vtkPolyData()
    out.DeepCopy(f.GetOutput())
    return out


def sphere(center: FloatArray, radius: float, resolution: int = 24) -> Any:
    s = vtkSphereSource()
    s.SetCenter(*(float(v) for v in center))
    s.SetRadius(float(radius))
    s.SetThetaResolution(resolution)
    s.SetPhiResolution(max(6, resolution * 3 // 4))
    s.Update()
    return s.GetOutput()


def cone(center: FloatArray, direction: FloatArray, height: float, radius: float, resolution: int = 24) -> Any:
    """A cone centred on ``center`` whose apex points along ``direction``."""
    c = vtkConeSource()
    c.SetCenter(*(float(v) for v in center))
    c.SetDirection(*(float(v) for v in direction))
    c.SetHeight(float(height))
    c.SetRadius(float(radius))
    c.SetResolution(resolution)
    c.Update()
    return c.GetOutput()


def _frame_along(direction: FloatArray) -> FloatArray:
    d = np.asarray(direction, float)
    d = d / np.linalg.norm(d)
    helper = np.array([0.0, 0.0, 1.0]) if abs(d[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    e2 = np.cross(helper, d)
    e2 /= np.linalg.norm(e2)
    return np.stack([d, e2, np.cross(d, e2)], axis=1)  # columns: local x → d


def arrow(start: FloatArray, direction: FloatArray, length: float) -> Any:
    """An arrow of ``length`` (m) from ``start`` along ``direction``."""
    a = vtkArrowSource()
    a.SetTipLength(0.25)
    a.SetTipRadius(0.06)
    a.SetShaftRadius(0.02)
    a.SetTipResolution(20)
    a.SetShaftResolution(12)
    m = np.eye(4)
    m[:3, :3] = _frame_along(direction) * length
    m[:3, 3] = start
    return _transformed(a, m)


def octahedron(center: FloatArray, radius: float) -> Any:
    p = vtkPlatonicSolidSource()
    p.SetSolidTypeToOctahedron()
    m = np.eye(4)
    m[:3, :3] *= radius
    m[:3, 3] = center
    return _transformed(p, m)


def _rgb(colour: str) -> tuple[float, float, float]:
    text = colour.lstrip("#")
    return tuple(int(text[k : k + 2], 16) / 255.0 for k in (0, 2, 4))  # type: ignore[return-value]


def actor(
    poly: Any, colour: str | None = None, *, cell_colours: bool = False, opacity: float = 1.0, line_width: float = 1.0,
    lighting: bool = True, ambient: float = 0.35, diffuse: float = 0.65, edges: str | None = None,
) -> Any:
    """An actor for ``poly``: one colour, or the per-cell RGB colours of :func:`polydata`."""
    mapper = vtkPolyDataMapper()
    mapper.SetInputData(poly)
    if cell_colours:
        mapper.SetScalarModeToUseCellData()
        mapper.SetColorModeToDirectScalars()
        mapper.ScalarVisibilityOn()
    else:
        mapper.ScalarVisibilityOff()
    act = vtkActor()
    act.SetMapper(mapper)
    prop = act.GetProperty()
    if colour is not None:
        prop.SetColor(*_rgb(colour))
    prop.SetOpacity(opacity)
    prop.SetLineWidth(line_width)
    if lighting:
        prop.SetAmbient(ambient)
        prop.SetDiffuse(diffuse)
        prop.SetSpecular(0.0)
    else:
        prop.LightingOff()
    if edges is not None:
        prop.EdgeVisibilityOn()
        prop.SetEdgeColor(*_rgb(edges))
    return act


def offscreen_window(width: int, height: int, background: str, samples: int = 0) -> tuple[Any, Any]:
    """An off-screen render window with its layer-0 renderer lit by a light kit.

    Without a display VTK must use EGL: ``VTK_DEFAULT_OPENGL_WINDOW`` is set to ``vtkEGLRenderWindow`` here unless
    the caller chose another window class. ``samples`` is the MSAA sample count: on a software renderer two
    samples double the time of a view, so none by default.
    """
    os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    win = vtkRenderWindow()
    win.SetOffScreenRendering(1)
    win.SetMultiSamples(samples)
    win.SetSize(int(width), int(height))
    ren = vtkRenderer()
    ren.SetBackground(*_rgb(background))
    kit = vtkLightKit()
    kit.AddLightsToRenderer(ren)
    win.AddRenderer(ren)
    return win, ren


def layer_renderer(window: Any, base: Any, layer: int) -> Any:
    """A renderer drawn over ``base`` on ``layer`` (its own depth buffer), sharing ``base``'s camera."""
    if window.GetNumberOfLayers() <= layer:
        window.SetNumberOfLayers(layer + 1)
    ren = vtkRenderer()
    ren.SetLayer(layer)
    ren.InteractiveOff()
    ren.SetActiveCamera(base.GetActiveCamera())
    light = vtkLight()
    light.SetLightTypeToHeadlight()
    ren.AddLight(light)
    window.AddRenderer(ren)
    return ren


def grab(window: Any) -> npt.NDArray[np.uint8]:
    """Render and read the window's pixels: (H, W, 3) uint8, first row at the top."""
    window.Render()
    f = vtkWindowToImageFilter()
    f.SetInput(window)
    f.ShouldRerenderOff()  # just rendered: a second render would double the time of a large view
    f.SetInputBufferTypeToRGB()
    f.ReadFrontBufferOff()
    f.Update()
    img = f.GetOutput()
    w, h, _ = img.GetDimensions()
    arr = vtk_to_numpy(img.GetPointData().GetScalars()).reshape(h, w, -1)[:, :, :3]
    return np.ascontiguousarray(arr[::-1])
