"""Core commands: ``report``, ``check`` and ``materials``."""

from __future__ import annotations

import argparse
import re
import sys
from collections.abc import Mapping
from typing import Any

from massmodel.cli import EXIT_FAIL
from massmodel.core.errors import UsageError

from .args import output_file, point_or_cg
from .model_args import add_model_arguments, load_cases_from_args, load_from_args

__all__ = ["register", "add_model_arguments", "load_from_args", "load_cases_from_args", "parse_point", "parse_axes"]


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("report", help="mass, CG, inertia, axle and corner loads, rule checks")
    add_model_arguments(p)
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the machine-readable report (SI)")
    p.add_argument("--units", choices=["si", "mm"], default="si", help="terminal units: si (m, kg*m^2) or mm (mm, kg*mm^2)")
    p.add_argument("--brief", action="store_true", help="leave the per-component table out of the terminal text")
    p.add_argument("--strict", action="store_true", help="exit 1 when a rule check fails")
    p.add_argument("--all-cases", action="store_true",
                   help="the base and every load case side by side (mass, CG, axle and corner loads, inertia, rules)")
    p.add_argument(
        "--inertia-about", dest="inertia_about", action="append", default=[], metavar="POINT", type=point_or_cg,
        help="also give the tensor of the whole model about POINT, model coordinates with units, e.g. "
        "'0, 0, -265 mm' or '0 mm, 0 mm, -0.265 m' (model parameters may be used: '0, 0, ground_z'), or 'cg' "
        "(repeatable)",
    )
    p.add_argument(
        "--inertia-axes", dest="inertia_axes", default="model", metavar="AXES",
        help="axes of the --inertia-about tensors: 'model' (default), 'vehicle' (forward, left, up) or a rotation "
        "of the model axes such as 'extrinsic y: 10 deg' or 'intrinsic zyx: 30 deg, 0, 5 deg'",
    )
    from massmodel.cli.uncertainty import add_report_options

    add_report_options(p)
    p.set_defaults(run=_report)

    p = sub.add_parser("check", help="validate a model file and its rules without a report")
    add_model_arguments(p)
    p.set_defaults(run=_check)

    p = sub.add_parser("materials", help="list the built-in materials library")
    p.set_defaults(run=_materials)


def parse_point(text: str, env: Mapping[str, Any]) -> Any:
    """A point given on the command line (:func:`massmodel.cli.args.point_or_cg`), evaluated with the model's
    parameters ``env``: (3,) m, or None for ``"cg"``.

    Raises
    ------
    ValueError
        One line naming ``--inertia-about`` and the coordinate.
    """
    try:
        return point_or_cg(text).resolve(env)
    except (ValueError, argparse.ArgumentTypeError) as exc:
        raise UsageError(f"--inertia-about {exc}") from None


def parse_axes(text: str, vehicle: Any, env: Mapping[str, Any]) -> Any:
    """Axes named on the command line, as (3, 3) rows of unit vectors in model axes (None for the model axes).

    ``"vehicle"``: forward, left, up of the model's vehicle. ``"extrinsic SEQ: a1, a2, ..."`` or
    ``"intrinsic SEQ: ..."``: the model axes rotated as a part's ``rotate`` table would rotate them (see
    :mod:`massmodel.core.frames`); the rows are the rotated axes, i.e. the columns of the rotation matrix.
    """

    from massmodel.core.expr import ExpressionError, evaluate
    from massmodel.core.frames import RotationKind, rotation_from_sequence
    from massmodel.core.units import ANGLE, DIMENSIONLESS, UnitError

    spec = text.strip()
    if spec.lower() == "model":
        return None
    if spec.lower() == "vehicle":
        if vehicle is None:
            raise UsageError("--inertia-axes vehicle: the model has no [vehicle] section")
        return vehicle.basis
    m = re.fullmatch(r"(extrinsic|intrinsic)\s+([xyz]{1,3})\s*:(.*)", spec)
    if not m:
        raise UsageError(f"--inertia-axes {text!r}: expected 'model', 'vehicle' or a rotation such as "
                         "'extrinsic y: 10 deg'")
    angles = []
    for part in m.group(3).split(","):
        try:
            q = evaluate(part.strip(), env)
        except (ExpressionError, UnitError) as exc:
            raise UsageError(f"--inertia-axes {text!r}: {exc.args[0].splitlines()[0]}") from None
        if q.dim == DIMENSIONLESS and q.value == 0.0:
            angles.append(0.0)
        elif q.dim == ANGLE:
            angles.append(q.value)
        else:
            raise UsageError(f"--inertia-axes {text!r}: angles need a unit, e.g. '10 deg'")
    if len(angles) != len(m.group(2)):
        raise UsageError(f"--inertia-axes {text!r}: expected {len(m.group(2))} angles for '{m.group(2)}'")
    return rotation_from_sequence(RotationKind(m.group(1)), m.group(2), tuple(angles)).T.copy()


