"""The ``load-transfer`` command: axle and corner loads while braking, driving and cornering (steady state)."""

from __future__ import annotations

import argparse
from collections.abc import Callable

from massmodel.core.errors import UsageError

from .args import acceleration_in_g, output_file
from .core import add_model_arguments, load_from_args

__all__ = ["register"]


def _g_value(text: str) -> float:
    return acceleration_in_g(text)


def _magnitude(label: str, sign_x: float, sign_y: float) -> Callable[[str], tuple[str, float, float]]:
    def parse(text: str) -> tuple[str, float, float]:
        g = _g_value(text)
        if label != "cornering" and g < 0.0:
            raise argparse.ArgumentTypeError(f"give the {label} acceleration as a positive number of g, got {text!r}")
        side = "" if label != "cornering" else (" left" if g >= 0.0 else " right")
        return (f"{label} {abs(g):.2f} g{side}", sign_x * g, sign_y * g)

    return parse


class _Combined(argparse.Action):
    """``--accel LONG LAT``: appends (label, a_x, a_y) to the same list as the single-axis options."""

    def __call__(self, parser, namespace, values, option_string=None):  # type: ignore[no-untyped-def]
        ax, ay = values
        getattr(namespace, self.dest).append((f"a_x {ax:+.2f} g, a_y {ay:+.2f} g", ax, ay))


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "load-transfer",
        help="axle and corner loads under steady braking, driving and cornering (rigid vehicle)",
        description="Steady-state load transfer of the model as a rigid vehicle. Each acceleration option adds one "
        "condition (a column of the output); give as many as you like. Signs follow ISO 8855: forward and left "
        "positive.",
    )
    add_model_arguments(p)
    conds = dict(dest="conditions", action="append", default=[], metavar="G")
    p.add_argument("--brake", type=_magnitude("braking", -1.0, 0.0), help="braking deceleration in g, e.g. 1.2",
                   **conds)
    p.add_argument("--drive", type=_magnitude("driving", 1.0, 0.0), help="forward acceleration in g, e.g. 0.6",
                   **conds)
    p.add_argument("--corner", type=_magnitude("cornering", 0.0, 1.0),
                   help="lateral acceleration in g: positive in a left-hand turn, negative in a right-hand one",
                   **conds)
    p.add_argument("--accel", type=_g_value, nargs=2, dest="conditions", action=_Combined, metavar=("LONG", "LAT"),
                   help="combined acceleration in g, forward and left positive, e.g. --accel -0.8 1.2 (braking "
                   "into a left-hand turn)")
    p.add_argument("--front-roll-share", type=float, metavar="S",
                   help="front share of the lateral load transfer, 0..1 (from the roll stiffnesses); default: the "
                   "static front weight fraction, which is an assumption")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the results (kg, m, g) as JSON")
    p.set_defaults(run=_run)


def _run(args: argparse.Namespace) -> int:
    from massmodel.report.summary import write_json_atomic
    from massmodel.report.transfer import format_transfer_report
    from massmodel.vehicle.transfer import Condition, build_transfer_report

    if not args.conditions:
        raise UsageError("give at least one of --brake, --drive, --corner or --accel")
    model = load_from_args(args)
    conditions = [Condition(*c) for c in args.conditions]
    data = build_transfer_report(model, conditions, args.front_roll_share)
    print(format_transfer_report(data))
    if args.json:
        write_json_atomic(data, args.json)
        print(f"\nload transfer written to {args.json}")
    return 0
