"""What changed between two versions of a model (massmodel.studies.diff, revision) and the ``changes`` command."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.modelfile.loader import load_model, loads_model
from massmodel.studies.diff import check_limits, diff_models
from massmodel.studies.revision import Version, load_version, parse_version

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"

V1 = """
[model]
name = "diff test"
[units]
length = "m"
mass = "kg"
[[part]]
path = "frame/box"
shape = "box"
size = [0.2, 0.2, 0.2]
mass = "10 kg"
maturity = "calculated"
at = [0, 0, 0]
[[part]]
path = "frame/bracket"
shape = "point"
mass = "5 kg"
maturity = "estimated"
at = [1, 0, 0]
[[part]]
path = "kit/radio"
shape = "point"
mass = "2 kg"
maturity = "measured"
at = [0, 1, 0]
"""
# version 2: the bracket weighed (6 kg, measured) and found 0.5 m higher
V2 = V1.replace('mass = "5 kg"\nmaturity = "estimated"\nat = [1, 0, 0]', 'mass = "6 kg"\nmaturity = "measured"\nat = [1, 0, 0.5]')


def _steiner(m: float, d: np.ndarray) -> np.ndarray:
    """m (|d|^2 E - d d^T): the parallel-axis term (Goldstein, Poole & Safko 2002, §5.3), written out here."""
    return m * (np.dot(d, d) * np.eye(3) - np.outer(d, d))


def _by_hand(parts: list[tuple[float, np.ndarray, np.ndarray]]) -> tuple[float, np.ndarray, np.ndarray]:
    mass = sum(m for m, _, _ in parts)
    cg = sum(m * r for m, r, _ in parts) / mass
    inertia = sum(i + _steiner(m, r - cg) for m, r, i in parts)
    return mass, cg, inertia


BOX = np.eye(3) * 10.0 * (0.2**2 + 0.2**2) / 12.0  # solid cuboid about its centre (Machinery's Handbook, 31st ed.)
OLD = [(10.0, np.zeros(3), BOX), (5.0, np.array([1.0, 0, 0]), np.zeros((3, 3))), (2.0, np.array([0, 1.0, 0]), np.zeros((3, 3)))]
NEW = [OLD[0], (6.0, np.array([1.0, 0, 0.5]), np.zeros((3, 3))), OLD[2]]


def test_a_model_against_itself_is_empty() -> None:
    d = diff_models(load_model(CAR), load_model(CAR))
    assert d.empty and d.delta_mass == 0.0 and not d.groups
    assert np.array_equal(d.delta_cg, np.zeros(3)) and np.array_equal(d.recentre, np.zeros((3, 3)))


def test_one_part_changed_gives_exactly_that_parts_share() -> None:
    d = diff_models(loads_model(V1), loads_model(V2))
    assert [(c.path, c.status) for c in d.changes] == [("frame/bracket", "changed")]
    c = d.changes[0]
    assert c.fields == ("mass", "cg", "maturity")
    m0, c0, i0 = _by_hand(OLD)
    m1, c1, i1 = _by_hand(NEW)
    assert c.delta_mass == pytest.approx(1.0, abs=1e-12)
    np.testing.assert_allclose(c.delta_cg, c1 - c0, atol=1e-12)  # the only change carries the whole CG shift
    # its tensor share about the old CG, and the recentring term -M' S(C' - C)
    share = _steiner(6.0, np.array([1.0, 0, 0.5]) - c0) - _steiner(5.0, np.array([1.0, 0, 0]) - c0)
    np.testing.assert_allclose(c.delta_inertia, share, atol=1e-12)
    np.testing.assert_allclose(d.recentre, -_steiner(m1, c1 - c0), atol=1e-12)
    np.testing.assert_allclose(c.delta_inertia + d.recentre, i1 - i0, atol=1e-12)
    np.testing.assert_allclose(d.new.inertia, i1, atol=1e-12)
    assert [g.path for g in d.groups] == ["frame"] and d.groups[0].delta_mass == pytest.approx(1.0)


def test_added_and_removed_parts_and_the_shares_add_up() -> None:
    v3 = V2.replace('path = "kit/radio"', 'path = "kit/logger"') + (
        '[[part]]\npath = "kit/camera"\nshape = "point"\nmass = "0.4 kg"\nmaturity = "measured"\nat = [0.3, -0.2, 0.6]\n')
    d = diff_models(loads_model(V1), loads_model(v3))
    assert sorted((c.path, c.status) for c in d.changes) == [
        ("frame/bracket", "changed"), ("kit/camera", "added"), ("kit/logger", "added"), ("kit/radio", "removed")]
    np.testing.assert_allclose(sum(c.delta_cg for c in d.changes), d.delta_cg, atol=1e-12)
    np.testing.assert_allclose(sum(c.delta_inertia for c in d.changes) + d.recentre, d.delta_inertia, atol=1e-12)
    assert sum(c.delta_mass for c in d.changes) == pytest.approx(d.delta_mass, abs=1e-12)
    assert check_limits(d, {"mass": 2.0}) == []
    assert check_limits(d, {"mass": 1.0})[0].startswith("mass changed by 1.4 kg")


def _git(repo: Path, *args: str) -> None:
    env = {**os.environ, "GIT_AUTHOR_NAME": "t", "GIT_AUTHOR_EMAIL": "t@example.invalid",
           "GIT_COMMITTER_NAME": "t", "GIT_COMMITTER_EMAIL": "t@example.invalid"}
    subprocess.run(["git", *args], cwd=repo, check=True, capture_output=True, env=env)


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_file_at_revision_from_git(tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
                                   ) -> None:
    repo = tmp_path / "repo"
    (repo / "cars").mkdir(parents=True)
    model = repo / "cars" / "car.toml"
    model.write_text(V1)
    _git(repo, "init", "-q")
    _git(repo, "add", ".")
    _git(repo, "commit", "-q", "-m", "v1")
    model.write_text(V2)
    _git(repo, "commit", "-q", "-am", "v2")
    assert parse_version(f"{model}@HEAD~1") == Version(model, "HEAD~1")
    assert parse_version(str(model)) == Version(model)
    old = load_version(parse_version(f"{model}@HEAD~1"))
    d = diff_models(old, load_version(Version(model)))
    assert [c.path for c in d.changes] == ["frame/bracket"]
    monkeypatch.chdir(repo)
    out = tmp_path / "d.json"
    assert main(["changes", "cars/car.toml@HEAD~1", "cars/car.toml", "--json", str(out), "--fail-over", "mass=0.5kg"]) == 1
    assert "OVER LIMIT: mass changed by 1 kg" in capsys.readouterr().out
    assert json.loads(out.read_text())["parts"][0]["path"] == "frame/bracket"
    assert main(["changes", "cars/car.toml@HEAD~1", "cars/car.toml", "--fail-over", "mass=2kg", "--fail-over",
                 "cg=200mm"]) == 0
    capsys.readouterr()
    for bad, message in (("cars/car.toml@nosuch", "git cannot find the revision 'nosuch'"),
                         ("cars/car.toml@--output=x", "must not start with '-'"),
                         ("cars/gone.toml@HEAD", "has no file 'cars/gone.toml'")):
        assert main(["changes", bad, "cars/car.toml"]) == 2
        err = capsys.readouterr().err
        assert message in err and err.count("\n") == 1


def test_bad_fail_over_limits_are_usage_errors(capsys: pytest.CaptureFixture[str]) -> None:
    for spec in ("mass=2mm", "weight=1kg", "cg", "cg=-1mm"):
        assert main(["changes", str(CAR), str(CAR), "--fail-over", spec]) == 2
        assert capsys.readouterr().err.count("\n") == 1


def _random_model(rng: np.random.Generator, paths: list[str]) -> str:
    text = '[model]\nname = "random"\n[units]\nlength = "m"\nmass = "kg"\n'
    for p in paths:
        size = rng.uniform(0.05, 0.6, 3).tolist()
        at = rng.uniform(-2.0, 2.0, 3).tolist()
        text += (f'[[part]]\npath = "{p}"\nshape = "box"\nsize = [{size[0]!r}, {size[1]!r}, {size[2]!r}]\n'
                 f'mass = "{float(rng.uniform(0.5, 40.0))!r} kg"\nmaturity = "estimated"\nat = [{at[0]!r}, {at[1]!r}, {at[2]!r}]\n'
                 f'rotate = {{ extrinsic = "z", angles = ["{float(rng.uniform(0, 90))!r} deg"] }}\n')
    return text


def test_shares_add_up_to_the_total_change_for_random_versions(rng: np.random.Generator) -> None:
    """Invariant of the decomposition: shares sum to the change, for random parts added, removed and changed."""
    for _ in range(15):
        old_paths = [f"g{rng.integers(3)}/p{i}" for i in range(int(rng.integers(2, 9)))]
        keep = [p for p in old_paths if rng.random() < 0.6] or old_paths[:1]
        new_paths = keep + [f"g{rng.integers(3)}/n{i}" for i in range(int(rng.integers(0, 4)))]
        old = loads_model(_random_model(rng, old_paths))
        new = loads_model(_random_model(rng, new_paths))
        d = diff_models(old, new)
        scale = max(1.0, float(np.max(np.abs(d.new.inertia))))
        np.testing.assert_allclose(sum(c.delta_cg for c in d.changes), d.delta_cg, atol=1e-12)
        np.testing.assert_allclose(sum(c.delta_inertia for c in d.changes) + d.recentre, d.delta_inertia,
                                   atol=1e-11 * scale)
        assert sum(c.delta_mass for c in d.changes) == pytest.approx(d.delta_mass, abs=1e-9)
        top = [g for g in d.groups if "/" not in g.path]
        assert sum(g.delta_mass for g in top) == pytest.approx(d.delta_mass, abs=1e-9)
