"""Export a model's geometry: a STEP AP214 assembly, binary STL, GLB, and a JSON sidecar of mass properties.

What each file holds
--------------------
The contents of each format are made in :mod:`massmodel.cad.formats`.

STEP (AP214, length unit mm stated in the file)
    An assembly named after the model, nested by group (one sub-assembly per group path), with one solid per
    component named by its path, coloured with its colour (sRGB), cut-outs applied and placed by its own location
    (the component's pose; a mirrored part has its mirror built into its geometry, see :mod:`massmodel.cad.solids`).
STL (binary, mm, model axes)
    The whole selection in one file and/or one file per component (``<stem>_parts/<path>.stl``); triangles within
    the chord tolerance of the exact surfaces (flat faces exact).
GLB (binary glTF 2.0, metres)
    One node per component named by its path, under group nodes, with its colour as the material's base colour;
    a root node rotates model axes into glTF axes (+Y up, +Z forward, +X left).
Sidecar (JSON, SI)
    Mass, CG and inertia about the CG of exactly the exported components, with units, axes and the tensor
    convention; what was left out (point masses, open display meshes) and why; per component the density a CAD
    user should assign to reproduce the model's mass from the solid; and OpenCascade's mass properties recomputed
    from the exported solids, so the file can be checked against the model.

All files are staged as temporary files in their own folders and renamed into place only when every one of them
has been written (``os.replace``): a failure leaves any earlier export untouched. The sidecar lists the SHA-256 of
every other file and is renamed in last, so a process killed during the renames leaves new files beside the old
sidecar, which :func:`verify_export` detects; the temporary files of a killed export are named
``.massmodel-partial-<pid>.*`` and removed by the next export into that folder (:func:`clean_partial_files`).
"""

from __future__ import annotations

import enum
import json
import os
import tempfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.atomic import check_not_input, current_umask
from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.massprops import MassProperties, combine_arrays
from massmodel.core.model import Component, MassSource, Model, in_group
from massmodel.core.shapes import PointMass

from .formats import (
    ExportError,
    ExportPart,
    glb_bytes,
    gltf_axes,
    placed_mesh_arrays,
    slug,
    srgb_to_linear,
    stl_bytes,
    write_step,
)

__all__ = [
    "EXPORT_FORMAT",
    "PARTIAL_PREFIX",
    "clean_partial_files",
    "verify_export",
    "Format",
    "StlLayout",
    "ExportOptions",
    "ExportResult",
    "ExportError",
    "export_model",
    "select_components",
    "slug",
    "stl_bytes",
    "srgb_to_linear",
    "gltf_axes",
]

EXPORT_FORMAT = "massmodel-export/1"
ProgressFn = Callable[[str, int, int], None]  # (stage, done, total)


class Format(enum.Enum):
    """Geometry file formats."""

    STEP = "step"
    STL = "stl"
    GLB = "glb"


class StlLayout(enum.Enum):
    """Which STL files to write: the whole selection in one file, one file per component, or both."""

    MODEL = "model"
    PARTS = "parts"
    BOTH = "both"


@dataclass(frozen=True)
class ExportOptions:
    """What to export.

    Parameters
    ----------
    formats : frozenset of Format
        Geometry files to write (the sidecar is always written).
    stl_layout : StlLayout
        Whole-selection STL, per-component STL files, or both.
    chord_tolerance : float
        Largest distance between the STL/GLB triangles and the exact surfaces, m.
    selection : tuple of str
        Group or component paths to export ('' or empty: the whole model).
    """

    formats: frozenset[Format] = frozenset(Format)
    stl_layout: StlLayout = StlLayout.MODEL
    chord_tolerance: float = 1e-4
    selection: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not (self.chord_tolerance > 0.0 and np.isfinite(self.chord_tolerance)):
            raise UsageError(f"chord tolerance must be a positive length, got {self.chord_tolerance} m")


@dataclass(frozen=True)
class ExportResult:
    """Files written and what they cover."""

    files: tuple[Path, ...]
    sidecar: dict[str, Any]
    exported: tuple[str, ...]
    left_out: tuple[tuple[str, str], ...] = field(default=())


