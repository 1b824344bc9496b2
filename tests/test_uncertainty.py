"""Uncertainty propagation: the published RSS formulas, an exact two-mass case, Monte Carlo against RSS, and the
shared density error of one material.

Sources: Zimmerman & Nakai, "Are You Sure? Uncertainty in Mass Properties Engineering", SAWE Paper 3360 (2005),
formulas as transcribed in a secondary source (project references §5); GUM (JCGM 100:2008) §4.3.7 rectangular
distribution u = a/√3 (section number from memory); ASTM B777-15 Table 1 density bands (read); a Monte Carlo sample
mean has standard error s/√n, a sample standard deviation about σ/√(2(n−1)) (normal samples; standard statistics).
"""

from __future__ import annotations

import importlib.util
import math
from statistics import NormalDist

import numpy as np
import pytest

from massmodel.core.model import Maturity
from massmodel.modelfile.loader import loads_model
from massmodel.uncertainty import (
    MATURITY_DEFAULTS,
    growth_summary,
    monte_carlo,
    montecarlo,
    rss_uncertainties,
    rule_confidence,
    rule_margins,
    uncertainty_inputs,
)
from massmodel.uncertainty.rss import vehicle_values
from massmodel.uncertainty.rules import rule_margin_samples, rules_monte_carlo
from massmodel.vehicle.balance import check_rules, static_balance

needs_numba = pytest.mark.skipif(importlib.util.find_spec("numba") is None,
                                 reason="numba is not installed: only the numpy sampler exists here")
#: Every Monte Carlo check runs on both samplers (forced; "auto" picks by size).
KERNELS = ["numpy", pytest.param("numba", marks=needs_numba)]

HEAD = """
[model]
name = "test"
[units]
length = "mm"
mass = "kg"
"""

VEHICLE = """
[vehicle]
wheelbase = 2000
track_front = 1400
track_rear = 1300
ground_level = -300
"""


def _point(path: str, mass: float, at: tuple[float, float, float], maturity: str = "calculated") -> str:
    return (f'[[part]]\npath = "{path}"\nshape = "point"\nmass = {mass}\nmaturity = "{maturity}"\n'
            f"at = [{at[0]}, {at[1]}, {at[2]}]\n")


def _item(path: str, **fields: str) -> str:
    body = "".join(f'{k} = {v}\n' if v.startswith("[") else f'{k} = "{v}"\n' for k, v in fields.items())
    return f'[[uncertainty.item]]\npath = "{path}"\n{body}'


def test_two_point_masses_by_hand() -> None:
    # m1 = 10 kg at x = 0 (u_m 0.3 kg, u_x 10 mm), m2 = 30 kg at x = 1 m (u_m 0.4 kg, u_x 20 mm).
    text = (HEAD + _point("a", 10, (0, 0, 0)) + _point("b", 30, (1000, 0, 0)) + "[uncertainty]\n"
            + _item("a", mass="0.3 kg", cg='["10 mm", 0, 0]', inertia="0 %")
            + _item("b", mass="0.4 kg", cg='["20 mm", 0, 0]', inertia="0 %"))
    est = rss_uncertainties(loads_model(text))
    # M = 40 kg, u_M = √(0.3² + 0.4²) = 0.5 kg exactly.
    assert est["mass"].value == pytest.approx(40.0)
    assert est["mass"].u == pytest.approx(0.5, rel=1e-12)
    # x̄ = 30/40 = 0.75 m. ∂x̄/∂m1 = (0 − 0.75)/40, ∂x̄/∂m2 = (1 − 0.75)/40, ∂x̄/∂x1 = 10/40, ∂x̄/∂x2 = 30/40:
    # u² = [(0.75·0.3)² + (0.25·0.4)² + (10·0.01)² + (30·0.02)²]/40² = 0.430625/1600.
    assert est["cg_x"].value == pytest.approx(0.75)
    assert est["cg_x"].u == pytest.approx(math.sqrt(0.430625) / 40.0, rel=1e-12)
    # I_yy about the CG of two points = m1 m2 L²/(m1 + m2) = 7.5 kg·m² (L = x2 − x1). Its partials by hand:
    # ∂/∂m1 = m2² L²/M² = 0.5625, ∂/∂m2 = m1² L²/M² = 0.0625, ∂/∂x1 = −2 m1 m2 L/M = −15, ∂/∂x2 = +15:
    # u² = (0.5625·0.3)² + (0.0625·0.4)² + (15·0.01)² + (15·0.02)².
    assert est["iyy"].value == pytest.approx(7.5)
    expected = math.sqrt((0.5625 * 0.3) ** 2 + (0.0625 * 0.4) ** 2 + (15 * 0.01) ** 2 + (15 * 0.02) ** 2)
    assert est["iyy"].u == pytest.approx(expected, rel=1e-12)
    assert est["ixx"].u == 0.0  # every point on the x axis, no y or z error: I_xx = 0 exactly


