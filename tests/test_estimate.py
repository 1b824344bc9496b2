"""Reading CAD estimates (JSON and CSV) under their declared conventions, and refusing bad ones clearly.

Sources named beside the checks: docs/references.md §9 (unit factors, derived here from the exact definitions
1 in = 0.0254 m, 1 ft = 0.3048 m, 1 lb = 0.45359237 kg, g_n = 9.80665 m/s², NIST SP 811 App. B), docs/references.md §5
(positive vs negative products of inertia, SAWE Paper 3360), docs/references.md §1 (right triangular prism, derivation
V), OpenCascade as an independent oracle on a cadquery solid.
"""

from __future__ import annotations

import copy
import json

import cadquery as cq
import numpy as np
import pytest
from cad_bodies import BASE_SPEC, Spec, load_bodies_model, occ_props, write_estimate
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps

from conftest import assert_close
from massmodel.compare.estimate import (
    AxisMap,
    EstimateError,
    Products,
    ReferenceKind,
    load_estimate,
    loads_estimate,
    normalise,
    signed_permutations,
)
from massmodel.modelfile.loader import ModelFileError

IN, FT, LB, G0 = 0.0254, 0.3048, 0.45359237, 9.80665


def doc(**changes):
    base = {
        "format": "massmodel-estimate/1",
        "units": {"mass": "kg", "length": "mm", "inertia": "kg*mm^2"},
        "axes": {"x": "+x", "y": "+y", "z": "+z"},
        "origin_in_model": [0, 0, 0],
        "inertia_about": "cg",
        "products": "negative",
        "items": [{"group": "*", "mass": 2.0, "cg": [1.0, 2.0, 3.0],
                   "inertia": {"xx": 30.0, "yy": 40.0, "zz": 50.0, "xy": 1.0, "xz": -2.0, "yz": 3.0}}],
    }
    base.update(changes)
    return base


def read(d, name="est.json"):
    return loads_estimate(json.dumps(d), name)


@pytest.mark.parametrize(
    "unit, exact, published, rel",
    [
        ("lb*in^2", LB * IN**2, 2.926397e-4, 2e-7),  # docs/references.md §9
        ("lb*in*s^2", LB * G0 * IN, 0.1129848, 5e-7),  # §9: lb is pound-force in this unit
        ("slug*ft^2", (LB * G0 / FT) * FT**2, 1.355818, 5e-7),  # §9: 1 slug = 1 lbf s²/ft
        ("kg*mm^2", 1e-6, 1e-6, 0.0),  # §9
        ("g*mm^2", 1e-9, 1e-9, 0.0),  # §9
        ("lb*ft^2", LB * FT**2, None, 0.0),
    ],
)
def test_inertia_units_from_exact_definitions(unit, exact, published, rel):
    d = doc(units={"mass": "lb", "length": "in", "inertia": unit})
    d["items"][0]["inertia"] = {"xx": 2.0, "yy": 3.0, "zz": 4.0, "xy": 0.5, "xz": 0.0, "yz": 0.0}
    (mp,) = normalise(read(d))
    assert mp.inertia[2, 2] == pytest.approx(4.0 * exact, rel=1e-15)
    assert mp.inertia[0, 1] == pytest.approx(0.5 * exact, rel=1e-15)
    if published is not None:
        assert exact == pytest.approx(published, rel=max(rel, 1e-15))
    assert mp.mass == pytest.approx(2.0 * LB, rel=1e-15)  # 1 lb = 0.45359237 kg exactly
    assert mp.center.tolist() == pytest.approx([IN, 2 * IN, 3 * IN], rel=1e-15)


