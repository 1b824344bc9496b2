#!/usr/bin/env bash
# Ballast for every load case at once, and what each rule costs. Step 40 placed the demo car's ballast over all
# five load cases (base, qualifying, race_start, driver_out, test_day); here: the cost of each rule and the
# trade-off between CG height and yaw inertia, a placement for the race trim alone (its ballasted model is loaded
# back in that case), and seat ballast under a rule that keeps it at the seated driver's height.
# Outputs under exports/demo/: ballast_costs.txt/.json/.png, ballast_tradeoff.png, bl3_ballasted_race.toml,
# ballast_95.txt, bl3_ballasted_95.toml, how_sure_95.txt, seat_ballast_rule.txt/.png.
set -euo pipefail
PLAN="parts_demo/bl3_ballast_plan.toml"

echo "── 1. What each rule costs: dual values (ballast per step of the limit) and the ballast without it ─────"
$MM place-ballast "$CAR" "$PLAN" --no-fit --json "$OUT/ballast_costs.json" \
  --costs-picture "$OUT/ballast_costs.png" --trade-off "$OUT/ballast_tradeoff.png" > "$OUT/ballast_costs.txt"
sed -n '/^BALANCE IN EACH CASE/,/^$/p;/^WHAT EACH RULE COSTS/,/^$/p;/^CG HEIGHT \/ YAW/,/^$/p;/^EVERY CASE PASSES/p;/^FAILS IN CASE/p' \
  "$OUT/ballast_costs.txt"

echo
echo "── 2. The race trim alone (--case race_start): the ballasted model is loaded back in that case ─────────"
set +e
$MM place-ballast "$CAR" "$PLAN" --case race_start --no-fit --out-model "$OUT/bl3_ballasted_race.toml" \
  > "$OUT/ballast_race.txt"
code=$?
set -e
grep -E "^EVERY CASE|^FAILS|ballasted model written|rules of the written model|FAIL in" "$OUT/ballast_race.txt"
echo "   (exit code $code: 0 when the race-trim ballast also passes every other case of the file, 1 when not)"

echo
echo "── 3. Ballast that passes every rule with 95 % confidence given the model's uncertainties ─────────────"
$MM place-ballast "$CAR" "$PLAN" --no-fit --confidence 95% --out-model "$OUT/bl3_ballasted_95.toml" \
  > "$OUT/ballast_95.txt"
grep -E "^margins for|ballast added|^EVERY CASE|^FAILS" "$OUT/ballast_95.txt"
$MM how-sure "$OUT/bl3_ballasted_95.toml" --confidence 95% --strict --samples 5000 > "$OUT/how_sure_95.txt"
echo "   how-sure of the ballasted model at 95 %: every rule passes in every case (exit 0)"

echo
echo "── 4. Seat ballast under a rule: within 60 mm of the seated driver's CG height ───────────────────────"
$MM seat-ballast parts_demo/bl3_seat_rule.toml --set driver_mass="70 kg" --material tungsten_b777_class3 \
  --margin 0.5kg --plot "$OUT/seat_ballast_rule.png" | tee "$OUT/seat_ballast_rule.txt" | sed -n '1,20p'
