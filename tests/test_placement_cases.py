"""Ballast placed for every load case at once: hand-written LPs, closed forms, finite differences, brute force.

Static axle loads by moments about the axle lines (Jazar, Vehicle Dynamics, Springer 2008, ch. 2; equation numbers
from memory): a mass at station x puts the share φ = (x − x_rear) / L of its weight on the front axle (the lever
rule), so the front fraction of a car plus ballast is f = (F0 + Σ φᵢ mᵢ) / (M0 + Σ mᵢ). Dual values of a linear
program are the derivatives of its optimum with respect to the right-hand sides (linear-programming duality, e.g.
Vanderbei, Linear Programming: Foundations and Extensions, ch. 5; from memory); they are checked here against
closed forms and by solving again with the limit moved.
"""

from __future__ import annotations

import itertools
from dataclasses import replace

import numpy as np
import pytest

from massmodel.ballast.placement import place_ballast
from massmodel.ballast.plan import Candidate, Plan, PlanError, Targets
from massmodel.ballast.sizing import Envelope, spec_from_parts
from massmodel.core.frames import Pose
from massmodel.core.materials import Material
from massmodel.core.model import Component, MassSource, Maturity, Model, Rule, RuleCheck, Slot, Vehicle
from massmodel.core.shapes import Box, PointMass
from massmodel.vehicle.balance import check_rules, static_balance

L = 2.5  # wheelbase, m; front axle at x = 0, rear axle at x = -L, ground at z = 0
RHO = 18000.0
NO_BAND = Material("plain_dense", "dense alloy without a band (test)", RHO, RHO, RHO)
VEHICLE = Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), L, 1.5, 1.5, 0.0, 0.0)


def phi(x):
    return (x + L) / L  # front-axle share of a mass at station x


def point(path, mass, at):
    return Component(path, PointMass(), Pose.identity(), MassSource.MEASURED, Maturity.MEASURED, "#777777",
                     mass=mass, measured_cg=np.array(at, dtype=float), measured_inertia=np.diag([1.0, 1.0, 1.0]))


def car(case, fuel, rules, slots, body=400.0):
    """A 400 kg body at x = -1.5 m (φ = 0.4) and ``fuel`` kg at x = -2.0 m (φ = 0.2)."""
    comps = (point("body", body, (-1.5, 0.0, 0.30)), point("fuel/tank", fuel, (-2.0, 0.0, 0.20)))
    return Model("two-case car", comps, VEHICLE, tuple(rules), tuple(slots), case=case)


def slot(name, at, size=(0.2, 0.2, 0.1)):
    return Slot(name, Box(*size), Pose.from_translation(at), 0.0)


SLOTS = [slot("front", (-0.5, 0.0, 0.15)), slot("rear", (-2.2, 0.0, 0.10))]  # φ = 0.8 and 0.12


def rules(mass_limit=415.0, share=0.40):
    return [Rule("min mass", RuleCheck.MIN_MASS, limit=mass_limit, exclude=("fuel",)),
            Rule("front share", RuleCheck.FRONT_FRACTION, minimum=share)]


def two_cases(mass_limit=415.0, share_a=0.40, share_b=0.40):
    return {"qualifying": car("qualifying", 10.0, rules(mass_limit, share_a), SLOTS),
            "race": car("race", 40.0, rules(mass_limit, share_b), SLOTS)}


def plan_for(model, fills=("z", "z"), **targets):
    cands = []
    for s, fill in zip(model.slots, fills, strict=True):
        spec = spec_from_parts(NO_BAND, fill, increment=1e-5, min_thickness=1e-5)
        cands.append(Candidate(s.name, Envelope.from_slot(s), spec, f"ballast/{s.name}"))
    kw = {"mass_margin": 0.0, "ballast_allowance": 0.0, **targets}
    return Plan("test plan", tuple(cands), Targets(**kw))


