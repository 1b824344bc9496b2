"""The model file argument shared by every command that reads a model: ``MODEL``, ``--set`` and ``--case``."""

from __future__ import annotations

import argparse
from pathlib import Path

from .args import override

__all__ = ["add_model_arguments", "load_from_args", "load_cases_from_args"]


def add_model_arguments(p: argparse.ArgumentParser) -> None:
    """The model file argument and ``--set name=value`` overrides, shared by every command that reads a model."""
    p.add_argument("model", type=Path, help="model file (TOML)")
    p.add_argument(
        "--set", dest="overrides", action="append", default=[], metavar="NAME=VALUE", type=override,
        help="override a parameter without editing the file, e.g. --set fuel_mass='10 kg' (repeatable)",
    )
    p.add_argument("--case", metavar="NAME", help="evaluate the model in one of its load cases ([[case]] tables)")


def load_from_args(args: argparse.Namespace):  # -> Model
    """Load the model named on the command line with its overrides."""
    from massmodel.modelfile.loader import load_model

    return load_model(args.model, overrides=dict(args.overrides), case=args.case)


def load_cases_from_args(args: argparse.Namespace):  # -> dict[str, Model]
    """The models of the base and of every load case (only the one named by ``--case`` when given)."""
    from massmodel.modelfile.loader import load_case_models

    if args.case is not None:
        model = load_from_args(args)
        return {model.case: model}
    return load_case_models(args.model, overrides=dict(args.overrides))
