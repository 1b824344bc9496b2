#!/usr/bin/env bash
# Load cases of the demo car side by side (qualifying fuel, full tank, driver out, test-day logger), and the
# steady-state load transfer while braking at 1.2 g and cornering at 1.5 g (rigid vehicle, assumptions printed).
set -euo pipefail
$MM report "$CAR" --all-cases --json "$OUT/load_cases.json" | tee "$OUT/load_cases.txt"
echo
$MM load-transfer "$CAR" --brake 1.2 --corner 1.5 --accel -0.8 1.0 --json "$OUT/load_transfer.json" \
  | tee "$OUT/load_transfer.txt"
echo
# the same in qualifying trim (10 kg of fuel)
$MM load-transfer "$CAR" --case qualifying --brake 1.2 --corner 1.5 --json "$OUT/load_transfer_qualifying.json" \
  | sed -n '1,/^$/p;/^ *static/,/^$/p'
