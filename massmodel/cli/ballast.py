"""Ballast commands: ``size-block`` (one block in one slot), ``place-ballast`` (a plan across slots) and
``seat-ballast`` (a group-mass rule and the CG height it costs). A thin layer over massmodel.ballast.sizing,
massmodel.ballast.placement and massmodel.ballast.seat; see docs/ballast.md.
"""

from __future__ import annotations

import argparse
from dataclasses import replace
from pathlib import Path
from typing import Any

from massmodel.cli import EXIT_FAIL
from massmodel.core.errors import UsageError

from .args import keyed, lengths, output_file, point, quantity
from .core import add_model_arguments, load_from_args
from .uncertainty import parse_confidence

__all__ = ["register"]


def _mass_or_rules(text: str) -> float | str:
    """``--target``: a mass, or ``rules`` (what the mass rules need plus ``--margin``)."""
    return "rules" if text.strip().lower() == "rules" else quantity("mass", "10.8 kg")(text)


def _fraction_and_tolerance(text: str) -> tuple[float, float]:
    """``--front-fraction TARGET[,TOL]``: plain numbers, a fraction in (0, 1) and a tolerance in [0, 0.5)."""
    parts = text.split(",")
    try:
        target = float(parts[0])
        tol = float(parts[1]) if len(parts) > 1 else 0.0
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected plain numbers TARGET[,TOL] such as 0.45,0.005, got {text!r}") from None
    if len(parts) > 2 or not 0.0 < target < 1.0 or not 0.0 <= tol < 0.5:
        raise argparse.ArgumentTypeError(f"{text!r}: a fraction in (0, 1) and a tolerance in [0, 0.5)")
    return target, tol


