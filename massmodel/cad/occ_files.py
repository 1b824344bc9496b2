"""Small STEP and STL writers on OpenCascade (OCP) alone, for a handful of named solids (the ballast blocks).

A flat STEP AP214 assembly: one component per solid, named (the product and the instance carry the same name) and
coloured (sRGB, as STEP stores colours), lengths in millimetres (OpenCascade writes the unit into the file). The STL
is binary, in mm (STL carries no unit), triangulated by OpenCascade with an absolute chord tolerance.

cadquery is not needed (it would bring VTK and more along). The model export (:mod:`massmodel.cad.step_writer`) uses
the same document and writer set-up (:func:`xcaf_document`, :func:`step_writer`). OCP is imported inside the functions.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

__all__ = ["NamedSolid", "set_step_header", "step_encoded", "step_writer", "write_step_solids", "write_stl_solids",
           "xcaf_document"]

#: (name, OpenCascade shape in mm, sRGB colour with components in [0, 1])
NamedSolid = tuple[str, Any, tuple[float, float, float]]


def xcaf_document() -> tuple[Any, Any, Any]:
    """A new XCAF document for a STEP writer: the document, its shape tool (auto-naming off) and its colour tool."""
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDocStd import TDocStd_Document
    from OCP.XCAFApp import XCAFApp_Application
    from OCP.XCAFDoc import XCAFDoc_DocumentTool

    doc = TDocStd_Document(TCollection_ExtendedString("BinXCAF"))
    XCAFApp_Application.GetApplication_s().InitDocument(doc)
    shapes = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    shapes.SetAutoNaming_s(False)
    return doc, shapes, XCAFDoc_DocumentTool.ColorTool_s(doc.Main())


def step_writer() -> Any:
    """OpenCascade's XCAF STEP writer set up as every massmodel STEP file is written: AP214, names and colours (no
    layers), lengths in mm, surface curves kept, the precision of the shapes' own tolerances."""
    from OCP.Interface import Interface_Static
    from OCP.STEPCAFControl import STEPCAFControl_Writer
    from OCP.XSControl import XSControl_WorkSession

    writer = STEPCAFControl_Writer(XSControl_WorkSession(), False)
    writer.SetColorMode(True)
    writer.SetNameMode(True)
    writer.SetLayerMode(False)
    Interface_Static.SetCVal_s("write.step.schema", "AP214IS")
    Interface_Static.SetCVal_s("xstep.cascade.unit", "MM")
    Interface_Static.SetCVal_s("write.step.unit", "MM")
    Interface_Static.SetIVal_s("write.surfacecurve.mode", 1)
    Interface_Static.SetIVal_s("write.precision.mode", 0)
    return writer


def step_encoded(text: str) -> str:
    """The inside of a STEP string but for its quotes: backslashes doubled, characters beyond ASCII as \\X2\\ (or
    \\X4\\) hex (ISO 10303-21 §6.4.3.3). OpenCascade writes header strings as given, doubling only the quotes."""
    out = []
    for ch in text.replace("\\", "\\\\"):
        out.append(ch if 32 <= ord(ch) < 127 else f"\\X2\\{ord(ch):04X}\\X0\\" if ord(ch) < 0x10000
                   else f"\\X4\\{ord(ch):08X}\\X0\\")
    return "".join(out)


def set_step_header(writer: Any, file_name: str, description: str) -> None:
    """Fill the header of the file ``writer`` (a :func:`step_writer`, after ``Transfer``) is about to write, as every
    massmodel STEP file has it: FILE_NAME with the final file name (not the temporary one the bytes go to first),
    FILE_DESCRIPTION ``description``, originating system "massmodel", author and organisation left empty (ISO
    10303-21 §8.2: empty strings where unknown). Text beyond ASCII is encoded (:func:`step_encoded`)."""
    from OCP.APIHeaderSection import APIHeaderSection_MakeHeader
    from OCP.TCollection import TCollection_HAsciiString

    step_model = writer.ChangeWriter().Model()
    header = APIHeaderSection_MakeHeader(step_model)
    header.SetName(TCollection_HAsciiString(step_encoded(file_name)))
    header.SetDescriptionValue(1, TCollection_HAsciiString(step_encoded(description)))
    header.SetOriginatingSystem(TCollection_HAsciiString("massmodel"))
    header.SetAuthorValue(1, TCollection_HAsciiString(""))
    header.SetOrganizationValue(1, TCollection_HAsciiString(""))
    header.SetAuthorisation(TCollection_HAsciiString(""))
    header.Apply(step_model)


