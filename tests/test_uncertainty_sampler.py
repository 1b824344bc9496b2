"""The compiled Monte Carlo sampler: its random numbers against independent oracles, and its results against the numpy
sampler's.

Sources: SplitMix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number generators", OOPSLA 2014) written
out here in Python from its published algorithm, with the first three outputs of the reference implementation for
seed 0 (from memory, and reproduced by the Python version); scipy.stats as the oracle of the normal distribution
(Kolmogorov–Smirnov test, normal tail probabilities ``norm.sf``, quantiles ``norm.ppf``, chi-square test); standard
sampling statistics: a sample mean has standard error σ/√n, a sample variance of normals σ²√(2/(n−1)), the excess
kurtosis √(24/n), a proportion √(p(1−p)/n), a difference of two independent estimates √(se₁² + se₂²).
"""

from __future__ import annotations

import importlib.util
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from massmodel.core.errors import UsageError
from massmodel.modelfile.loader import load_model, loads_model
from massmodel.uncertainty import monte_carlo, montecarlo
from massmodel.uncertainty.rules import rule_subsets

pytestmark = pytest.mark.skipif(importlib.util.find_spec("numba") is None,
                                reason="numba is not installed: only the numpy sampler exists here")
stats = pytest.importorskip("scipy.stats")

DEMO = Path(__file__).resolve().parents[1] / "parts_demo" / "brindlecombe_bl3.toml"
MASK = (1 << 64) - 1
GAMMA = 0x9E3779B97F4A7C15


@pytest.fixture(scope="module")
def sampler():  # type: ignore[no-untyped-def]
    from massmodel.uncertainty import sampler

    return sampler


def _splitmix64(state: int, count: int) -> list[int]:
    """SplitMix64 as published (Steele, Lea & Flood 2014; the constants of its reference implementation)."""
    out = []
    for _ in range(count):
        state = (state + GAMMA) & MASK
        z = state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
        out.append(z ^ (z >> 31))
    return out


def test_words_are_splitmix64_at_the_sample_counter(sampler) -> None:  # type: ignore[no-untyped-def]
    # reference outputs of SplitMix64 seeded with 0 (from memory; the Python version above reproduces them)
    assert _splitmix64(0, 3) == [0xE220A8397B1DCDAF, 0x6E789E6AA1B965F4, 0x06C45D188009454F]
    # word n of sample s with key k is SplitMix64's output at state k + (s·2³² + n)·γ: with key 0, sample 0,
    # words 1, 2, 3 are the generator's first three outputs for seed 0
    assert [int(w) for w in sampler.uniform_words(np.uint64(0), 0, 4)[1:]] == _splitmix64(0, 3)
    key, sample = 0x1234_5678_9ABC_DEF0, 77
    state = (key + ((sample << 32) - 1) * GAMMA) & MASK  # one step before counter s·2³²
    assert [int(w) for w in sampler.uniform_words(np.uint64(key), sample, 5)] == _splitmix64(state, 5)


@pytest.fixture(scope="module")
def draws(sampler):  # type: ignore[no-untyped-def]
    return sampler.normals(np.uint64(20261204), 3, 1_000_000).astype(np.float64)