def _add_block_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("block (override the plan's candidate, or give everything here)")
    g.add_argument("--material", help="material key (e.g. tungsten_b777_class3); `massmodel materials` lists them")
    g.add_argument("--fill", help='how the block grows: +z (from the -z wall upwards), -x, ..., or z (about the centre)')
    g.add_argument("--fix", action="append", default=[], metavar="AXIS=LENGTH", type=keyed("length", "AXIS"),
                   help="fix a size across the fill axis, e.g. --fix x=180mm (repeatable)")
    g.add_argument("--increment", type=quantity("length"), help="manufacturing increment, e.g. 0.5mm")
    g.add_argument("--holes", type=int, metavar="N", help="number of fastener holes")
    g.add_argument("--hole-diameter", metavar="D", type=quantity("length"), help="hole diameter, e.g. 8.5mm")
    g.add_argument("--hole-pattern", choices=["line", "grid", "circle"], default=None)
    g.add_argument("--hole-pitch", metavar="P[,P2]", type=lengths(), help="hole spacing (grid: along the two face axes)")
    g.add_argument("--hole-columns", type=int, help="grid columns")
    g.add_argument("--hole-pcd", metavar="D", type=quantity("length"), help="pitch-circle diameter of a circle pattern")
    g.add_argument("--hole-axis", choices=["x", "y", "z"], help="axis the holes run along (default: the fill axis)")
    g.add_argument("--counterbore", metavar="DIA,DEPTH", type=lengths(2), help="counterbore at the exposed end, e.g. 14mm,5mm")
    g.add_argument("--chamfer", metavar="SIZE", type=quantity("length"), help="45 deg edge chamfer, e.g. 1mm")
    g.add_argument("--chamfer-edges", default=None, help='edges chamfered, by axis letters (default "xyz": all)')
    g.add_argument("--stock", metavar="T1,T2,...", type=lengths(), help="stock plate thicknesses; the block is a stack of them")
    g.add_argument("--max-segment", metavar="MASS", type=quantity("mass"), help="largest mass of one plate at the high end of the band")
    g.add_argument("--min-thickness", metavar="LENGTH", type=quantity("length"), help="thinnest block along the fill axis")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("size-block", help="size one ballast block (or plate stack) in a slot",
                       description="Size a ballast block to reach a target mass at the LOW end of the material's "
                                   "density band, inside a slot with its clearance.")
    add_model_arguments(p)
    where = p.add_argument_group("slot")
    where.add_argument("--slot", help="a [[slot]] of the model, or a candidate of --plan")
    where.add_argument("--plan", type=Path, help="ballast plan whose candidate gives the block settings")
    where.add_argument("--box", metavar="SX,SY,SZ", type=lengths(3), help="a box slot given here instead (model axes), e.g. 120mm,100mm,40mm")
    where.add_argument("--at", metavar="X,Y,Z", type=point, help="centre of the --box, model frame, e.g. 375, 0, -185 mm")
    where.add_argument("--clearance", metavar="LENGTH", type=quantity("length"), help="clearance of the --box to every wall")
    _add_block_options(p)
    tg = p.add_argument_group("target")
    tg.add_argument("--target", default=None, type=_mass_or_rules, help="mass to reach at the low end of the band (e.g. 10.8kg), 'rules' "
                    "(what the mass rules need plus --margin), or leave out for the heaviest block")
    tg.add_argument("--margin", type=quantity("mass"), help="with --target rules: mass kept above each minimum")
    tg.add_argument("--replace-existing", action="store_true",
                    help="with --target rules: the parts now in the slot come out first")
    out = p.add_argument_group("output")
    out.add_argument("--step", type=output_file, help="write the block's STEP (mm, model frame)")
    out.add_argument("--stl", type=output_file, help="write the block's STL (mm, model frame)")
    out.add_argument("--json", type=output_file, help="write the result as JSON (SI)")
    out.add_argument("--no-fit", action="store_true", help="skip the packaging check (closed form, or OpenCascade)")
    p.set_defaults(run=_size_block)

    p = sub.add_parser("place-ballast", help="place ballast across candidate slots to meet the rules, lowest CG",
                       description="Least ballast meeting every rule and target of the plan in every load case at "
                                   "once (the ballast is the same in every case), then the lowest CG height (or yaw "
                                   "inertia, a weighted mix, or the front fraction closest to its target); blocks "
                                   "sized, checked and written; what each rule costs.")
    add_model_arguments(p)
    for action in p._actions:  # --case here takes several cases
        if action.dest == "case":
            action.metavar = "NAME[,NAME...]"
            action.help = ("consider only these load cases, comma-separated (default: the base and every case of "
                           "the file), e.g. --case race_start,qualifying")
    p.add_argument("plan", type=Path, help="ballast plan (TOML, see docs/ballast.md)")
    ov = p.add_argument_group("overrides of the plan")
    ov.add_argument("--objective", choices=["cg_height", "yaw_inertia", "mix", "front_fraction"],
                    help="what to minimise once the least ballast is found (means over the cases; front_fraction: "
                         "closest to the target front fraction)")
    ov.add_argument("--margin", type=quantity("mass"), help="mass margin above every minimum, e.g. 0.5kg")
    ov.add_argument("--confidence", type=parse_confidence, metavar="P",
                    help="meet every rule with this one-sided confidence given the model's uncertainties (e.g. 0.95 "
                         "or 95%%): each rule's margin becomes at least the one how-sure says it needs")
    ov.add_argument("--scale-resolution", metavar="MASS", type=quantity("mass"),
                    help="resolution of the scales, kept as a further margin on every mass rule, e.g. 0.1kg")
    ov.add_argument("--front-fraction", metavar="TARGET[,TOL]", type=_fraction_and_tolerance,
                    help="target front fraction and tolerance")
    ov.add_argument("--allowance", type=quantity("mass"), help="ballast beyond the least the objective may use, e.g. 0.2kg")
    ov.add_argument("--material", action="append", default=[], metavar="[SLOT=]KEY",
                    help="material of every candidate, or of one (repeatable)")
    ov.add_argument("--capacity", action="append", default=[], metavar="SLOT=MASS", type=keyed("mass", "SLOT"),
                    help="most ballast in a slot at the high end of the band (repeatable)")
    ov.add_argument("--without", action="append", default=[], metavar="SLOT", help="leave a candidate out")
    ov.add_argument("--increment", type=quantity("length"), help="manufacturing increment of every candidate")
    out = p.add_argument_group("output")
    out.add_argument("--out-model", type=output_file, help="write the ballasted model: a NEW file that extends the input")
    out.add_argument("--step", type=output_file, help="write the STEP of all blocks (mm, model frame)")
    out.add_argument("--stl", type=output_file, help="write one STL of all blocks (mm, model frame)")
    out.add_argument("--json", type=output_file, help="write the result as JSON (SI)")
    out.add_argument("--picture", type=output_file, help="write a PNG of the result (every case's CG and rules)")
    out.add_argument("--costs-picture", type=output_file, metavar="PNG",
                     help="write a bar chart of what each rule costs in ballast (PNG)")
    out.add_argument("--trade-off", type=output_file, metavar="PNG",
                     help="compute and plot the CG height / yaw inertia trade-off at the least ballast (PNG)")
    out.add_argument("--no-fit", action="store_true", help="skip the packaging check of the blocks (closed form, or OpenCascade)")
    p.set_defaults(run=_place)

    p = sub.add_parser("seat-ballast", help="ballast a group-mass rule needs and the CG height it costs",
                       description="Size the ballast a min_group_mass rule (e.g. driver + seat) needs and tabulate "
                                   "the car's CG height against the height of that ballast in the seat structure.")
    add_model_arguments(p)
    p.add_argument("--material", required=True, help="ballast material key")
    p.add_argument("--margin", required=True, type=quantity("mass"), help="mass kept above the rule's limit, e.g. 0.5kg")
    p.add_argument("--rule", help="the min_group_mass rule (default: the first one that is short)")
    p.add_argument("--seat-group", help="group the ballast joins (default: the rule's seat group)")
    p.add_argument("--plate", default="150mm,100mm", metavar="FORWARD,LEFT", type=lengths(2), help="plate footprint (default 150mm,100mm)")
    p.add_argument("--increment", default="0.5mm", type=quantity("length"), help="manufacturing increment (default 0.5mm)")
    p.add_argument("--at", metavar="X,Y", type=lengths(2), help="forward and left position of the ballast, model frame")
    p.add_argument("--heights", metavar="H1,H2,...", type=lengths(), help="ballast heights above the ground to tabulate")
    p.add_argument("--steps", type=int, default=7, help="number of heights across the seat structure (default 7)")
    p.add_argument("--plot", type=output_file, help="write the plot (PNG)")
    p.add_argument("--json", type=output_file, help="write the result as JSON (SI)")
    p.set_defaults(run=_seat)


