#!/usr/bin/env bash
# One syntax for every input (docs/input_files.md): a point written as '0, 0, -265 mm' (one unit for all three),
# '0 mm, 0 mm, -0.265 m' or '(0, 0, -26.5) cm' means the same on the command line as in the files; a mistake is one
# line naming the option (or the file, item and field), exit 2.
set -euo pipefail
for point in "0, 0, -265 mm" "0 mm, 0 mm, -0.265 m" "(0, 0, -26.5) cm"; do
  echo "-- report --inertia-about '$point' (tensor about the ground point below the model origin)"
  $MM report "$CAR" --brief --inertia-about "$point" --json "$OUT/inertia_about_ground.json" \
    | sed -n '/inertia about point/,/^$/p'
done
echo
echo "-- a point with a unit of the wrong kind is refused before anything runs"
set +e
$MM report "$CAR" --inertia-about "0, 0, -265 kg"
status=$?
printf '# r\xe9glage\n' > "$OUT/latin1_model.toml"   # a file saved as Latin-1, not UTF-8
$MM check "$OUT/latin1_model.toml"
status2=$?
set -e
echo "exit statuses: $status and $status2 (2 = bad input)"
