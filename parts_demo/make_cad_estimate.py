"""Write the demo's invented CAD estimate of the Brindlecombe BL-3: parts_demo/brindlecombe_bl3_cad_estimate.json.

INVENTED DEMO DATA. The "CAD department" of the invented maker reports the car's mass properties by group. Their
numbers are the model's own plus small invented CAD-vs-model differences (the table below), rounded as a CAD
report would be, and written in the CAD frame: x rearward, y right, z up, origin on the ground below the front axle
line on the centre plane (model point (0, 0, -265) mm).

One convention mix-up is built in on purpose: the products of inertia are written in the POSITIVE convention
(P_xy = +∫xy dm) while the file declares "products": "negative". `massmodel crossweigh` should name it.

The ballast blocks are not a row of this file (the CAD department sent them as a STEP file, see
parts_demo/steps/50_compare.sh); their mass is in the whole ('*') row.

Run from the repository root when the demo car changes:  .venv/bin/python parts_demo/make_cad_estimate.py
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

import massmodel as mm
from massmodel.core.massprops import MassProperties, combine
from massmodel.report.summary import write_json_atomic

HERE = Path(__file__).parent
CAR = HERE / "brindlecombe_bl3.toml"
OUT = HERE / "brindlecombe_bl3_cad_estimate.json"

#: Invented CAD-vs-model differences per top-level group: mass change (fraction), CG shift (mm, model axes),
#: and a change of the group's own moment about its model x axis (fraction). Groups not listed match exactly.
DIFFERENCES = {
    "chassis": (+0.008, (+1.5, 0.0, -0.8), +0.004),      # weld fillets and gussets drawn in CAD
    "bodywork": (-0.006, (-2.0, 0.0, +1.0), 0.0),        # the laminate schedule's ply drops
    "controls": (+0.004, (+0.5, +0.3, 0.0), 0.0),
    "driver": (0.0, (+1.0, 0.0, -1.5), 0.0),             # the CAD manikin sits slightly otherwise
    "electrics": (+0.007, (0.0, -0.6, +0.4), 0.0),
    "power": (+0.003, (-1.2, +0.4, +0.6), -0.003),
    "safety": (-0.005, (0.0, 0.0, +0.8), 0.0),
    "suspension": (+0.006, (+0.8, 0.0, +0.5), 0.0),
    "wheels": (-0.004, (0.0, 0.0, 0.0), 0.0),
}
ROWS = ("chassis", "bodywork", "controls", "driver", "electrics", "fuel", "power", "safety", "suspension", "wheels")

#: The CAD frame: rows are the CAD x, y, z axes in model axes (x rearward, y right, z up); origin in model mm.
AXES = np.array([[-1.0, 0.0, 0.0], [0.0, -1.0, 0.0], [0.0, 0.0, 1.0]])
ORIGIN_MM = np.array([0.0, 0.0, -265.0])


def perturbed(mp: MassProperties, group: str) -> MassProperties:
    dm, shift_mm, dxx = DIFFERENCES.get(group, (0.0, (0.0, 0.0, 0.0), 0.0))
    tensor = (1.0 + dm) * mp.inertia
    tensor[0, 0] *= 1.0 + dxx
    return MassProperties(mp.mass * (1.0 + dm), mp.center + np.array(shift_mm) * 1e-3, tensor)


def row(group: str, mp: MassProperties) -> dict:
    """The item in the CAD frame: kg, mm, kg*mm^2, about its CG, products written as +∫xy dm (the mix-up)."""
    cg_cad_mm = AXES @ (mp.center * 1e3 - ORIGIN_MM)
    tensor_cad = AXES @ mp.inertia @ AXES.T * 1e6  # kg*mm^2, CAD axes, tensor convention (-∫xy dm)
    positive = -tensor_cad  # +∫xy dm off the diagonal ...
    np.fill_diagonal(positive, np.diag(tensor_cad))  # ... moments unchanged
    return {
        "group": group,
        "mass": round(mp.mass, 3),
        "cg": [round(float(v), 1) for v in cg_cad_mm],
        "inertia": {t: round(float(positive[i, j])) for t, (i, j) in
                    (("xx", (0, 0)), ("yy", (1, 1)), ("zz", (2, 2)), ("xy", (0, 1)), ("xz", (0, 2)), ("yz", (1, 2)))},
    }


def main() -> int:
    model = mm.load_model(CAR)
    tops = sorted({c.path.split("/")[0] for c in model.components})
    cad = {g: perturbed(model.mass_properties([g]), g) for g in tops}
    whole = combine(cad.values())
    doc = {
        "format": "massmodel-estimate/1",
        "description": "Brindlecombe BL-3 master assembly, CAD mass report by group (INVENTED demo data; the "
                       "ballast blocks are reported separately as STEP)",
        "units": {"mass": "kg", "length": "mm", "inertia": "kg*mm^2"},
        "axes": {"x": "rearward", "y": "right", "z": "up"},
        "origin_in_model": ORIGIN_MM.tolist(),
        "inertia_about": "cg",
        "products": "negative",
        "items": [row("*", whole)] + [row(g, cad[g]) for g in ROWS],
    }
    write_json_atomic(doc, OUT)
    print(f"wrote {OUT}")  # noqa: T201
    return 0


if __name__ == "__main__":
    sys.exit(main())
