#!/usr/bin/env bash
# The page the whole team opens: one self-contained HTML file of the ballasted demo car (every load case, the
# mass budget, CG and inertia, pictures and the car in 3-D, how sure the model is, the ballast plan with what each
# rule costs, the chassis estimates and what changed since the previous build) — exports/demo/bl3_page.html, opened offline.
set -euo pipefail
$MM publish "$OUT/bl3_ballasted.toml" -o "$OUT/bl3_page.html" --ballast "$OUT/ballast.json" \
  --previous parts_demo/brindlecombe_bl3_previous.toml --speed 126
