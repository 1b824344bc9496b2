#!/usr/bin/env bash
# The ballast fit check without the CAD kernel: a block square to its box slot is checked in closed form
# (massmodel.cad.boxfit; docs/ballast.md "Does the block fit?"), so size-block without STEP/STL output loads neither
# cadquery nor OCP. The same block pushed 2 mm through the slot's +x wall does not fit; it is chamfered and drilled
# and no longer inside, so that check falls back to the exact OpenCascade one (which loads OCP).
# Outputs: exports/demo/fit_check.txt.
set -euo pipefail
PLAN="parts_demo/bl3_ballast_plan.toml"

echo "── The floor block's fit, in closed form, and what the command loaded ─────────────────────────────"
"$PY" - "$CAR" "$PLAN" <<'PYEOF' | tee "$OUT/fit_check.txt"
import contextlib, io, sys
from massmodel import cli
from massmodel.ballast.plan import load_plan
from massmodel.ballast.sizing import size_block
from massmodel.ballast.targets import check_fit
from massmodel.core.frames import Pose
from massmodel.modelfile.loader import load_model

car, plan_path = sys.argv[1:3]
with contextlib.redirect_stdout(io.StringIO()) as text:
    code = cli.main(["size-block", car, "--plan", plan_path, "--slot", "floor_front", "--target", "5kg"])
print("\n".join(line for line in text.getvalue().splitlines() if "fit (" in line))
loaded = sorted({m.split(".")[0] for m in sys.modules} & {"cadquery", "OCP"})
print(f"size-block exit {code}; CAD libraries loaded: {', '.join(loaded) or 'none'}")

cand = load_plan(plan_path, load_model(car)).candidate("floor_front")
env = cand.envelope
sizing = size_block(env, cand.spec, 5.0)
piece = sizing.pieces[0]
r = env.pose.linear
centre = r.T @ (piece.pose.translation - env.pose.translation)  # block centre, slot frame
reach = centre[0] + (abs(r.T @ piece.pose.linear) @ piece.geometry.size)[0] / 2  # its +x face, slot frame
push = (env.size[0] / 2 - reach + 0.002) * r[:, 0]  # so that the face lies 2 mm past the +x wall
pushed = type(piece)(piece.geometry, Pose.from_translation(push) * piece.pose)
fit = check_fit(sizing, [pushed])[0]
print(f"the same block 2 mm past the slot's +x wall: {'fits' if fit.fits else 'DOES NOT FIT'} ({fit.method}): "
      f"{fit.reason}")
print(f"CAD libraries loaded now: {', '.join(sorted({m.split('.')[0] for m in sys.modules} & {'cadquery', 'OCP'}))}")
PYEOF