def hand_lp(cases_f0_m0, share, need):
    """The least-ballast LP written out by hand: min m1 + m2 subject to m1 + m2 >= need and, per case,
    F0 + 0.8 m1 + 0.12 m2 >= share (M0 + m1 + m2); solved by scipy's HiGHS as the oracle."""
    from scipy.optimize import linprog

    a_ub = [[-1.0, -1.0]]
    b_ub = [-need]
    for f0, m0 in cases_f0_m0:
        a_ub.append([-(0.8 - share), -(0.12 - share)])
        b_ub.append(f0 - share * m0)
    res = linprog([1.0, 1.0], A_ub=a_ub, b_ub=b_ub, bounds=[(0, None), (0, None)], method="highs")
    assert res.status == 0
    return res.x, res.fun


def test_two_cases_least_ballast_by_a_hand_written_lp_and_the_lever_rule():
    cases = two_cases()
    plan = plan_for(cases["race"])
    result = place_ballast(cases, plan)
    assert result.feasible and result.passed
    # qualifying: F0 = 400*0.4 + 10*0.2 = 162 kg, M0 = 410 kg; race: F0 = 168 kg, M0 = 440 kg
    x, least = hand_lp([(162.0, 410.0), (168.0, 440.0)], 0.40, 15.0)
    # the race case binds: m1 = (f M0 - F0) / (φ1 - f) = (176 - 168) / 0.4 = 20 kg in the front slot
    assert least == pytest.approx(20.0, rel=1e-12)
    assert result.least == pytest.approx(least, rel=1e-9)
    assert result.first_round == pytest.approx(tuple(x), abs=1e-7)
    race = result.case("race")
    # the sized block is rounded up to the 0.01 mm increment (7.2 g): the share stays within 1e-5 of the bound
    assert 0.40 <= race.balance_after.front_fraction <= 0.40 + 1e-5
    assert result.case("qualifying").balance_after.front_fraction > 0.40 + 0.005
    assert all(r.passed for c in result.cases for r in c.rules)


def test_placing_for_one_case_fails_the_other_and_the_joint_placement_does_not():
    # What a user met: ballast placed for the light case failed the heavy case's front share.
    cases = two_cases()
    alone = place_ballast(cases["qualifying"], plan_for(cases["qualifying"]))
    assert alone.feasible and alone.passed
    blocks = [c for c in alone.ballasted.components if c.path.startswith("ballast/")]
    race_with = cases["race"].with_components(list(cases["race"].components) + blocks)
    share = next(r for r in check_rules(race_with) if r.name == "front share")
    assert not share.passed
    # the closed form of the light case alone: m1 + m2 = 15, 0.4 m1 - 0.28 m2 = 2 -> m1 = 6.2 / 0.68 kg
    assert alone.least == pytest.approx(15.0, rel=1e-9)
    joint = place_ballast(cases, plan_for(cases["race"]))
    assert joint.passed and joint.least == pytest.approx(20.0, rel=1e-9)


def test_dual_of_the_front_share_by_the_closed_form_and_by_finite_differences():
    cases = two_cases()
    result = place_ballast(cases, plan_for(cases["race"]))
    cost = {(c.requirement.case, c.requirement.rule_key): c for c in result.costs}
    share = cost[("race", "rule:front share:min")]
    # least(f) = (f M0 - F0) / (φ1 - f)  =>  d least / d f = (M0 φ1 - F0) / (φ1 - f)^2 = (352 - 168) / 0.16
    assert share.binding
    assert share.dual == pytest.approx((440.0 * 0.8 - 168.0) / 0.4 ** 2, rel=1e-9)
    assert share.per_step[0] == pytest.approx(1.15, rel=1e-9) and share.per_step[1] == "per 0.001"
    # solved again with the race limit moved by h
    h = 1e-4
    moved = dict(cases)
    moved["race"] = car("race", 40.0, rules(415.0, 0.40 + h), SLOTS)
    again = place_ballast(moved, plan_for(moved["race"]))
    assert (again.least - result.least) / h == pytest.approx(share.dual, rel=2e-3)
    # the mass rule is slack (20 kg added against 15 needed): no cost, and leaving it out saves nothing
    mass = cost[("race", "rule:min mass")]
    assert not mass.binding and mass.dual == 0.0 and mass.saving == pytest.approx(0.0, abs=1e-9)
    # without the race front share the qualifying one binds with the mass rule: least 15 kg (closed form above)
    assert share.without == pytest.approx(15.0, rel=1e-9)