# --- size-block ------------------------------------------------------------------------------------------------

def _spec_changes(args: argparse.Namespace, model: Any, spec: Any) -> Any:
    """Apply the command-line block options to a spec (or build one when ``spec`` is None)."""
    from massmodel.ballast.block import Chamfer, Counterbore, HolePattern
    from massmodel.ballast.sizing import Fill, spec_from_parts

    if spec is None:
        if not args.material:
            raise UsageError("--material is needed (or take the block settings from --plan)")
        if not args.fill:
            raise UsageError("--fill is needed, e.g. --fill +z (or take the block settings from --plan)")
        if args.increment is None:
            raise UsageError("--increment is needed, e.g. --increment 0.5mm (or take it from --plan)")
        spec = spec_from_parts(_material(model, args.material), args.fill,
                               increment=args.increment)
    changes: dict[str, Any] = {}
    if args.material:
        changes["material"] = _material(model, args.material)
    if args.fill:
        changes["fill"] = Fill.parse(args.fill)
    if args.increment is not None:
        changes["increment"] = args.increment
    if args.fix:
        fixed = dict(spec.fixed)
        for axis, value in args.fix:
            if axis not in ("x", "y", "z"):
                raise UsageError(f"--fix {axis}=...: expected AXIS=LENGTH with AXIS x, y or z, e.g. x=180mm")
            fixed[axis] = value
        changes["fixed"] = fixed
    hole_options = {"--hole-diameter": args.hole_diameter, "--hole-pattern": args.hole_pattern,
                    "--hole-pitch": args.hole_pitch, "--hole-columns": args.hole_columns, "--hole-pcd": args.hole_pcd,
                    "--hole-axis": args.hole_axis, "--counterbore": args.counterbore}
    stray = [name for name, value in hole_options.items() if value is not None]
    if args.holes is None and stray:
        raise UsageError(f"{', '.join(stray)} describe holes given here and need --holes N (they would otherwise be "
                         "ignored; --holes replaces a plan's holes as a whole)")
    if args.holes is not None:
        if args.hole_diameter is None:
            raise UsageError("--holes needs --hole-diameter")
        kind = args.hole_pattern or ("grid" if args.hole_columns else "line")
        pitch: tuple[float, ...] = args.hole_pitch or ()
        cb = None
        if args.counterbore:
            d, depth = args.counterbore
            cb = Counterbore(d, depth)
        fill = changes.get("fill", spec.fill)
        axis = args.hole_axis or fill.letter
        changes["holes"] = HolePattern(
            kind, args.holes, args.hole_diameter, axis=axis,
            pitch=pitch[0] if pitch else None, pitch2=pitch[1] if len(pitch) > 1 else None,
            columns=args.hole_columns, pcd=args.hole_pcd,
            counterbore=cb, counterbore_end=(fill.sign or 1) if axis == fill.letter else 1)
    if args.chamfer is not None:
        changes["chamfer"] = Chamfer(args.chamfer, args.chamfer_edges or "xyz")
    elif args.chamfer_edges and spec.chamfer is not None:
        changes["chamfer"] = Chamfer(spec.chamfer.size, args.chamfer_edges)
    if args.stock:
        changes["stock"] = args.stock
    if args.max_segment is not None:
        changes["max_segment_mass"] = args.max_segment
    if args.min_thickness is not None:
        changes["min_thickness"] = args.min_thickness
    return replace(spec, **changes) if changes else spec


