#!/usr/bin/env bash
# The demo car against the CAD department's estimates (invented):
#  1. their mass report by group (JSON), which has one convention mix-up on purpose: crossweigh fails and its
#     diagnosis names the suspected cause, with the corrected comparison beside the one as declared;
#  2. their STEP file of the two tungsten ballast blocks, with a density per block, computed with OpenCascade.
# crossweigh exits 1 when the estimate as declared fails; the demo shows the status and carries on.
set -euo pipefail

echo "-- CAD mass report by group: parts_demo/brindlecombe_bl3_cad_estimate.json"
set +e
$MM crossweigh "$CAR" parts_demo/brindlecombe_bl3_cad_estimate.json --json "$OUT/crossweigh.json" \
  > "$OUT/crossweigh.txt"
status=$?
set -e
cat "$OUT/crossweigh.txt"
echo "crossweigh exit status: $status (0 = agrees, 1 = the estimate as declared fails, 2 = bad input)"

echo
echo "-- CAD STEP file of the ballast blocks + densities per block"
# The CAD department's blocks: as in the model, plus 0.5 mm edge chamfers, drawn in their CAD frame
# (x rearward, y right, z up; origin on the ground below the front axle line: model point (0, 0, -265) mm).
$PY - "$OUT/ballast_cad.step" <<'PYTHON'
import sys
import cadquery as cq

def block(size, holes, hole_dia):
    x, y, z = size
    body = cq.Workplane().box(x, y, z).edges().chamfer(0.5)
    return body.faces(">Z").workplane().pushPoints([(h, 0) for h in holes]).hole(hole_dia).val()

assy = cq.Assembly(name="ballast_cad")
assy.add(block((150, 100, 20), (-55, 55), 8.5), name="seat_block", loc=cq.Location((980, 0, 54.5)))
assy.add(block((100, 50, 35), (-30, 30), 8.5), name="gearbox_block", loc=cq.Location((2595, -205, 144.5)))
assy.export(sys.argv[1])
PYTHON
set +e
$MM crossweigh "$CAR" "$OUT/ballast_cad.step" --group ballast \
  --solid-density seat_block=tungsten_b777_class3 --solid-density gearbox_block="17.075 g/cm^3" \
  --solid-group seat_block=ballast/seat_block --solid-group gearbox_block=ballast/gearbox_block \
  --step-axes "x=rearward, y=right, z=up" --step-origin "0, 0, -265 mm" --units mm \
  --json "$OUT/crossweigh_ballast.json" > "$OUT/crossweigh_ballast.txt"
status=$?
set -e
cat "$OUT/crossweigh_ballast.txt"
echo "crossweigh exit status: $status"
