"""Speed of `massmodel export` on the demo car: STEP + STL + GLB + sidecar against the 5 s target.

Reference measured in the same run: cadquery writing the same solids as one plain STEP compound (no names, colours,
nesting or placements), the least any STEP export of this geometry costs. The export is timed in a warm process
(library imports excluded; they are printed apart), and once more as the full command line in a fresh process.

Run from the repository root: .venv/bin/python benchmarks/bench_export.py
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

TARGET_S = 5.0


def main() -> int:
    t = time.perf_counter()
    import cadquery as cq
    import trimesh  # noqa: F401

    imports_s = time.perf_counter() - t
    from massmodel.cad.export import ExportOptions, export_model
    from massmodel.cad.solids import component_solid, has_solid
    from massmodel.modelfile.loader import load_model

    car = ROOT / "parts_demo/brindlecombe_bl3.toml"
    model = load_model(car)
    with tempfile.TemporaryDirectory() as tmp:
        times = []
        for k in range(2):
            t = time.perf_counter()
            result = export_model(model, Path(tmp) / f"run{k}", ExportOptions())
            times.append(time.perf_counter() - t)
        export_s = min(times)
        t = time.perf_counter()
        solids = [component_solid(c) for c in model.components if has_solid(c)]
        cq.Compound.makeCompound([cq.Shape.cast(s) for s in solids]).exportStep(str(Path(tmp) / "plain.step"))
        plain_s = time.perf_counter() - t
        sizes = {p.suffix: p.stat().st_size for p in result.files}
        t = time.perf_counter()
        cmd = [sys.executable, "-m", "massmodel", "export", str(car), "--out", str(Path(tmp) / "cli")]
        subprocess.run(cmd, check=True, capture_output=True, cwd=ROOT)
        cli_s = time.perf_counter() - t
    print(f"demo car: {len(result.exported)} solids; STEP {sizes['.step'] / 1e6:.1f} MB, STL {sizes['.stl'] / 1e6:.1f} MB, "
          f"GLB {sizes['.glb'] / 1e6:.1f} MB (chord 0.1 mm)")
    print(f"  export STEP + STL + GLB + sidecar: {export_s:.2f} s (best of {len(times)}) · target {TARGET_S:.0f} s · "
          f"{'OK' if export_s < TARGET_S else 'SLOWER THAN TARGET'} ({TARGET_S / export_s:.1f}x margin)")
    print(f"  reference, plain cadquery STEP of the same solids: {plain_s:.2f} s · ratio {export_s / plain_s:.2f}")
    print(f"  full command in a fresh process (imports, model file, export): {cli_s:.2f} s; "
          f"cadquery + trimesh import alone {imports_s:.2f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
