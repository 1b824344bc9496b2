"""Uncertainty commands: ``how-sure`` (RSS and Monte Carlo table, probability of passing each rule per load case,
histograms), and the ``--uncertainty`` / ``--confidence`` options of ``report`` (see :func:`add_report_options`)."""

from __future__ import annotations

import argparse
from typing import Any

from massmodel.cli import EXIT_FAIL
from massmodel.cli.args import output_file
from massmodel.cli.model_args import add_model_arguments, load_cases_from_args

__all__ = ["register", "parse_confidence", "add_report_options", "add_report_uncertainty"]


def parse_confidence(text: str) -> float:
    """A one-sided confidence from the command line: ``0.95`` or ``95%`` (0.5 ≤ P < 1)."""
    t = text.strip()
    try:
        p = float(t[:-1]) / 100.0 if t.endswith("%") else float(t)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a confidence such as 0.95 or 95%, got {text!r}") from None
    if not 0.5 <= p < 1.0:
        raise argparse.ArgumentTypeError(f"a one-sided confidence lies in [0.5, 1), e.g. 0.95; got {text!r}")
    return p


def _positive_int(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 2:
        raise argparse.ArgumentTypeError(f"expected at least 2 samples, got {n}")
    return n


def add_report_options(p: argparse.ArgumentParser) -> None:
    """``--uncertainty`` and ``--confidence`` for ``massmodel report``."""
    p.add_argument("--uncertainty", action="store_true",
                   help="show ± u (standard uncertainty, k = 1) beside the totals, from the model's [uncertainty] "
                        "section or the defaults by maturity (shown by default when the model declares any)")
    p.add_argument("--confidence", type=parse_confidence, metavar="P",
                   help="also judge each rule at this one-sided confidence, e.g. 0.95 (with --strict: exit 1 "
                        "unless every rule passes at it)")


def add_report_uncertainty(report: dict[str, Any], model: Any, args: argparse.Namespace) -> bool:
    """Add the ``uncertainty`` member to a report when asked or declared; False when the gate fails at the
    confidence asked for."""
    from massmodel.report.uncertainty import report_uncertainty
    from massmodel.uncertainty.inputs import declares_uncertainty

    confidence = getattr(args, "confidence", None)
    if not (getattr(args, "uncertainty", False) or confidence is not None or declares_uncertainty(model)):
        return True
    report["uncertainty"] = report_uncertainty(model, confidence)
    return all(r["passes_at_confidence"] for r in report["uncertainty"].get("rules_at_confidence", []))


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "how-sure",
        help="uncertainty of mass, CG, inertia and axle loads (RSS and Monte Carlo) and the probability of passing "
             "each rule in each load case",
    )
    add_model_arguments(p)
    p.add_argument("--samples", type=_positive_int, default=20000, help="Monte Carlo samples (default 20000)")
    p.add_argument("--seed", type=int, default=0, help="seed of the random generator (default 0)")
    p.add_argument("--confidence", type=parse_confidence, default=0.95, metavar="P",
                   help="one-sided confidence of the rule verdicts and needed margins (default 0.95)")
    p.add_argument("--units", choices=["si", "mm"], default="si", help="terminal units: si (m, kg*m^2) or mm")
    p.add_argument("--json", type=output_file, metavar="FILE", help="also write the results (SI) as JSON")
    p.add_argument("--plot", type=output_file, metavar="PNG",
                   help="histograms of the mass counted by the mass rule and of the front share, with the limits "
                        "(base model, or the --case)")
    p.add_argument("--strict", action="store_true", help="exit 1 unless every rule passes at the confidence")
    p.set_defaults(run=_how_sure)


def _how_sure(args: argparse.Namespace) -> int:
    from massmodel.report.summary import DisplayUnits, write_json_atomic
    from massmodel.report.uncertainty import format_how_sure, how_sure_data

    models = load_cases_from_args(args)
    data, runs = how_sure_data(models, args.samples, args.seed, args.confidence)
    print(format_how_sure(data, DisplayUnits(args.units)))
    if args.json:
        write_json_atomic(data, args.json)
        print(f"\nresults written to {args.json}")
    if args.plot:
        from massmodel.pictures.uncertainty_plot import plot_how_sure

        case = next(iter(models))
        plot_how_sure(models[case], runs[case], args.plot)
        print(f"histograms written to {args.plot}")
    return EXIT_FAIL if args.strict and not data["rules_pass_at_confidence"] else 0
