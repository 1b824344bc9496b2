"""Core commands: ``report``, ``check`` and ``materials``."""

from __future__ import annotations

import argparse
from pathlib import Path

from .cli import EXIT_FAIL

__all__ = ["register", "add_model_arguments", "load_from_args", "load_cases_from_args"]


def add_model_arguments(p: argparse.ArgumentParser) -> None:
    """The model file argument and ``--set name=value`` overrides, shared by every command that reads a model."""
    p.add_argument("model", type=Path, help="model file (TOML)")
    p.add_argument(
        "--set", dest="overrides", action="append", default=[], metavar="NAME=VALUE",
        help="override a parameter without editing the file, e.g. --set fuel_mass='10 kg' (repeatable)",
    )
    p.add_argument("--case", metavar="NAME", help="evaluate the model in one of its load cases ([[case]] tables)")


def load_from_args(args: argparse.Namespace):  # -> Model
    """Load the model named on the command line with its overrides."""
    from .expr import parse_override
    from .modelfile import load_model

    overrides = dict(parse_override(text) for text in args.overrides)
    return load_model(args.model, overrides=overrides, case=args.case)


def load_cases_from_args(args: argparse.Namespace):  # -> dict[str, Model]
    """The models of the base and of every load case (only the one named by ``--case`` when given)."""
    from .expr import parse_override
    from .modelfile import load_case_models

    if args.case is not None:
        model = load_from_args(args)
        return {model.case: model}
    return load_case_models(args.model, overrides=dict(parse_override(text) for text in args.overrides))


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("report", help="mass, CG, inertia, axle and corner loads, rule checks")
    add_model_arguments(p)
    p.add_argument("--json", type=Path, metavar="FILE", help="also write the machine-readable report (SI)")
    p.add_argument("--units", choices=["si", "mm"], default="si", help="terminal units: si (m, kg*m^2) or mm (mm, kg*mm^2)")
    p.add_argument("--brief", action="store_true", help="leave the per-component table out of the terminal text")
    p.add_argument("--strict", action="store_true", help="exit 1 when a rule check fails")
    p.add_argument("--all-cases", action="store_true",
                   help="the base and every load case side by side (mass, CG, axle and corner loads, inertia, rules)")
    p.set_defaults(run=_report)

    p = sub.add_parser("check", help="validate a model file and its rules without a report")
    add_model_arguments(p)
    p.set_defaults(run=_check)

    p = sub.add_parser("materials", help="list the built-in materials library")
    p.set_defaults(run=_materials)


def _report(args: argparse.Namespace) -> int:
    from .report import DisplayUnits, build_report, format_report, write_json_atomic

    if args.all_cases:
        return _report_cases(args)
    model = load_from_args(args)
    report = build_report(model)
    print(format_report(report, DisplayUnits(args.units), components=not args.brief))
    if args.json:
        write_json_atomic(report, args.json)
        print(f"\nreport written to {args.json}")
    return EXIT_FAIL if args.strict and not report["rules_passed"] else 0


def _report_cases(args: argparse.Namespace) -> int:
    from .casereport import build_case_table, format_case_table
    from .report import DisplayUnits, write_json_atomic

    if args.case is not None:
        raise ValueError("give either --case NAME or --all-cases, not both")
    data = build_case_table(load_cases_from_args(args))
    print(format_case_table(data, DisplayUnits(args.units)))
    if args.json:
        write_json_atomic(data, args.json)
        print(f"\nload cases written to {args.json}")
    return EXIT_FAIL if args.strict and not data["rules_passed"] else 0


def _check(args: argparse.Namespace) -> int:
    from .loadcases import check_rules_in_cases

    models = load_cases_from_args(args)
    model = next(iter(models.values()))
    results = check_rules_in_cases(models)
    failed = [(case, r) for case, r in results if not r.passed]
    cases = f" · {len(models)} load cases" if len(models) > 1 else ""
    print(f"{args.model}: valid · {len(model.components)} parts · {len(model.groups())} groups · "
          f"{len(model.slots)} slots{cases} · {len(results)} rule checks ({len(failed)} failing)")
    for case, r in failed:
        where = f" [{case}]" if len(models) > 1 else ""
        print(f"  FAIL{where} {r.name}: {r.value:.4g} {r.unit}, limit {r.limit} {r.unit}, margin {r.margin:+.4g} {r.unit}")
    return 0


def _materials(args: argparse.Namespace) -> int:
    from .materials import builtin_materials
    from .report import table

    rows = []
    for key, m in builtin_materials().items():
        lo, hi = m.band
        band = f"{lo:.0f} .. {hi:.0f}" if lo != hi else "-"
        rows.append([key, f"{m.density:.0f}", band, m.flag, m.source])
    print(table(["material", "kg/m^3", "band kg/m^3", "flag", "source"], rows, "lrrll"))
    return 0
