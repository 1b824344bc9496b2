"""The ``publish`` command: one self-contained HTML page of a model for the whole team."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from massmodel.cli.args import output_file
from massmodel.cli.model_args import add_model_arguments, load_cases_from_args
from massmodel.cli.uncertainty import parse_confidence

__all__ = ["register"]


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "publish",
        help="write one self-contained HTML page: rule checks per load case, mass budget, CG and inertia, "
        "pictures and the car in 3-D",
    )
    add_model_arguments(p)
    p.add_argument("-o", "--out", type=output_file, required=True, metavar="FILE.html", help="the page to write")
    p.add_argument("--no-pictures", action="store_true", help="leave out the rendered sheet and the CG chart")
    p.add_argument("--no-3d", dest="no_3d", action="store_true", help="leave out the rotatable 3-D view")
    p.add_argument("--ballast", type=Path, metavar="FILE.json",
                   help="show a ballast plan and what each rule costs: the JSON of place-ballast --json")
    p.add_argument("--previous", type=Path, metavar="OLD.toml",
                   help="show what changed since a previous version of the model file")
    p.add_argument("--confidence", type=parse_confidence, default=0.95, metavar="P",
                   help="confidence of the rule verdicts with uncertainty, e.g. 0.95 or 95%% (default 0.95)")
    p.add_argument("--speed", type=_speed_kmh, metavar="KMH",
                   help="speed of the chassis section's aero loads and yaw response, km/h (as roll-yaw --speed)")
    p.set_defaults(run=_publish)


def _speed_kmh(text: str) -> float:
    """A speed in km/h from the command line → m/s."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a speed in km/h such as 126, got {text!r}") from None
    if not (0.0 < value < 1000.0):
        raise argparse.ArgumentTypeError(f"a speed in km/h above 0 and below 1000, got {text!r}")
    return value / 3.6


def _publish(args: argparse.Namespace) -> int:
    from massmodel.page.document import PageOptions, build_page, check_output, write_page
    from massmodel.page.extras import collect_extras

    inputs = tuple(p for p in (args.model, args.ballast, args.previous) if p is not None)
    check_output(args.out, inputs=inputs)
    models = load_cases_from_args(args)
    extras = collect_extras(models, confidence=args.confidence, ballast=args.ballast, previous=args.previous,
                            speed=args.speed)
    options = PageOptions(pictures=not args.no_pictures, view3d=not args.no_3d, extras=extras)
    result = build_page(models, str(args.model), options)
    write_page(result, args.out, inputs=inputs)
    size = len(result.html.encode("utf-8")) / 1e6
    print(result.summary)
    for note in result.notes:
        print(f"note: {note}", file=sys.stderr)
    print(f"wrote {args.out} ({size:.2f} MB; sections: {', '.join(result.sections)}; {result.seconds:.1f} s)")
    return 0
