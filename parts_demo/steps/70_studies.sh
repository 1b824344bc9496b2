#!/usr/bin/env bash
# Studies on the demo car:
#  1. a sweep of a floor ballast block's station and mass (parts_demo/bl3_ballast_study.toml makes them parameters),
#     with the rule limits drawn (exports/demo/sweep_ballast.png, .csv, .json);
#  2. a one-at-a-time sensitivity ranking of a few parameters by their effect on the front share (sensitivity.png);
#  3. the fuel-burn track from the full tank of the race_start case (30 kg) to empty (fuel_burn.png);
#  4. what changed since the previous build of the car (parts_demo/brindlecombe_bl3_previous.toml), with a waterfall
#     of the mass changes, and the same comparison as a gate that must fail (exit 1) on 0.5 kg / 2 mm;
#  5. the mass budget for spreadsheets (budget.csv, budget.xlsx when openpyxl is installed).
set -euo pipefail
STUDY="parts_demo/bl3_ballast_study.toml"
PREVIOUS="parts_demo/brindlecombe_bl3_previous.toml"

echo "── 1. Sweep: a tungsten floor block moved fore and aft, at three masses ────────────────────────────"
$MM vary "$STUDY" --param "trim_block_x=-600mm:-2400mm:19" --param "trim_block_mass=6kg,10kg,14kg" \
  --outputs mass,cg_x,cg_height,front_share,front_axle,rear_axle,margins \
  --csv "$OUT/sweep_ballast.csv" --json "$OUT/sweep_ballast.json" --plot "$OUT/sweep_ballast.png" \
  | tee "$OUT/sweep_ballast.txt" | sed -n '1,3p;/^Rule margins/,/^$/p'

echo
echo "── 2. Which parameter moves the front share most? ───────────────────────────────────────────────────"
$MM nudge "$STUDY" --step trim_block_x=50mm --step trim_block_mass=1kg --step wheelbase=10mm --step cell_x=20mm \
  --step driver_mass=2kg --step ride_height=5mm --rank-by front_share,cg_height \
  --json "$OUT/sensitivity.json" --plot "$OUT/sensitivity.png" | tee "$OUT/sensitivity.txt" | sed -n '1,12p'

echo
echo "── 3. Fuel burn from the race_start tank (30 kg) to empty ───────────────────────────────────────────"
$MM fuel-burn "$CAR" --case race_start --steps 16 --csv "$OUT/fuel_burn.csv" --json "$OUT/fuel_burn.json" \
  --plot "$OUT/fuel_burn.png" | tee "$OUT/fuel_burn.txt"

echo
echo "── 4. What changed since the previous build ─────────────────────────────────────────────────────────"
$MM changes "$PREVIOUS" "$CAR" --json "$OUT/changes.json" --waterfall "$OUT/changes_waterfall.png" \
  | tee "$OUT/changes.txt"
set +e
$MM changes "$PREVIOUS" "$CAR" --fail-over mass=0.5kg --fail-over cg=2mm > "$OUT/changes_gate.txt"
status=$?
set -e
grep "OVER LIMIT" "$OUT/changes_gate.txt" || true
if [ "$status" -eq 1 ]; then
  echo "the change gate fails as intended (exit $status)"
else
  echo "change gate: expected exit 1, got $status" >&2
  exit 1
fi

echo
echo "── 5. Mass budget for spreadsheets ──────────────────────────────────────────────────────────────────"
if "$PY" -c "import openpyxl" 2>/dev/null; then
  $MM budget "$CAR" --csv "$OUT/budget.csv" --xlsx "$OUT/budget.xlsx"
else
  $MM budget "$CAR" --csv "$OUT/budget.csv"
  echo "(openpyxl not installed: no XLSX; pip install 'massmodel[xlsx]')"
fi
