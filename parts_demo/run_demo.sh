#!/usr/bin/env bash
# The main job on the invented demo car. Run through `make demo`, which sets up .venv first.
# Each step is a script in parts_demo/steps/ (run in name order) so that features add steps independently.
# Outputs go to exports/demo/.
set -euo pipefail
cd "$(dirname "$0")/.."
export PY="${PY:-.venv/bin/python}"
export MM="$PY -m massmodel"
export OUT="exports/demo"
export CAR="parts_demo/brindlecombe_bl3.toml"
export VTK_DEFAULT_OPENGL_WINDOW="${VTK_DEFAULT_OPENGL_WINDOW:-vtkEGLRenderWindow}"
mkdir -p "$OUT"
for step in parts_demo/steps/*.sh; do
  echo
  echo "════ $(basename "$step" .sh) ════"
  bash "$step"
done
echo
echo "demo outputs in $OUT/:"
ls -1 "$OUT"