def test_dual_of_a_mass_rule_by_finite_differences():
    cases = two_cases(mass_limit=430.0)  # now 30 kg are needed for mass, more than the front share's 20
    result = place_ballast(cases, plan_for(cases["race"]))
    x, least = hand_lp([(162.0, 410.0), (168.0, 440.0)], 0.40, 30.0)
    assert result.least == pytest.approx(least, rel=1e-9) and least == pytest.approx(30.0)
    costs = [c for c in result.costs if c.requirement.rule == "min mass"]
    assert sum(c.dual for c in costs) == pytest.approx(1.0, rel=1e-9)  # one kg of ballast per kg of limit
    # the same over both cases at once; without the mass rule anywhere the race front share alone needs 20 kg
    total = next(t for t in result.rule_totals if t.rule_key == "rule:min mass")
    assert total.cases == ("qualifying", "race") and total.dual == pytest.approx(1.0, rel=1e-9)
    assert total.without == pytest.approx(20.0, rel=1e-9) and total.saving == pytest.approx(10.0, rel=1e-9)
    h = 0.01
    again = place_ballast(two_cases(mass_limit=430.0 + h), plan_for(cases["race"]))
    assert (again.least - result.least) / h == pytest.approx(1.0, rel=1e-6)


def test_per_rule_margins_from_the_plan_and_from_python():
    cases = two_cases()
    base = place_ballast(cases, plan_for(cases["race"]))
    # 0.01 on the race front share: least(f) at f = 0.41 by the closed form (f M0 - F0) / (φ1 - f)
    widened = place_ballast(cases, plan_for(cases["race"]), margins={"front share": 0.01})
    assert widened.least == pytest.approx((0.41 * 440.0 - 168.0) / (0.8 - 0.41), rel=1e-9)
    assert widened.least > base.least
    # the scales' resolution is a margin on mass rules: with 430 kg needing 30 kg, 0.2 kg more
    heavy = two_cases(mass_limit=430.0)
    res = place_ballast(heavy, plan_for(heavy["race"], scale_resolution=0.2))
    assert res.least == pytest.approx(30.2, rel=1e-9)
    with pytest.raises(ValueError, match="no rule named 'front shares'"):
        place_ballast(cases, plan_for(cases["race"]), margins={"front shares": 0.01})
    with pytest.raises(ValueError, match="must be >= 0"):
        place_ballast(cases, plan_for(cases["race"]), margins={"min mass": -1.0})
    wrong = replace(plan_for(cases["race"]), margins=(("front share", 0.003, "length"),), source="p.toml")
    with pytest.raises(PlanError) as err:
        place_ballast(cases, wrong)
    assert (err.value.file, err.value.item, err.value.field) == ("p.toml", "[margins]", "front share")
    assert "needs a margin that is a number" in str(err.value)


def test_infeasible_names_the_case_and_the_rule():
    cases = two_cases(share_b=0.79)  # nothing short of infinite ballast in the φ = 0.8 slot reaches 0.79 in the race
    result = place_ballast(cases, plan_for(cases["race"]))
    assert not result.feasible
    first = result.shortfalls[0]
    assert (first.requirement.case, first.requirement.rule) == ("race", "front share")
    assert "front share (min) in case 'race'" in first.explanation


