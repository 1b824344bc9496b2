"""Speed of the off-screen pictures (not a test: machines are shared and noisy).

Measured in fresh processes (cold: imports, model loading, meshing, renderer start, views, sheet):

1. the four-view sheet of the demo car (target < 5 s);
2. the four-view sheet of generated models of 1,000 and 10,000 components (target < 15 s each), and the row
   "render of 10,000 parts / render of the demo car (cold, wall)" with its target of at most 3x.

Each case prints the triangle counts (all, and drawn in each view), the seconds per view and the shares spent
meshing, rendering and on the see-through ray tests, against a reference measured in the same run: a cold
process that renders one sphere off-screen and saves it (the floor cost of any picture on this machine). ``--cut-outs`` also compares the two ways of meshing the demo's parts with cut-outs
(manifold3d boolean difference, used, against tessellating OpenCascade's solid).

Run: ``.venv/bin/python benchmarks/bench_render.py [--cut-outs]``
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))  # this checkout's massmodel, also for the in-process comparison
sys.path.insert(0, str(Path(__file__).resolve().parent))  # benchmarks/targets.py
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"
ENV = {**os.environ, "VTK_DEFAULT_OPENGL_WINDOW": "vtkEGLRenderWindow", "PYTHONPATH": str(ROOT)}

CHILD = r"""
import json, sys, time, resource
t0 = time.perf_counter()
from massmodel import load_model
from massmodel.pictures.scene import build_scene
from massmodel.pictures.sheet import render_sheet
t1 = time.perf_counter()
model = load_model(sys.argv[1])
t2 = time.perf_counter()
scene = build_scene(model)
t3 = time.perf_counter()
result = render_sheet(scene, sys.argv[2], size=(2000, 1400))
t4 = time.perf_counter()
ru = resource.getrusage(resource.RUSAGE_SELF)
print(json.dumps({"import": t1 - t0, "load": t2 - t1, "mesh": t3 - t2, "render_compose": t4 - t3,
                  "seconds": result.seconds, "parts": len(model.components), "triangles": int(len(scene.faces)),
                  "drawn": [v.triangles for v in result.views], "edges": int(len(scene.edges)),
                  "cpu": ru.ru_utime + ru.ru_stime}))
