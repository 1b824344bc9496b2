"""The CG chart: rule-derived station bands and height limit, and the PNG."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from massmodel import load_model, loads_model
from massmodel.cli import main
from massmodel.core.massprops import translate
from massmodel.pictures.cgchart import height_limit, render_cg_chart, station_bands
from massmodel.vehicle.balance import static_balance

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"


@pytest.fixture(scope="module")
def car():
    return load_model(CAR)


def _balance_at_station(model, station):
    """Static balance of the model's mass with its CG moved along forward to ``station`` (vehicle module)."""
    total = model.mass_properties()
    v = model.vehicle
    moved = translate(total, (station - v.forward @ total.center) * v.forward)
    return static_balance(moved, v)


def test_axle_band_edges_give_exactly_the_minimum_loads(car):
    # Independent path: vehicle.static_balance (Jazar 2008, ch. 2; equation numbers from memory) evaluated at the band edges.
    bands = {b.name: b for b in station_bands(car)}
    axle = bands["axle-load minimums"]
    front_min = next(r.limit for r in car.rules if r.check.value == "min_axle_load" and r.axle == "front")
    rear_min = next(r.limit for r in car.rules if r.check.value == "min_axle_load" and r.axle == "rear")
    assert _balance_at_station(car, axle.low).front == pytest.approx(front_min, rel=1e-12)
    assert _balance_at_station(car, axle.high).rear == pytest.approx(rear_min, rel=1e-12)
    # Closed form of the same edges (moments about the axle lines): rear + L F_min/m and front - L R_min/m.
    v, m = car.vehicle, car.mass_properties().mass
    assert axle.low == pytest.approx(v.rear_axle_station + v.wheelbase * front_min / m, rel=1e-12)
    assert axle.high == pytest.approx(v.front_axle_station - v.wheelbase * rear_min / m, rel=1e-12)


def test_front_share_band_edges_give_the_share_limits(car):
    share = next(b for b in station_bands(car) if b.name.startswith("front share"))
    # 0.428 .. 0.460: the invented rulebook's front_fraction rule (parts_demo/marrowfield_rules.toml)
    assert _balance_at_station(car, share.low).front_fraction == pytest.approx(0.428, rel=1e-12)
    assert _balance_at_station(car, share.high).front_fraction == pytest.approx(0.460, rel=1e-12)
    station = float(car.vehicle.forward @ car.mass_properties().center)
    assert not share.contains(station)
    assert share.shift_needed(station) == pytest.approx(share.low - station, rel=1e-12)
    assert share.shift_needed(share.low) == 0.0


def test_height_limit_and_no_bands_without_vehicle_rules(car, tmp_path):
    # 310 mm: the invented rulebook's max_cg_height rule (parts_demo/marrowfield_rules.toml)
    assert height_limit(car) == pytest.approx(0.310, rel=1e-12)
    bare = loads_model(
        '[model]\nname = "b"\n[[part]]\npath = "a/b"\nshape = "box"\nsize = ["1 m", "1 m", "1 m"]\n'
        'mass = "1 kg"\nmaturity = "measured"\ncolour = "#808080"\n', label="bare.toml")
    assert station_bands(bare) == [] and height_limit(bare) is None
    with pytest.raises(ValueError, match="has no \\[vehicle\\] section"):
        render_cg_chart(bare, tmp_path / "unused.png")
    assert not (tmp_path / "unused.png").exists()


def test_chart_png_and_command(car, tmp_path, capsys):
    out = tmp_path / "cg.png"
    chart = render_cg_chart(car, out, size=(1200, 800))
    from PIL import Image

    with Image.open(out) as im:
        assert im.size == (1200, 800)
        pixels = np.asarray(im.convert("RGB"))
    assert len(np.unique(pixels.reshape(-1, 3), axis=0)) > 200
    report_station = car.vehicle.front_axle_station - static_balance(car.mass_properties(), car.vehicle).cg_behind_front_axle
    assert chart.station == pytest.approx(report_station, rel=1e-12)
    assert main(["cg-chart", str(CAR), "-o", str(tmp_path / "c2.png"), "--size", "900x600"]) == 0
    text = capsys.readouterr().out
    share = next(b for b in chart.bands if b.name.startswith("front share"))
    need = (share.low - chart.station) * 1e3
    assert f"CG outside: move the CG {need:.1f} mm forward" in text
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c2.png", "cg.png"]


def test_chart_labels_never_overlap_stay_inside_and_skip_groups_spread_around_the_car(car, tmp_path):
    # Drawn text boxes as matplotlib measured them after layout, at two sizes.
    for size in ((1800, 1200), (900, 600)):
        chart = render_cg_chart(car, tmp_path / f"c{size[0]}.png", size=size)
        boxes = [b for _, b in chart.labels]
        assert chart.labels[0][0].startswith("CG  station")
        for i, a in enumerate(boxes):
            assert 0 <= a[0] and 0 <= a[1] and a[2] <= size[0] and a[3] <= size[1]
            for b in boxes[i + 1:]:
                assert a[2] <= b[0] or b[2] <= a[0] or a[3] <= b[1] or b[3] <= a[1], (a, b)
    texts = [t for t, _ in render_cg_chart(car, tmp_path / "c.png").labels]
    # four wheels: their common CG lies between the axles where no wheel is, so it gets no label
    assert not any(t.startswith("wheels ") for t in texts)
    assert any(t.startswith("driver ") for t in texts)


def test_chart_draws_the_cg_uncertainty_of_a_model_that_declares_it(car, tmp_path):
    # The ellipse's half-axes are 2 u of station and height, u from the RSS propagation (massmodel.uncertainty,
    # Zimmerman & Nakai, docs/references.md §5); a model without [uncertainty] has no ellipse.
    from massmodel.uncertainty import rss_uncertainties

    est = rss_uncertainties(car)
    chart = render_cg_chart(car, tmp_path / "c.png")
    text = " ".join(" ".join(chart.notes).split())  # the notes are wrapped into lines
    station_u = abs(car.vehicle.forward[0]) * est["cg_x"].u  # forward is the model's x axis in the demo
    assert (f"CG ellipse: ± 2 standard uncertainties (RSS) of station ({2e3 * station_u:.1f} mm) and height "
            f"({2e3 * est['cg_height'].u:.1f} mm)") in text
    plain = loads_model(
        '[model]\nname = "p"\n[vehicle]\nwheelbase = "2 m"\ntrack_front = "1.2 m"\ntrack_rear = "1.2 m"\n'
        'front_axle_station = "0 m"\nground_level = "-0.2 m"\n[[part]]\npath = "a/b"\nshape = "box"\n'
        'size = ["1 m", "0.5 m", "0.2 m"]\nat = ["-1 m", "0 m", "0 m"]\nmass = "100 kg"\nmaturity = "measured"\n',
        label="plain.toml")
    assert not any("CG ellipse" in n for n in render_cg_chart(plain, tmp_path / "p.png").notes)
