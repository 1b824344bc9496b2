#!/usr/bin/env bash
# Mass-properties report of the demo car: terminal tables and exports/demo/report.json.
set -euo pipefail
$MM report "$CAR" --json "$OUT/report.json" | tee "$OUT/report.txt"