def _material(model: Any, key: str) -> Any:
    if key not in model.materials:
        import difflib

        close = difflib.get_close_matches(key, list(model.materials), n=3)
        raise UsageError(f"--material: unknown material {key!r}" + (f"; did you mean {', '.join(close)}?" if close
                         else "; `massmodel materials` lists the library"))
    return model.materials[key]


def _size_block(args: argparse.Namespace) -> int:
    import numpy as np

    from massmodel.ballast.export import blocks_of_sizing, write_step, write_stl
    from massmodel.ballast.plan import load_plan
    from massmodel.ballast.sizing import Envelope, heaviest_block, size_block
    from massmodel.ballast.targets import check_fit, rules_target
    from massmodel.core.frames import Pose
    from massmodel.report.ballast import format_sizing, sizing_dict, suggestions
    from massmodel.report.summary import write_json_atomic

    model = load_from_args(args)
    spec = None
    path = None
    replace_paths: tuple[str, ...] = ()
    margin_default = None
    if args.plan:
        plan = load_plan(args.plan, model)
        if not args.slot:
            raise UsageError("--plan needs --slot: which of the plan's candidates to size")
        cand = plan.candidate(args.slot)
        env, spec, path, replace_paths = cand.envelope, cand.spec, cand.path, cand.replace
        margin_default = plan.targets.mass_margin
    elif args.box:
        if args.at is None or args.clearance is None:
            raise UsageError("--box needs --at (centre, model frame) and --clearance")
        size = args.box
        env = Envelope(args.slot or "box", (size[0], size[1], size[2]), Pose(np.eye(3), args.at), args.clearance)
    else:
        if not args.slot:
            raise UsageError("give --slot NAME (a model slot), --plan with --slot, or --box with --at and --clearance")
        env = Envelope.from_slot(model.slot(args.slot))
        if args.replace_existing:
            replace_paths = tuple(c.path for c in model.components if c.slot == args.slot)
    spec = _spec_changes(args, model, spec)
    path = path or f"ballast/{env.name}"
    rule_lines: list[str] = []
    held = [c.path for c in model.components if c.slot == env.name and c.path not in replace_paths]
    if held:
        rule_lines.append(f"note: the slot now holds {', '.join(held)}; the block is sized for the empty slot "
                          "(--replace-existing counts them out of the rules)")
    target = None
    if args.target == "rules":
        if args.margin is None and margin_default is None:
            raise UsageError("--target rules needs --margin (or a plan's mass_margin)")
        margin = args.margin if args.margin is not None else float(margin_default or 0.0)
        target, needs = rules_target(model, margin, path, replace_paths)
        if replace_paths:
            rule_lines.append(f"replacing {', '.join(replace_paths)} "
                              f"({sum(model.component(p).props.mass for p in replace_paths):.3f} kg) first")
        for n in needs:
            state = "counts" if n.counts else "does not count"
            rule_lines.append(f"rule '{n.rule}': {n.value:.3f} kg against {n.limit:.3f} + {n.margin:.3f} kg margin -> "
                              f"needs {max(n.need, 0.0):.3f} kg ({path} {state} for it)")
        if target <= 0.0:
            print("\n".join(["BALLAST BLOCK · slot " + env.name] + [f"  {x}" for x in rule_lines]
                            + ["  the mass rules already pass with the margin: no block is needed"]))
            return 0
    elif args.target is not None:
        target = args.target
    sizing = size_block(env, spec, target) if target is not None else heaviest_block(env, spec)
    fits = [] if args.no_fit else check_fit(sizing)
    others = []
    if not sizing.reached:
        for s in model.slots:
            if s.name == env.name:
                continue
            try:
                other = heaviest_block(Envelope.from_slot(s), spec)
                held = [c.path for c in model.components if c.slot == s.name]
                label = s.name + (f", once {', '.join(held)} is taken out" if held else "")
                others.append((label, other.capacity_masses()[1]))
            except ValueError:
                continue
    advice = suggestions(sizing, model.materials, others)
    print(format_sizing(sizing, fits, advice, rule_lines))
    blocks = blocks_of_sizing(sizing, path)
    if args.step:
        write_step(blocks, args.step, name=env.name)
        print(f"\nSTEP (mm, model frame) written to {args.step}")
    if args.stl:
        write_stl(blocks, args.stl)
        print(f"STL (mm, model frame) written to {args.stl}")
    if args.json:
        write_json_atomic(sizing_dict(sizing, fits, {"suggestions": advice, "rules": rule_lines}), args.json)
        print(f"JSON (SI) written to {args.json}")
    ok = sizing.reached and all(f.fits for f in fits)
    return 0 if ok else EXIT_FAIL