def test_zimmerman_nakai_formulas_written_out() -> None:
    rng = np.random.default_rng(7)
    n = 6
    m = rng.uniform(1.0, 20.0, n)
    xyz = rng.uniform(-1000.0, 1000.0, (n, 3))  # mm
    um = rng.uniform(0.01, 0.5, n)
    uc = rng.uniform(1.0, 15.0, (n, 3))  # mm
    ui = rng.uniform(0.0, 0.3, n)
    text = HEAD
    for i in range(n):
        text += (f'[[part]]\npath = "p{i}"\nshape = "box"\nsize = [200, 150, 100]\nmass = {m[i]}\n'
                 f'maturity = "estimated"\nat = [{xyz[i, 0]}, {xyz[i, 1]}, {xyz[i, 2]}]\n')
    text += "[uncertainty]\n" + "".join(
        _item(f"p{i}", mass=f"{um[i]} kg", cg=f'["{uc[i, 0]} mm", "{uc[i, 1]} mm", "{uc[i, 2]} mm"]',
              inertia=f"{100 * ui[i]} %") for i in range(n))
    model = loads_model(text)
    est = rss_uncertainties(model)
    w, x, y, z = m, xyz[:, 0] / 1e3, xyz[:, 1] / 1e3, xyz[:, 2] / 1e3
    sx, sy, sz = uc[:, 0] / 1e3, uc[:, 1] / 1e3, uc[:, 2] / 1e3
    own = np.array([c.props.inertia[0, 0] for c in model.components])  # each box's own I_xx about its CG
    s_ixx_i = ui * own
    # Zimmerman & Nakai (SAWE 3360): σ_W = √Σσ_wᵢ²
    assert est["mass"].u == pytest.approx(math.sqrt((um**2).sum()), rel=1e-12)
    # σ_x̄ = √Σ[(wᵢσ_xᵢ)² + (σ_wᵢ dᵢ)²] / Σwᵢ
    xb, yb, zb = (w * x).sum() / w.sum(), (w * y).sum() / w.sum(), (w * z).sum() / w.sum()
    assert est["cg_x"].u == pytest.approx(math.sqrt(((w * sx) ** 2 + (um * (x - xb)) ** 2).sum()) / w.sum(), rel=1e-12)
    assert est["cg_z"].u == pytest.approx(math.sqrt(((w * sz) ** 2 + (um * (z - zb)) ** 2).sum()) / w.sum(), rel=1e-12)
    # σ_Ixx = √Σ[σ_Ixxᵢ² + (2wᵢ(yᵢ−ȳ)σ_yᵢ)² + (2wᵢ(zᵢ−z̄)σ_zᵢ)² + (((yᵢ−ȳ)²+(zᵢ−z̄)²)σ_wᵢ)²]
    s_ixx = math.sqrt((s_ixx_i**2 + (2 * w * (y - yb) * sy) ** 2 + (2 * w * (z - zb) * sz) ** 2
                       + (((y - yb) ** 2 + (z - zb) ** 2) * um) ** 2).sum())
    assert est["ixx"].u == pytest.approx(s_ixx, rel=1e-12)


def _car(extra: str = "") -> str:
    return (HEAD + VEHICLE + _point("chassis/tub", 300, (-1000, 0, 0))
            + _point("power/engine", 120, (-1600, 50, 100), "estimated")
            + _point("wheels/front/left", 12, (0, 700, 0), "measured")
            + _point("wheels/rear/left", 12, (-2000, 650, 0), "measured")
            + _point("driver", 75, (-1100, 0, 50), "measured") + extra)


@pytest.mark.parametrize("kernel", KERNELS)
def test_monte_carlo_agrees_with_rss_within_three_standard_errors(kernel: str) -> None:
    model = loads_model(_car())
    est = rss_uncertainties(model)
    n = 40000
    mc = monte_carlo(model, n, seed=3, kernel=kernel)
    assert mc.kernel == kernel
    for name in ("mass", "front", "rear"):  # linear (mass) and bilinear in the part errors
        se_mean = mc.standard_error(name)
        assert abs(mc.mean(name) - est[name].value) < 3 * se_mean, name
        se_std = est[name].u / math.sqrt(2 * (n - 1))
        assert abs(mc.std(name) - est[name].u) < 3 * se_std, name
    for name in ("cg_x", "front_fraction", "cg_height"):  # ratios: first order is close for small errors
        assert mc.std(name) == pytest.approx(est[name].u, rel=0.03), name


