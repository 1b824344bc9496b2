"""The ``massmodel`` command line: a thin layer over the library.

Each command group lives in a module of this package exposing ``register(subparsers)``; :data:`COMMAND_MODULES`
lists them explicitly, in the order their commands appear in ``--help``, and they are imported when the parser is
built, while heavy libraries (cadquery, pyvista) load only inside the command that needs them. User mistakes print one
clear line and exit 2 (a bad option value is refused by argparse through the ``type=`` callables of
:mod:`massmodel.cli.args`); any other exception is a bug: one line, exit 3, and the traceback in a file of the temp
folder (set ``MASSMODEL_DEBUG=1`` to see it raised instead). An output option that names an input file is refused
before the command runs (:func:`massmodel.cli.args.check_outputs`).

May import: every layer below it (core up to pictures and page); never :mod:`massmodel.notebook`, its sibling at the top.
Nothing in the library imports it (only ``massmodel/__main__.py``).
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Sequence
from typing import NoReturn

from massmodel.cli.args import check_outputs
from massmodel.core.atomic import inputs_protected
from massmodel.core.errors import one_line

__all__ = ["main", "build_parser", "command_modules", "COMMAND_MODULES", "EXIT_OK", "EXIT_FAIL", "EXIT_USAGE",
           "EXIT_BUG", "EXIT_CODES"]

EXIT_OK = 0  # the command ran and every check passed
EXIT_FAIL = 1  # the command ran and a check failed
EXIT_USAGE = 2  # bad input: the command could not run
EXIT_BUG = 3  # an internal error of massmodel (a bug): the traceback is written to a file

#: The exit codes, as ``massmodel --help`` and the docs list them.
EXIT_CODES = f"""exit codes:
  {EXIT_OK}  ok
  {EXIT_FAIL}  the command ran and a check failed (a rule, a gate, a tolerance)
  {EXIT_USAGE}  bad input: one line names the file (or option), the item and the field; nothing is written
  {EXIT_BUG}  internal error (a bug in massmodel): one line, and the traceback in a file in the temp folder
     (MASSMODEL_DEBUG=1 shows it instead)"""


#: The command modules, in the order their commands appear in ``massmodel --help``.
COMMAND_MODULES: tuple[str, ...] = (
    "massmodel.cli.core",
    "massmodel.cli.ballast",
    "massmodel.cli.cad",
    "massmodel.cli.compare",
    "massmodel.cli.measure",
    "massmodel.cli.page",
    "massmodel.cli.transfer",
    "massmodel.cli.chassis",
    "massmodel.cli.view",
    "massmodel.cli.uncertainty",
    "massmodel.cli.studies",
)


def command_modules() -> list[str]:
    """Names of the command modules (:data:`COMMAND_MODULES`)."""
    return list(COMMAND_MODULES)


class _Parser(argparse.ArgumentParser):
    """argparse with its error as one line naming the option (``massmodel report: error: --margin: ...``), exit 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(EXIT_USAGE, f"{self.prog}: error: {message.removeprefix('argument ')}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="massmodel",
        description="Vehicle mass models: mass, CG, inertia tensor, axle loads, rule checks, ballast, CAD export.",
        epilog=EXIT_CODES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in command_modules():
        importlib.import_module(name).register(sub)
    return parser


def _user_error(exc: BaseException) -> bool:
    """Whether ``exc`` is the user's mistake (exit 2) rather than a bug (exit 3).

    The project's error types of user input (:class:`massmodel.core.errors.UserError` and its subclasses), and an
    operating-system error on a named file (missing, not writable, a folder where a file should be).
    """
    from massmodel.core.errors import UserError

    if isinstance(exc, UserError):
        return True
    return isinstance(exc, OSError) and exc.filename is not None


def _report_bug(command: str, exc: BaseException) -> int:
    """One line saying an internal error happened, with the traceback written to a file in the temp folder."""
    import tempfile
    import traceback

    text = "".join(traceback.format_exception(exc))
    try:
        fd, path = tempfile.mkstemp(prefix="massmodel-internal-error-", suffix=".txt")
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(f"massmodel {command}\nargv: {sys.argv!r}\n\n{text}")
        where = f"the traceback is in {path}"
    except OSError:  # no temp folder: print the traceback itself
        where = "the traceback follows"
        print(text, file=sys.stderr)
    brief = f"{type(exc).__name__}: {exc}".splitlines()[0] if str(exc) else type(exc).__name__
    print(f"massmodel {command}: internal error: {brief} — please report it; {where}", file=sys.stderr)
    return EXIT_BUG


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; the exit code is :data:`EXIT_OK`, :data:`EXIT_FAIL`, :data:`EXIT_USAGE` or
    :data:`EXIT_BUG` (see the epilog of ``massmodel --help``)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help (0) or a bad option (2, its one line already printed): the exit code
        return exc.code if isinstance(exc.code, int) else EXIT_USAGE
    debug = bool(os.environ.get("MASSMODEL_DEBUG"))
    try:
        missing = check_outputs(parser, args)
        with inputs_protected():  # and no output over a file read on the way (an extended model, a rulebook)
            code = int(args.run(args) or 0)
        for folder in missing:  # an output folder made on the way: say so, a typing slip would go unnoticed
            if folder.is_dir():
                print(f"massmodel {args.command}: created folder {folder}", file=sys.stderr)
        return code
    except BrokenPipeError:  # the reader went away (e.g. `| head`): stop quietly
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except Exception as exc:
        if debug:
            raise
        if not _user_error(exc):
            return _report_bug(args.command, exc)
        if isinstance(exc, OSError) and exc.strerror and type(exc).__str__ is OSError.__str__:
            text = f"{exc.filename}: {exc.strerror}"  # the file as named, without errno and quotes
        else:
            text = one_line(str(exc))
        print(f"massmodel {args.command}: error: {text}", file=sys.stderr)
        return EXIT_USAGE


if __name__ == "__main__":
    sys.exit(main())