# --- place-ballast ---------------------------------------------------------------------------------------------

def _case_models(args: argparse.Namespace) -> tuple[dict[str, Any], list[str]]:
    """The models of the cases the placement considers (every case of the file, or those named by ``--case``,
    comma-separated; each holds the rules that apply in it) and the names of the rules of the cases left out."""
    from massmodel.modelfile.loader import load_case_models

    every = load_case_models(args.model, overrides=dict(args.overrides))
    if not args.case:
        return every, []
    names = [n.strip() for n in args.case.split(",") if n.strip()]
    if not names or len(set(names)) != len(names):
        raise UsageError(f"--case {args.case!r}: expected one or more distinct load-case names, comma-separated")
    for n in names:
        if n not in every:
            raise UsageError(f"{args.model}: --case {n!r}: no such load case; the file defines: {', '.join(every)}")
    chosen = {n: every[n] for n in names}
    others = [r.name for n, m in every.items() if n not in chosen for r in m.rules]
    return chosen, others


def _adjusted_plan(args: argparse.Namespace, model: Any) -> Any:
    """The plan with the command line's overrides."""
    from massmodel.ballast.plan import Objective, load_plan, material_override

    plan = load_plan(args.plan, model)
    if args.without:
        plan = plan.without(args.without)
    if args.objective:
        if args.objective == "front_fraction" and plan.targets.fraction_target is None and not args.front_fraction:
            raise UsageError("--objective front_fraction needs a target front fraction (--front-fraction or the "
                             "plan's front_fraction)")
        plan = plan.with_targets(objective=Objective(args.objective))
    if args.margin is not None:
        plan = plan.with_targets(mass_margin=args.margin)
    if args.scale_resolution is not None:
        plan = plan.with_targets(scale_resolution=args.scale_resolution)
    if args.allowance is not None:
        plan = plan.with_targets(ballast_allowance=args.allowance)
    if args.front_fraction:
        target, tol = args.front_fraction
        plan = plan.with_targets(fraction_target=target, fraction_tolerance=tol)
    if args.material:
        plan = material_override(plan, model, args.material)
    for slot, capacity in args.capacity:
        plan = plan.with_candidate(slot, capacity=capacity)
    if args.increment is not None:
        inc = args.increment
        for c in plan.candidates:
            plan = plan.with_candidate(c.name, spec=replace(c.spec, increment=inc))
    if not plan.candidates:
        raise UsageError("no candidate slot is left in the plan")
    return plan


