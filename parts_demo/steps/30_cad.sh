#!/usr/bin/env bash
# CAD exchange and packaging of the demo car:
#  - STEP (AP214, mm), STL (whole car and one file per part, mm), GLB (m) and the mass-properties sidecar;
#  - the packaging check (interference, fit in slot, clearance of the ballast blocks), which passes;
#  - the same check on a deliberately clashing variant, which must fail with exit status 1.
set -euo pipefail
$MM export "$CAR" --out "$OUT" --stl both
echo
$MM elbowroom "$CAR" --json "$OUT/packaging.json"
echo
CLASH="parts_demo/brindlecombe_bl3_clash.toml"
set +e
$MM elbowroom "$CLASH" --json "$OUT/packaging_clash.json"
status=$?
set -e
if [ "$status" -eq 1 ]; then
  echo "clash variant fails as intended (exit $status)"
else
  echo "clash variant: expected exit 1 from the packaging check, got $status" >&2
  exit 1
fi
