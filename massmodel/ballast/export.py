"""Writing ballast results: the ballasted model file, STEP and STL of the blocks. Every file is written to a
temporary file in the same folder and renamed into place, so no output is ever half-written.

The ballasted model is a NEW model file that ``extends`` the input model (the input is never touched), removes the
blocks it replaces, adds the plan's own slots and the sized blocks, and repeats any ``--set`` overrides as
parameters. A part's pose in a model file is given in the frame of its innermost declared group, so that frame is
measured with the loader itself: a probe file extends the model with a point part in each group and is loaded.

STEP files are in millimetres (OpenCascade writes the unit into the file); STL files carry no unit and are in
millimetres too.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import cautions
from massmodel.core.atomic import write_atomic, write_text_atomic
from massmodel.core.errors import UsageError
from massmodel.core.frames import Pose
from massmodel.core.materials import Material
from massmodel.core.model import Model, group_of

from .parts import BALLAST_COLOUR, part_table, toml_table, toml_value
from .sizing import BlockSizing, PlacedPiece

__all__ = ["write_atomic", "write_text_atomic", "group_frames", "ballasted_model_text", "write_step", "write_stl", "Block",
           "blocks_of_sizing"]


class Block:
    """A named piece of ballast for export: path, material, slot, geometry and pose."""

    __slots__ = ("path", "material", "slot", "piece")

    def __init__(self, path: str, material: Material, slot: str, piece: PlacedPiece) -> None:
        self.path = path
        self.material = material
        self.slot = slot
        self.piece = piece


def blocks_of_sizing(sizing: BlockSizing, path: str) -> list[Block]:
    """The pieces of a sizing named like the placement names them (``path`` or ``path/plate_N``)."""
    pieces = sizing.pieces
    names = [path] if len(pieces) == 1 else [f"{path}/plate_{j + 1}" for j in range(len(pieces))]
    return [Block(n, sizing.spec.material, sizing.envelope.name, p) for n, p in zip(names, pieces, strict=True)]


def group_frames(model_path: str | Path, paths: Sequence[str], overrides: Mapping[str, str] | None = None
                 ) -> dict[str, Pose]:
    """The model-frame pose of the frame a new part at each path would be placed in (its declared groups).

    Measured by loading a probe file that extends the model with a point part beside each path.

    Raises
    ------
    ValueError
        When a path lies in a mirrored group (the loader would add a mirrored copy of the part).
    """
    from massmodel.modelfile.loader import load_model, loads_model

    parents = sorted({group_of(p) for p in paths if group_of(p)})
    out = {p: Pose.identity() for p in paths}
    if not parents:
        return out
    base = Path(model_path).resolve()
    lines = ["[model]", 'name = "frame probe"', f"extends = {toml_value(str(base))}"]
    probes = {}
    for k, g in enumerate(parents):
        probe = f"{g}/_frame_probe_{k + 1}"
        probes[g] = probe
        lines += ["[[part]]", f"path = {toml_value(probe)}", 'shape = "point"', 'mass = "1 kg"',
                  'maturity = "estimated"']
    probe_model = loads_model("\n".join(lines), label=f"frame probe of {model_path}", base_dir=base.parent,
                              overrides=overrides)
    plain = load_model(base, overrides=overrides)
    if len(probe_model.components) != len(plain.components) + len(parents):
        raise UsageError(f"{model_path}: a new ballast part under {', '.join(parents)} would lie in a mirrored "
                         "group and be copied to the other side; give the candidate a path outside it")
    frames = {g: probe_model.component(p).pose for g, p in probes.items()}
    for p in paths:
        if group_of(p):
            out[p] = frames[group_of(p)]
    return out


def _slot_table(env: Any) -> dict[str, Any]:
    from .parts import _pose_fields

    table: dict[str, Any] = {"name": env.name, "shape": "box", "size": [f"{s * 1e3:.9g} mm" for s in env.size]}
    table.update(_pose_fields(env.pose))
    table["clearance"] = f"{env.clearance * 1e3:.9g} mm"
    table["note"] = "ballast slot defined by the ballast plan"
    return table


def ballasted_model_text(
    *,
    model: Model,
    model_path: str | Path,
    out_path: str | Path,
    name: str,
    remove: Sequence[str],
    blocks: Sequence[Block],
    new_slots: Sequence[Any] = (),
    overrides: Mapping[str, str] | None = None,
    header: Sequence[str] = (),
) -> str:
    """Text of a model file that extends ``model_path`` with the ballast blocks.

    Parameters
    ----------
    model : Model
        The input model (for its [units] check and the rule names in the header).
    model_path, out_path : path
        The input model file and the file to be written (``extends`` is relative to the latter's folder).
    name : str
        The new model's name.
    remove : sequence of str
        Base parts the blocks replace.
    blocks : sequence of Block
    new_slots : sequence of Envelope
        Slots defined by the plan, written as ``[[slot]]`` tables.
    overrides : mapping
        ``--set`` overrides used for the placement, repeated as parameters.
    header : sequence of str
        Comment lines (without '#').
    """
    model_path = Path(model_path)
    out_dir = Path(out_path).resolve().parent
    rel = os.path.relpath(model_path.resolve(), out_dir)
    frames = group_frames(model_path, [b.path for b in blocks], overrides)
    lines = [f"# {h}" if h else "#" for h in "\n".join(header).splitlines()]  # a name may span lines
    lines += ["#", "# Cautions:"] + [f"#   {c}" for c in cautions.for_report("ballast", "machining", "handling")]
    lines += ["", "[model]", f"name = {toml_value(name)}", f"extends = {toml_value(rel.replace(os.sep, '/'))}"]
    if remove:
        lines.append(f"remove = {toml_value(list(remove))}")
    if overrides:
        lines += ["", "[parameters]  # the overrides the ballast was placed with"]
        lines += [f"{k} = {toml_value(v)}" for k, v in overrides.items()]
    for env in new_slots:
        lines += ["", toml_table("slot", _slot_table(env))]
    for b in blocks:
        lo, hi = b.material.band
        note = (f"{b.material.key} ({b.material.density:.0f} kg/m^3 nominal, band {lo:.0f}..{hi:.0f} kg/m^3); "
                f"sized by massmodel; {b.piece.geometry.describe()}")
        lines += ["", toml_table("part", part_table(b.piece, b.material, b.path, b.slot, frames[b.path], note))]
    return "\n".join(lines) + "\n"


def write_step(blocks: Sequence[Block], path: str | Path, name: str = "ballast") -> Path:
    """STEP assembly (mm, model frame) of the blocks, one named, coloured solid each (OpenCascade, no cadquery)."""
    from massmodel.cad.occ_files import write_step_solids
    from massmodel.cad.solids import place_solid

    red, green, blue = (int(BALLAST_COLOUR[i:i + 2], 16) / 255.0 for i in (1, 3, 5))  # sRGB
    solids = [(b.path.replace("/", "."), place_solid(b.piece.geometry.to_solid(), b.piece.pose), (red, green, blue))
              for b in blocks]
    description = f"massmodel ballast blocks '{name}': one solid per block, lengths in mm, model axes"
    return write_atomic(path, lambda p: write_step_solids(p, solids, name, file_name=Path(path).name,
                                                          description=description), suffix=".step")


def write_stl(blocks: Sequence[Block], path: str | Path, tolerance_mm: float = 0.01) -> Path:
    """One STL (mm, model frame) of the blocks together; flat faces are exact, holes within ``tolerance_mm``
    (absolute chord tolerance)."""
    from massmodel.cad.occ_files import write_stl_solids
    from massmodel.cad.solids import place_solid

    solids = [place_solid(b.piece.geometry.to_solid(), b.piece.pose) for b in blocks]
    return write_atomic(path, lambda p: write_stl_solids(p, solids, tolerance_mm, 0.05), suffix=".stl")


def check_written_model(path: str | Path, expected: Model, text: str | None = None) -> float:
    """Reload a written model and compare its total mass properties; returns the largest relative difference.

    With ``text`` the model is loaded from that text as if it were written at ``path`` (check before writing).
    """
    from massmodel.modelfile.loader import load_model, loads_model

    if text is None:
        got = load_model(path).mass_properties()
    else:
        got = loads_model(text, label=str(path), base_dir=Path(path).resolve().parent).mass_properties()
    return _difference(got, expected.mass_properties())


def _difference(got: Any, want: Any) -> float:
    """Largest relative difference of two mass properties (mass; CG in m over 1 m; inertia over its largest)."""
    scale_i = float(np.max(np.abs(want.inertia)))
    return max(abs(got.mass - want.mass) / want.mass, float(np.max(np.abs(got.center - want.center))) / 1.0,
               float(np.max(np.abs(got.inertia - want.inertia))) / scale_i)


def check_written_cases(path: str | Path, expected: Mapping[str, Model], text: str,
                        overrides: Mapping[str, str] | None = None) -> tuple[float, str]:
    """Load a ballasted model's text (as if written at ``path``) in each load case of ``expected`` and compare its
    total mass properties with the expected ballasted model of that case.

    Returns
    -------
    (float, str)
        The largest relative difference and the case it was found in.
    """
    from massmodel.modelfile.loader import build_model, source_from_text

    source = source_from_text(text, label=str(path), base_dir=Path(path).resolve().parent)
    worst, where = 0.0, ""
    for case, model in expected.items():
        got = build_model(source, overrides, case).mass_properties()
        d = _difference(got, model.mass_properties())
        if d >= worst:
            worst, where = d, case
    return worst, where


__all__ += ["check_written_model", "check_written_cases"]
