"""The STEP AP214 assembly of an export, written part by part with OpenCascade (OCP) alone.

What the file holds
-------------------
One product per component, named by its path, holding its solid (mm, part frame, mirror built in) coloured with its
colour (sRGB); one assembly product per group path, named by the path; the model as the root assembly, named after
the model. Each component is placed in its group by its proper pose (a ``NEXT_ASSEMBLY_USAGE_OCCURRENCE`` named by
the path, with a ``CONTEXT_DEPENDENT_SHAPE_REPRESENTATION`` whose ``ITEM_DEFINED_TRANSFORMATION`` takes the part's
origin to an ``AXIS2_PLACEMENT_3D`` in the group's shape representation), each group in its parent with no motion.
This is the product structure OpenCascade's XCAF writer makes for an assembly document (and cadquery's assembly
export before it), so readers see the same tree of names, colours, placements and solids.

How it streams
--------------
OpenCascade's STEP writer holds the whole file's entities, and then their text, in memory (about 90 KB a part
measured at 10^3 parts, ten times the file). Here the parts are written a batch at a time: an XCAF document holding
the batch's coloured solids as free parts (``TDocStd_Document``, ``XCAFDoc_ShapeTool``, ``XCAFDoc_ColorTool``,
``TDataStd_Name``) goes through ``STEPCAFControl_Writer`` into a scratch file; its entities are renumbered after
those already written, the products renamed from their temporary names to the parts' paths, and appended to the
output; the batch's solids, document and writer are released. Three entity numbers a part are kept (its product
definition, shape representation and origin placement); the assembly products and placements, whose entities are
few and regular, are written as text when the last part is in. Each batch's entities carry their own
representation context (mm, radians, uncertainty 1e-7 mm), as in a file merged from single-part files.

References
----------
ISO 10303-21 (clear text encoding of the exchange structure: entity instances ``#n = ...;``, strings in quotes with
'' for a quote, reals with a decimal point); ISO 10303-214 (AP214, automotive design): product structure through
``NEXT_ASSEMBLY_USAGE_OCCURRENCE`` and placements through ``CONTEXT_DEPENDENT_SHAPE_REPRESENTATION``; OpenCascade's
STEPCAFControl_Writer output for an XCAF assembly, used as the pattern.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

import numpy as np

from .formats import ExportError, group_tree, rgb
from .occ_files import step_encoded

__all__ = ["StepStream", "pose_matrix_mm"]

_MM_PER_M = 1000.0
_SPLIT = re.compile(r"('(?:[^']|'')*')|#(\d+)")  # a string literal (left alone) or an entity reference
_ENTITY = re.compile(r"^#(\d+) = ", re.MULTILINE)
_TEMP_NAME = "massmodel-part-"  # products are written under this name + a number and renamed as they are copied
#: The product-structure entities of a batch (the start of their text is enough to follow the references).
_STRUCTURE = re.compile(r"^#(\d+) = (?=SHAPE_DEFINITION_REPRESENTATION\(|PRODUCT_DEFINITION_SHAPE\(|PRODUCT_DEFINITION\("
                        r"|PRODUCT_DEFINITION_FORMATION\(|PRODUCT\(|[A-Z_]*SHAPE_REPRESENTATION\()", re.MULTILINE)
BATCH = 64


def pose_matrix_mm(location: Any) -> np.ndarray:
    """(3, 4) rotation and translation (mm) of a proper pose (translation in m)."""
    return np.hstack([np.asarray(location.linear, dtype=float),
                      (np.asarray(location.translation, dtype=float) * _MM_PER_M)[:, None]])


def _real(x: float) -> str:
    """A STEP real (ISO 10303-21 §6.3.2: digits, a decimal point, an optional exponent), exact to the last bit."""
    text = repr(float(x) + 0.0)  # + 0.0: no negative zero
    mantissa, _, exponent = text.partition("e")
    if "." not in mantissa:
        mantissa += "."
    return mantissa + (f"E{exponent}" if exponent else "")


def _string(text: str) -> str:
    """A STEP string: :func:`massmodel.cad.occ_files.step_encoded`, quotes doubled, in quotes (ISO 10303-21
    §6.4.3)."""
    return "'" + step_encoded(text).replace("'", "''") + "'"


@dataclass(frozen=True)
class _Written:
    """What the assembly needs of a part already in the file."""

    path: str
    product_definition: int
    representation: int
    origin: int
    matrix: np.ndarray  # (3, 4): rotation and translation (mm) of the part in the model frame


class StepStream:
    """A STEP AP214 assembly file written a batch of parts at a time (see the module docstring).

    Parameters
    ----------
    path : Path
        File to write (the staged temporary file).
    scratch : Path
        Scratch file for each batch's STEP text (removed by :meth:`close`).
    model_name : str
        Name of the root assembly.
    file_name : str
        Name recorded in the file's header (the final name).
    batch : int, optional
        Parts written through one OpenCascade writer (default :data:`BATCH`) (the writer's fixed cost is about 1 ms; a batch's entities,
        about 100 KB a part, are in memory together).
    """

    def __init__(self, path: Path, scratch: Path, model_name: str, file_name: str, batch: int | None = None) -> None:
        self.path = path
        self.scratch = scratch
        self.model_name = model_name
        self.file_name = file_name
        self.batch = batch or BATCH
        self._queue: list[tuple[str, str, Any, np.ndarray]] = []
        self._queued: set[Any] = set()  # TShape handles of the queued solids
        self._parts: list[_Written] = []
        self._last = 0  # highest entity number written
        try:
            self._file: IO[str] = open(path, "w", encoding="utf-8", errors="surrogateescape", newline="\n")
        except OSError as exc:
            raise ExportError(f"cannot write '{path}': {exc.strerror or exc}") from None

    def _write(self, text: str) -> None:
        try:
            self._file.write(text)
        except OSError as exc:
            raise ExportError(f"cannot write '{self.path}': {exc.strerror or exc}") from None

    def add(self, path: str, colour: str, solid: Any, matrix: np.ndarray) -> None:
        """Queue one part: its solid (``TopoDS_Shape``, mm, part frame), colour (``#rrggbb``) and the (3, 4)
        rotation and translation (mm) placing it in the model frame; a full batch is written out."""
        if solid.TShape() in self._queued:  # a patterned copy: its own solid, as every part has in the file
            from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy

            solid = BRepBuilderAPI_Copy(solid, True, False).Shape()
        self._queued.add(solid.TShape())
        self._queue.append((path, colour, solid, np.asarray(matrix, dtype=float)))
        if len(self._queue) >= self.batch:
            self._flush()

    def _flush(self) -> None:
        if not self._queue:
            return
        text = _batch_step([(f"{_TEMP_NAME}{k}", colour, solid) for k, (_, colour, solid, _) in enumerate(self._queue)],
                           self.scratch, self.file_name, self.model_name)
        header, _, rest = text.partition("\nDATA;\n")
        data, _, _ = rest.partition("\nENDSEC;\n")
        if not self._parts:
            self._write(header + "\nDATA;\n")
        offset = self._last
        last = max((int(n) for n in _ENTITY.findall(data)), default=0)
        found = _products(data)
        if not last or sorted(found) != list(range(len(self._queue))):
            raise RuntimeError("the STEP text of a batch of parts does not hold one product per part")
        names = {f"'{_TEMP_NAME}{k}'": _string(path) for k, (path, _, _, _) in enumerate(self._queue)}
        self._write(_renumbered(data, offset, names) + "\n")
        self._last = offset + last
        for k, (path, _, _, matrix) in enumerate(self._queue):
            pd, rep, origin = found[k]
            self._parts.append(_Written(path, pd + offset, rep + offset, origin + offset, matrix))
        self._queue = []
        self._queued = set()

    def close(self) -> None:
        """Write the last batch, the assembly products and placements, end the file and remove the scratch file."""
        self._flush()
        if not self._parts:
            raise ExportError(f"'{self.path}': a STEP assembly needs at least one part")
        self._write(_assembly_text(self.model_name, self._parts, self._last + 1))
        self._write("ENDSEC;\nEND-ISO-10303-21;\n")
        try:
            self._file.close()
        except OSError as exc:
            raise ExportError(f"cannot write '{self.path}': {exc.strerror or exc}") from None
        self.scratch.unlink(missing_ok=True)

    def discard(self) -> None:
        """Close without finishing (the caller removes the staged file)."""
        self._file.close()
        self.scratch.unlink(missing_ok=True)


def _renumbered(data: str, offset: int, names: dict[str, str]) -> str:
    """``data`` with every entity number (outside string literals) raised by ``offset`` and the string literals found
    in ``names`` replaced."""
    pieces = _SPLIT.split(data)  # text, then (string literal or None, entity number or None, text) repeated
    strings = pieces[1::3]
    numbers = pieces[2::3]
    refs = [f"#{int(n) + offset}" if n is not None else names.get(t, t) for t, n in zip(strings, numbers, strict=True)]
    pieces[1::3] = refs
    pieces[2::3] = [""] * len(numbers)
    return "".join(pieces)


def _products(data: str) -> dict[int, tuple[int, int, int]]:
    """Per temporary part number: (product definition, shape representation, origin placement) entity numbers of the
    free parts in a batch's STEP text (shape definition representation → product definition shape → product
    definition → formation → product, whose name is the temporary one)."""
    text = {int(m.group(1)): data[m.end() : m.end() + 200] for m in _STRUCTURE.finditer(data)}

    def ref(pattern: str, number: str) -> str:
        m = re.match(pattern, text.get(int(number), ""))
        if m is None:
            raise RuntimeError(f"entity #{number} of a batch's STEP text is not the expected {pattern.split('(')[0]}")
        return m.group(1)

    out = {}
    for body in text.values():
        m = re.match(r"SHAPE_DEFINITION_REPRESENTATION\(#(\d+),#(\d+)\);", body)
        if m is None:
            continue
        pd = ref(r"PRODUCT_DEFINITION_SHAPE\('[^']*','[^']*',#(\d+)\);", m.group(1))
        pdf = ref(r"PRODUCT_DEFINITION\('[^']*','[^']*',#(\d+),", pd)
        product = ref(r"PRODUCT_DEFINITION_FORMATION\('[^']*','[^']*',#(\d+)\);", pdf)
        name = ref(rf"PRODUCT\('{_TEMP_NAME}(\d+)',", product)
        origin = ref(r"[A-Z_]*SHAPE_REPRESENTATION\('[^']*',\(#(\d+)", m.group(2))
        out[int(name)] = (int(pd), int(m.group(2)), int(origin))
    return out


def _batch_step(batch: list[tuple[str, str, Any]], scratch: Path, file_name: str, model_name: str) -> str:
    """The STEP text of named, coloured solids as free parts, written by OpenCascade's XCAF writer."""
    from OCP.BRep import BRep_Builder
    from OCP.IFSelect import IFSelect_ReturnStatus
    from OCP.Quantity import Quantity_Color, Quantity_ColorRGBA, Quantity_TOC_sRGB
    from OCP.STEPControl import STEPControl_StepModelType
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDataStd import TDataStd_Name
    from OCP.TopoDS import TopoDS_Compound
    from OCP.XCAFDoc import XCAFDoc_ColorType

    from .fileshape import _native_output
    from .occ_files import set_step_header, step_writer, xcaf_document

    doc, shapes, colours = xcaf_document()
    builder = BRep_Builder()
    for name, colour, solid in batch:
        compound = TopoDS_Compound()  # one solid in a compound: the part's shape, as the assembly writer made it
        builder.MakeCompound(compound)
        builder.Add(compound, solid)
        label = shapes.AddShape(compound, False, False)
        TDataStd_Name.Set_s(label, TCollection_ExtendedString(name))
        r, g, b = rgb(colour)
        colours.SetColor(label, Quantity_ColorRGBA(Quantity_Color(r, g, b, Quantity_TOC_sRGB), 1.0),
                         XCAFDoc_ColorType.XCAFDoc_ColorSurf)
    writer = step_writer()
    with _native_output() as said:
        writer.Transfer(doc, STEPControl_StepModelType.STEPControl_AsIs)
        set_step_header(writer, file_name,
                        f"massmodel export of '{model_name}': one solid per component, lengths in mm, model axes")
        status = writer.Write(str(scratch))
    if status != IFSelect_ReturnStatus.IFSelect_RetDone:
        raise ExportError(f"the STEP writer failed for '{scratch}' ({said[0] if said else status.name})")
    try:
        return scratch.read_text(encoding="utf-8", errors="surrogateescape")  # bytes kept as OpenCascade wrote them
    except OSError as exc:
        raise ExportError(f"cannot read back '{scratch}': {exc.strerror or exc}") from None