def _confidence_margins(cases: dict[str, Any], plan: Any, confidence: float) -> dict[str, float]:
    """Per-rule margins (SI) that meet every rule of every case with the given confidence: the largest margin
    the model's uncertainties ask for over the cases (:func:`massmodel.uncertainty.rule_confidence`, the values
    of :func:`~massmodel.uncertainty.rule_margins`), and at least the plan's own ``[margins]`` entry."""
    from massmodel.uncertainty import rule_confidence

    out: dict[str, float] = {}
    units: dict[str, str] = {}
    for model in cases.values():
        for r in rule_confidence(model, confidence):
            out[r.name] = max(out.get(r.name, 0.0), float(r.required_margin_rss))
            units[r.name] = r.unit
    for name, value, _ in plan.margins:
        if name in out:
            out[name] = max(out[name], value)
    shown = ", ".join(f"{name} {value:.4g} {units[name]}" for name, value in out.items() if value > 0.0)
    print(f"margins for {confidence * 100:g} % confidence (one-sided, from the model's uncertainties): {shown}")
    return out


def _place(args: argparse.Namespace) -> int:
    from massmodel.ballast.export import Block, write_step, write_stl
    from massmodel.ballast.placement import place_ballast
    from massmodel.ballast.sizing import SizingError
    from massmodel.ballast.targets import check_fit
    from massmodel.report.ballast import format_placement, placement_dict
    from massmodel.report.summary import write_json_atomic

    if args.out_model is not None and args.out_model.resolve() == Path(args.model).resolve():
        raise UsageError(f"--out-model {args.out_model}: that is the input model; the ballasted model is written to "
                         "a new file that extends it")
    cases, other_rules = _case_models(args)
    model = next(iter(cases.values()))
    plan = _adjusted_plan(args, model)
    try:
        margins = _confidence_margins(cases, plan, args.confidence) if args.confidence is not None else None
        result = place_ballast(cases, plan, margins=margins, tradeoff_points=7 if args.trade_off else 0,
                               other_rules=other_rules)
    except SizingError as exc:  # a candidate's block settings that do not work in its slot: name the plan file
        field = f" (plan field '{exc.field}')" if exc.field else ""
        raise UsageError(f"{args.plan}: {exc}{field}") from None
    print(format_placement(result))
    if not result.feasible:
        if args.json:
            write_json_atomic(placement_dict(result), args.json)
            print(f"\nJSON (SI) written to {args.json}")
        return EXIT_FAIL
    blocks = []
    for al in result.allocations:
        if al.sizing is None:
            continue
        for path, piece in zip(al.paths, al.sizing.pieces, strict=True):
            blocks.append(Block(path, al.candidate.spec.material, al.candidate.name, piece))
    fit_ok = True
    written_ok = True
    if not args.no_fit:
        print("\nPACKAGING (block inside its slot with the slot's clearance)")
        for al in result.allocations:
            if al.sizing is None:
                continue
            for path, f in zip(al.paths, check_fit(al.sizing), strict=True):
                fit_ok &= f.fits
                print(f"  {path}: {'fits' if f.fits else 'DOES NOT FIT'}, clearance {f.clearance * 1e3:.3f} mm "
                      f"(required {f.required_clearance * 1e3:.3f} mm; {f.method})" + (f": {f.reason}" if f.reason else ""))
    if args.out_model:
        written_ok = _write_model(args, model, plan, result, blocks)
    if args.step and blocks:
        write_step(blocks, args.step, name="ballast")
        print(f"STEP of all blocks (mm, model frame) written to {args.step}")
    if args.stl and blocks:
        write_stl(blocks, args.stl)
        print(f"STL of all blocks (mm, model frame) written to {args.stl}")
    if args.json:
        write_json_atomic(placement_dict(result), args.json)
        print(f"JSON (SI) written to {args.json}")
    if args.picture or args.costs_picture or args.trade_off:
        from massmodel.pictures.ballast_plot import plot_placement, plot_rule_costs, plot_tradeoff

        for path, fn in ((args.picture, plot_placement), (args.costs_picture, plot_rule_costs),
                         (args.trade_off, plot_tradeoff)):
            if path:
                fn(result, path)
                print(f"picture written to {path}")
    return 0 if (result.passed and fit_ok and written_ok) else EXIT_FAIL


