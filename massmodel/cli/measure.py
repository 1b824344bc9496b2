"""Measurement commands: ``weigh`` (corner weights, model versus scales), ``tilt`` (axle-lift CG height) and
``swing`` (pendulum inertia). Thin: the work is in :mod:`massmodel.measure.analysis`."""

from __future__ import annotations

import argparse
from pathlib import Path

from massmodel.core.errors import UsageError

from .args import output_file, override, quantity

__all__ = ["register"]


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("session", type=Path, help="measurement session file (TOML, docs/measure.md)")
    p.add_argument("--model", type=Path, metavar="FILE",
                   help="model file to compare with (default: the one named in the session's [session] model)")
    p.add_argument("--set", dest="overrides", action="append", default=[], metavar="NAME=VALUE", type=override,
                   help="override a model parameter, e.g. --set fuel_mass='10 kg' (repeatable)")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the machine-readable result (SI)")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("weigh", help="corner-weight reduction and model-versus-scales reconciliation")
    _common(p)
    p.add_argument("--write-model", type=output_file, metavar="FILE",
                   help="write a model file that extends the model with the unaccounted item (never the input)")
    p.add_argument("--item-height", default="auto", metavar="auto|model-cg|lift|LENGTH", type=_height,
                   help="height of the unaccounted item above the ground in that file: from the axle lift "
                        "(auto when the session has one), at the model's CG height, or a length such as '300 mm'")
    p.set_defaults(run=_weigh)

    p = sub.add_parser("tilt", help="CG height from an axle-lift test (ISO 10392 procedure)")
    _common(p)
    p.set_defaults(run=_tilt)

    p = sub.add_parser("swing", help="inertia from bifilar, trifilar and compound pendulum tests")
    _common(p)
    p.set_defaults(run=_swing)


def _load(args: argparse.Namespace, need_model: bool = False):  # -> (Session, Model | None, overrides)
    from massmodel.measure.analysis import load_session_and_model

    overrides = dict(args.overrides)
    session, model = load_session_and_model(args.session, args.model, overrides)
    if need_model and model is None:
        raise UsageError(f"{args.session}: no model to compare with: name one in [session] model or with --model")
    return session, model, overrides


def _height(text: str) -> str | float:
    """``--item-height``: ``auto``, ``model-cg``, ``lift`` or a length (SI)."""
    if text in ("auto", "model-cg", "lift"):
        return text
    try:
        return quantity("length", "300 mm")(text)
    except argparse.ArgumentTypeError as exc:
        raise argparse.ArgumentTypeError(f"expected auto, model-cg, lift or a length: {exc}") from None


def _finish(args: argparse.Namespace, report: dict, text: str) -> int:
    from massmodel.report.summary import write_json_atomic

    print(text)
    if args.json:
        write_json_atomic(report, args.json)
        print(f"\nresult written to {args.json}")
    return 0


def _weigh(args: argparse.Namespace) -> int:
    from massmodel.measure.analysis import analyse_weighing, weighing_report, write_updated_model
    from massmodel.report.measure import format_weighing

    height = args.item_height
    session, model, overrides = _load(args, need_model=args.write_model is not None)
    analysis = analyse_weighing(session, model)
    report = weighing_report(analysis)
    if args.write_model is not None:
        report["updated_model"] = write_updated_model(analysis, args.write_model, height, overrides)
    return _finish(args, report, format_weighing(report))


def _tilt(args: argparse.Namespace) -> int:
    from massmodel.measure.analysis import lift_report
    from massmodel.report.measure import format_lift

    session, model, _ = _load(args)
    report = lift_report(session, model)
    return _finish(args, report, format_lift(report))


def _swing(args: argparse.Namespace) -> int:
    from massmodel.measure.analysis import pendulum_report
    from massmodel.report.measure import format_pendulum

    session, model, _ = _load(args)
    report = pendulum_report(session, model)
    return _finish(args, report, format_pendulum(report))
