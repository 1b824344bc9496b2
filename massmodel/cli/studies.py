"""Study commands: ``vary`` (parameter sweeps), ``nudge`` (one-at-a-time sensitivities), ``fuel-burn`` (the CG
track as fuel burns), ``changes`` (what changed between two versions of a model) and ``budget`` (the mass budget
for spreadsheets)."""

from __future__ import annotations

import argparse
import sys
from dataclasses import replace
from typing import Any

from massmodel.cli import EXIT_FAIL
from massmodel.cli.args import output_file
from massmodel.cli.core import add_model_arguments
from massmodel.core.errors import UsageError

__all__ = ["register", "text_progress", "parse_limit"]


def text_progress(label: str, force: bool = False) -> Any:
    """A progress callback ``(done, total)`` writing one updating line to stderr (only on a terminal unless
    ``force``); None when nothing would be shown."""
    stream = sys.stderr
    if not (force or stream.isatty()):
        return None
    state = {"shown": -1}

    def show(done: int, total: int) -> None:
        pct = int(100 * done / total) if total else 100
        if pct == state["shown"] and done != total:
            return
        state["shown"] = pct
        bar = "#" * (pct // 4)
        stream.write(f"\r{label} [{bar:<25}] {done}/{total} ({pct}%)")
        if done >= total:
            stream.write("\n")
        stream.flush()

    return show


def _overrides(args: argparse.Namespace) -> dict[str, str]:
    from massmodel.core.expr import parse_override

    return dict(parse_override(text) for text in args.overrides)


def _outputs(text: str | None) -> tuple[str, ...]:
    return tuple(s.strip() for s in text.split(",") if s.strip()) if text else ()


def _output_options(p: argparse.ArgumentParser, plot_help: str) -> None:
    p.add_argument("--json", type=output_file, metavar="FILE", help="write the results as JSON (SI, units in the keys)")
    p.add_argument("--plot", type=output_file, metavar="FILE.png", help=plot_help)
    p.add_argument("--progress", action="store_true", help="show progress on stderr even when it is not a terminal")


def register(sub: argparse._SubParsersAction) -> None:
    from massmodel.studies.outputs import OUTPUT_NAMES

    names = ", ".join(OUTPUT_NAMES)
    p = sub.add_parser("vary", help="sweep one or more parameters (a grid) and collect mass, CG, loads, margins")
    add_model_arguments(p)
    p.add_argument("--param", dest="params", action="append", required=True, metavar="NAME=FROM:TO:STEPS",
                   help="a parameter and its values: FROM:TO:STEPS with units (fuel_mass=30kg:0kg:31) or a list "
                   "(ride_height=30mm,40mm,50mm); several --param make a grid")
    p.add_argument("--outputs", metavar="LIST", help=f"comma-separated outputs (default all): {names}")
    p.add_argument("--csv", type=output_file, metavar="FILE", help="write one row per point (SI, units in the column names)")
    _output_options(p, "draw each output and each rule's value against the (first) parameter, limits drawn")
    p.add_argument("--cluster", metavar="ADDRESS",
                   help="evaluate on Dask distributed: 'local' starts a local cluster, else a scheduler address "
                   "such as tcp://host:8786 (needs the extra massmodel[cluster])")
    p.add_argument("--workers", type=int, default=2, metavar="N", help="workers of a local Dask cluster (default 2)")
    p.add_argument("--chunk", type=int, default=250, metavar="N", help="points per chunk: a Dask task, and a progress step (default 250)")
    p.add_argument("--full-builds", action="store_true",
                   help="rebuild the whole model at every point (slower; the partial rebuild gives the same numbers)")
    p.set_defaults(run=_vary)

    p = sub.add_parser("nudge", help="one-at-a-time sensitivities: rank parameters by their effect on an output")
    add_model_arguments(p)
    p.add_argument("--step", dest="steps", action="append", required=True, metavar="NAME=STEP",
                   help="a parameter and its step with a unit, e.g. wheelbase=10mm (repeatable)")
    p.add_argument("--rank-by", default="front_share", metavar="OUTPUT",
                   help="output that orders the ranking and the chart; comma-separate several for several charts "
                   "(default front_share; mass for a model without [vehicle])")
    _output_options(p, "tornado chart of the ranking")
    p.set_defaults(run=_nudge)

    p = sub.add_parser("fuel-burn", help="CG, axle loads, front share and rule margins from a full to an empty tank")
    add_model_arguments(p)
    p.add_argument("--fuel", default="fuel_mass", metavar="PARAMETER", help="the fuel parameter (default fuel_mass)")
    p.add_argument("--full", metavar="VALUE", help="full load with a unit (default: the parameter's value)")
    p.add_argument("--empty", default="0", metavar="VALUE", help="empty load with a unit (default 0)")
    p.add_argument("--steps", type=int, default=21, metavar="N", help="points from full to empty (default 21)")
    p.add_argument("--csv", type=output_file, metavar="FILE", help="write one row per fuel load (SI)")
    _output_options(p, "chart of the track with the worst point of each rule")
    p.set_defaults(run=_fuel_burn)

    p = sub.add_parser("changes", help="what changed between two versions of a model (FILE or FILE@REV)")
    p.add_argument("old", metavar="OLD", help="model file, or FILE@REV read from git (e.g. car.toml@HEAD~1)")
    p.add_argument("new", metavar="NEW", help="model file, or FILE@REV")
    p.add_argument("--case", metavar="NAME", help="compare both versions in this load case")
    p.add_argument("--json", type=output_file, metavar="FILE", help="write the comparison as JSON (SI)")
    p.add_argument("--waterfall", type=output_file, metavar="FILE.png", help="waterfall chart of the mass changes")
    p.add_argument("--fail-over", dest="fail_over", action="append", default=[], metavar="KEY=LIMIT",
                   help="exit 1 when a change goes over a limit: mass=0.5kg, cg=2mm (distance the CG moved), "
                   "cg_x/cg_y/cg_z=1mm, inertia=0.5kg*m^2 (largest tensor entry change); repeatable")
    p.set_defaults(run=_changes)

    p = sub.add_parser("budget", help="mass budget: parts and group subtotals as CSV or XLSX that sum to the totals")
    add_model_arguments(p)
    p.add_argument("--csv", type=output_file, metavar="FILE", help="write the budget as CSV (SI)")
    p.add_argument("--xlsx", type=output_file, metavar="FILE", help="write it as an XLSX workbook (needs massmodel[xlsx])")
    p.add_argument("--depth", type=int, default=1, metavar="N", help="group levels shown in the terminal (default 1)")
    p.set_defaults(run=_budget)


def _vary(args: argparse.Namespace) -> int:
    from massmodel.modelfile.loader import build_model, read_source
    from massmodel.report.studies import format_sweep, sweep_csv, sweep_dict, write_csv_atomic
    from massmodel.report.summary import write_json_atomic
    from massmodel.studies.sweep import Study, parse_range, sweep

    if args.chunk <= 0 or args.workers <= 0:
        raise UsageError("--chunk and --workers must be at least 1")
    source = read_source(args.model)
    overrides = _overrides(args)
    base = build_model(source, overrides, args.case)
    ranges = [parse_range(text, base) for text in args.params]
    study = Study(source, tuple(r.name for r in ranges), tuple(overrides.items()), args.case, _outputs(args.outputs),
                  partial=not args.full_builds)
    runner = None
    if args.cluster:
        from massmodel.modelfile.loader import ModelSource
        from massmodel.studies.cluster import DaskRunner

        # workers resolve the rulebook and geometry files from an absolute folder, whatever their working directory
        study = replace(study, source=ModelSource(source.data, source.label, source.base_dir.resolve()))

        runner = DaskRunner(None if args.cluster == "local" else args.cluster, args.workers, chunk=args.chunk)
    result = sweep(study, ranges, runner=runner, progress=text_progress("vary", args.progress), chunk=args.chunk)
    print(format_sweep(result))
    _write(args, sweep_dict(result), sweep_csv(result) if args.csv else None, write_json_atomic, write_csv_atomic)
    if args.plot:
        from massmodel.pictures.studies import plot_sweep

        print(f"chart written to {plot_sweep(result, args.plot)}")
    return 0


def _write(args: argparse.Namespace, data: Any, csv_text: str | None, write_json: Any, write_csv: Any) -> None:
    if args.json:
        write_json(data, args.json)
        print(f"JSON written to {args.json}")
    if csv_text is not None:
        write_csv(csv_text, args.csv)
        print(f"CSV written to {args.csv}")


def _nudge(args: argparse.Namespace) -> int:
    from massmodel.modelfile.loader import build_model, read_source
    from massmodel.report.studies import format_sensitivity, sensitivity_dict
    from massmodel.report.summary import write_json_atomic
    from massmodel.studies.outputs import select_outputs
    from massmodel.studies.sweep import parse_step, sensitivity

    source = read_source(args.model)
    overrides = _overrides(args)
    base = build_model(source, overrides, args.case)
    steps = [parse_step(text, base) for text in args.steps]
    names = [n for n, _, _ in steps]
    if len(set(names)) != len(names):
        raise UsageError(f"--step: parameter '{next(n for n in names if names.count(n) > 1)}' given twice")
    rank = list(_outputs(args.rank_by)) or ["front_share"]
    if base.vehicle is None and rank == ["front_share"]:
        rank = ["mass"]
    select_outputs(base, rank)  # unknown names: one line, before any work
    s = sensitivity(source, [(n, v) for n, v, _ in steps], overrides, args.case,
                    progress=text_progress("nudge", args.progress))
    print(format_sensitivity(s, rank[0]))
    if args.json:
        write_json_atomic(sensitivity_dict(s), args.json)
        print(f"JSON written to {args.json}")
    if args.plot:
        from massmodel.pictures.studies import plot_sensitivity

        print(f"chart written to {plot_sensitivity(s, rank, args.plot)}")
    return 0


def _quantity_like(text: str, like: Any, what: str, env: Any) -> float:
    from massmodel.core import expr, units

    try:
        q = expr.evaluate(text.strip(), env)
    except (expr.ExpressionError, units.UnitError) as exc:
        raise UsageError(f"{what}: {str(exc).splitlines()[0]}") from None
    if q.dim != like and not (q.dim == units.DIMENSIONLESS and q.value == 0.0):
        raise UsageError(f"{what}: {text!r} is in {q.dim}, expected {like}")
    return float(q.value)


def _fuel_burn(args: argparse.Namespace) -> int:
    from massmodel.modelfile.loader import build_model, read_source
    from massmodel.report.studies import format_track, track_csv, track_dict, write_csv_atomic
    from massmodel.report.summary import write_json_atomic
    from massmodel.studies.fuel import fuel_track

    source = read_source(args.model)
    overrides = _overrides(args)
    base = build_model(source, overrides, args.case)
    if args.fuel not in base.parameters:
        raise UsageError(f"{args.model}: unknown parameter '{args.fuel}' (--fuel); parameters: "
                         f"{', '.join(base.parameters)}")
    dim = base.parameters[args.fuel].dim
    full = None if args.full is None else _quantity_like(args.full, dim, "--full", base.parameters)
    empty = _quantity_like(args.empty, dim, "--empty", base.parameters)
    track = fuel_track(source, args.fuel, full, empty, args.steps, overrides, args.case,
                       progress=text_progress("fuel-burn", args.progress))
    print(format_track(track))
    _write(args, track_dict(track), track_csv(track) if args.csv else None, write_json_atomic, write_csv_atomic)
    if args.plot:
        from massmodel.pictures.studies import plot_track

        print(f"chart written to {plot_track(track, args.plot)}")
    return 0


def parse_limit(text: str) -> tuple[str, float]:
    """``KEY=LIMIT`` of ``--fail-over`` (SI result), e.g. ``cg=2mm`` → ("cg", 0.002)."""
    from massmodel.core import units
    from massmodel.studies.diff import LIMIT_KEYS

    if "=" not in text:
        raise UsageError(f"--fail-over {text!r}: expected KEY=LIMIT, e.g. mass=0.5kg or cg=2mm")
    key, value = (s.strip() for s in text.split("=", 1))
    if key not in LIMIT_KEYS:
        raise UsageError(f"--fail-over {text!r}: unknown key '{key}'; keys: {', '.join(LIMIT_KEYS)}")
    dim = {"kg": units.MASS, "m": units.LENGTH, "kg*m^2": units.INERTIA}[LIMIT_KEYS[key]]
    limit = _quantity_like(value, dim, f"--fail-over {key}", {})
    if limit < 0.0:
        raise UsageError(f"--fail-over {key}: the limit must not be negative")
    return key, limit


def _changes(args: argparse.Namespace) -> int:
    from massmodel.report.changes import diff_dict, format_diff
    from massmodel.report.summary import write_json_atomic
    from massmodel.studies.diff import check_limits, diff_models
    from massmodel.studies.revision import load_version, parse_version

    limits = dict(parse_limit(t) for t in args.fail_over)
    old_v, new_v = parse_version(args.old), parse_version(args.new)
    old = load_version(old_v, case=args.case)
    new = load_version(new_v, case=args.case)
    d = diff_models(old, new, old_v.label, new_v.label)
    print(format_diff(d))
    if args.json:
        write_json_atomic(diff_dict(d), args.json)
        print(f"\nJSON written to {args.json}")
    if args.waterfall:
        from massmodel.pictures.studies import plot_waterfall

        print(f"waterfall chart written to {plot_waterfall(d, args.waterfall)}")
    over = check_limits(d, limits)
    for line in over:
        print(f"OVER LIMIT: {line}")
    if limits and not over:
        print("within every --fail-over limit")
    return EXIT_FAIL if over else 0


def _budget(args: argparse.Namespace) -> int:
    from massmodel.cli.core import load_from_args
    from massmodel.report.budget import format_budget, write_budget_csv, write_budget_xlsx
    from massmodel.studies.budget import mass_budget

    if args.xlsx is not None and args.xlsx.suffix.lower() != ".xlsx":
        raise UsageError(f"--xlsx {args.xlsx}: the file name must end in .xlsx")
    b = mass_budget(load_from_args(args))
    print(format_budget(b, args.depth))
    if args.csv:
        write_budget_csv(b, args.csv)
        print(f"CSV written to {args.csv}")
    if args.xlsx:
        write_budget_xlsx(b, args.xlsx)
        print(f"XLSX written to {args.xlsx}")
    return 0
