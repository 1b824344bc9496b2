"""The ``crossweigh`` command: the model against a CAD estimate, with a diagnosis of convention mix-ups.

Exit 0 when the estimate as declared agrees within the tolerances, 1 when it does not (even when the diagnosis
explains why: the file is wrong as it stands), 2 for bad input.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.cli import EXIT_FAIL
from massmodel.core.errors import UsageError

from .args import density_or_material, output_file, point, quantity, share
from .core import add_model_arguments, load_from_args

__all__ = ["register"]

_STEP_SUFFIXES = (".step", ".stp")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "crossweigh",
        help="compare mass, CG and inertia tensor with a CAD estimate (JSON/CSV, or STEP + density); "
        "diagnose convention mix-ups",
        description="Compare the model (or one group) with a CAD estimate and, when they disagree, say which "
        "convention mix-up (product sign, units, reference point, axes) explains it. Exit 1 when the estimate as "
        "declared fails the tolerances.",
    )
    add_model_arguments(p)
    p.add_argument("estimate", type=Path, help="estimate file: .json or .csv (docs/compare.md), or .step/.stp")
    p.add_argument("--group", default="", metavar="PATH", help="compare this group or part of the model "
                   "(default: the whole model) with the estimate's whole ('*')")
    s = p.add_argument_group("STEP estimates (computed exactly with OpenCascade)")
    s.add_argument("--density", metavar="D", type=density_or_material, help="density of every solid: '7850 kg/m^3' or a material key")
    s.add_argument("--solid-density", action="append", default=[], metavar="SOLID=D", type=_solid_density,
                   help="density of one solid, chosen by name, assembly path or '#k' (file order); repeatable")
    s.add_argument("--solid-group", action="append", default=[], metavar="SOLID=PATH",
                   help="compare this solid (or several with the same PATH) with that model group or part")
    s.add_argument("--step-axes", metavar="AXES",
                   help="the STEP file's axes as model axes, e.g. 'x=-x, y=-y, z=+z' (default: the model's)")
    s.add_argument("--step-origin", metavar="X,Y,Z UNIT", type=_step_origin,
                   help="the STEP file's origin in model coordinates, e.g. '0, 0, -265 mm' (default: the model's)")
    t = p.add_argument_group("tolerances (defaults: common practice, no source)")
    t.add_argument("--mass-tol", default="1 %", metavar="F", type=share, help="mass difference (default 1 %%)")
    t.add_argument("--cg-tol", default="5 mm", metavar="L", type=quantity("length", "5 mm"), help="total CG offset (default 5 mm)")
    t.add_argument("--term-tol", default="2 %", metavar="F", type=share,
                   help="each tensor term, relative to the largest principal moment (default 2 %%)")
    t.add_argument("--moment-tol", default="2 %", metavar="F", type=share, help="each principal moment (default 2 %%)")
    t.add_argument("--axis-tol", default="3 deg", metavar="A", type=quantity("angle", "3 deg"), help="angle between principal axes (default 3 deg)")
    t.add_argument("--degenerate-gap", default="5 %", metavar="F", type=share,
                   help="moments closer than this share of the largest: their axes are not compared (default 5 %%)")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the comparison and diagnosis (SI)")
    p.add_argument("--units", choices=["si", "mm"], default="si",
                   help="terminal inertia units: si (kg*m^2) or mm (kg*mm^2); CG offsets are always in mm")
    p.add_argument("--details", action="store_true",
                   help="show every item's tensor terms and principal axes (default: the first item's)")
    p.add_argument("--no-pairs", action="store_true", help="try single reinterpretations only")
    p.set_defaults(run=_run)


# --- option parsing (the edge: text → SI; most of it in the argparse types of massmodel.cli.args) --------------

def _point(option: str, text: str) -> np.ndarray:
    """'0, 0, -265 mm' (one unit for all), '0 mm, 0 mm, -0.265 m' or '(0, 0, -265) mm' → (3,) m."""
    try:
        return point(text)
    except argparse.ArgumentTypeError as exc:
        raise UsageError(f"{option}: expected 'x, y, z unit' such as '0, 0, -265 mm', got {text!r} ({exc})") from None


def _step_origin(text: str) -> np.ndarray:
    try:
        return _point("--step-origin", text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc).removeprefix("--step-origin: ")) from None


def _density(option: str, value: float | str, materials: Any) -> float:
    """A density from :func:`massmodel.cli.args.density_or_material`: a number (kg/m³) or a material key."""
    if not isinstance(value, str):
        return value
    if value in materials:
        return float(materials[value].density)
    raise UsageError(f"{option}: no material '{value}' (give a density such as '7850 kg/m^3' or a material key: "
                     "see 'massmodel materials')")


def _pairs(option: str, texts: list[str]) -> dict[str, str]:
    out: dict[str, str] = {}
    for text in texts:
        key, sep, value = text.partition("=")
        if not sep or not key.strip() or not value.strip():
            raise UsageError(f"{option}: expected SOLID=VALUE, got {text!r}")
        if key.strip() in out:
            raise UsageError(f"{option}: solid '{key.strip()}' given twice")
        out[key.strip()] = value.strip()
    return out


def _solid_density(text: str) -> tuple[str, float | str]:
    """``--solid-density SOLID=D``: the solid and its density (or material key)."""
    key, sep, value = text.partition("=")
    if not sep or not key.strip() or not value.strip():
        raise argparse.ArgumentTypeError(f"expected SOLID=DENSITY such as 'bracket=2700 kg/m^3', got {text!r}")
    return key.strip(), density_or_material(value)


def _tolerances(args: argparse.Namespace) -> Any:
    from massmodel.compare.check import Tolerances

    return Tolerances(mass=args.mass_tol, cg=args.cg_tol, term=args.term_tol, moment=args.moment_tol,
                      axis=args.axis_tol, degenerate=args.degenerate_gap)


def _load_estimate(args: argparse.Namespace, model: Any) -> Any:
    path: Path = args.estimate
    if path.suffix.lower() in _STEP_SUFFIXES:
        from massmodel.compare.estimate import AxisMap
        from massmodel.compare.estimate_step import estimate_from_step
        from massmodel.core.materials import builtin_materials

        materials = {**builtin_materials(), **dict(model.materials)}
        default = _density("--density", args.density, materials) if args.density is not None else None
        per_solid: dict[str, float] = {}
        for k, v in args.solid_density:
            if k in per_solid:
                raise UsageError(f"--solid-density: solid '{k}' given twice")
            per_solid[k] = _density(f"--solid-density {k}", v, materials)
        try:
            axes = AxisMap.parse(args.step_axes or "x=+x, y=+y, z=+z", model.vehicle)
        except ValueError as exc:
            raise UsageError(f"--step-axes: {exc}") from None
        return estimate_from_step(path, default_density=default, densities=per_solid,
                                  groups=_pairs("--solid-group", args.solid_group), axes=axes,
                                  origin=args.step_origin if args.step_origin is not None else np.zeros(3))
    used = [o for o, v in (("--density", args.density is not None), ("--solid-density", args.solid_density),
                           ("--solid-group", args.solid_group), ("--step-axes", args.step_axes),
                           ("--step-origin", args.step_origin is not None)) if v]
    if used:
        raise UsageError(f"{used[0]} applies to STEP estimates only; a JSON or CSV estimate declares its own numbers")
    from massmodel.compare.estimate import load_estimate

    return load_estimate(path, model.vehicle)


def _run(args: argparse.Namespace) -> int:
    from massmodel.compare.crosscheck import check_estimate
    from massmodel.report.compare import format_check
    from massmodel.report.summary import write_json_atomic

    tol = _tolerances(args)
    model = load_from_args(args)
    estimate = _load_estimate(args, model)
    result = check_estimate(model, estimate, args.group, tol, pairs=not args.no_pairs)
    print(format_check(result, inertia_mm=args.units == "mm", details=args.details))
    if args.json:
        write_json_atomic(result.to_dict(), args.json)
        print(f"\ncomparison written to {args.json}")
    return 0 if result.passed else EXIT_FAIL
