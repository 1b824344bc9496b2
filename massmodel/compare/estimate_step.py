"""A CAD estimate computed from a STEP file and densities, exactly, with OpenCascade.

The STEP file is read through OpenCascade's XCAF reader (names and assembly placements kept; lengths converted to
mm, the unit OpenCascade works in here). Every solid needs a density: one for all (``default_density``) and/or one
per solid, chosen by the solid's name, its path in the assembly (``bracket/web``) or its number in file order
(``#2``). Each solid's volume properties come from ``BRepGProp.VolumeProperties_s`` with a relative accuracy of
1e-14 and are summed with ``GProp_GProps.Add(props, density)`` (OpenCascade's ``MatrixOfInertia`` is about the
centre of mass, axes parallel to the file's axes, off-diagonals −∫xy dm).

The result is an :class:`massmodel.compare.estimate.Estimate` in SI, about each CG, tensor convention; only its placement
(the axes and origin the user gives for the STEP file) is open to doubt in a diagnosis.

Import this module only where STEP is needed: it imports OCP.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps
from OCP.IFSelect import IFSelect_RetDone
from OCP.Interface import Interface_Static
from OCP.STEPCAFControl import STEPCAFControl_Reader
from OCP.TCollection import TCollection_ExtendedString
from OCP.TDataStd import TDataStd_Name
from OCP.TDF import TDF_Label, TDF_LabelSequence
from OCP.TDocStd import TDocStd_Document
from OCP.TopAbs import TopAbs_SOLID
from OCP.TopExp import TopExp_Explorer
from OCP.TopLoc import TopLoc_Location
from OCP.TopoDS import TopoDS_Shape
from OCP.XCAFDoc import XCAFDoc_DocumentTool

from .estimate import (
    WHOLE,
    AxisMap,
    Conventions,
    Estimate,
    EstimateError,
    EstimateItem,
    Products,
    ReferenceKind,
)

__all__ = ["GPROP_EPS", "StepSolid", "read_step_solids", "estimate_from_step"]

FloatArray = npt.NDArray[np.float64]

#: Relative accuracy asked of OpenCascade's adaptive integration (the default is off by ~4e-4 on NURBS solids).
GPROP_EPS = 1e-14


@dataclass(frozen=True, slots=True, eq=False)
class StepSolid:
    """One solid of a STEP file, placed in the file's coordinates (mm).

    Parameters
    ----------
    index : int
        1-based number in file order (``#index`` on the command line).
    name : str
        Its own name (the instance name in the assembly, else the part name; ``solid <index>`` when unnamed).
    path : str
        Names from the top of the assembly down to it, joined by ``/``.
    shape : TopoDS_Shape
        The placed solid, mm.
    """

    index: int
    name: str
    path: str
    shape: Any


def _name(label: TDF_Label) -> str:
    attr = TDataStd_Name()
    if label.FindAttribute(TDataStd_Name.GetID_s(), attr):
        return str(attr.Get().ToExtString()).strip()
    return ""


def read_step_solids(path: str | Path) -> list[StepSolid]:
    """Every solid of a STEP file with its name, assembly path and placement (mm).

    Raises
    ------
    EstimateError
        When the file cannot be read or holds no solid.
    """
    file = str(path)
    if not Path(file).is_file():
        raise EstimateError(file, None, None, "no such file")
    reader = STEPCAFControl_Reader()
    reader.SetNameMode(True)
    Interface_Static.SetCVal_s("xstep.cascade.unit", "MM")
    if reader.ReadFile(file) != IFSelect_RetDone:
        raise EstimateError(file, None, None, "not a readable STEP file")
    doc = TDocStd_Document(TCollection_ExtendedString("XmlXCAF"))
    if not reader.Transfer(doc):
        raise EstimateError(file, None, None, "the STEP file could not be transferred to shapes")
    tool = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    free = TDF_LabelSequence()
    tool.GetFreeShapes(free)
    found: list[tuple[str, str, Any]] = []

    def walk(label: TDF_Label, loc: TopLoc_Location, names: list[str]) -> None:
        if tool.IsAssembly_s(label):
            comps = TDF_LabelSequence()
            tool.GetComponents_s(label, comps)
            for i in range(1, comps.Length() + 1):
                comp = comps.Value(i)
                ref = TDF_Label()
                tool.GetReferredShape_s(comp, ref)
                # cadquery's own importer reads the same way: an assembly by its definition's name, a part by
                # its instance's name (other writers name one or the other).
                first, second = (ref, comp) if tool.IsAssembly_s(ref) else (comp, ref)
                name = _name(first) or _name(second)
                walk(ref, loc.Multiplied(tool.GetLocation_s(comp)), [*names, name])
            return
        shape: TopoDS_Shape = tool.GetShape_s(label)
        placed = shape.Moved(loc)
        solids = []
        explorer = TopExp_Explorer(placed, TopAbs_SOLID)
        while explorer.More():
            solids.append(explorer.Current())
            explorer.Next()
        leaf = names[-1] if names else ""
        for k, s in enumerate(solids, start=1):
            suffix = f"[{k}]" if len(solids) > 1 else ""
            found.append((leaf + suffix if leaf else "", "/".join(n for n in names if n) + suffix, s))

    for i in range(1, free.Length() + 1):
        top = free.Value(i)
        walk(top, TopLoc_Location(), [_name(top)])
    if not found:
        raise EstimateError(file, None, None, "the STEP file holds no solid")
    return [StepSolid(k, name or f"solid {k}", p or f"solid {k}", s) for k, (name, p, s) in enumerate(found, start=1)]


def _select(file: str, solids: Sequence[StepSolid], key: str, option: str) -> list[StepSolid]:
    """Solids named by ``key``: ``#k`` (file order), a full assembly path, or a name (all solids of that name)."""
    k = key.strip()
    if k.startswith("#"):
        try:
            n = int(k[1:])
        except ValueError:
            n = 0
        if not 1 <= n <= len(solids):
            raise EstimateError(file, f"solid '{k}'", option,
                                f"no solid number {k[1:]!r}: the file has solids #1 .. #{len(solids)}")
        return [solids[n - 1]]
    hits = [s for s in solids if s.path == k] or [s for s in solids if s.name == k]
    if not hits:
        names = sorted({s.name for s in solids} | {s.path for s in solids})
        close = difflib.get_close_matches(k, names, n=3)
        hint = f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""
        listed = ", ".join(f"#{s.index} {s.path!r}" for s in solids[:12]) + (" ..." if len(solids) > 12 else "")
        raise EstimateError(file, f"solid '{k}'", option, f"no such solid{hint} (solids: {listed})")
    return hits


def estimate_from_step(
    path: str | Path,
    *,
    default_density: float | None = None,
    densities: Mapping[str, float] | None = None,
    groups: Mapping[str, str] | None = None,
    axes: AxisMap | None = None,
    origin: npt.ArrayLike = (0.0, 0.0, 0.0),
) -> Estimate:
    """Compute an estimate from a STEP file and densities.

    Parameters
    ----------
    path : str or Path
        STEP file (lengths converted to mm by the reader).
    default_density : float, optional
        kg/m³ for every solid without its own.
    densities : mapping of str to float, optional
        Solid selector (name, assembly path or ``#k``) → kg/m³. A later, more specific selector does not
        override an earlier one: one solid chosen by two selectors is an error.
    groups : mapping of str to str, optional
        Solid selector → model group or part path: the solids given the same path form one item of that name,
        compared with that part of the model. All solids together always form the whole (``"*"``).
    axes : AxisMap, optional
        The STEP file's axes in model axes (identity by default).
    origin : (3,) float
        The STEP file's origin in model coordinates, m.

    Returns
    -------
    Estimate
        SI (kg, m, kg·m²), about each CG, tensor convention; ``doubtful = {"axes"}``.

    Raises
    ------
    EstimateError
        Unreadable file, a solid without a density, an unknown selector, a solid of no volume.

    References
    ----------
    OpenCascade ``BRepGProp`` / ``GProp_GProps`` reference documentation (volume properties, ``Add`` with a
    density); Goldstein et al. (2002) §5.3 for the combination about the common CG.
    """
    file = str(path)
    solids = read_step_solids(file)
    density: dict[int, float] = {}
    for key, value in (densities or {}).items():
        if not (value > 0.0 and np.isfinite(value)):
            raise EstimateError(file, f"solid '{key}'", "density", f"must be a positive density, got {value!r} kg/m^3")
        for s in _select(file, solids, key, "density"):
            if s.index in density:
                raise EstimateError(file, f"solid #{s.index} '{s.path}'", "density", "given twice")
            density[s.index] = value
    if default_density is not None and not (default_density > 0.0 and np.isfinite(default_density)):
        raise EstimateError(file, None, "density", f"must be a positive density, got {default_density!r} kg/m^3")
    group_of: dict[int, str] = {}
    for key, target in (groups or {}).items():
        if not target or target == WHOLE:
            raise EstimateError(file, f"solid '{key}'", "group", f"expected a model group or part path, got {target!r}")
        for s in _select(file, solids, key, "group"):
            if s.index in group_of:
                raise EstimateError(file, f"solid #{s.index} '{s.path}'", "group", "given twice")
            group_of[s.index] = target
    totals: dict[str, GProp_GProps] = {WHOLE: GProp_GProps()}
    notes = []
    for s in solids:
        rho = density.get(s.index, default_density)
        if rho is None:
            raise EstimateError(file, f"solid #{s.index} '{s.path}'", "density",
                                "no density: give a density for all solids or one for this solid")
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(s.shape, props, GPROP_EPS)
        volume_mm3 = props.Mass()
        if not volume_mm3 > 0.0:
            raise EstimateError(file, f"solid #{s.index} '{s.path}'", None,
                                f"volume {volume_mm3:g} mm^3: not a closed, outward-oriented solid")
        rho_kg_mm3 = rho * 1e-9
        totals[WHOLE].Add(props, rho_kg_mm3)
        if s.index in group_of:
            totals.setdefault(group_of[s.index], GProp_GProps()).Add(props, rho_kg_mm3)
        target = f" -> {group_of[s.index]}" if s.index in group_of else ""
        notes.append(f"#{s.index} {s.path}: {volume_mm3 * 1e-3:.6g} cm^3 x {rho:.6g} kg/m^3 = "
                     f"{volume_mm3 * rho_kg_mm3:.6g} kg{target}")
    items = []
    for name, total in totals.items():
        c = total.CentreOfMass()
        m = total.MatrixOfInertia()
        tensor = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-6  # kg·mm² → kg·m²
        items.append(EstimateItem(name, total.Mass(), np.array([c.X(), c.Y(), c.Z()]) * 1e-3,
                                  0.5 * (tensor + tensor.T), f"STEP solids -> '{name}'"))
    conv = Conventions("kg", "m", "kg*m^2", Products.NEGATIVE, ReferenceKind.CG,
                       axes or AxisMap.identity(), np.asarray(origin, dtype=float))
    return Estimate(file, "step", conv, tuple(items),
                    description=f"computed from {len(solids)} STEP solid(s) and densities with OpenCascade",
                    doubtful=frozenset({"axes"}), notes=tuple(notes))
