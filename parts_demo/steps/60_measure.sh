#!/usr/bin/env bash
# Closing the loop with the scales on an invented measurement day (parts_demo/bl3_measurements.toml): corner
# weights and the model-versus-scales reconciliation (with a reconciled model file that extends the car), the
# axle-lift CG height with its uncertainty, and the pendulum inertia reductions compared with the model.
set -euo pipefail
SESSION=parts_demo/bl3_measurements.toml
$MM weigh "$SESSION" --model "$CAR" --json "$OUT/weighing.json" --write-model "$OUT/bl3_reconciled.toml" \
  | tee "$OUT/weighing.txt"
echo
$MM tilt "$SESSION" --model "$CAR" --json "$OUT/axle_lift.json" | tee "$OUT/axle_lift.txt"
echo
$MM swing "$SESSION" --model "$CAR" --json "$OUT/pendulum.json" | tee "$OUT/pendulum.txt"