@pytest.mark.parametrize("kernel", KERNELS)
def test_inertia_bias_rss_cannot_show(kernel: str) -> None:
    # A 300 kg part AT the CG (between two 50 kg parts) with a CG error of 20 mm in x and y: to first order the
    # moment does not change (dᵢ = 0, so RSS gives u = 0), but I_zz = Σ m r² − M s² rises on average by
    # m_a (1 − m_a/M) · 2u² = 300 · 0.25 · 2 · 0.0004 = 0.06 kg·m² (E[δ²] = u²): a non-linear effect only the
    # Monte Carlo shows.
    text = (HEAD + _point("a", 300, (0, 0, 0)) + _point("b", 50, (1000, 0, 0)) + _point("c", 50, (-1000, 0, 0))
            + "[uncertainty]\n" + _item("a", mass="0 kg", cg='["20 mm", "20 mm", 0]', inertia="0 %")
            + _item("b", mass="0 kg", cg="0 mm", inertia="0 %") + _item("c", mass="0 kg", cg="0 mm", inertia="0 %"))
    model = loads_model(text)
    est = rss_uncertainties(model)
    assert est["izz"].u == 0.0
    mc = monte_carlo(model, 40000, seed=11, kernel=kernel)
    bias = 300 * (1 - 300 / 400) * 2 * 0.02**2
    assert mc.mean("izz") - est["izz"].value == pytest.approx(bias, abs=3 * mc.standard_error("izz"))
    assert bias > 20 * mc.standard_error("izz")  # the effect is resolved, not noise


def test_vehicle_values_match_the_static_balance() -> None:
    model = loads_model(_car())
    mp = model.mass_properties()
    bal = static_balance(mp, model.vehicle)
    v = vehicle_values(np.array([mp.mass]), mp.center[None, :], model.vehicle)
    assert v["front"][0] == pytest.approx(bal.front)
    assert v["cg_height"][0] == pytest.approx(bal.cg_height)
    assert v["front_fraction"][0] == pytest.approx(bal.front_fraction)
    assert [v[k][0] for k in ("front_left", "front_right", "rear_left", "rear_right")] == pytest.approx(bal.corners)


BLOCKS = 10


def _tungsten_blocks() -> str:
    text = HEAD
    for i in range(BLOCKS):
        text += (f'[[part]]\npath = "ballast/b{i}"\nshape = "box"\nsize = [100, 50, 20]\n'
                 f'material = "tungsten_b777_class1"\nmaturity = "calculated"\nat = [{300 * i}, 0, 0]\n')
    return text + "[uncertainty]\n" + _item("ballast", mass="0 %", cg="0 mm", inertia="0 %", growth="0 %")


@pytest.mark.parametrize("kernel", KERNELS)
def test_one_density_error_moves_every_block_of_the_material(kernel: str) -> None:
    model = loads_model(_tungsten_blocks())
    inp = uncertainty_inputs(model)
    assert inp.density_keys == ("tungsten_b777_class1",)
    # ASTM B777 Class 1: 16.85–17.30 g/cm³; a uniform band has u = half-width/√3 (GUM §4.3.7)
    u_rel = (17.30 - 16.85) / 2 / math.sqrt(3) / 17.075
    assert inp.u_density[0] == pytest.approx(u_rel, rel=1e-12)
    total = 1.7075 * BLOCKS  # each block 100 cm³ of 17.075 g/cm³
    est = rss_uncertainties(model)["mass"]
    assert est.u == pytest.approx(total * u_rel, rel=1e-9)  # correlated: the parts' errors add linearly
    assert est.u_density_if_independent == pytest.approx(total * u_rel / math.sqrt(BLOCKS), rel=1e-9)
    n = 20000
    mc = monte_carlo(model, n, seed=5, kernel=kernel)
    # Sampled independently the spread would be √10 times smaller; shared, it is the full band:
    assert abs(mc.std("mass") - est.u) < 3 * est.u / math.sqrt(2 * (n - 1)) * 1.2  # uniform: slightly wider s.e.
    samples = np.asarray(mc.values["mass"])
    lo, hi = 1.685 * BLOCKS, 1.730 * BLOCKS  # the worked check of the references: 1.685–1.730 kg per block
    assert samples.min() >= lo - 1e-9 and samples.max() <= hi + 1e-9
    assert samples.max() - samples.min() > 0.98 * (hi - lo)  # every block at one end of the band together


@pytest.mark.parametrize("kernel", KERNELS)
def test_same_seed_same_samples_and_chunking_keeps_the_statistics(kernel: str) -> None:
    model = loads_model(_car())
    a = monte_carlo(model, 3000, seed=42, kernel=kernel)
    b = monte_carlo(model, 3000, seed=42, kernel=kernel)
    assert np.array_equal(a.values["front"], b.values["front"])
    c = monte_carlo(model, 20000, seed=1, chunk_elements=64, kernel=kernel)  # chunks of 12 (numpy: 16) samples
    est = rss_uncertainties(model)["mass"]
    assert abs(c.mean("mass") - est.value) < 3 * c.standard_error("mass")
    # the chunking changes nothing: every sample's numbers depend on the seed and its index only
    d = monte_carlo(model, 20000, seed=1, kernel=kernel)
    for name in d.values:
        assert np.array_equal(c.values[name], d.values[name]), name
    # so a shorter run is the start of a longer one, and another seed gives other samples
    assert np.array_equal(monte_carlo(model, 3000, seed=1, kernel=kernel).values["mass"], d.values["mass"][:3000])
    assert not np.array_equal(a.values["mass"], d.values["mass"][:3000])


