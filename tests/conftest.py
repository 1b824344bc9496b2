"""Shared test helpers: the one tolerance rule for mass properties."""

from __future__ import annotations

import numpy as np
import pytest


def assert_close(actual, expected, rtol: float = 1e-9, what: str = "") -> None:
    """Relative tolerance with an absolute floor scaled by the largest entry (so zero entries compare sensibly)."""
    a = np.asarray(actual, dtype=float)
    e = np.asarray(expected, dtype=float)
    assert a.shape == e.shape, f"{what}: shape {a.shape} != {e.shape}"
    scale = max(float(np.max(np.abs(e))) if e.size else 0.0, 1e-300)
    err = float(np.max(np.abs(a - e))) if a.size else 0.0
    assert err <= rtol * scale, f"{what}: max |diff| {err:.3e} > {rtol:.1e} x scale {scale:.3e}\n{a}\n!=\n{e}"


def assert_props_close(actual, expected, rtol: float = 1e-9) -> None:
    """Compare two MassProperties: mass, centre (scale ≥ 1 m) and tensor, each relative to its own scale."""
    assert_close(actual.mass, expected.mass, rtol, "mass")
    scale = max(1.0, float(np.max(np.abs(expected.center))))
    err = float(np.max(np.abs(actual.center - expected.center)))
    assert err <= rtol * scale, f"centre: {actual.center} != {expected.center}"
    assert_close(actual.inertia, expected.inertia, rtol, "inertia")


def random_rotations(rng: np.random.Generator, n: int) -> np.ndarray:
    """Uniform random rotations (unit quaternions), about 40 % of them turned into reflections."""
    q = rng.normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1)[:, None]
    w, x, y, z = q.T
    r = np.array([[1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
                  [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
                  [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)]]).transpose(2, 0, 1)
    r[rng.random(n) < 0.4, 1, :] *= -1.0  # mirrored copies (det -1)
    return r


@pytest.fixture
def rng():
    return np.random.default_rng(20261201)
