"""Picture commands: ``render`` (off-screen PNG sheet), ``view`` (interactive window) and ``cg-chart``."""

from __future__ import annotations

import argparse
import time

from massmodel.core.errors import UsageError

from .args import in_unit, output_file
from .core import add_model_arguments, load_from_args

__all__ = ["register", "parse_size", "scene_options"]

HIDEABLE = ("group-cgs", "slots", "labels", "axes", "ground")


def parse_size(text: str) -> tuple[int, int]:
    """'2000x1400' → (2000, 1400); a clear ValueError naming the option otherwise."""
    parts = text.lower().replace("×", "x").split("x")
    try:
        w, h = (int(p) for p in parts)
    except ValueError:
        raise UsageError(f"option --size: {text!r} is not WIDTHxHEIGHT in pixels (e.g. 2000x1400)") from None
    return w, h


def _hidden(items: list[str]) -> set[str]:
    out: set[str] = set()
    for item in items:
        for name in (s.strip() for s in item.split(",")):
            if not name:
                continue
            if name not in HIDEABLE:
                raise UsageError(f"option --hide: unknown item {name!r}; items: {', '.join(HIDEABLE)}")
            out.add(name)
    return out


def scene_options(args: argparse.Namespace):  # -> SceneOptions
    """Scene options from the shared picture arguments."""
    from massmodel.pictures.scene import ColourBy, SceneOptions

    hide = _hidden(args.hide)
    if not args.tolerance > 0:
        raise UsageError(f"option --tolerance: {args.tolerance} mm must be a positive chord error")
    return SceneOptions(
        colour_by=ColourBy(args.colour_by),
        group_depth=args.group_depth,
        group_cgs="group-cgs" not in hide,
        slots="slots" not in hide,
        labels="labels" not in hide,
        principal_axes="axes" not in hide,
        ground="ground" not in hide,
        chord_tolerance=args.tolerance * 1e-3,
    )


def _picture_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--colour-by", choices=["group", "material", "density", "maturity"], default="group",
                   help="part colours: by group (default), material, density (mass / net volume) or mass maturity")
    p.add_argument("--group-depth", type=int, default=1, metavar="N",
                   help="group level of the legend and the group CG markers (1 = top-level groups)")
    p.add_argument("--hide", action="append", default=[], metavar="ITEM[,ITEM]",
                   help=f"leave out: {', '.join(HIDEABLE)} (repeatable or comma-separated)")
    p.add_argument("--tolerance", type=in_unit("length", "mm"), default=2.0, metavar="MM",
                   help="chord error of the display meshes, mm (default 2)")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("render", help="off-screen picture: a PNG sheet of four views (or one view)")
    add_model_arguments(p)
    p.add_argument("-o", "--output", type=output_file, required=True, metavar="FILE.png", help="PNG file to write")
    p.add_argument("--view", choices=["sheet", "side", "top", "front", "iso"], default="sheet",
                   help="sheet of four views (default) or one view")
    p.add_argument("--size", default="2000x1400", metavar="WxH", help="picture size in pixels (default 2000x1400)")
    _picture_arguments(p)
    p.set_defaults(run=_render)

    p = sub.add_parser("view", help="the same scene in an interactive window (needs a display)")
    add_model_arguments(p)
    _picture_arguments(p)
    p.set_defaults(run=_view)

    p = sub.add_parser("cg-chart", help="flat side-view chart of the CG against the axles and the rule limits")
    add_model_arguments(p)
    p.add_argument("-o", "--output", type=output_file, required=True, metavar="FILE.png", help="PNG file to write")
    p.add_argument("--size", default="1800x1200", metavar="WxH", help="chart size in pixels (default 1800x1200)")
    p.set_defaults(run=_cg_chart)


def _render(args: argparse.Namespace) -> int:
    from massmodel.pictures.scene import build_scene
    from massmodel.pictures.sheet import render_sheet

    t0 = time.perf_counter()
    size = parse_size(args.size)
    options = scene_options(args)
    model = load_from_args(args)
    scene = build_scene(model, options)
    result = render_sheet(scene, args.output, size=size, view=args.view)
    sec = result.seconds
    views = ", ".join(f"{p.name} {sec[f'view_{p.name}']:.2f} s" for p in result.panels)
    print(f"{args.output}: {size[0]}x{size[1]} px, {len(result.panels)} view(s) of '{model.name}' "
          f"({len(model.components)} parts, {len(scene.faces)} triangles)")
    print(f"  time: meshes {sec['mesh']:.2f} s · renderer and views {sec['render']:.2f} s ({views}) · "
          f"sheet {sec['compose']:.2f} s · total {time.perf_counter() - t0:.2f} s")
    if scene.fallback_parts:
        print(f"  cut-outs meshed through OpenCascade for: {', '.join(scene.fallback_parts)}")
    for line in result.title_rows:
        if line[0] == "rule checks":
            print(f"  rule checks: {line[1]}")
    return 0


def _view(args: argparse.Namespace) -> int:
    from massmodel.pictures.viewer import NoDisplayError, display_available

    if not display_available():
        raise NoDisplayError(
            "no display found (DISPLAY and WAYLAND_DISPLAY are unset), so no window can open; "
            f"write a picture instead: massmodel render {args.model} -o view.png"
        )
    from massmodel.pictures.scene import build_scene
    from massmodel.pictures.sheet import title_block_rows
    from massmodel.pictures.viewer import show_interactive

    model = load_from_args(args)
    scene = build_scene(model, scene_options(args))
    show_interactive(scene, [f"{label}: {value}" for label, value in title_block_rows(scene)])
    return 0


def _cg_chart(args: argparse.Namespace) -> int:
    from massmodel.pictures.cgchart import render_cg_chart

    size = parse_size(args.size)
    model = load_from_args(args)
    chart = render_cg_chart(model, args.output, size=size)
    print(f"{args.output}: CG chart of '{model.name}', {size[0]}x{size[1]} px")
    print(f"  CG station {chart.station:+.4f} m (along forward from the model origin), {chart.height:.4f} m "
          "above ground")
    for b in chart.bands:
        lo = f"{b.low:+.4f}" if b.low is not None else "open"
        hi = f"{b.high:+.4f}" if b.high is not None else "open"
        move = b.shift_needed(chart.station)
        state = "inside" if move == 0.0 else f"outside: move the CG {abs(move) * 1e3:.1f} mm " + (
            "forward" if move > 0 else "rearward")
        print(f"  {b.name}: allowed station {lo} .. {hi} m, CG {state}")
    if chart.height_limit is not None:
        print(f"  max CG height {chart.height_limit:.4f} m above ground, margin "
              f"{(chart.height_limit - chart.height) * 1e3:+.1f} mm")
    return 0