def test_brute_force_grid_over_two_cases_agrees_within_the_step():
    # three slots, blocks growing upwards from their floors (their CG rises with their mass), two cases
    slots = [slot("a", (-0.3, 0.0, 0.10)), slot("b", (-1.2, 0.0, 0.06)), slot("c", (-2.3, 0.0, 0.08))]
    rl = [Rule("min mass", RuleCheck.MIN_MASS, limit=418.0, exclude=("fuel",)),
          Rule("front share", RuleCheck.FRONT_FRACTION, minimum=0.40, maximum=0.44)]
    cases = {"light": car("light", 10.0, rl, slots), "heavy": car("heavy", 40.0, rl, slots)}
    plan = plan_for(cases["light"], fills=("+z", "+z", "+z"))
    result = place_ballast(cases, plan)
    assert result.passed
    ms = np.array(result.first_round)
    floors = np.array([0.05, 0.01, 0.03])  # slot centre minus half its 0.1 m height
    xs = np.array([-0.3, -1.2, -2.3])
    area = 0.04

    def state(m, fuel):
        mass = 400.0 + fuel + m.sum()
        front = 400.0 * 0.4 + fuel * 0.2 + float(np.sum(m * phi(xs)))
        z = (400.0 * 0.30 + fuel * 0.20 + float(np.sum(m * (floors + m / (RHO * area) / 2.0)))) / mass
        return front / mass, z

    step = 0.05
    grid = np.arange(0.0, 25.0 + step / 2, step)
    best = None
    for m in itertools.product(grid, repeat=2):
        rest = 18.0 - sum(m)  # the mass rule binds: the least ballast is 18 kg when the shares allow it
        if rest < -1e-12:
            continue
        mm = np.array([m[0], m[1], rest])
        shares = [state(mm, f)[0] for f in (10.0, 40.0)]
        if min(shares) < 0.40 or max(shares) > 0.44:
            continue
        h = np.mean([state(mm, f)[1] for f in (10.0, 40.0)])
        if best is None or h < best[0]:
            best = (h, mm)
    assert best is not None
    assert ms.sum() == pytest.approx(18.0, rel=1e-9)
    mine = np.mean([state(ms, f)[1] for f in (10.0, 40.0)])
    assert mine <= best[0] + 1e-12  # at least as low as the best grid point
    assert np.max(np.abs(ms - best[1])) <= 2 * step  # and beside it, within the grid's step


def test_slot_sensitivities_by_first_moments():
    cases = two_cases()
    result = place_ballast(cases, plan_for(cases["race"]))
    race = result.case("race")
    s = next(x for x in result.sensitivities if (x.case, x.slot) == ("race", "front"))
    big_m, f = race.props_after.mass, race.balance_after.front_fraction
    # finite difference on the lever rule: one more gram in the front slot
    dm = 1e-3
    f2 = (f * big_m + dm * phi(-0.5)) / (big_m + dm)
    assert s.front_fraction_per_kg == pytest.approx((f2 - f) / dm, rel=1e-5)
    assert s.cg_height_per_m_up == pytest.approx(s.mass / big_m, rel=1e-12)
    assert s.front_fraction_per_m_forward == pytest.approx(s.mass / (big_m * L), rel=1e-12)
    # yaw inertia about the CG rises by the squared horizontal distance per kg (parallel-axis theorem)
    cg = race.props_after.center
    assert s.yaw_per_kg == pytest.approx((-0.5 - cg[0]) ** 2 + cg[1] ** 2, rel=1e-12)


def test_ballast_height_rule_keeps_the_block_high_enough():
    # one slot in the seat whose block grows upwards from z = 0.05 m: its CG is 0.05 + t/2 with t = m / (ρ A);
    # the rule wants it at least 0.07 m above the ground, so t >= 0.04 m and m >= ρ A 0.04 = 28.8 kg,
    # although the mass rule alone needs only 20 kg
    seat = slot("seat", (-1.2, 0.0, 0.10))
    rl = [Rule("min mass", RuleCheck.MIN_MASS, limit=420.0, exclude=("fuel",)),
          Rule("seat ballast height", RuleCheck.BALLAST_HEIGHT, limit=0.07, groups=("seat/ballast",))]
    model = car("base", 1.0, rl, [seat])
    spec = spec_from_parts(NO_BAND, "+z", increment=1e-5, min_thickness=1e-5)
    plan = Plan("seat", (Candidate("seat", Envelope.from_slot(seat), spec, "seat/ballast/plate"),),
                Targets(mass_margin=0.0, ballast_allowance=0.0))
    result = place_ballast(model, plan)
    assert result.passed
    assert result.allocations[0].planned == pytest.approx(RHO * 0.04 * 0.04, rel=1e-9)
    check = next(r for r in result.rules if r.name == "seat ballast height")
    assert check.passed and check.value == pytest.approx(0.07, abs=1e-5)
    # without the rule, 20 kg would do
    free = place_ballast(replace(model, rules=tuple(rl[:1])), plan)
    assert free.allocations[0].planned == pytest.approx(20.0, rel=1e-9)


