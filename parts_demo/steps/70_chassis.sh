#!/usr/bin/env bash
# Chassis estimates of the demo car with roll-yaw (docs/chassis.md): the [chassis] section of the model file, the
# car as built (sprung/unsprung mass, roll and lateral load transfer, aero, pitch, single-track yaw response, two
# pictures), setting the cross weight from the scales, and the effect of the ballast placed by the place-ballast
# step (exports/demo/bl3_ballasted.toml, written by 40_ballast.sh) on the load transfer distribution and the yaw
# response. Linear, steady-state estimates: track testing and the team's simulation decide.
set -euo pipefail
BALLASTED="$OUT/bl3_ballasted.toml"

echo "── 1. The [chassis] section of $CAR (invented values) ─────────────────────────────────────────"
sed -n '/^\[chassis\]/,/^# Materials/p' "$CAR" | sed '$d'

echo
echo "── 2. The car as built ────────────────────────────────────────────────────────────────────────────"
$MM roll-yaw "$CAR" --corner 1.0 --corner 1.5 --brake 1.2 --drive 0.6 --json "$OUT/chassis.json" \
  --picture-loads "$OUT/chassis_corner_loads.png" --picture-yaw "$OUT/chassis_step_steer.png" | tee "$OUT/chassis.txt"

echo
echo "── 3. Cross weight: mean corner weights of the measurement day (parts_demo/bl3_measurements.toml) ──"
$MM roll-yaw "$CAR" --cross-target 0.50 --adjust-corner FL --thread-pitch 1.5 --scales 95.07 91.70 124.07 127.07 \
  | sed -n '/^CROSS WEIGHT/,/^after/p'

echo
echo "── 4. The ballast placed by place-ballast: load transfer distribution and yaw response ─────────────"
if [ ! -f "$BALLASTED" ]; then
  echo "   ($BALLASTED is missing: placing the ballast as the 40_ballast step does)"
  $MM place-ballast "$CAR" parts_demo/bl3_ballast_plan.toml --out-model "$BALLASTED" > /dev/null
fi
$MM roll-yaw "$BALLASTED" --json "$OUT/chassis_ballasted.json" > "$OUT/chassis_ballasted.txt"
"$PY" - "$OUT/chassis.json" "$OUT/chassis_ballasted.json" <<'PYEOF'
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
rows = [
    ("mass, kg", lambda d: d["mass_kg"], ".2f"),
    ("sprung mass, kg", lambda d: d["mass_split"]["sprung_mass_kg"], ".2f"),
    ("sprung CG height, mm", lambda d: d["mass_split"]["sprung_cg_height_m"] * 1e3, ".1f"),
    ("front share of lateral load transfer", lambda d: d["roll"]["lateral_load_transfer_front_share"], ".4f"),
    ("roll gradient, deg/g", lambda d: d["roll"]["roll_gradient_deg_per_g"], ".3f"),
    ("total lateral transfer at 1.0 g, kg", lambda d: sum(d["lateral"][0]["transfer_kg"][x]["total"]
                                                          for x in ("front", "rear")), ".2f"),
    ("yaw inertia, kg*m^2", lambda d: d["single_track"]["yaw_inertia_kg_m2"], ".1f"),
    ("understeer gradient, deg/g", lambda d: d["single_track"]["understeer_gradient_deg_per_g"], "+.3f"),
    ("characteristic speed, km/h", lambda d: (d["single_track"]["characteristic_speed_m_per_s"] or float("nan")) * 3.6, ".0f"),
    ("yaw natural frequency, Hz", lambda d: d["single_track"]["natural_frequency_hz"], ".3f"),
    ("yaw damping ratio", lambda d: d["single_track"]["damping_ratio"], ".3f"),
    ("step steer: 90 % yaw rate, ms", lambda d: d["single_track"]["time_to_90_percent_s"] * 1e3, ".1f"),
]
speed = a["single_track"]["speed_m_per_s"]
print(f"   {'(at ' + format(speed * 3.6, '.0f') + ' km/h where speed matters)':44s} {'as built':>10s} {'ballasted':>10s} {'change':>10s}")
for label, get, fmt in rows:
    x, y = get(a), get(b)
    plain = fmt.lstrip("+")
    d = y - x
    if float(format(abs(d), plain)) == 0.0:
        d = 0.0  # no "-0.000"
    print(f"   {label:44s} {format(x, fmt):>10s} {format(y, fmt):>10s} {format(d, '+' + plain):>10s}")
PYEOF
echo "   (full ballasted output: $OUT/chassis_ballasted.txt)"
