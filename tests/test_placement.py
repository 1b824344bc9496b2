"""Placing ballast across slots: lever-rule closed forms, brute-force grids, infeasibility, density bands, demo.

Static axle loads by moments about the axle lines (Jazar, Vehicle Dynamics, Springer 2008, ch. 2; equation numbers from memory):
F_front = m a2 / L. The front fraction of a car plus ballast masses is then the lever rule
f = (F0 + Σ mᵢ φᵢ) / (M0 + Σ mᵢ) with φᵢ = (xᵢ − x_rear) / L. The grids below evaluate the same physics with their
own closed forms (block CG = floor + clearance + thickness / 2, thickness = m / (ρ A)), not the optimiser's model.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from massmodel.ballast.placement import place_ballast
from massmodel.ballast.plan import Candidate, Objective, Plan, Targets
from massmodel.ballast.sizing import Envelope, spec_from_parts
from massmodel.ballast.solvers import extreme_ratio
from massmodel.core.frames import Pose
from massmodel.core.materials import Material
from massmodel.core.model import Component, MassSource, Maturity, Model, Rule, RuleCheck, Slot, Vehicle
from massmodel.core.shapes import Box, PointMass
from massmodel.vehicle.balance import static_balance

L = 2.5  # wheelbase, m; front axle at x = 0, rear axle at x = -L, ground at z = 0
RHO = 18000.0
NO_BAND = Material("plain_dense", "dense alloy without a band (test)", RHO, RHO, RHO)
BODY_INERTIA = np.diag([60.0, 380.0, 400.0])


def car(rules, slots, m0=400.0, x0=-1.5, y0=0.0, z0=0.3) -> Model:
    body = Component("body", PointMass(), Pose.identity(), MassSource.MEASURED, Maturity.MEASURED, "#777777",
                     mass=m0, measured_cg=np.array([x0, y0, z0]), measured_inertia=BODY_INERTIA)
    vehicle = Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), L, 1.5, 1.5, 0.0, 0.0)
    return Model("test car", (body,), vehicle, tuple(rules), tuple(slots))


def slot(name, at, size=(0.2, 0.2, 0.1), clearance=0.0):
    return Slot(name, Box(*size), Pose.from_translation(at), clearance)


def plan(model, fills, targets, material=NO_BAND, min_thickness=1e-4, increment=1e-4):
    cands = []
    for s, fill in zip(model.slots, fills, strict=True):
        spec = spec_from_parts(material, fill, increment=increment, min_thickness=min_thickness)
        cands.append(Candidate(s.name, Envelope.from_slot(s), spec, f"ballast/{s.name}"))
    return Plan("test plan", tuple(cands), targets)


def phi(x):
    return (x + L) / L  # front-axle share of a mass at station x


def test_two_fixed_slots_front_fraction_by_the_lever_rule():
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=420.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.40, maximum=0.60)]
    model = car(rules, [slot("front", (-0.5, 0.0, 0.15)), slot("rear", (-2.2, 0.0, 0.10))])
    p = plan(model, ["z", "z"], Targets(mass_margin=0.0, ballast_allowance=0.0))  # "z": CG fixed at the centre
    result = place_ballast(model, p)
    assert result.feasible
    front, rear = (a.planned for a in result.allocations)
    # The rear slot is lower, so the lowest CG puts all it can there; the front share then binds at 0.40:
    # m1 = (f (M0 + B) - F0 - B φ2) / (φ1 - φ2) with B = 20 kg, F0 = M0 φ0.
    b, f = 20.0, 0.40
    m1 = (f * (400.0 + b) - 400.0 * phi(-1.5) - b * phi(-2.2)) / (phi(-0.5) - phi(-2.2))
    assert front == pytest.approx(m1, rel=1e-9)
    assert rear == pytest.approx(b - m1, rel=1e-9)
    # the sized blocks (rounded up to 0.1 mm) still meet both rules, checked on the ballasted model
    bal = static_balance(result.ballasted.mass_properties(), model.vehicle)
    assert bal.front_fraction >= 0.40
    assert bal.mass >= 420.0
    assert all(r.passed for r in result.rules)
    binding = {a.requirement.rule_key for a in result.assessments if a.binding}
    assert binding == {"rule:min mass", "rule:front share:min"}


def grid_best(model, slots_xyz, areas, floors, lo_f, hi_f, need, objective, step):
    """Brute force over a grid of slot masses with the block CG = floor + t/2, t = m/(ρ A)."""
    m0, x0 = 400.0, -1.5
    best = (np.inf, None)
    n = len(slots_xyz)
    axes = [np.arange(0.0, need + 1e-9, step)] * (n - 1)
    for head in itertools.product(*axes):
        ms = np.array(list(head) + [need - sum(head)])
        if ms[-1] < -1e-12 or np.any((ms > 1e-12) & (ms < floors - 1e-12)):
            continue
        ms = np.clip(ms, 0.0, None)
        zs = np.array([s[2] for s in slots_xyz]) + ms / (RHO * np.array(areas)) / 2.0
        xs = np.array([s[0] for s in slots_xyz])
        mass = m0 + ms.sum()
        f = (m0 * phi(x0) + np.sum(ms * phi(xs))) / mass
        if not lo_f - 1e-12 <= f <= hi_f + 1e-12:
            continue
        value = objective(ms, xs, zs, mass)
        if value < best[0]:
            best = (value, ms)
    return best


def cg_height(ms, xs, zs, mass, m0=400.0, z0=0.3):
    return (m0 * z0 + np.sum(ms * zs)) / mass


def test_optimiser_matches_a_brute_force_grid_when_blocks_grow_upwards():
    # three floor slots; blocks sit on the slot floor and grow up, so a thinner spread lowers the CG (convex)
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=418.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.405, maximum=0.43)]
    slots = [slot("a", (-0.6, 0.0, 0.05), (0.10, 0.10, 0.05)), slot("b", (-1.0, 0.0, 0.05), (0.12, 0.10, 0.05)),
             slot("c", (-2.0, 0.0, 0.05), (0.20, 0.15, 0.05))]
    model = car(rules, slots)
    p = plan(model, ["+z"] * 3, Targets(mass_margin=0.0, ballast_allowance=0.0))
    result = place_ballast(model, p)
    assert result.feasible
    ms = np.array(result.first_round)  # the continuous optimum, before rounding to the increment tightened rows
    areas = [0.10 * 0.10, 0.12 * 0.10, 0.20 * 0.15]
    floors_z = [0.025, 0.025, 0.025]  # slot floors (centre 0.05 - half height 0.025)
    value, ms_grid = grid_best(model, [(s.pose.translation[0], 0.0, fz) for s, fz in zip(slots, floors_z, strict=True)],
                               areas, np.zeros(3), 0.405, 0.43, 18.0, cg_height, 0.05)
    xs = np.array([s.pose.translation[0] for s in slots])
    zs = np.array(floors_z) + ms / (RHO * np.array(areas)) / 2.0
    mine = cg_height(ms, xs, zs, 400.0 + ms.sum())
    assert ms.sum() == pytest.approx(18.0, rel=1e-9)
    assert mine <= value + 1e-12  # at least as low as the best grid point
    assert np.max(np.abs(ms - ms_grid)) < 0.1  # and next to it (grid step 0.05 kg)


def test_optimiser_matches_a_brute_force_grid_for_yaw_inertia():
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=415.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.38, maximum=0.50)]
    slots = [slot("nose", (0.3, 0.0, 0.1)), slot("mid", (-1.2, 0.3, 0.1)), slot("tail", (-2.8, 0.0, 0.1))]
    model = car(rules, slots)
    p = plan(model, ["z"] * 3, Targets(mass_margin=0.0, ballast_allowance=0.0, objective=Objective.YAW_INERTIA))
    result = place_ballast(model, p)
    assert result.feasible
    ms = np.array(result.first_round)
    xy = np.array([[0.3, 0.0], [-1.2, 0.3], [-2.8, 0.0]])
    own = (0.2 ** 2 + 0.2 ** 2) / 12.0  # I_zz per kg of a block 0.2 x 0.2 m in plan (any thickness)

    def yaw(m, *_):
        # Steiner: I_zz about the combined CG = Σ own + Σ m_i |r_i - r_cg|^2 in plan
        mass = 400.0 + m.sum()
        pts = np.vstack([[-1.5, 0.0], xy])
        w = np.concatenate([[400.0], m])
        cg = (w[:, None] * pts).sum(axis=0) / mass
        return BODY_INERTIA[2, 2] + own * m.sum() + float(np.sum(w * np.sum((pts - cg) ** 2, axis=1)))

    value, ms_grid = grid_best(model, [(0.3, 0, 0.1), (-1.2, 0, 0.1), (-2.8, 0, 0.1)], [0.04] * 3, np.zeros(3),
                               0.38, 0.50, 15.0, yaw, 0.05)
    assert yaw(ms) <= value + 1e-9
    assert np.max(np.abs(ms - ms_grid)) < 0.1
    # the optimiser's own yaw figure agrees with this closed form on the sized result too
    got = result.props_after.inertia[2, 2]
    sized = np.array([a.sizing.masses()[0] if a.sizing else 0.0 for a in result.allocations])
    cgs = [a.sizing.props().center[:2] if a.sizing else xy[i] for i, a in enumerate(result.allocations)]
    xy_sized = np.array(cgs)
    pts = np.vstack([[-1.5, 0.0], xy_sized])
    w = np.concatenate([[400.0], sized])
    cg = (w[:, None] * pts).sum(axis=0) / w.sum()
    thick_own = sum(a.sizing.props().inertia[2, 2] for a in result.allocations if a.sizing)
    assert got == pytest.approx(BODY_INERTIA[2, 2] + thick_own + float(np.sum(w * np.sum((pts - cg) ** 2, axis=1))),
                                rel=1e-12)


def test_not_enough_room_names_the_minimum_mass_and_the_shortfall():
    rules = [Rule("minimum mass", RuleCheck.MIN_MASS, limit=450.0)]
    slots = [slot("a", (-1.0, 0.0, 0.1), (0.1, 0.1, 0.05)), slot("b", (-2.0, 0.0, 0.1), (0.1, 0.1, 0.05))]
    model = car(rules, slots)
    result = place_ballast(model, plan(model, ["+z", "+z"], Targets(mass_margin=0.5)))
    assert not result.feasible
    cap = RHO * 0.1 * 0.1 * 0.05  # each slot full: 9 kg
    sf = result.shortfalls[0]
    assert sf.requirement.rule_key == "rule:minimum mass"
    assert sf.amount == pytest.approx(450.5 - 400.0 - 2 * cap, rel=1e-9)
    assert sf.best_alone == pytest.approx(400.0 + 2 * cap, rel=1e-12)
    assert "every candidate slot is full" in sf.explanation and "short by 32.5 kg" in sf.explanation


def test_front_share_out_of_reach_names_the_rule_and_its_best_value():
    rules = [Rule("minimum mass", RuleCheck.MIN_MASS, limit=420.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.45)]
    model = car(rules, [slot("rear", (-2.2, 0.0, 0.1))])
    result = place_ballast(model, plan(model, ["z"], Targets(mass_margin=0.0)))
    assert not result.feasible
    keys = [s.requirement.rule_key for s in result.shortfalls]
    assert "rule:front share:min" in keys
    sf = result.shortfalls[keys.index("rule:front share:min")]
    # the best front share a rear slot gives is none at all: F0 / M0 = φ(-1.5) = 0.4
    assert sf.best_alone == pytest.approx(phi(-1.5), rel=1e-12)
    assert "reaches only 0.4000" in sf.explanation


def test_worst_density_mix_by_dinkelbach_equals_the_vertex_search():
    rng = np.random.default_rng(7)
    for _ in range(40):
        n = 5
        w = rng.uniform(0.5, 10.0, n)
        v = rng.uniform(0.0, 1.0, n)
        lo = rng.uniform(0.97, 0.99, n)
        hi = rng.uniform(1.01, 1.03, n)
        num0, den0 = rng.uniform(100, 200), rng.uniform(300, 400)
        values = [(num0 + np.sum(k * w * v)) / (den0 + np.sum(k * w))
                  for k in (np.where(bits, hi, lo) for bits in itertools.product([0, 1], repeat=n))]
        assert extreme_ratio(num0, den0, w, v, lo, hi, maximize=True)[0] == pytest.approx(max(values), rel=1e-14)
        assert extreme_ratio(num0, den0, w, v, lo, hi, maximize=False)[0] == pytest.approx(min(values), rel=1e-14)


def test_minimum_mass_holds_at_the_low_end_of_the_band():
    band = Material("band_alloy", "alloy with a wide band (test)", 18000.0, 17000.0, 19000.0)
    rules = [Rule("minimum mass", RuleCheck.MIN_MASS, limit=420.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.40, maximum=0.45)]
    model = car(rules, [slot("front", (-0.5, 0.0, 0.05)), slot("rear", (-2.2, 0.0, 0.05))])
    result = place_ballast(model, plan(model, ["+z", "+z"], Targets(mass_margin=0.25), band, 1e-3, 0.5e-3))
    assert result.feasible
    low_total = 400.0 + sum(a.sizing.masses()[1] for a in result.allocations if a.sizing)
    assert low_total >= 420.25
    mass_row = next(a for a in result.assessments if a.requirement.rule_key == "rule:minimum mass")
    assert mass_row.worst == pytest.approx(low_total, rel=1e-12)
    frac = next(a for a in result.assessments if a.requirement.rule_key == "rule:front share:min")
    assert frac.worst >= 0.40 and frac.nominal >= frac.worst


def test_the_demo_plan():
    from massmodel.ballast.plan import load_plan
    from massmodel.modelfile.loader import load_case_models

    cases = load_case_models("parts_demo/brindlecombe_bl3.toml")
    model = cases["base"]
    result = place_ballast(cases, load_plan("parts_demo/bl3_ballast_plan.toml", model))
    assert result.feasible and result.passed  # every rule and target in every load case
    assert [c.name for c in result.cases] == ["base", "qualifying", "race_start", "driver_out", "test_day"]
    assert all(r.passed for r in result.rules) and all(a.passed for a in result.assessments)
    used = {a.candidate.name for a in result.allocations if a.sizing is not None}
    assert "gearbox_left" not in used  # higher and behind: neither the CG nor the front share wants it
    mass = next(a for a in result.assessments if a.requirement.kind == "min_mass")
    assert mass.worst >= 425.6  # the rule plus the plan's margin and scale resolution at the low end of the band
    assert result.balance_after.cg_height < result.balance_before.cg_height


def test_a_block_growing_along_the_car_moves_its_own_lever_arm():
    # The front block sits against its slot's front wall and grows rearwards, so its CG moves back as it grows:
    # φ(m) = φ(x_wall - m / (2 ρ A)) and the front-share row becomes quadratic (solved by sequential LP).
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=420.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.40)]
    slots = [slot("tunnel", (-1.0, 0.0, 0.2), (0.6, 0.1, 0.05)), slot("rear", (-2.2, 0.0, 0.1))]
    model = car(rules, slots)
    result = place_ballast(model, plan(model, ["-x", "z"], Targets(mass_margin=0.0, ballast_allowance=0.0)))
    assert result.feasible
    m1 = result.first_round[0]
    area, x_wall, b = 0.1 * 0.05, -1.0 + 0.3, 20.0
    # F0 + m1 φ(x_wall - m1/(2ρA)) + (B - m1) φ(-2.2) = 0.40 (M0 + B): a quadratic in m1
    k = 1.0 / (2.0 * RHO * area * L)
    coeffs = [-k, phi(x_wall) - phi(-2.2), 400.0 * phi(-1.5) + b * phi(-2.2) - 0.40 * (400.0 + b)]
    roots = [r.real for r in np.roots(coeffs) if abs(r.imag) < 1e-12 and 0.0 <= r.real <= b]
    assert len(roots) == 1
    assert m1 == pytest.approx(roots[0], rel=1e-7)


def test_left_right_balance_by_the_lever_rule():
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=420.0)]
    model = car(rules, [slot("left", (-1.5, 0.3, 0.10)), slot("right", (-1.5, -0.3, 0.11))], y0=0.01)
    t = Targets(mass_margin=0.0, ballast_allowance=0.0, lateral_offset_max=0.001)
    result = place_ballast(model, plan(model, ["z", "z"], t))
    assert result.feasible
    left, right = result.first_round
    # the lower left slot is preferred until the CG reaches 1 mm left: (400*0.01 + 0.3 (mL - mR)) / 420 = 0.001
    assert right == pytest.approx((20.0 - (0.42 - 4.0) / 0.3) / 2.0, rel=1e-9)
    assert left == pytest.approx(20.0 - right, rel=1e-9)
    lateral = next(a for a in result.assessments if a.requirement.kind == "lateral_max")
    assert lateral.worst <= 0.001 and lateral.binding


def test_the_mix_objective_reduces_to_each_single_objective():
    rules = [Rule("min mass", RuleCheck.MIN_MASS, limit=415.0),
             Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.38, maximum=0.50)]
    slots = [slot("nose", (0.3, 0.0, 0.25)), slot("mid", (-1.2, 0.3, 0.1)), slot("tail", (-2.8, 0.0, 0.05))]
    model = car(rules, slots)
    runs = {}
    for name, objective, w in (("height", Objective.CG_HEIGHT, (0.5, 0.5)), ("yaw", Objective.YAW_INERTIA, (0.5, 0.5)),
                               ("mix_h", Objective.MIX, (1.0, 0.0)), ("mix_y", Objective.MIX, (0.0, 1.0)),
                               ("mix", Objective.MIX, (0.5, 0.5))):
        t = Targets(mass_margin=0.0, ballast_allowance=0.0, objective=objective, weight_height=w[0], weight_yaw=w[1])
        runs[name] = place_ballast(model, plan(model, ["z"] * 3, t))
    first = {k: np.array(r.first_round) for k, r in runs.items()}
    assert np.allclose(first["mix_h"], first["height"], atol=1e-6)
    assert np.allclose(first["mix_y"], first["yaw"], atol=1e-6)
    h = {k: r.balance_after.cg_height for k, r in runs.items()}
    yaw = {k: r.props_after.inertia[2, 2] for k, r in runs.items()}
    # the compromise lies between the two single optima in both measures
    assert h["height"] <= h["mix"] + 1e-9 <= h["yaw"] + 2e-9
    assert yaw["yaw"] <= yaw["mix"] + 1e-6 <= yaw["height"] + 2e-6