def test_normals_pass_kolmogorov_smirnov_against_scipy(draws) -> None:  # type: ignore[no-untyped-def]
    n = len(draws)
    ks = stats.kstest(draws, stats.norm.cdf)
    # the 0.1 % critical value of the KS statistic is about 1.95/√n for large n (scipy computes the exact p)
    assert ks.statistic < 1.95 / math.sqrt(n)
    assert ks.pvalue > 1e-3
    # the same for one of the two halves alone (the second normal of each Box–Muller pair)
    assert stats.kstest(draws[n // 2:], stats.norm.cdf).pvalue > 1e-3


def test_normal_moments_within_sampling_error(draws) -> None:  # type: ignore[no-untyped-def]
    n = len(draws)
    assert abs(draws.mean()) < 4 / math.sqrt(n)
    assert abs(draws.var(ddof=1) - 1) < 4 * math.sqrt(2 / (n - 1))
    assert abs(stats.kurtosis(draws)) < 4 * math.sqrt(24 / n)  # excess kurtosis of a normal: 0
    assert abs(stats.skew(draws)) < 4 * math.sqrt(6 / n)


@pytest.mark.parametrize("k", [1.0, 2.0, 3.0, 4.0])
def test_tail_shares_match_scipy(draws, k: float) -> None:  # type: ignore[no-untyped-def]
    n = len(draws)
    p = 2 * stats.norm.sf(k)  # two-sided tail beyond kσ
    share = float((np.abs(draws) > k).mean())
    assert abs(share - p) < 4 * math.sqrt(p * (1 - p) / n), (share, p)


def test_chi_square_over_equiprobable_bins(draws) -> None:  # type: ignore[no-untyped-def]
    edges = stats.norm.ppf(np.linspace(0, 1, 201))  # 200 bins of probability 1/200 each (scipy's quantiles)
    counts, _ = np.histogram(draws, edges)
    assert stats.chisquare(counts).pvalue > 1e-3


def test_pair_members_are_independent(draws) -> None:  # type: ignore[no-untyped-def]
    # Box–Muller's two normals of one word are independent: no correlation, nor of their squares (|z| of both large
    # together would show a wrong radius/angle split)
    half = len(draws) // 2
    a, b = draws[:half], draws[half:]
    bound = 4 / math.sqrt(half)
    assert abs(np.corrcoef(a, b)[0, 1]) < bound
    assert abs(np.corrcoef(a**2, b**2)[0, 1]) < bound
    assert abs(np.corrcoef(draws[:-1], draws[1:])[0, 1]) < 4 / math.sqrt(len(draws))  # neighbours in the stream


def test_the_kernel_draws_the_tested_normals(sampler) -> None:  # type: ignore[no-untyped-def]
    # three parts with a mass uncertainty only (one segment, no density group): sample s's Σδm and Σδm·r_x are
    # the sums of u_m·z and u_m·z·r_x over the first three normals of its stream, the ones tested above
    f32 = np.float32
    u_mass = np.array([0.5, 1.5, 2.0], f32)
    r = np.array([[0.3, -1.0, 2.0], [0.0, 0.0, 0.0], [0.0, 0.0, 0.0]], f32)
    ones, zeros3 = np.ones(3, f32), np.zeros((3, 3), f32)
    out = np.zeros((4, 10))
    key = np.uint64(99)
    sampler.sample_sums(key, 7, out, np.array([0]), np.array([3]), np.array([[0, -1, -1, -1, -1]]), np.array([0]),
                        np.zeros(0), np.zeros(0), ones, u_mass, r, zeros3, np.zeros(3, f32), zeros3,
                        np.zeros((0, 3), f32))
    for row in range(4):
        z = sampler.normals(key, 7 + row, 3).astype(np.float64)
        dm = u_mass * z
        assert out[row, 0] == pytest.approx(dm.sum(), rel=1e-6, abs=1e-6)
        assert out[row, 1] == pytest.approx((dm * r[0]).sum(), rel=1e-6, abs=1e-6)
        assert out[row, 4] == pytest.approx((dm * r[0] ** 2).sum(), rel=1e-6, abs=1e-6)
        assert np.all(out[row, [2, 3, 5, 6, 7, 8, 9]] == 0.0)


def test_log_series_against_numpy(sampler) -> None:  # type: ignore[no-untyped-def]
    # ln of the 40-bit uniforms the radius is made from, including the smallest (2⁻⁴¹)
    x = np.geomspace(2.0**-41, 1.0 - 2.0**-24, 2001).astype(np.float32)
    got = np.array([sampler._log(v) for v in x])
    assert np.abs(got - np.log(x.astype(np.float64))).max() < 4e-6  # float32 rounding of e·ln 2 (e ≤ 41)


def _synthetic(n: int, seed: int) -> str:
    """A model file of n boxes with random masses, positions and uncertainties; a tenth of tungsten alloy (one shared
    density error), some parts with no mass or CG uncertainty (their draws are skipped), a rule on a subset."""
    rng = np.random.default_rng(seed)
    text = ('[model]\nname = "synthetic"\n[units]\nlength = "mm"\nmass = "kg"\n'
            "[vehicle]\nwheelbase = 2800\ntrack_front = 1500\ntrack_rear = 1450\nground_level = -300\n")
    items = "[uncertainty]\n"
    for i in range(n):
        at = f"at = [{rng.uniform(-3000, 500):.1f}, {rng.uniform(-700, 700):.1f}, {rng.uniform(-200, 600):.1f}]\n"
        if i % 10 == 0:
            text += (f'[[part]]\npath = "ballast/b{i}"\nshape = "box"\nsize = [40, 30, 20]\n'
                     f'material = "tungsten_b777_class1"\nmaturity = "calculated"\n{at}')
            items += f'[[uncertainty.item]]\npath = "ballast/b{i}"\nmass = "0 kg"\ncg = "{rng.uniform(0, 5):.2f} mm"\n'
        else:
            text += (f'[[part]]\npath = "body/p{i}"\nshape = "box"\nsize = [200, 100, 50]\n'
                     f'mass = {rng.uniform(0.1, 8):.3f}\nmaturity = "estimated"\n{at}')
            cg = '"0 mm"' if i % 7 == 0 else f'["{rng.uniform(1, 20):.1f} mm", "{rng.uniform(1, 20):.1f} mm", 0]'
            items += (f'[[uncertainty.item]]\npath = "body/p{i}"\nmass = "{rng.uniform(0, 10):.2f} %"\n'
                      f'cg = {cg}\ninertia = "{rng.uniform(0, 30):.1f} %"\n')
    rule = '[[rule]]\nname = "min mass"\ncheck = "min_mass"\nlimit = "1 kg"\nexclude = ["ballast"]\n'
    return text + rule + items


@pytest.mark.parametrize("which", ["demo", "synthetic"])
def test_compiled_and_numpy_samplers_agree(which: str) -> None:
    model = load_model(DEMO) if which == "demo" else loads_model(_synthetic(300, 5))
    subsets = rule_subsets(model)
    n = 20000
    fast = monte_carlo(model, n, seed=2, subsets=subsets, kernel="numba")
    slow = monte_carlo(model, n, seed=2, subsets=subsets, kernel="numpy")
    assert (fast.kernel, slow.kernel) == ("numba", "numpy")
    assert set(fast.values) == set(slow.values) and set(fast.subsets) == set(slow.subsets) == set(subsets)
    series = {**{k: (fast.values[k], slow.values[k]) for k in fast.values},
              **{f"subset {k}": (fast.subsets[k], slow.subsets[k]) for k in subsets}}
    for name, (a, b) in series.items():
        sa, sb = a.std(ddof=1), b.std(ddof=1)
        assert sa > 0, name  # every quantity varies
        assert abs(a.mean() - b.mean()) < 3 * math.hypot(sa, sb) / math.sqrt(n), name
        assert abs(sa - sb) < 3 * math.hypot(sa, sb) / math.sqrt(2 * (n - 1)), name


@pytest.mark.parametrize("kernel", ["numpy", "numba"])
def test_parts_without_uncertainty_do_not_move(kernel: str) -> None:
    model = loads_model(_synthetic(60, 9))
    # a tungsten block with no mass uncertainty of its own varies only by the shared density error; a body part with
    # no CG uncertainty never moves its CG: its subset mass and first moment are checked exactly
    names = [c.path for c in model.components]
    body = names.index("body/p7")  # i % 7 == 0: CG u = 0
    subsets = {"b0": np.array([p == "ballast/b0" for p in names]), "b10": np.array([p == "ballast/b10" for p in names]),
               "p7": np.arange(len(names)) == body}
    mc = monte_carlo(model, 4000, seed=4, subsets=subsets, kernel=kernel)
    m0, m10 = model.components[0].props.mass, model.components[names.index("ballast/b10")].props.mass
    # both blocks share one density error: their masses move in exact proportion
    np.testing.assert_allclose(mc.subsets["b0"] / m0, mc.subsets["b10"] / m10, rtol=1e-6)
    lo, hi = 16.85 / 17.075, 17.30 / 17.075  # ASTM B777-15 Class 1 band, g/cm³ (read), over the nominal
    assert mc.subsets["b0"].min() >= m0 * lo * (1 - 1e-6) and mc.subsets["b0"].max() <= m0 * hi * (1 + 1e-6)
    assert mc.subsets["p7"].std() > 0


@pytest.mark.parametrize("kernel", ["numpy", "numba"])
def test_a_model_without_uncertainty_samples_its_nominal(kernel: str) -> None:
    text = _synthetic(30, 1).split("[uncertainty]")[0].replace("tungsten_b777_class1", "structural_steel")  # no band
    text += '[uncertainty]\n[[uncertainty.item]]\npath = "body"\nmass = "0 %"\ncg = "0 mm"\ninertia = "0 %"\n'
    text += '[[uncertainty.item]]\npath = "ballast"\nmass = "0 %"\ncg = "0 mm"\ninertia = "0 %"\n'
    model = loads_model(text)
    mp = model.mass_properties()
    mc = monte_carlo(model, 100, seed=0, kernel=kernel)
    assert np.all(mc.values["mass"] == mc.values["mass"][0])
    assert mc.values["mass"][0] == pytest.approx(mp.mass, rel=1e-12)
    np.testing.assert_allclose(mc.values["izz"], mp.inertia[2, 2], rtol=1e-9)


def test_kernel_choice() -> None:
    assert montecarlo.kernel_for(10, "numpy") == "numpy"
    assert montecarlo.kernel_for(10, "numba") == "numba"
    assert montecarlo.kernel_for(montecarlo.NUMBA_LOAD_ELEMENTS, "auto") == "numba"
    # the compiled sampler is loaded by now; "auto" still goes by the size alone, because the two samplers draw
    # different numbers from one seed (a choice by process history would change a seed's result)
    assert "massmodel.uncertainty.sampler" in sys.modules
    assert montecarlo.kernel_for(montecarlo.NUMBA_LOAD_ELEMENTS - 1, "auto") == "numpy"
    assert montecarlo.kernel_for(100_000, "auto") == "numpy"
    with pytest.raises(UsageError, match="kernel must be one of"):
        montecarlo.kernel_for(10, "fast")


def test_auto_keeps_numpy_for_the_demo_size_in_a_fresh_process() -> None:
    # the demo's how-sure run (20,000 samples x 163 parts) does not pay for loading numba
    env = {**os.environ, "PYTHONPATH": str(DEMO.parents[1])}
    code = ("import sys; from massmodel.uncertainty import montecarlo as mc; k = mc.kernel_for(20000 * 163); "
            "print(k, 'numba' in sys.modules, mc.kernel_for(mc.NUMBA_LOAD_ELEMENTS))")
    run = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr
    assert run.stdout.split() == ["numpy", "False", "numba"]


def test_a_broken_sampler_module_is_not_taken_for_a_missing_numba(monkeypatch: pytest.MonkeyPatch) -> None:
    # numba is installed here (the module is skipped otherwise): an ImportError raised by massmodel's own sampler
    # module is a bug of the package and must surface as such, not as the user-facing "numba is not importable"
    import massmodel.uncertainty as package

    monkeypatch.delattr(package, "sampler", raising=False)
    monkeypatch.setitem(sys.modules, "massmodel.uncertainty.sampler", None)  # importing it now raises ImportError
    montecarlo._sampler.cache_clear()
    try:
        with pytest.raises(ImportError) as raised:
            montecarlo.kernel_for(10, "numba")
        assert not isinstance(raised.value, UsageError)
        assert raised.value.name == "massmodel.uncertainty.sampler"
    finally:
        montecarlo._sampler.cache_clear()
