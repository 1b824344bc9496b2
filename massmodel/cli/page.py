"""The ``publish`` command: one self-contained HTML page of a model for the whole team."""

from __future__ import annotations

import argparse
import sys

from massmodel.cli.args import output_file
from massmodel.cli.core import add_model_arguments, load_cases_from_args

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
    p.set_defaults(run=_publish)


def _publish(args: argparse.Namespace) -> int:
    from massmodel.page.document import PageOptions, build_page, check_output, write_page

    check_output(args.out, inputs=(args.model,))
    models = load_cases_from_args(args)
    result = build_page(models, str(args.model), PageOptions(pictures=not args.no_pictures, view3d=not args.no_3d))
    write_page(result, args.out, inputs=(args.model,))
    size = len(result.html.encode("utf-8")) / 1e6
    print(result.summary)
    for note in result.notes:
        print(f"note: {note}", file=sys.stderr)
    print(f"wrote {args.out} ({size:.2f} MB; sections: {', '.join(result.sections)}; {result.seconds:.1f} s)")
    return 0