def test_ballast_height_at_the_drivers_cg_height_band():
    seat = slot("seat", (-1.2, 0.0, 0.10))
    driver = point("driver/body", 75.0, (-1.3, 0.0, 0.35))
    rl = [Rule("at driver height", RuleCheck.BALLAST_HEIGHT, reference="driver", band=0.05,
               groups=("seat/ballast",))]
    model = car("base", 1.0, rl, [seat])
    model = model.with_components([*model.components, driver])
    assert check_rules(model)[0].passed and "nothing to check" in check_rules(model)[0].detail
    low = model.with_components([*model.components, point("seat/ballast/plate", 10.0, (-1.2, 0.0, 0.20))])
    r = check_rules(low)[0]
    # window 0.35 -/+ 0.05 m: a plate at 0.20 m is 0.10 m under the lower edge
    assert not r.passed and r.margin == pytest.approx(-0.10, abs=1e-12)
    ok = model.with_components([*model.components, point("seat/ballast/plate", 10.0, (-1.2, 0.0, 0.33))])
    assert check_rules(ok)[0].passed
    assert static_balance(ok.mass_properties(), VEHICLE).mass == pytest.approx(486.0)


def test_front_fraction_objective_by_least_squares_over_the_cases():
    # With the mass rule binding (30 kg) and the total held there, m2 = 30 - m1 and each case's front fraction is
    # linear in m1: f_c = (F0_c + 0.12*30 + 0.68 m1) / M_c. The mean of (f_c - t)^2 is least at
    # m1 = -Σ a_c b_c / Σ a_c^2 with a_c = 0.68 / M_c, b_c = (F0_c + 3.6) / M_c - t (linear least squares).
    from massmodel.ballast.plan import Objective

    cases = two_cases(mass_limit=430.0)
    t = 0.41
    plan = plan_for(cases["race"], objective=Objective.FRONT_FRACTION, fraction_target=t, fraction_tolerance=0.2)
    result = place_ballast(cases, plan)
    assert result.passed
    a = np.array([0.68 / 440.0, 0.68 / 470.0])
    b = np.array([(162.0 + 3.6) / 440.0 - t, (168.0 + 3.6) / 470.0 - t])
    m1 = -float(a @ b) / float(a @ a)
    assert 24.2 < m1 < 30.0  # inside what the race front-share minimum (m1 >= 16.4 / 0.68) and the total allow
    assert result.first_round[0] == pytest.approx(m1, rel=1e-4)
    assert sum(result.first_round) == pytest.approx(30.0, rel=1e-9)


def test_rule_cost_and_tradeoff_pictures(tmp_path):
    pytest.importorskip("matplotlib")
    from PIL import Image

    from massmodel.pictures.ballast_plot import plot_placement, plot_rule_costs, plot_tradeoff

    cases = two_cases()
    result = place_ballast(cases, plan_for(cases["race"], ballast_allowance=0.5), tradeoff_points=3)
    assert [p.weight_height for p in result.tradeoff] == [1.0, 0.5, 0.0]
    # the trade-off keeps the least ballast (plus the allowance) and the curve runs the right way: more weight on
    # the CG height never gives a higher CG
    heights = [p.cg_height for p in result.tradeoff]
    assert all(a <= b + 1e-9 for a, b in zip(heights, heights[1:], strict=False))
    assert all(result.least - 1e-9 <= sum(p.masses) <= result.least + 0.5 + 1e-9 for p in result.tradeoff)
    for fn, name in ((plot_placement, "p.png"), (plot_rule_costs, "c.png"), (plot_tradeoff, "t.png")):
        fn(result, tmp_path / name)
        img = np.asarray(Image.open(tmp_path / name).convert("L"))
        assert img.shape[0] > 300 and img.std() > 10, name  # a picture, not a blank page