def select_components(model: Model, selection: Iterable[str]) -> list[Component]:
    """Components in any of the selected groups or paths (all when the selection is empty).

    Raises
    ------
    KeyError
        A selected path matches no component (with close matches).
    """
    chosen = [s.strip("/") for s in selection if s.strip("/")]
    if not chosen:
        return list(model.components)
    for s in chosen:
        if not any(in_group(c.path, s) for c in model.components):
            import difflib

            names = [c.path for c in model.components] + model.groups()
            close = difflib.get_close_matches(s, names, n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFoundError(f"selection: no part or group '{s}' in model '{model.name}'{hint}")
    return model.select(chosen)


# --------------------------------------------------------------------------------------------------
# staging: every file is written beside its target and renamed in at the end
# --------------------------------------------------------------------------------------------------


PARTIAL_PREFIX = ".massmodel-partial-"  # temporary files of an export: PARTIAL_PREFIX + "<pid>." + name + ...


def clean_partial_files(folder: Path) -> list[Path]:
    """Remove the temporary files an export killed part-way left in ``folder`` (and its sub-folders).

    They are named ``.massmodel-partial-<pid>.<name>.<random>.tmp<suffix>``; those of a process still running (an
    export under way) are kept.
    """
    removed: list[Path] = []
    if not folder.is_dir():
        return removed
    for path in folder.rglob(PARTIAL_PREFIX + "*"):
        pid_text = path.name[len(PARTIAL_PREFIX):].split(".", 1)[0]
        if not pid_text.isdigit() or (int(pid_text) != os.getpid() and _running(int(pid_text))):
            continue
        try:
            path.unlink()
            removed.append(path)
        except OSError:
            pass
    return removed


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, owned by someone else
        return True
    return True


def _sha256(path: Path) -> str:
    import hashlib

    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def verify_export(sidecar_path: str | Path) -> list[str]:
    """Check that the files of an export are the ones its sidecar describes (SHA-256 in ``files.sha256``).

    The sidecar is renamed into place last, so a set interrupted part-way (killed during the renames) shows as new
    files beside an old sidecar; a reader that relies on the sidecar matching the STEP calls this first.

    Returns
    -------
    list of str
        One line per missing or different file (empty: the set is consistent).
    """
    sidecar = Path(sidecar_path)
    data = json.loads(sidecar.read_text(encoding="utf-8"))
    hashes = data.get("files", {}).get("sha256", {})
    problems = []
    if not hashes:
        problems.append(f"{sidecar}: lists no file hashes (written before sidecars carried them)")
    for name, digest in hashes.items():
        path = sidecar.parent / name
        if not path.is_file():
            problems.append(f"{path}: missing")
        elif _sha256(path) != digest:
            problems.append(f"{path}: not the file the sidecar describes (another export's, or changed since)")
    return problems


class _Stage:
    def __init__(self) -> None:
        self.pending: list[tuple[Path, Path]] = []
        self.made_dirs: list[Path] = []

    def temp_for(self, target: Path) -> Path:
        check_not_input(target)
        folder = target.parent
        missing = []
        probe = folder
        while not probe.exists():
            missing.append(probe)
            probe = probe.parent
        try:
            folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=f"{PARTIAL_PREFIX}{os.getpid()}.{target.stem}.",
                                       suffix=f".tmp{target.suffix}", dir=folder)
        except OSError as exc:
            raise ExportError(f"cannot write to the folder '{folder}': {exc.strerror or exc}") from None
        os.close(fd)
        os.chmod(tmp, 0o666 & ~current_umask())  # mkstemp makes 0600 files; give the export the user's usual mode
        self.made_dirs.extend(reversed(missing))
        path = Path(tmp)
        self.pending.append((path, target))
        return path

    def write_bytes(self, target: Path, data: bytes) -> None:
        tmp = self.temp_for(target)
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise ExportError(f"cannot write '{target}': {exc.strerror or exc}") from None

    def hashes(self, root: Path) -> dict[str, str]:
        """SHA-256 of every staged file, by its path relative to ``root`` (the sidecar's manifest)."""
        return {target.relative_to(root).as_posix(): _sha256(tmp) for tmp, target in self.pending}

    def commit(self) -> list[Path]:
        """Rename the staged files into place in the order staged (the sidecar, staged last, goes in last)."""
        for tmp, target in self.pending:
            os.replace(tmp, target)
        done = [t for _, t in self.pending]
        self.pending = []
        return done

    def abort(self) -> None:
        for tmp, _ in self.pending:
            tmp.unlink(missing_ok=True)
        self.pending = []
        for d in reversed(self.made_dirs):
            try:
                d.rmdir()
            except OSError:
                pass


# --------------------------------------------------------------------------------------------------
# the export
# --------------------------------------------------------------------------------------------------


def _no_solid_reason(c: Component) -> str:
    if isinstance(c.shape, PointMass):
        return "point mass: no solid"
    return f"open mesh, display only ({getattr(c.shape, 'problem', '')})"


