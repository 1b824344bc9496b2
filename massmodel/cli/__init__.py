"""The ``massmodel`` command line: a thin layer over the library.

Each command group lives in a module of this package exposing ``register(subparsers)``; :data:`COMMAND_MODULES`
lists them explicitly, in the order their commands appear in ``--help``, and they are imported when the parser is built, while heavy libraries (cadquery, pyvista) load
only inside the command that needs them. User mistakes print one clear line and exit 2; set ``MASSMODEL_DEBUG=1`` to
see the traceback.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Sequence

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
    "massmodel.cli.transfer",
    "massmodel.cli.chassis",
    "massmodel.cli.view",
)


def command_modules() -> list[str]:
    """Names of the command modules (:data:`COMMAND_MODULES`)."""
    return list(COMMAND_MODULES)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="massmodel",
        description="Vehicle mass models: mass, CG, inertia tensor, axle loads, rule checks, ballast, CAD export.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in command_modules():
        importlib.import_module(name).register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
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
