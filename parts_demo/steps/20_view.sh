#!/usr/bin/env bash
# Pictures of the demo car: the four-view sheet (exports/demo/view.png), one isometric view coloured by mass
# maturity (view_maturity.png) and the flat CG chart with the rule limits (cg_chart.png).
set -euo pipefail
$MM render "$CAR" -o "$OUT/view.png"
$MM render "$CAR" -o "$OUT/view_maturity.png" --view iso --size 1600x1000 --colour-by maturity
$MM cg-chart "$CAR" -o "$OUT/cg_chart.png"