def _write_model(args: argparse.Namespace, model: Any, plan: Any, result: Any, blocks: list[Any]) -> bool:
    """Write the ballasted model (a new file extending the input), after loading its text back in every case the
    placement considered and comparing it with the placed ballast; then check its rules in every load case of the
    file. False when a case does not reproduce (nothing written) or a rule fails in some case."""
    from massmodel.ballast.export import ballasted_model_text, check_written_cases, write_text_atomic

    overrides = dict(args.overrides)
    removed = [p for al in result.allocations for p in al.candidate.replace]
    new_slots = [al.candidate.envelope for al in result.allocations if al.candidate.from_plan and al.sizing]
    names = ", ".join(c.name for c in result.cases)
    header = [f"{model.name} with ballast placed by massmodel place-ballast (plan '{plan.name}', "
              f"{Path(args.plan).name}), meeting the rules of the load cases {names} at once.",
              f"Objective {plan.targets.objective.value}; mass margin {plan.targets.mass_margin:.3f} kg at the low "
              "end of each density band.",
              "Generated file: re-run place-ballast rather than editing it by hand."]
    text = ballasted_model_text(model=model, model_path=args.model, out_path=args.out_model,
                                name=f"{model.name} (ballasted)", remove=removed, blocks=blocks,
                                new_slots=new_slots, overrides=overrides, header=header)
    expected = {c.name: c.ballasted for c in result.cases}
    diff, where = check_written_cases(args.out_model, expected, text)  # checked before anything is written
    if diff > 1e-9:
        print(f"\nNOT WRITTEN: {args.out_model} would not reproduce the placed ballast in case '{where}' "
              f"(relative difference {diff:.3e}); a --set override that a load case sets too cannot be repeated in "
              "the file")
        return False
    write_text_atomic(args.out_model, text)
    print(f"\nballasted model written to {args.out_model} (extends {args.model}); loaded back in every case "
          f"({names}): mass properties agree to {diff:.1e} (relative)")
    return _check_load_cases(args.out_model)


def _check_load_cases(path: Path) -> bool:
    """The rules of a written ballasted model in every load case of its file (nominal densities); False when any
    fails."""
    from massmodel.modelfile.loader import load_case_models
    from massmodel.report.rules import rule_limit_text
    from massmodel.vehicle.balance import check_rules_in_cases

    models = load_case_models(path)
    results = check_rules_in_cases(models)
    failing = [(case, r) for case, r in results if not r.passed]
    print(f"rules of the written model in every load case ({', '.join(models)}; nominal densities): "
          + ("all pass" if not failing else f"{len(failing)} FAIL"))
    for case, r in failing:
        print(f"  FAIL in '{case}': {r.name}: {r.value:.4g} {r.unit}, limit {rule_limit_text(r)}, "
              f"margin {r.margin:+.4g} {r.unit}")
    return not failing


# --- seat-ballast ----------------------------------------------------------------------------------------------

def _seat(args: argparse.Namespace) -> int:
    import numpy as np

    from massmodel.ballast.seat import seat_ballast_study
    from massmodel.report.ballast import format_seat, seat_dict
    from massmodel.report.summary import write_json_atomic

    model = load_from_args(args)
    fx, fy = args.plate
    at = args.at
    heights = np.array(args.heights) if args.heights else None
    if args.steps < 2:
        raise UsageError("--steps must be at least 2")
    study = seat_ballast_study(model, _material(model, args.material), args.margin,
                               rule_name=args.rule, seat_group=args.seat_group, footprint=(fx, fy),
                               increment=args.increment, at=at,  # type: ignore[arg-type]
                               heights=heights, steps=args.steps)
    print(format_seat(study))
    if args.plot:
        from massmodel.pictures.ballast_plot import plot_seat_study

        plot_seat_study(study, args.plot)
        print(f"\nplot written to {args.plot}")
    if args.json:
        write_json_atomic(seat_dict(study), args.json)
        print(f"JSON (SI) written to {args.json}")
    return 0
