"""The ``roll-yaw`` command: sprung/unsprung mass, roll and load transfer, aero, cross weight and the single-track
yaw response of a model with a ``[chassis]`` section (linear, steady-state estimates)."""

from __future__ import annotations

import argparse

from massmodel.cli.args import output_file
from massmodel.core.errors import UsageError

from .core import add_model_arguments, load_from_args

__all__ = ["register"]

CORNER_CHOICES = ("FL", "FR", "RL", "RR")


def _float(what: str, lo: float | None = None, hi: float | None = None, positive: bool = False):  # type: ignore[no-untyped-def]
    def parse(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}") from None
        if value != value or (positive and not value > 0) or (lo is not None and value < lo) or (
                hi is not None and value > hi):
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}")
        return value

    return parse


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "roll-yaw",
        help="sprung/unsprung mass, roll and lateral load transfer, aero, cross weight, single-track yaw response",
        description="Chassis estimates from the mass model and its [chassis] section (docs/chassis.md): linear, "
        "steady-state, for comparing set-ups. Signs follow ISO 8855: forward and left positive.",
    )
    add_model_arguments(p)
    p.add_argument("--corner", dest="lateral", action="append", type=_float("a lateral acceleration in g", -6, 6),
                   metavar="G", help="lateral acceleration in g (left turn positive; repeatable; default 1.0 and 1.5)")
    p.add_argument("--brake", dest="longitudinal", action="append", metavar="G",
                   type=lambda t: -_float("a braking deceleration in g, positive", 0, 6)(t),
                   help="braking deceleration in g, e.g. 1.2 (repeatable; default braking 1.2 and driving 0.6)")
    p.add_argument("--drive", dest="longitudinal", action="append", metavar="G",
                   type=_float("a forward acceleration in g, positive", 0, 6), help="forward acceleration in g")
    p.add_argument("--speed", type=_float("a speed in km/h", positive=True), metavar="KMH",
                   help="speed for the aero loads and the yaw response, km/h (default: [chassis] speed)")
    p.add_argument("--cross-target", type=_float("a diagonal share between 0 and 1", 0.0, 1.0), metavar="SHARE",
                   help="target diagonal share (FR + RL)/total, e.g. 0.50: prints the spring-platform change")
    p.add_argument("--adjust-corner", choices=CORNER_CHOICES, default="FL",
                   help="corner whose spring platform is moved for --cross-target (default FL)")
    p.add_argument("--thread-pitch", type=_float("a thread pitch in mm", positive=True), metavar="MM",
                   help="platform thread pitch in mm, to give the change in turns")
    p.add_argument("--scales", type=_float("a corner weight in kg", positive=True), nargs=4,
                   metavar=("FL", "FR", "RL", "RR"),
                   help="corner weights from the scales, kg, to start --cross-target from (default: the model's "
                   "static loads, which carry no diagonal preload)")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the results (SI units in the keys) as JSON")
    p.add_argument("--picture-loads", type=output_file, metavar="PNG", help="corner loads against lateral acceleration")
    p.add_argument("--picture-yaw", type=output_file, metavar="PNG", help="yaw rate after a step steer")
    p.set_defaults(run=_run)


def _run(args: argparse.Namespace) -> int:
    from massmodel.report.chassis import CrossRequest, build_chassis_report, format_chassis_report
    from massmodel.report.summary import write_json_atomic

    model = load_from_args(args)
    cross = None
    if args.cross_target is not None:
        pitch = args.thread_pitch * 1e-3 if args.thread_pitch else None
        cross = CrossRequest(args.cross_target, args.adjust_corner, pitch,
                             tuple(args.scales) if args.scales else None)
    elif args.scales:
        raise UsageError("--scales is used with --cross-target")
    data = build_chassis_report(
        model,
        lateral_g=args.lateral or (1.0, 1.5),
        longitudinal_g=args.longitudinal or (-1.2, 0.6),
        speed=args.speed / 3.6 if args.speed else None,
        cross=cross,
        need_yaw=args.picture_yaw is not None,
    )
    print(format_chassis_report(data))
    if args.json:
        write_json_atomic(data, args.json)
        print(f"\nchassis results written to {args.json}")
    if args.picture_loads or args.picture_yaw:
        from massmodel.pictures.chassis_plot import plot_corner_loads, plot_step_steer

        if args.picture_loads:
            plot_corner_loads(data, args.picture_loads)
            print(f"corner loads picture written to {args.picture_loads}")
        if args.picture_yaw:
            plot_step_steer(data, args.picture_yaw)
            print(f"step-steer picture written to {args.picture_yaw}")
    return 0