def write_step_solids(path: str | Path, solids: Sequence[NamedSolid], assembly_name: str, *,
                      file_name: str | None = None, description: str | None = None) -> None:
    """Write solids (mm, model frame) as a flat STEP AP214 assembly named ``assembly_name``.

    Parameters
    ----------
    path : path
        The file (written directly: callers go through :func:`massmodel.core.atomic.write_atomic`).
    solids : sequence of (str, TopoDS_Shape, (3,) float)
        Name, shape in mm and sRGB colour of each component.
    assembly_name : str
    file_name : str, optional
        The name the header records (default: ``path``'s name; callers writing to a temporary file pass the final
        one).
    description : str, optional
        The header's FILE_DESCRIPTION (default: the assembly's name, solids in mm, model axes).

    Raises
    ------
    RuntimeError
        The STEP writer failed.

    References
    ----------
    ISO 10303-214 (STEP AP214); OpenCascade XCAF documentation (XCAFDoc_ShapeTool, STEPCAFControl_Writer).
    """
    from OCP.IFSelect import IFSelect_ReturnStatus
    from OCP.Quantity import Quantity_Color, Quantity_ColorRGBA, Quantity_TypeOfColor
    from OCP.STEPControl import STEPControl_StepModelType
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDataStd import TDataStd_Name
    from OCP.TopLoc import TopLoc_Location
    from OCP.XCAFDoc import XCAFDoc_ColorType

    doc, shapes, colours = xcaf_document()

    def name(label: Any, text: str) -> None:
        TDataStd_Name.Set_s(label, TCollection_ExtendedString(text))

    top = shapes.NewShape()
    name(top, assembly_name)
    for text, shape, rgb in solids:
        part = shapes.NewShape()
        shapes.SetShape(part, shape)
        name(part, text)
        colour = Quantity_ColorRGBA(Quantity_Color(*rgb, Quantity_TypeOfColor.Quantity_TOC_sRGB), 1.0)
        colours.SetColor(part, colour, XCAFDoc_ColorType.XCAFDoc_ColorSurf)
        name(shapes.AddComponent(top, part, TopLoc_Location()), text)
    shapes.UpdateAssemblies()

    from .fileshape import _native_output

    writer = step_writer()
    with _native_output() as said:  # the writer's statistics banner (and the temporary file's name) stay off the terminal
        writer.Transfer(doc, STEPControl_StepModelType.STEPControl_AsIs)
        set_step_header(writer, file_name or Path(path).name,
                        description or f"massmodel solids '{assembly_name}': lengths in mm, model axes")
        status = writer.Write(str(path))
    if status != IFSelect_ReturnStatus.IFSelect_RetDone:
        raise RuntimeError(f"the OpenCascade STEP writer failed for '{path}' ({said[0] if said else status.name})")


def write_stl_solids(path: str | Path, shapes: Sequence[Any], chord_mm: float, angle_rad: float) -> None:
    """Write shapes (mm) as one binary STL, triangulated with an absolute chord tolerance.

    Parameters
    ----------
    path : path
        The file (written directly: callers go through :func:`massmodel.core.atomic.write_atomic`).
    shapes : sequence of TopoDS_Shape
        In mm.
    chord_mm : float
        Largest distance between the triangles and the exact surface, mm (OpenCascade's linear deflection).
    angle_rad : float
        Largest angle between neighbouring triangles along a curved edge, rad (angular deflection).

    Raises
    ------
    RuntimeError
        The STL writer failed.
    """
    from OCP.BRepMesh import BRepMesh_IncrementalMesh
    from OCP.StlAPI import StlAPI_Writer

    from .solids import make_compound

    shape = shapes[0] if len(shapes) == 1 else make_compound(shapes)
    BRepMesh_IncrementalMesh(shape, float(chord_mm), False, float(angle_rad), True)
    writer = StlAPI_Writer()
    writer.ASCIIMode = False
    if not writer.Write(shape, str(path)):
        raise RuntimeError(f"the OpenCascade STL writer failed for '{path}'")