def test_lb_in_s2_is_386_lb_in2_and_the_diagnosis_uses_that_factor(tmp_path):
    # docs/references.md §9: 1 lb·in·s² = 386.0886 lb·in² (= g_n / 1 in exactly).
    from massmodel.compare.diagnose import candidates

    est = read(doc(units={"mass": "kg", "length": "mm", "inertia": "lb*in^2"}))
    labels = [c.label for c in candidates(est) if c.kind == "inertia_unit"]
    assert any("in lb*in*s^2, not the declared lb*in^2 (factor 386.0886)" in t for t in labels)
    assert G0 / IN == pytest.approx(386.0886, rel=2e-7)
    est = read(doc())
    labels = [c.label for c in candidates(est) if c.kind == "inertia_unit"]
    # lb·in² read as kg·mm²: 0.45359237 × 0.0254² / 1e-6 = 292.6397 (docs/references.md §9)
    assert any("in lb*in^2, not the declared kg*mm^2 (factor 292.6397)" in t for t in labels)
    for unit, factor in (("g*mm^2", "0.001"), ("kg*m^2", "1000000"), ("slug*ft^2", "1355818")):
        assert any(f"in {unit}, not the declared kg*mm^2 (factor {factor})" in t for t in labels), unit


def _wedge_solid(a_mm, b_mm, length_mm):
    return cq.Workplane("XY").polyline([(0, 0), (a_mm, 0), (0, b_mm)]).close().extrude(length_mm).val()


