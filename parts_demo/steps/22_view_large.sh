#!/usr/bin/env bash
# The sheet of a large invented model: 3,000 generated parts (the render benchmark's generator: boxes, tubes,
# spheres, tori, cones, point masses, cut-outs, mirrored copies), drawn from one merged mesh built in bulk
# (exports/demo/view_3000_parts.png). The command prints the parts, the triangles and the time of the meshes, each
# view and the sheet.
set -euo pipefail
$PY -c "import sys; sys.path.insert(0, 'benchmarks'); from bench_render import generated_model; \
open(sys.argv[1], 'w', encoding='utf-8').write(generated_model(3000))" "$OUT/generated_3000.toml"
$MM render "$OUT/generated_3000.toml" -o "$OUT/view_3000_parts.png"
