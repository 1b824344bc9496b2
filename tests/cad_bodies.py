"""Test bodies for the estimate tests: the same solids as a massmodel model file and as cadquery solids.

The cadquery side is the independent oracle: solids placed with ``cq.Location`` (extrinsic X, Y, Z rotations,
degrees) and measured by OpenCascade (``BRepGProp.VolumeProperties_s`` + ``GProp_GProps.Add(props, density)``;
``MatrixOfInertia`` about the centre of mass, off-diagonals −∫xy dm). Estimate files are written here from those
numbers with the formulas spelled out (not massmodel's reader run backwards):

* change of axes ``c_e = A (c − o)``, ``I_e = A I Aᵀ`` (Goldstein, Poole & Safko, Classical Mechanics, 3rd ed.,
  §5.4), with ``A`` the rows of the estimate axes in model axes;
* tensor about a point ``p``: ``I_p = I_G + m(|d|² E − d dᵀ)``, ``d = c_e − p`` (ibid. §5.3, parallel-axis theorem);
* positive products ``P_xy = +∫xy dm`` = minus the tensor entry (docs/references.md §5, SAWE Paper 3360);
* unit factors from the exact definitions 1 in = 0.0254 m, 1 ft = 0.3048 m, 1 lb = 0.45359237 kg,
  g_n = 9.80665 m/s² (docs/references.md §9; NIST SP 811 App. B).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import cadquery as cq
import numpy as np
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps

from massmodel.modelfile.loader import loads_model

IN, FT, LB, G0 = 0.0254, 0.3048, 0.45359237, 9.80665
MASS_SI = {"kg": 1.0, "g": 1e-3, "t": 1e3, "lb": LB, "slug": LB * G0 / FT}
LENGTH_SI = {"m": 1.0, "mm": 1e-3, "cm": 1e-2, "in": IN, "ft": FT}
INERTIA_SI = {"kg*m^2": 1.0, "kg*mm^2": 1e-6, "g*mm^2": 1e-9, "g*cm^2": 1e-7, "lb*in^2": LB * IN**2,
              "lb*ft^2": LB * FT**2, "lb*in*s^2": LB * G0 * IN, "slug*ft^2": LB * G0 / FT * FT**2}

#: Three parts in two groups; sizes all different, placed off every axis and turned, so that every product of
#: inertia is non-zero and no two readings of the conventions coincide.
BODIES = (
    {"path": "a/block", "shape": "box", "size": (120.0, 90.0, 70.0), "density": 7850.0,
     "at": (60.0, 25.0, -15.0), "angles": (10.0, 20.0, 30.0)},
    {"path": "b/puck", "shape": "cylinder", "radius": 40.0, "length": 90.0, "density": 2700.0,
     "at": (-40.0, 45.0, 35.0), "angles": (0.0, 60.0, 15.0)},
    {"path": "b/tab", "shape": "box", "size": (30.0, 50.0, 12.0), "density": 4430.0,
     "at": (-10.0, -35.0, 50.0), "angles": (25.0, 0.0, -40.0)},
)
GROUPS = ("*", "a", "b")


def model_text(bodies=BODIES) -> str:
    lines = ['[model]', 'name = "test bodies"', '[units]', 'length = "mm"', 'mass = "kg"', 'angle = "deg"',
             'density = "kg/m^3"', '[vehicle]', 'wheelbase = "2000 mm"', 'track_front = "1000 mm"',
             'track_rear = "1000 mm"', 'front_axle_station = "0 mm"', 'ground_level = "-300 mm"']
    for b in bodies:
        lines += ["[[part]]", f'path = "{b["path"]}"', f'shape = "{b["shape"]}"', 'maturity = "calculated"',
                  f'density = {b["density"]}', f'at = {list(b["at"])}',
                  f'rotate = {{ extrinsic = "xyz", angles = {list(b["angles"])} }}']
        if b["shape"] == "box":
            lines.append(f'size = {list(b["size"])}')
        else:
            lines += [f'radius = {b["radius"]}', f'length = {b["length"]}']
    return "\n".join(lines) + "\n"


def load_bodies_model(bodies=BODIES):
    return loads_model(model_text(bodies), label="bodies.toml")


def cad_solid(b: dict[str, Any]) -> cq.Shape:
    """The body as a cadquery solid in mm, placed with cq.Location (independent of massmodel's poses)."""
    if b["shape"] == "box":
        w, h, d = b["size"]
        solid = cq.Solid.makeBox(w, h, d, pnt=cq.Vector(-w / 2, -h / 2, -d / 2))
    else:
        solid = cq.Workplane().cylinder(b["length"], b["radius"]).val()
    return solid.moved(cq.Location(tuple(b["at"]), tuple(b["angles"])))


def occ_props(bodies=BODIES, scale: dict[str, float] | None = None) -> dict[str, tuple[float, np.ndarray, np.ndarray]]:
    """OpenCascade mass properties per group ('*', 'a', 'b'): (kg, CG m, tensor kg·m² about the CG)."""
    scale = scale or {}
    totals = {g: GProp_GProps() for g in GROUPS}
    for b in bodies:
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(cad_solid(b).wrapped, props, 1e-14)
        rho = b["density"] * scale.get(b["path"], 1.0) * 1e-9  # kg/mm^3
        for g in ("*", b["path"].split("/")[0]):
            totals[g].Add(props, rho)
    out = {}
    for g, t in totals.items():
        c = t.CentreOfMass()
        m = t.MatrixOfInertia()
        out[g] = (t.Mass(), np.array([c.X(), c.Y(), c.Z()]) * 1e-3,
                  np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-6)
    return out


@dataclass(frozen=True)
class Spec:
    """How an estimate is written (or declared)."""

    mass_unit: str = "kg"
    length_unit: str = "mm"
    inertia_unit: str = "kg*mm^2"
    products: str = "negative"
    about: Any = "cg"  # "cg", "origin" or a point (x, y, z) in m, estimate coordinates
    axes: tuple = ((1, 0, 0), (0, 1, 0), (0, 0, 1))
    origin: tuple = (0.0, 0.0, 0.0)  # m, model coordinates
    extra: dict = field(default_factory=dict)

    def with_(self, **kw: Any) -> Spec:
        return replace(self, **kw)


def axes_text(a) -> dict[str, str]:
    out = {}
    for i, row in enumerate(np.asarray(a, dtype=float)):
        k = int(np.argmax(np.abs(row)))
        out["xyz"[i]] = ("+" if row[k] > 0 else "-") + "xyz"[k]
    return out


def written_numbers(props, spec: Spec) -> dict[str, tuple[float, np.ndarray, np.ndarray]]:
    """The numbers of every item as written under ``spec`` (units, axes, origin, reference point, product sign)."""
    a = np.asarray(spec.axes, dtype=float)
    o = np.asarray(spec.origin, dtype=float)
    fm, fl, fi = MASS_SI[spec.mass_unit], LENGTH_SI[spec.length_unit], INERTIA_SI[spec.inertia_unit]
    out = {}
    for g, (m, c, tensor) in props.items():
        c_e = a @ (c - o)
        t = a @ tensor @ a.T
        if spec.about != "cg":
            p = np.zeros(3) if spec.about == "origin" else np.asarray(spec.about, dtype=float)
            d = c_e - p
            t = t + m * (d @ d * np.eye(3) - np.outer(d, d))
        if spec.products == "positive":
            t = np.where(np.eye(3, dtype=bool), t, -t)
        out[g] = (m / fm, c_e / fl, t / fi)
    return out


def declaration(spec: Spec) -> dict[str, Any]:
    fl = LENGTH_SI[spec.length_unit]
    about = spec.about if isinstance(spec.about, str) else {"point": (np.asarray(spec.about) / fl).tolist()}
    return {"format": "massmodel-estimate/1",
            "units": {"mass": spec.mass_unit, "length": spec.length_unit, "inertia": spec.inertia_unit},
            "axes": axes_text(spec.axes), "origin_in_model": (np.asarray(spec.origin) / fl).tolist(),
            "inertia_about": about, "products": spec.products}


def write_estimate(path: Path, props, written: Spec, declared: Spec | None = None, fmt: str = "json") -> Path:
    """Write ``props`` under ``written`` and declare ``declared`` (the same unless a mix-up is introduced).

    A declared reference point is given in the declared length unit (so only what the declaration says changes).
    """
    declared = declared or written
    numbers = written_numbers(props, written)
    head = declaration(declared)
    if written.about not in ("cg", "origin") and declared.about == written.about:
        head["inertia_about"] = {"point": (np.asarray(written.about) / LENGTH_SI[written.length_unit]).tolist()}
    if fmt == "json":
        items = []
        for g, (m, c, t) in numbers.items():
            items.append({"group": g, "mass": m, "cg": c.tolist(),
                          "inertia": {"xx": t[0, 0], "yy": t[1, 1], "zz": t[2, 2], "xy": t[0, 1], "xz": t[0, 2],
                                      "yz": t[1, 2]}})
        path.write_text(json.dumps({**head, "items": items}, indent=1), encoding="utf-8")
        return path
    lines = [f"#: format = {head['format']}", f"#: units.mass = {head['units']['mass']}",
             f"#: units.length = {head['units']['length']}", f"#: units.inertia = {head['units']['inertia']}",
             "#: axes = " + ", ".join(f"{k}={v}" for k, v in head["axes"].items()),
             "#: origin_in_model = " + " ".join(repr(v) for v in head["origin_in_model"]),
             "#: inertia_about = " + (head["inertia_about"] if isinstance(head["inertia_about"], str) else
                                      "point " + " ".join(repr(v) for v in head["inertia_about"]["point"])),
             f"#: products = {head['products']}", "# a comment line",
             "group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz"]
    for g, (m, c, t) in numbers.items():
        values = [m, *c, t[0, 0], t[1, 1], t[2, 2], t[0, 1], t[0, 2], t[1, 2]]
        lines.append(",".join([g] + [repr(float(v)) for v in values]))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


#: A CAD frame with x rearward, y right, z up and its origin away from the model's (model coordinates, m).
BASE_SPEC = Spec(axes=((-1, 0, 0), (0, -1, 0), (0, 0, 1)), origin=(0.25, 0.0, -0.3))