def export_model(
    model: Model,
    out_dir: str | Path,
    options: ExportOptions | None = None,
    *,
    stem: str | None = None,
    progress: ProgressFn | None = None,
) -> ExportResult:
    """Write the selected components to STEP, STL and GLB files and the mass-properties sidecar.

    Parameters
    ----------
    model : Model
    out_dir : str or Path
        Folder for the files (created when missing).
    options : ExportOptions, optional
    stem : str, optional
        File name stem (default: the model name's slug, plus the selection's when one is given).
    progress : callable, optional
        Called as ``progress(stage, done, total)`` while working.

    Returns
    -------
    ExportResult

    Raises
    ------
    KeyError
        A selected path matches nothing.
    ValueError
        The selection holds no solid, or ``stem`` is not a plain file name (empty, dots only, or with a folder).
    ExportError
        A file cannot be written; earlier files are left as they were.
    """
    opts = options or ExportOptions()
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise ExportError(f"the output path '{out}' exists and is not a folder")
    selected = select_components(model, opts.selection)
    if stem is None:
        stem = slug(model.name) + ("_" + "+".join(slug(s) for s in opts.selection) if opts.selection else "")
    elif not stem.strip() or stem.strip(".") == "" or any(sep in stem for sep in ("/", "\\", os.sep)):
        raise UsageError(f"file name stem (--name) {stem!r}: expected a plain file name, without folders "
                         "(use --out for the folder)")
    tick = progress or (lambda stage, done, total: None)
    from .solids import component_local_mesh, component_local_solid, has_solid

    with_solid = [c for c in selected if has_solid(c)]
    left_out = tuple((c.path, _no_solid_reason(c)) for c in selected if not has_solid(c))
    if not with_solid:
        raise UsageError(f"selection of model '{model.name}' holds no solid to export "
                         f"({len(left_out)} point masses or open meshes)")
    parts: list[ExportPart] = []
    cache: dict[Any, Any] = {}
    used: set[int] = set()
    import cadquery as cq  # MERGE ADAPTER: solids are OCP shapes now; this module and formats.py still take cadquery's

    for k, c in enumerate(with_solid):
        shape, location = component_local_solid(c, cache)
        solid = cq.Shape.cast(shape)  # MERGE ADAPTER (see above)
        if id(shape) in used:  # a patterned copy: its own solid, so that STEP names it by its own path
            solid = _copy_shape(solid)
        used.add(id(shape))
        parts.append(ExportPart(c, solid, location))
        tick("solids", k + 1, len(with_solid))
    if Format.STL in opts.formats or Format.GLB in opts.formats:
        for k, p in enumerate(parts):
            p.mesh = component_local_mesh(p.component, opts.chord_tolerance, cache)
            tick("meshes", k + 1, len(parts))

    clean_partial_files(out)  # what an export killed part-way left here
    stage = _Stage()
    files: dict[str, Any] = {}
    try:
        if Format.STEP in opts.formats:
            target = out / f"{stem}.step"
            write_step(model, parts, stage.temp_for(target), target.name)
            files["step"] = target.name
            tick("STEP", 1, 1)
        if Format.STL in opts.formats:
            header = f"massmodel | {model.name} | mm | model axes"
            if opts.stl_layout in (StlLayout.MODEL, StlLayout.BOTH):
                v, f = placed_mesh_arrays(parts)
                target = out / f"{stem}.stl"
                stage.write_bytes(target, stl_bytes(v * 1e3, f, header))
                files["stl"] = target.name
            if opts.stl_layout in (StlLayout.PARTS, StlLayout.BOTH):
                files["stl_parts"] = {}
                for p in parts:
                    v, f = placed_mesh_arrays([p])
                    target = out / f"{stem}_parts" / f"{p.component.path}.stl"
                    stage.write_bytes(target, stl_bytes(v * 1e3, f, f"massmodel | {p.component.path} | mm"))
                    files["stl_parts"][p.component.path] = str(target.relative_to(out))
            tick("STL", 1, 1)
        if Format.GLB in opts.formats:
            target = out / f"{stem}.glb"
            stage.write_bytes(target, glb_bytes(model, parts))
            files["glb"] = target.name
            tick("GLB", 1, 1)
        files["sha256"] = stage.hashes(out)  # the manifest: the sidecar, renamed in last, vouches for these
        sidecar = _sidecar(model, selected, parts, left_out, opts, files)
        target = out / f"{stem}.massprops.json"
        stage.write_bytes(target, (json.dumps(sidecar, indent=2, allow_nan=False) + "\n").encode("utf-8"))
        written = stage.commit()
    except BaseException:
        stage.abort()
        raise
    return ExportResult(tuple(written), sidecar, tuple(p.component.path for p in parts), left_out)


def _copy_shape(solid: Any) -> Any:
    import cadquery as cq
    from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy

    return cq.Shape.cast(BRepBuilderAPI_Copy(solid.wrapped, True, False).Shape())