def _report(args: argparse.Namespace) -> int:
    from massmodel.report.summary import (
        DisplayUnits,
        InertiaRequest,
        build_report,
        write_json_atomic,
        write_report_text,
    )

    if args.all_cases:
        return _report_cases(args)
    model = load_from_args(args)
    axes = parse_axes(args.inertia_axes, model.vehicle, model.parameters)
    requests = [
        InertiaRequest(_resolve(p, model.parameters), axes, label=p.text, axes_label=args.inertia_axes)
        for p in args.inertia_about
    ]
    # the components are streamed to the terminal and to the JSON file, never held whole (a model of 10^5 parts)
    report = build_report(model, requests, stream=True)
    from massmodel.cli.uncertainty import add_report_uncertainty

    sure = add_report_uncertainty(report, model, args)
    write_report_text(report, sys.stdout, DisplayUnits(args.units), components=not args.brief)
    if args.json:
        write_json_atomic(report, args.json)
        print(f"\nreport written to {args.json}")
    return EXIT_FAIL if args.strict and not (report["rules_passed"] and sure) else 0


def _resolve(p: Any, env: Mapping[str, Any]) -> Any:
    try:
        return p.resolve(env)
    except ValueError as exc:
        raise UsageError(f"--inertia-about: {exc}") from None


def _report_cases(args: argparse.Namespace) -> int:
    from massmodel.report.cases import build_case_table, format_case_table
    from massmodel.report.summary import DisplayUnits, write_json_atomic

    if args.case is not None:
        raise UsageError("give either --case NAME or --all-cases, not both")
    data = build_case_table(load_cases_from_args(args))
    print(format_case_table(data, DisplayUnits(args.units)))
    if args.json:
        write_json_atomic(data, args.json)
        print(f"\nload cases written to {args.json}")
    return EXIT_FAIL if args.strict and not data["rules_passed"] else 0


def _check(args: argparse.Namespace) -> int:
    from massmodel.report.rules import rule_limit_text
    from massmodel.vehicle.balance import check_rules_in_cases

    models = load_cases_from_args(args)
    model = next(iter(models.values()))
    results = check_rules_in_cases(models)
    failed = [(case, r) for case, r in results if not r.passed]
    cases = f" · {len(models)} load cases" if len(models) > 1 else ""
    print(f"{args.model}: valid · {len(model.components)} parts · {len(model.groups())} groups · "
          f"{len(model.slots)} slots{cases} · {len(results)} rule checks ({len(failed)} failing)")
    for case, r in failed:
        where = f" [{case}]" if len(models) > 1 else ""
        print(f"  FAIL{where} {r.name}: {r.value:.4g} {r.unit}, limit {rule_limit_text(r)}, margin {r.margin:+.4g} {r.unit}")
    return 0


def _materials(args: argparse.Namespace) -> int:
    from massmodel.core.materials import builtin_materials
    from massmodel.report.summary import table

    rows = []
    for key, m in builtin_materials().items():
        lo, hi = m.band
        band = f"{lo:.0f} .. {hi:.0f}" if lo != hi else "-"
        rows.append([key, f"{m.density:.0f}", band, m.flag, m.source])
    print(table(["material", "kg/m^3", "band kg/m^3", "flag", "source"], rows, "lrrll"))
    return 0
