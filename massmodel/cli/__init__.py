"""The ``massmodel`` command line: a thin layer over the library.

Each command group lives in a module of this package exposing ``register(subparsers)``; :data:`COMMAND_MODULES`
lists them explicitly, in the order their commands appear in ``--help``, and they are imported when the parser is
built, while heavy libraries (cadquery, pyvista) load only inside the command that needs them. User mistakes print one
clear line and exit 2 (a bad option value is refused by argparse through the ``type=`` callables of
:mod:`massmodel.cli.args`); set ``MASSMODEL_DEBUG=1`` to see the traceback.

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

__all__ = ["main", "build_parser", "command_modules", "COMMAND_MODULES", "EXIT_FAIL", "EXIT_USAGE"]

EXIT_FAIL = 1  # the command ran and a check failed
EXIT_USAGE = 2  # bad input: the command could not run


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
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in command_modules():
        importlib.import_module(name).register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help (0) or a bad option (2, its one line already printed): the exit code
        return exc.code if isinstance(exc.code, int) else EXIT_USAGE
    try:
        return int(args.run(args) or 0)
    except BrokenPipeError:  # the reader went away (e.g. `| head`): stop quietly
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except (ValueError, OSError, KeyError) as exc:
        if os.environ.get("MASSMODEL_DEBUG"):
            raise
        msg = exc.args[0] if isinstance(exc, KeyError) and exc.args else exc
        print(f"massmodel {args.command}: error: {msg}", file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