def _props_dict(mp: MassProperties) -> dict[str, Any]:
    return {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}


def _combine(props: Sequence[MassProperties]) -> MassProperties:
    if not props:
        return MassProperties.zero()
    m = np.array([p.mass for p in props])
    c = np.array([p.center for p in props])
    t = np.array([p.inertia for p in props])
    return MassProperties(*combine_arrays(m, c, t))


def _sidecar(
    model: Model,
    selected: Sequence[Component],
    parts: Sequence[ExportPart],
    left_out: Sequence[tuple[str, str]],
    opts: ExportOptions,
    files: dict[str, Any],
) -> dict[str, Any]:
    from .solids import MM_PER_M, volume_props

    rows = []
    geometry_props = []
    model_props_of_geometry = []
    for p in parts:
        c = p.component
        props = volume_props(p.solid.wrapped)
        vol_m3 = props.Mass() * 1e-9
        density = c.implied_density
        carries = c.source is not MassSource.MEASURED
        row: dict[str, Any] = {
            "path": c.path,
            "step_name": c.path,
            **_props_dict(c.props),
            "mass_source": c.source.value,
            "geometry_carries_mass": carries,
            "solid_volume_m3": vol_m3,
            "density_kg_m3": density,
            "colour": c.colour,
        }
        if "stl_parts" in files:
            row["stl_file"] = files["stl_parts"][c.path]
        rows.append(row)
        if carries and density:
            r = p.location.linear
            cm = props.CentreOfMass()
            m = props.MatrixOfInertia()
            local_c = np.array([cm.X(), cm.Y(), cm.Z()]) / MM_PER_M
            local_i = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15 * density
            geometry_props.append(MassProperties(vol_m3 * density, p.location.apply(local_c), r @ local_i @ r.T))
            model_props_of_geometry.append(c.props)
    exported = _combine([p.component.props for p in parts])
    whole = _combine([c.props for c in selected])
    geo = _combine(geometry_props)
    ref = _combine(model_props_of_geometry)
    scale_i = max(float(np.max(np.abs(ref.inertia))), 1e-300)
    check = {
        "covers": f"{len(geometry_props)} of {len(parts)} exported components (those whose mass comes from a "
        "material, a density or a mass; measured ones are shown only)",
        "from_geometry": _props_dict(geo),
        "model": _props_dict(ref),
        "relative_difference": {
            "mass": abs(geo.mass - ref.mass) / ref.mass if ref.mass else 0.0,
            "cg_m": float(np.max(np.abs(geo.center - ref.center))),
            "inertia": float(np.max(np.abs(geo.inertia - ref.inertia))) / scale_i,
        },
        "method": "OpenCascade volume integrals of each exported solid (STEP geometry) times its density_kg_m3",
    }
    axes = gltf_axes(model)
    vehicle = None
    if model.vehicle is not None:
        vehicle = {"forward": model.vehicle.forward.tolist(), "left": model.vehicle.left.tolist(),
                   "up": model.vehicle.up.tolist()}
    return {
        "format": EXPORT_FORMAT,
        "model": model.name,
        "source": model.source,
        "selection": list(opts.selection) or ["(whole model)"],
        "files": files,
        "conventions": {
            "units": "sidecar SI: kg, m, kg*m^2 (unit in every key); STEP mm (stated in the file); STL mm (STL has no "
            "unit field); GLB m (glTF 2.0)",
            "axes": "model axes of the model file; every position is in model coordinates",
            "vehicle_directions_in_model_axes": vehicle,
            "inertia": "tensor about the CG, axes parallel to the model axes; off-diagonal I_xy = -integral(x*y dm) "
            "(tensor / negative product convention)",
            "placement": "STEP and GLB place each component by its own location (rotation and translation of its part "
            "frame); a mirrored component has the mirror built into its geometry",
            "glb_root_rotation": {"node": slug(model.name), "matrix": axes.tolist(),
                                  "meaning": "rows: glTF +X (left), +Y (up), +Z (forward) in model axes"},
            "tessellation": f"STL and GLB triangles lie within {opts.chord_tolerance * 1e3:g} mm of the exact surfaces "
            "(flat faces exact): a closed part's mesh volume differs from the exact volume by at most its surface "
            "area times that tolerance",
        },
        "chord_tolerance_mm": opts.chord_tolerance * 1e3,
        "covers": {
            "components": len(parts),
            "note": "the mass properties below are the model's, for exactly the components in the geometry files",
        },
        **_props_dict(exported),
        "left_out": [{"path": p, "reason": r, "mass_kg": model.component(p).props.mass} for p, r in left_out],
        "selection_total_with_left_out": {"components": len(selected), **_props_dict(whole)},
        "geometry_check": check,
        "components": rows,
    }