"""

REFERENCE = r"""
import pyvista as pv
pl = pv.Plotter(off_screen=True, window_size=(800, 600))
pl.add_mesh(pv.Sphere())
pl.screenshot(sys.argv[1])
pl.close()
"""


def generated_model(n: int, seed: int = 20261201) -> str:
    """Model-file text of an invented vehicle with ``n`` parts (boxes, cylinders, tubes, spheres, tori, cones,
    point masses; one in ten with a cut-out; a fifth mirrored left to right)."""
    rng = np.random.default_rng(seed)
    lines = [
        '[model]\nname = "generated benchmark vehicle"\n[units]\nlength = "mm"\nmass = "kg"\nangle = "deg"',
        '[vehicle]\naxes = { forward = "+x", left = "+y", up = "+z" }\nwheelbase = "2800 mm"\n'
        'track_front = "1500 mm"\ntrack_rear = "1500 mm"\nfront_axle_station = "0 mm"\nground_level = "-300 mm"',
    ]
    groups = ["chassis", "power", "body", "suspension", "systems", "cabin"]
    for k, g in enumerate(groups):
        lines.append(f'[[group]]\npath = "{g}"\ncolour = "#{(40 * k + 60) % 256:02x}7080"\nmaturity = "calculated"')
    made = 0
    k = 0
    while made < n:
        g = groups[k % len(groups)]
        mirror = made + 2 <= n and rng.random() < 0.2
        side = "left/" if mirror else ""
        x = rng.uniform(-3300, 700)
        y = rng.uniform(150, 700) if mirror else rng.uniform(-500, 500)
        z = rng.uniform(-230, 600)
        rot = [round(float(a), 1) for a in rng.uniform(-40, 40, 3)]
        kind = rng.choice(["box", "cylinder", "tube", "sphere", "torus", "cone", "point"],
                          p=[0.35, 0.2, 0.2, 0.08, 0.05, 0.07, 0.05])
        head = f'[[part]]\npath = "{g}/{side}p{k:04d}"\nat = [{x:.1f}, {y:.1f}, {z:.1f}]\n'
        head += f'rotate = {{ extrinsic = "xyz", angles = {rot} }}\n'
        if mirror:
            head += "mirror = true\n"
        a, b, c = (float(v) for v in rng.uniform(20, 160, 3))
        if kind == "box":
            body = f'shape = "box"\nsize = [{a:.1f}, {b:.1f}, {c:.1f}]\nmaterial = "aluminium_6061_t6"\n'
            if k % 10 == 0:
                body += f'cut = [ {{ shape = "cylinder", radius = {min(a, b) / 4:.1f}, length = {c:.1f} }} ]\n'
        elif kind == "cylinder":
            body = f'shape = "cylinder"\nradius = {a / 2:.1f}\nlength = {c:.1f}\nmaterial = "structural_steel"\n'
        elif kind == "tube":
            body = (f'shape = "tube"\nouter_radius = {a / 4:.1f}\ninner_radius = {a / 5:.1f}\nlength = {4 * c:.1f}\n'
                    'material = "structural_steel"\n')
        elif kind == "sphere":
            body = f'shape = "sphere"\nradius = {a / 3:.1f}\nmass = "0.8 kg"\n'
        elif kind == "torus":
            body = f'shape = "torus"\nring_radius = {a:.1f}\ntube_radius = {a / 8:.1f}\nmass = "0.5 kg"\n'
        elif kind == "cone":
            body = f'shape = "cone"\nradius = {a / 2:.1f}\nheight = {c:.1f}\nmass = "0.4 kg"\n'
        else:
            body = 'shape = "point"\nmass = "0.3 kg"\n'
        lines.append(head + body)
        made += 2 if mirror else 1
        k += 1
    lines.append('[[slot]]\nname = "floor"\nshape = "box"\nsize = [300, 300, 40]\nat = [-1200, 0, -230]\n'
                 'clearance = "1 mm"')
    return "\n".join(lines) + "\n"


def cold(script: str, *args: str) -> tuple[float, str]:
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-c", "import sys\n" + script, *args], capture_output=True, text=True,
                         env=ENV, cwd=ROOT)
    wall = time.perf_counter() - t0
    if out.returncode != 0:
        raise SystemExit(f"benchmark child failed:\n{out.stderr}")
    return wall, out.stdout


def report_case(name: str, target: float, wall: float, data: dict, reference: float) -> None:
    sec = data["seconds"]
    views = [k for k in sec if k.startswith("view_")]
    view_total = sum(sec[k] for k in views)
    start = sec["render"] - view_total - sec["rays"]  # renderer start (imports, window, static actors)
    mesh = data["mesh"]
    render = sec["render"]
    rays = sec["rays"]
    compose = sec["compose"]
    busy = data["import"] + data["load"] + mesh + render + compose
    drawn = data["drawn"]
    print(f"\n{name}: {data['parts']} parts, {data['triangles']} triangles and {data['edges']} outline edges, "
          f"2000x1400 px, four views")
    print("  triangles drawn a view (facing the camera, and see-through parts): "
          + ", ".join(str(d) for d in drawn) + f" (mean {np.mean(drawn) / data['triangles']:.0%} of all)")
    print(f"  cold process wall {wall:.2f} s (target < {target:.0f} s: ratio {wall / target:.2f}); "
          f"CPU {data['cpu']:.2f} s; reference {reference:.2f} s -> {wall / reference:.2f} x reference")
    print("  seconds per view: " + ", ".join(f"{k[5:]} {sec[k]:.2f} s" for k in views)
          + f" (mean {view_total / len(views):.2f} s)")
    print(f"  shares of the work: imports {data['import'] / busy:.0%} · model file {data['load'] / busy:.0%} · "
          f"building meshes {mesh / busy:.0%} · rendering {render / busy:.0%} "
          f"(renderer start {start:.2f} s, views {view_total:.2f} s) · sheet composition {compose / busy:.0%}")
    work = mesh + render
    print(f"  meshing / rendering / ray tests: {mesh:.2f} s / {render - rays:.2f} s / {rays:.2f} s "
          f"({mesh / work:.0%} / {(render - rays) / work:.0%} / {rays / work:.0%})")


def cutout_comparison() -> None:
    from massmodel import load_model
    from massmodel.pictures.meshes import _cad_part_mesh, part_mesh

    model = load_model(CAR)
    parts = [c for c in model.components if c.cutouts]
    t0 = time.perf_counter()
    for c in parts:
        part_mesh(c, 0.002)
    t_manifold = time.perf_counter() - t0
    t0 = time.perf_counter()
    import cadquery  # noqa: F401

    t_import = time.perf_counter() - t0
    t0 = time.perf_counter()
    vols = []
    for c in parts:
        v, f = _cad_part_mesh(c, 0.002)
        a, b, cc = (v[f[:, k]] for k in range(3))
        vols.append(abs(np.einsum("ij,ij->i", a, np.cross(b, cc)).sum() / 6.0 / c.volume - 1.0))
    t_cad = time.perf_counter() - t0
    print(f"\ncut-outs ({len(parts)} demo parts): manifold3d {t_manifold * 1e3:.0f} ms; OpenCascade tessellation "
          f"{t_cad * 1e3:.0f} ms plus {t_import:.1f} s to import cadquery (ratio {t_cad / t_manifold:.1f} x, "
          f"{(t_cad + t_import) / t_manifold:.0f} x cold); OpenCascade mesh volume error up to {max(vols):.2%}")


def main() -> int:
    from targets import Targets  # benchmarks/targets.py

    targets = Targets()
    with tempfile.TemporaryDirectory() as tmp:
        ref_wall, _ = cold(REFERENCE, str(Path(tmp) / "ref.png"))
        print(f"reference: cold process, one sphere rendered off-screen and saved: {ref_wall:.2f} s")
        demo_wall, out = cold(CHILD, str(CAR), str(Path(tmp) / "car.png"))
        report_case("demo car", 5.0, demo_wall, json.loads(out), ref_wall)
        walls = {}
        for n in (1000, 10_000):
            big = Path(tmp) / f"generated_{n}.toml"
            big.write_text(generated_model(n), encoding="utf-8")
            walls[n], out = cold(CHILD, str(big), str(Path(tmp) / f"big_{n}.png"))
            report_case(f"generated model, {n} parts", 15.0, walls[n], json.loads(out), ref_wall)
    print()
    targets.at_most("render of 10,000 parts / render of the demo car (cold, wall)", walls[10_000] / demo_wall, 3.0)
    targets.info("render of 1,000 parts / render of the demo car (cold, wall)", walls[1000] / demo_wall, "x")
    if "--cut-outs" in sys.argv:
        cutout_comparison()
    return targets.exit_code()


if __name__ == "__main__":
    sys.exit(main())
