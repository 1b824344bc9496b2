#!/usr/bin/env bash
# How sure is the model: standard uncertainties of the demo car's parts ([uncertainty] in the model file, defaults by
# maturity elsewhere, one shared density error per tungsten class) propagated by RSS and Monte Carlo; the probability
# of passing each rule in each load case and the margin each needs at 95 % confidence; histograms with the limits.
set -euo pipefail
$MM how-sure "$CAR" --samples 20000 --seed 1 --confidence 0.95 --json "$OUT/how_sure.json" \
  --plot "$OUT/how_sure.png" | tee "$OUT/how_sure.txt"
echo
# the same totals with ± u in the ordinary report, and the rule verdicts at 95 % (qualifying trim)
$MM report "$CAR" --case qualifying --brief --confidence 95% --json "$OUT/report_uncertainty_qualifying.json" \
  | sed -n '/^TOTAL/,/^  mass/p;/^UNCERTAINTY/,/^RULE CHECKS/p'
