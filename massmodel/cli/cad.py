"""CAD commands: ``export`` (STEP, STL, GLB and a mass-properties sidecar) and ``elbowroom`` (packaging checks)."""

from __future__ import annotations

import argparse
import contextlib
import math
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from massmodel.cli import EXIT_FAIL
from massmodel.core.errors import UsageError

from .args import in_unit, output_file, output_folder
from .core import add_model_arguments, load_from_args

__all__ = ["register"]

PROGRESS_MIN_PARTS = 40  # models smaller than this finish in about a second: no progress bar


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("export", help="write STEP (AP214), STL, GLB and a mass-properties sidecar (JSON)")
    add_model_arguments(p)
    p.add_argument("--out", type=output_folder, metavar="DIR", help="output folder (default: exports/<model name>/)")
    p.add_argument("--only", action="append", default=[], metavar="PATH",
                   help="export only this group or part (repeatable), e.g. --only ballast")
    p.add_argument("--formats", default="step,stl,glb", metavar="LIST",
                   help="comma-separated geometry formats among step, stl, glb (default: all three; the sidecar is "
                        "always written)")
    p.add_argument("--stl", choices=["model", "parts", "both"], default="model",
                   help="one STL of the whole selection, one STL per part, or both (default: model)")
    p.add_argument("--chord", type=in_unit("length", "mm"), default=0.1, metavar="MM",
                   help="largest distance between STL/GLB triangles and the exact surfaces, mm (default 0.1)")
    p.add_argument("--name", metavar="STEM", help="file name stem (default: the model name, plus the selection)")
    p.set_defaults(run=_export)

    p = sub.add_parser("elbowroom",
                       help="packaging checks: interference between parts, fit in slot, clearance to neighbours")
    add_model_arguments(p)
    p.add_argument("--near", action="append", metavar="PATH",
                   help="measure the clearance of this part or group to its neighbours (repeatable; default: every "
                        "part that names a slot)")
    p.add_argument("--gap", type=in_unit("length", "mm"), metavar="MM",
                   help="required clearance of those parts to any neighbour, mm (default: the part's slot clearance)")
    p.add_argument("--reach", type=in_unit("length", "mm"), default=50.0, metavar="MM",
                   help="neighbours farther than this are not measured, mm (default 50)")
    p.add_argument("--sliver", type=float, default=1.0, metavar="MM3",
                   help="common volumes below this count as touching, not interference, mm^3 (default 1)")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the findings as JSON (SI)")
    p.set_defaults(run=_elbowroom)


@contextlib.contextmanager
def _progress(enabled: bool) -> Iterator[Any]:
    """A rich progress bar on stderr (only on a terminal) fed by ``callback(stage, done, total)``."""
    if not enabled or not sys.stderr.isatty():
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    tasks: dict[str, Any] = {}
    with Progress(TextColumn("{task.description:<12}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                  console=Console(stderr=True), transient=True) as bar:

        def callback(stage: str, done: int, total: int) -> None:
            if stage not in tasks:
                tasks[stage] = bar.add_task(stage, total=total)
            bar.update(tasks[stage], completed=done, total=total)

        yield callback


def _formats(text: str) -> frozenset[Any]:
    from massmodel.cad.export import Format

    names = [t.strip().lower() for t in text.split(",") if t.strip()]
    known = {f.value: f for f in Format}
    bad = [n for n in names if n not in known]
    if bad or not names:
        raise UsageError(f"--formats: expected a comma-separated list of {', '.join(known)}, got {text!r}")
    return frozenset(known[n] for n in names)


def _export(args: argparse.Namespace) -> int:
    from massmodel.cad.export import ExportOptions, StlLayout, export_model, slug

    if not (args.chord > 0.0 and math.isfinite(args.chord)):
        raise UsageError(f"--chord: the chord tolerance must be a positive length in mm, got {args.chord}")
    model = load_from_args(args)
    options = ExportOptions(formats=_formats(args.formats), stl_layout=StlLayout(args.stl),
                            chord_tolerance=args.chord * 1e-3, selection=tuple(args.only))
    out = args.out if args.out is not None else Path("exports") / slug(model.name)
    with _progress(len(model.components) >= PROGRESS_MIN_PARTS) as callback:
        result = export_model(model, out, options, stem=args.name, progress=callback)
    sc = result.sidecar
    print(f"massmodel export · {model.name} → {out}/")
    print(f"  {len(result.exported)} solids exported (STEP in mm, STL in mm, GLB in m; model axes)")
    files = sc["files"]
    for key in ("step", "stl", "glb"):
        if key in files:
            print(f"  {key.upper():<5} {out / files[key]}")
    if "stl_parts" in files:
        print(f"  STL   {len(files['stl_parts'])} part files under {out / (Path(next(iter(files['stl_parts'].values()))).parts[0])}/")
    print(f"  JSON  {result.files[-1]} (mass properties of exactly what was exported)")
    print(f"  exported: mass {sc['mass_kg']:.3f} kg, CG ({', '.join(f'{x * 1e3:.1f}' for x in sc['cg_m'])}) mm, "
          "model frame")
    if result.left_out:
        lost = sum(item["mass_kg"] for item in sc["left_out"])
        print(f"  left out of the geometry files (no solid): {len(result.left_out)} parts, {lost:.3f} kg: "
              + ", ".join(p for p, _ in result.left_out))
    check = sc["geometry_check"]
    diff = check["relative_difference"]
    print(f"  check: mass properties recomputed from the exported solids differ from the model by "
          f"{diff['mass']:.1e} (mass, relative), {check['cg_difference_m'] * 1e3:.1e} mm (CG, largest coordinate), "
          f"{diff['inertia']:.1e} (inertia, relative)")
    return 0


def _elbowroom(args: argparse.Namespace) -> int:
    from massmodel.cad.packaging import check_packaging
    from massmodel.report.packaging import format_packaging, packaging_dict
    from massmodel.report.summary import write_json_atomic

    for name in ("gap", "reach", "sliver"):
        value = getattr(args, name)
        if value is not None and not value >= 0.0:
            raise UsageError(f"--{name}: must not be negative, got {value}")
    model = load_from_args(args)
    with _progress(len(model.components) >= PROGRESS_MIN_PARTS) as callback:
        report = check_packaging(
            model, near=args.near, gap=None if args.gap is None else args.gap * 1e-3, reach=args.reach * 1e-3,
            sliver=args.sliver * 1e-9, progress=callback,
        )
    print(format_packaging(report))
    if args.json:
        write_json_atomic(packaging_dict(report), args.json)
        print(f"\nfindings written to {args.json}")
    return 0 if report.passed else EXIT_FAIL
