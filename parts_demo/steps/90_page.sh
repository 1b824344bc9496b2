#!/usr/bin/env bash
# The page the whole team opens: one self-contained HTML file of the ballasted demo car (every load case, the
# mass budget, CG and inertia, pictures and the car in 3-D) — exports/demo/bl3_page.html, opened offline.
set -euo pipefail
$MM publish "$OUT/bl3_ballasted.toml" -o "$OUT/bl3_page.html"