def _placement(n: int, matrix: np.ndarray) -> list[str]:
    """``AXIS2_PLACEMENT_3D`` #n (location, axis = local z, reference direction = local x) of a (3, 4) matrix."""
    r, t = matrix[:, :3], matrix[:, 3]
    return [
        f"#{n} = AXIS2_PLACEMENT_3D('',#{n + 1},#{n + 2},#{n + 3});",
        f"#{n + 1} = CARTESIAN_POINT('',({','.join(_real(v) for v in t)}));",
        f"#{n + 2} = DIRECTION('',({','.join(_real(v) for v in r[:, 2])}));",
        f"#{n + 3} = DIRECTION('',({','.join(_real(v) for v in r[:, 0])}));",
    ]


def _assembly_text(model_name: str, parts: list[_Written], first: int) -> str:
    """Entities of the assembly products (the model and its groups) and of every placement, numbered from ``first``.

    Shared by all assemblies: one application context, product context, product definition context and a 3D
    representation context in mm. Per assembly: product, formation, definition, its shape and shape representation
    (an origin placement and one placement per component). Per component: the usage occurrence, its placement shape
    and the context-dependent shape representation relating the component's representation to the assembly's.
    """
    groups, members = group_tree([p.path for p in parts])
    lines: list[str] = []
    n = first
    app, apd, pc, pdc, ctx, mm, rad, sr_unit, unc = range(n, n + 9)
    n += 9
    lines += [
        f"#{apd} = APPLICATION_PROTOCOL_DEFINITION('international standard','automotive_design',2000,#{app});",
        f"#{app} = APPLICATION_CONTEXT('core data for automotive mechanical design processes');",
        f"#{pc} = PRODUCT_CONTEXT('',#{app},'mechanical');",
        f"#{pdc} = PRODUCT_DEFINITION_CONTEXT('part definition',#{app},'design');",
        f"#{ctx} = ( GEOMETRIC_REPRESENTATION_CONTEXT(3) GLOBAL_UNCERTAINTY_ASSIGNED_CONTEXT((#{unc})) "
        f"GLOBAL_UNIT_ASSIGNED_CONTEXT((#{mm},#{rad},#{sr_unit})) REPRESENTATION_CONTEXT('Context #1',"
        "'3D Context with UNIT and UNCERTAINTY') );",
        f"#{mm} = ( LENGTH_UNIT() NAMED_UNIT(*) SI_UNIT(.MILLI.,.METRE.) );",
        f"#{rad} = ( NAMED_UNIT(*) PLANE_ANGLE_UNIT() SI_UNIT($,.RADIAN.) );",
        f"#{sr_unit} = ( NAMED_UNIT(*) SI_UNIT($,.STERADIAN.) SOLID_ANGLE_UNIT() );",
        f"#{unc} = UNCERTAINTY_MEASURE_WITH_UNIT(LENGTH_MEASURE(1.E-07),#{mm},'distance_accuracy_value',"
        "'confusion accuracy');",
    ]
    identity = np.hstack([np.eye(3), np.zeros((3, 1))])
    # usage occurrence ids in the order OpenCascade's writer gives them in a fresh process (a reader shows the id of
    # an unnamed occurrence, a group's, as its instance name): a group's parts, then each sub-group's contents
    # followed by the sub-group
    ids: dict[str, int] = {}

    def number(group: str) -> None:
        for i in members[group]:
            ids[parts[i].path] = len(ids) + 1
        for child in groups[group]:
            number(child)
            ids[child] = len(ids) + 1

    number("")

    def assembly(group: str) -> tuple[int, int, int]:
        """Write the group's assembly (children first); (product definition, representation, origin)."""
        nonlocal n
        children: list[tuple[str, str, int, int, int, np.ndarray]] = []  # (key, instance name, pd, rep, origin, at)
        for i in members[group]:
            p = parts[i]
            children.append((p.path, p.path, p.product_definition, p.representation, p.origin, p.matrix))
        for child in groups[group]:
            child_pd, child_rep, child_origin = assembly(child)
            children.append((child, "", child_pd, child_rep, child_origin, identity))
        name = _string(group or model_name)
        sdr, pds, pd, pdf, prod, rep, cat = range(n, n + 7)
        n += 7
        origin = n
        lines.extend(_placement(origin, identity))
        n += 4
        placements = []
        for _ in children:
            placements.append(n)
            n += 4
        lines.extend([
            f"#{sdr} = SHAPE_DEFINITION_REPRESENTATION(#{pds},#{rep});",
            f"#{pds} = PRODUCT_DEFINITION_SHAPE('','',#{pd});",
            f"#{pd} = PRODUCT_DEFINITION('design','',#{pdf},#{pdc});",
            f"#{pdf} = PRODUCT_DEFINITION_FORMATION('','',#{prod});",
            f"#{prod} = PRODUCT({name},{name},'',(#{pc}));",
            f"#{cat} = PRODUCT_RELATED_PRODUCT_CATEGORY('part',$,(#{prod}));",
            f"#{rep} = SHAPE_REPRESENTATION('',({','.join(f'#{k}' for k in [origin, *placements])}),#{ctx});",
        ])
        for (key, instance, child_pd, child_rep, child_origin, matrix), at in zip(children, placements, strict=True):
            lines.extend(_placement(at, matrix))
            cdsr, rr, idt, shape, nauo = range(n, n + 5)
            n += 5
            lines.extend([
                f"#{cdsr} = CONTEXT_DEPENDENT_SHAPE_REPRESENTATION(#{rr},#{shape});",
                f"#{rr} = ( REPRESENTATION_RELATIONSHIP('','',#{child_rep},#{rep}) "
                f"REPRESENTATION_RELATIONSHIP_WITH_TRANSFORMATION(#{idt}) SHAPE_REPRESENTATION_RELATIONSHIP() );",
                f"#{idt} = ITEM_DEFINED_TRANSFORMATION('','',#{child_origin},#{at});",
                f"#{shape} = PRODUCT_DEFINITION_SHAPE('Placement','Placement of an item',#{nauo});",
                f"#{nauo} = NEXT_ASSEMBLY_USAGE_OCCURRENCE('{ids[key]}',{_string(instance)},'',#{pd},#{child_pd},$);",
            ])
        return pd, rep, origin

    assembly("")
    return "\n".join(lines) + "\n"