def test_positive_products_about_a_corner_read_into_the_tensor_convention_about_the_cg():
    # Right triangular prism, legs a (x), b (y), length L (z), right angle at the origin (docs/references.md §1, V):
    # centroid (a/3, b/3, L/2); centroidal I_xx = m(b²/18 + L²/12), I_yy = m(a²/18 + L²/12), I_zz = m(a²+b²)/18,
    # tensor I_xy = +m a b/36. About the right-angle corner: ∫xy dm = +m a b/12, ∫xz dm = m a L/6,
    # ∫yz dm = m b L/6. Written in the POSITIVE convention (P = +∫xy dm, docs/references.md §5) about the corner.
    a, b, length, rho = 0.09, 0.05, 0.03, 2700.0
    m = rho * a * b * length / 2
    g = np.array([a / 3, b / 3, length / 2])
    ixx, iyy, izz = m * (b * b / 18 + length**2 / 12), m * (a * a / 18 + length**2 / 12), m * (a * a + b * b) / 18
    about_corner = {  # kg·mm², parallel-axis theorem for the moments
        "xx": (ixx + m * (g[1] ** 2 + g[2] ** 2)) * 1e6, "yy": (iyy + m * (g[0] ** 2 + g[2] ** 2)) * 1e6,
        "zz": (izz + m * (g[0] ** 2 + g[1] ** 2)) * 1e6,
        "xy": m * a * b / 12 * 1e6, "xz": m * a * length / 6 * 1e6, "yz": m * b * length / 6 * 1e6,
    }
    d = doc(products="positive", inertia_about="origin",
            items=[{"group": "*", "mass": m, "cg": (g * 1e3).tolist(), "inertia": about_corner}])
    (mp,) = normalise(read(d))
    expected = np.array([[ixx, m * a * b / 36, 0.0], [m * a * b / 36, iyy, 0.0], [0.0, 0.0, izz]])
    assert_close(mp.inertia, expected, 1e-12, "closed form")
    assert mp.inertia[0, 1] > 0.0  # the tensor entry of this wedge is positive (massmodel.core.shapes.Wedge notes)
    # OpenCascade oracle on an independently built solid (MatrixOfInertia: about the CG, -∫xy dm).
    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(_wedge_solid(90.0, 50.0, 30.0).wrapped, props, 1e-14)
    occ = np.array([[props.MatrixOfInertia().Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * rho * 1e-15
    assert_close(mp.inertia, occ, 1e-10, "OpenCascade")


def test_the_same_estimate_in_every_convention_reads_the_same(tmp_path):
    model = load_bodies_model()
    props = occ_props()
    reference = [p for p in normalise(load_estimate(write_estimate(tmp_path / "ref.json", props, Spec())))]
    specs = [
        BASE_SPEC,
        BASE_SPEC.with_(products="positive"),
        BASE_SPEC.with_(mass_unit="lb", length_unit="in", inertia_unit="lb*in^2"),
        BASE_SPEC.with_(inertia_unit="lb*in*s^2", length_unit="ft"),
        BASE_SPEC.with_(inertia_unit="slug*ft^2", mass_unit="slug"),
        BASE_SPEC.with_(about="origin"),
        BASE_SPEC.with_(about=(0.05, -0.02, 0.04)),
        BASE_SPEC.with_(axes=((0, 0, 1), (1, 0, 0), (0, 1, 0))),
    ]
    for k, spec in enumerate(specs):
        for fmt in ("json", "csv"):
            est = load_estimate(write_estimate(tmp_path / f"e{k}.{fmt}", props, spec, fmt=fmt), model.vehicle)
            for got, want in zip(normalise(est), reference, strict=True):
                assert got.mass == pytest.approx(want.mass, rel=1e-13)
                assert_close(got.center, want.center, 1e-12, f"{spec} cg")
                assert_close(got.inertia, want.inertia, 1e-11, f"{spec} inertia")


def test_axes_as_vehicle_directions_and_as_signed_axes():
    model = load_bodies_model()  # ISO 8855 vehicle axes: forward +x, left +y, up +z
    a = AxisMap.parse({"x": "rearward", "y": "right", "z": "up"}, model.vehicle)
    assert a.text == "x=-x, y=-y, z=+z" and a.is_proper
    assert AxisMap.parse("x=+x, y=-y, z=-z").text == "x=+x, y=-y, z=-z"
    assert not AxisMap.parse("x = x, y = -y, z = z").is_proper  # a mirror image
    with pytest.raises(ValueError, match="vehicle directions need a model"):
        AxisMap.parse({"x": "forward", "y": "left", "z": "up"})
    with pytest.raises(ValueError, match="use a model axis twice"):
        AxisMap.parse("x=+x, y=+x, z=+z")
    with pytest.raises(ValueError, match="axis 'z' is not given"):
        AxisMap.parse("x=+x, y=+y")
    perms = signed_permutations()
    assert len(perms) == 48 and len({p.text for p in perms}) == 48
    assert sum(p.is_proper for p in perms) == 24 and all(p.is_proper for p in perms[:24])


def test_an_estimate_error_is_a_file_error_naming_file_item_and_field():
    with pytest.raises(ModelFileError) as info:
        read(doc(units={"mass": "kg", "length": "mm", "inertia": "kg*mm^3"}))
    err = info.value
    assert (err.file, err.item, err.field) == ("est.json", "units", "inertia")


def _del(d, *keys):
    d = copy.deepcopy(d)
    target = d
    for k in keys[:-1]:
        target = target[k]
    del target[keys[-1]]
    return d


def _set(d, value, *keys):
    d = copy.deepcopy(d)
    target = d
    for k in keys[:-1]:
        target = target[k]
    target[keys[-1]] = value
    return d


BAD = [
    (doc(units={"mass": "kg", "length": "mm", "inertia": "kg*mmm^2"}),
     r"est.json: units, field 'inertia': unknown unit 'mmm'"),
    (doc(units={"mass": "kg", "length": "mm", "inertia": "kg*mm"}),
     r"est.json: units, field 'inertia': 'kg\*mm' is mass moment .* not inertia"),
    (doc(units={"mass": "kilo", "length": "mm", "inertia": "kg*mm^2"}), r"units, field 'mass': unknown unit 'kilo'"),
    (_set(doc(), [[30.0, 1.0, -2.0], [1.5, 40.0, 3.0], [-2.0, 3.0, 50.0]], "items", 0, "inertia"),
     r"items\[0\] \(group '\*'\), field 'inertia': not symmetric: xy = 1 kg\*mm\^2 but yx = 1.5 kg\*mm\^2"),
    (_set(doc(), {"xx": 1.0, "yy": 1.0, "zz": 3.0, "xy": 0.0, "xz": 0.0, "yz": 0.0}, "items", 0, "inertia"),
     r"items\[0\] \(group '\*'\), field 'inertia': read as declared .*triangle inequality"),
    (_set(doc(), {"xx": 1.0, "yy": 1.0, "zz": 1.0, "xy": 2.0, "xz": 0.0, "yz": 0.0}, "items", 0, "inertia"),
     r"field 'inertia': read as declared .*not positive semi-definite"),
    (_set(doc(), -1.0, "items", 0, "mass"), r"items\[0\] \(group '\*'\), field 'mass': must be a positive mass, got -1 kg$"),
    (_del(doc(), "items", 0, "mass"), r"items\[0\] \(group '\*'\), field 'mass': missing"),
    (_del(doc(), "items", 0, "cg"), r"field 'cg': missing"),
    (_del(doc(), "items", 0, "inertia", "yz"), r"field 'inertia.yz': missing"),
    (_set(doc(), [1.0, 2.0], "items", 0, "cg"), r"field 'cg': expected three numbers"),
    (_set(doc(), [1.0, "2 mm", 3.0], "items", 0, "cg"), r"field 'cg\[1\]': expected a number, got '2 mm'"),
    (_del(doc(), "units"), r"est.json, field 'units': missing"),
    (_del(doc(), "units", "length"), r"est.json: units, field 'length': missing"),
    (_del(doc(), "axes"), r"field 'axes': missing"),
    (_del(doc(), "products"), r"field 'products': missing"),
    (_del(doc(), "inertia_about"), r"field 'inertia_about': missing"),
    (_del(doc(), "origin_in_model"), r"field 'origin_in_model': missing"),
    (_del(doc(), "format"), r"field 'format': expected 'massmodel-estimate/1', got None"),
    (doc(products="tensor"), r"field 'products': expected 'negative' .* or 'positive'"),
    (doc(inertia_about="centre"), r"field 'inertia_about': expected 'cg', 'origin' or a point"),
    (doc(axes={"x": "+x", "y": "+x", "z": "+z"}), r"field 'axes': axes x=\+x, y=\+x, z=\+z use a model axis twice"),
    (doc(axes={"x": "forward", "y": "left", "z": "up"}), r"field 'axes': .*vehicle directions need a model"),
    (dict(doc(), product="negative"), r"field 'product': unknown field; did you mean 'products'\?"),
    (_set(doc(), 1.0, "items", 0, "masss"), r"field 'masss': unknown field; did you mean 'mass'\?"),
    (doc(items=[]), r"field 'items': missing or empty"),
    (doc(items=[doc()["items"][0], doc()["items"][0]]), r"items\[1\] \(group '\*'\), field 'group': .*given twice"),
]


@pytest.mark.parametrize("bad, message", BAD)
def test_bad_estimates_are_refused_naming_file_item_and_field(bad, message):
    with pytest.raises(EstimateError, match=message):
        read(bad)


def test_invalid_json_and_wrong_suffix(tmp_path):
    with pytest.raises(EstimateError, match=r"est.json: not valid JSON: .* line 1, column 2"):
        loads_estimate("{,", "est.json")
    p = tmp_path / "est.txt"
    p.write_text("{}")
    with pytest.raises(EstimateError, match="must end in .json or .csv"):
        load_estimate(p)
    with pytest.raises(EstimateError, match=r"nothere.json: cannot read the file \(no such file\)"):
        load_estimate(tmp_path / "nothere.json")
    (tmp_path / "folder.json").mkdir()
    with pytest.raises(EstimateError, match=r"folder.json: cannot read the file \(Is a directory\)"):
        load_estimate(tmp_path / "folder.json")


CSV_HEAD = """#: format = massmodel-estimate/1
#: units.mass = kg
#: units.length = mm
#: units.inertia = kg*mm^2
#: axes = x=-x, y=-y, z=+z
#: origin_in_model = 0 0 -265
#: inertia_about = cg
#: products = positive
# free comment
"""


def test_csv_with_lower_triangle_reads_like_json():
    text = CSV_HEAD + ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,i_yx,i_zx,i_zy,note\n"
                       "*,2,1,2,3,30,40,50,1,-2,3,1,-2,3,whole\n")
    (mp,) = normalise(loads_estimate(text, "e.csv", "csv"))
    # CAD x rearward, y right: model = A^T (c_e) + origin; positive products negated into the tensor convention,
    # then I_model = A^T I A (Goldstein §5.4): the x-z and y-z entries change sign, x-y does not.
    assert mp.center.tolist() == pytest.approx([-0.001, -0.002, 0.003 - 0.265], abs=1e-15)
    expected = np.array([[30.0, -1.0, -2.0], [-1.0, 40.0, 3.0], [-2.0, 3.0, 50.0]]) * 1e-6
    assert_close(mp.inertia, expected, 1e-15, "csv")


@pytest.mark.parametrize(
    "body, message",
    [
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz\n*,2,1,2,3,30,40,fifty,1,-2,3\n",
         r"e.csv: line 11 \(group '\*'\), field 'i_zz': expected a number, got 'fifty'"),
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_xy,i_xz,i_yz\n*,2,1,2,3,30,40,1,-2,3\n",
         r"line 10 \(header\), field 'i_zz': missing column"),
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz\n*,2,1,2,3,30,40,50,1,-2\n",
         r"line 11: has 10 cells, the header has 11"),
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,i_yx\n*,2,1,2,3,30,40,50,1,-2,3,1\n",
         r"field 'i_yx': give all of i_yx, i_zx, i_zy"),
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,i_yx,i_zx,i_zy\n*,2,1,2,3,30,40,50,1,-2,3,1,-2,4\n",
         r"line 11 \(group '\*'\), field 'inertia': not symmetric: yz = 3 kg\*mm\^2 but zy = 4 kg\*mm\^2"),
        ("group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,colour\n*,2,1,2,3,30,40,50,1,-2,3,red\n",
         r"field 'colour': unknown field"),
    ],
)
def test_bad_csv_names_line_and_column(body, message):
    with pytest.raises(EstimateError, match=message):
        loads_estimate(CSV_HEAD + body, "e.csv", "csv")