def test_defaults_by_maturity_and_growth_are_separate() -> None:
    model = loads_model(_car())  # no [uncertainty]: the defaults by maturity apply
    inp = uncertainty_inputs(model)
    for c, um, g in zip(model.components, inp.u_mass, inp.growth, strict=True):
        d = MATURITY_DEFAULTS[c.maturity]
        assert um == pytest.approx(d.mass * c.props.mass)
        assert g == d.growth
    g = growth_summary(model)
    expected = sum(c.props.mass * MATURITY_DEFAULTS[c.maturity].growth for c in model.components)
    assert g["growth_allowance_kg"] == pytest.approx(expected)
    assert g["predicted_mass_kg"] == pytest.approx(model.mass_properties().mass + expected)
    assert g["growth_allowance_by_maturity_kg"]["measured"] == 0.0
    # the allowance never enters the uncertainty
    assert rss_uncertainties(model)["mass"].u == pytest.approx(math.sqrt((inp.u_mass**2).sum()))


def test_measured_part_from_scale_resolution() -> None:
    text = HEAD + _point("a", 10, (0, 0, 0), "measured") + '[uncertainty]\nscale_resolution = "0.1 kg"\n'
    c = loads_model(text).components[0]
    assert c.uncertainty is not None
    assert c.uncertainty.mass == pytest.approx(0.1 / (2 * math.sqrt(3)))  # GUM §F.2.2.1: δ/(2√3)
    assert c.uncertainty.cg == (MATURITY_DEFAULTS[Maturity.MEASURED].cg,) * 3


RULES = """
[[rule]]
name = "min mass"
check = "min_mass"
limit = "{limit} kg"
exclude = ["driver"]
[[rule]]
name = "front share"
check = "front_fraction"
min = 0.40
max = 0.50
[[rule]]
name = "front axle"
check = "min_axle_load"
axle = "front"
limit = "150 kg"
[[rule]]
name = "cg height"
check = "max_cg_height"
limit = "350 mm"
"""


def test_rule_confidence_matches_the_vehicle_checks_and_the_normal_quantile() -> None:
    model = loads_model(_car(RULES.format(limit=440)))
    rows = rule_confidence(model, 0.95)
    for r, chk in zip(rows, check_rules(model), strict=True):
        assert (r.name, r.value, r.margin, r.unit) == (chk.name, chk.value, chk.margin, chk.unit)
    z95 = 1.6448536  # standard normal table, one-sided 95 %
    margins = rule_margins(model, 0.95)
    for r in rows:
        assert margins[r.name] == pytest.approx(z95 * r.u, rel=1e-6)
    mass_rule = rows[0]
    # the min-mass rule counts everything but the driver: its u is the RSS of those parts' mass u only
    inp = uncertainty_inputs(model)
    keep = np.array([not p.startswith("driver") for p in inp.paths])
    assert mass_rule.u == pytest.approx(math.sqrt((inp.u_mass[keep] ** 2).sum()))
    # put the limit exactly z·u below the value: the probability of passing is then the confidence
    limit = mass_rule.value - z95 * mass_rule.u
    again = rule_confidence(loads_model(_car(RULES.format(limit=limit))), 0.95)[0]
    assert again.probability_rss == pytest.approx(0.95, abs=1e-6)


@pytest.mark.parametrize("kernel", KERNELS)
def test_rule_probability_by_monte_carlo(kernel: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(montecarlo, "kernel_for", lambda elements, kernel_asked="auto": kernel)
    model = loads_model(_car(RULES.format(limit=440)))
    mc = rules_monte_carlo(model, 40000, seed=9)
    rows = rule_confidence(model, 0.9, mc)
    for r in rows:
        assert r.probability_mc is not None and r.probability_mc_se is not None
        assert abs(r.probability_mc - r.probability_rss) < 3 * r.probability_mc_se + 2e-3, r.name
    margins = rule_margin_samples(model, mc)
    z = NormalDist().inv_cdf(0.9)
    for r in rows:
        if r.name != "front share":  # one-sided rules: the needed margin is z·u in both methods
            assert r.required_margin_mc == pytest.approx(z * r.u, rel=0.05), r.name
        assert len(margins[r.name]) == 40000