def test_csv_declarations_missing_or_twice():
    with pytest.raises(EstimateError, match=r"e.csv, field 'products': missing: declare it on a line '#: products"):
        loads_estimate(CSV_HEAD.replace("#: products = positive\n", "") + "group,mass\n", "e.csv", "csv")
    with pytest.raises(EstimateError, match=r"line 9, field 'products': declared twice \(first on line 8\)"):
        loads_estimate(CSV_HEAD.replace("# free comment", "#: products = negative"), "e.csv", "csv")
    with pytest.raises(EstimateError, match=r"field 'format': missing"):
        loads_estimate("group,mass\n", "e.csv", "csv")


def test_declared_conventions_are_kept_as_declared():
    est = read(doc(products="positive", inertia_about={"point": [1, 2, 3]}))
    conv = est.conventions
    assert conv.products is Products.POSITIVE and conv.reference is ReferenceKind.POINT
    assert conv.reference_point.tolist() == [1.0, 2.0, 3.0]
    assert conv.to_dict()["inertia_about"] == {"point": [1.0, 2.0, 3.0]}
    assert conv.to_dict()["axes"] == {"x": "+x", "y": "+y", "z": "+z"}
    assert "products positive (P_xy = +∫xy dm)" in conv.describe()
    # the items are kept as written
    assert est.items[0].inertia[0, 2] == -2.0 and est.items[0].cg.tolist() == [1.0, 2.0, 3.0]


def test_the_examples_in_the_docs_read():
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "docs" / "compare.md").read_text(encoding="utf-8")
    blocks = re.findall(r"^```(\w*)\n(.*?)^```$", text, flags=re.S | re.M)
    json_block = next(b for kind, b in blocks if kind == "json")
    csv_block = next(b for kind, b in blocks if b.startswith("#: format"))
    est = loads_estimate(json_block, "compare.md (JSON)")
    assert est.groups == ["*", "power"] and est.conventions.axes.text == "x=-x, y=-y, z=+z"
    est = loads_estimate(csv_block, "compare.md (CSV)", "csv")
    assert est.conventions.reference is ReferenceKind.POINT and est.conventions.inertia_unit == "lb*in^2"
    (mp,) = normalise(est)
    assert mp.mass == pytest.approx(958.4 * LB, rel=1e-15)
