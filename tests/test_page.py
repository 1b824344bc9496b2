"""The HTML page (massmodel.page, `publish`): its numbers come from the report, text is escaped, the 3-D payload
holds exactly the scene's meshes, and a real headless Chromium opens it offline with a drawn 3-D view."""

from __future__ import annotations

import base64
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.modelfile.loader import load_case_models, loads_model
from massmodel.page.document import PageOptions, build_page, viewer_script, write_page
from massmodel.page.scene3d import scene_payload, view_groups
from massmodel.pictures.scene import build_scene
from massmodel.report.summary import build_report

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

SMALL = """
[model]
name = "two blocks <b>&</b>"
[units]
length = "mm"
[vehicle]
wheelbase = "2000 mm"
track_front = "1200 mm"
track_rear = "1200 mm"
front_axle_station = "0 mm"
ground_level = "-200 mm"
[materials.alu]
density = "2700 kg/m^3"
[[part]]
path = "body/plate"
maturity = "calculated"
shape = "box"
size = [400, 300, 100]
at = [-500, 0, 0]
material = "alu"
[[part]]
path = "tail/block"
maturity = "estimated"
shape = "box"
size = [200, 200, 200]
at = [-1600, 0, 0]
material = "alu"
[[rule]]
name = "minimum mass <script>alert(1)</script>"
check = "min_mass"
limit = "1000 kg"
"""

POINTS_ONLY = """
[model]
name = "points"
[[part]]
path = "a"
maturity = "measured"
shape = "point"
mass = "10 kg"
at = ["0 m", "0 m", "0 m"]
[[part]]
path = "b"
maturity = "measured"
shape = "point"
mass = "5 kg"
at = ["1 m", "0 m", "0 m"]
"""


def _page(text: str, **kw):
    model = loads_model(text)
    return model, build_page({"base": model}, "small.toml", PageOptions(pictures=False, **kw))


def test_summary_line_and_tiles_carry_the_report_numbers() -> None:
    model, page = _page(SMALL)
    rep = build_report(model)
    # 0.4 x 0.3 x 0.1 m + 0.2^3 m of aluminium at 2700 kg/m^3 (closed form written here)
    mass = 2700.0 * (0.4 * 0.3 * 0.1 + 0.2**3)
    assert rep["mass_kg"] == pytest.approx(mass, rel=1e-12)
    assert page.summary.startswith(f"two blocks <b>&</b>: {mass:.1f} kg")
    assert "0 of 1 rule checks pass across 1 load case;" in page.summary
    margin = mass - 1000.0
    assert f"{margin:.3f} kg".replace("-", "−") in page.summary
    assert f"{100 * rep['front_fraction']:.1f} % on the front axle" in page.summary


def test_names_from_the_file_are_escaped() -> None:
    _, page = _page(SMALL)
    assert "<script>alert(1)</script>" not in page.html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page.html
    assert "two blocks &lt;b&gt;&amp;&lt;/b&gt;" in page.html


def test_a_model_of_point_masses_still_gives_a_page_without_3d_view() -> None:
    _, page = _page(POINTS_ONLY)
    assert not page.view3d
    assert "no 3-D view: the model has no part with a shape" in page.notes
    assert "No 3-D view" in page.html and 'id="mm-scene"' not in page.html
    assert "budget" in page.sections and "cautions" in page.sections


def test_view_groups_partition_the_scene_and_payload_round_trips() -> None:
    model = load_case_models(DEMO)["base"]
    scene = build_scene(model)
    groups = view_groups(scene)
    assert sum(g.triangles for g, _, _ in groups) == len(scene.faces)
    assert sum(g.parts for g, _, _ in groups) == len(model.components)
    assert sum(g.mass for g, _, _ in groups) == pytest.approx(model.mass_properties().mass, rel=1e-12)
    made = scene_payload(model)
    assert made is not None
    payload, listed = made
    for entry, (_, v, f) in zip(payload["groups"], groups, strict=True):
        pos = np.frombuffer(base64.b64decode(entry["positions"]), "<f4").reshape(-1, 3)
        idx = np.frombuffer(base64.b64decode(entry["indices"]), "<u4").reshape(-1, 3)
        assert np.allclose(pos, v, atol=1e-6) and np.array_equal(idx, f)
        assert idx.max() < len(pos)
    assert payload["cg"] == pytest.approx(model.mass_properties().center.tolist(), abs=1e-12)
    assert [g.name for g in listed] == [e["name"] for e in payload["groups"]]


def test_publish_refuses_to_overwrite_its_input_and_writes_nothing(tmp_path: Path, capsys) -> None:
    model = tmp_path / "car.toml"
    model.write_text(SMALL)
    before = model.read_bytes()
    assert main(["publish", str(model), "-o", str(model), "--no-pictures"]) == 2
    assert model.read_bytes() == before
    assert "that is the input model" in capsys.readouterr().err  # the one check of every output (cli.args)
    assert main(["publish", str(model), "-o", str(tmp_path / "page.txt"), "--no-pictures"]) == 2
    assert not (tmp_path / "page.txt").exists()
    assert "must end in .html" in capsys.readouterr().err
    with pytest.raises(ValueError, match="is the input file"):
        write_page(build_page({"base": loads_model(SMALL)}, "x", PageOptions(pictures=False)), model, inputs=(model,))


def test_publish_writes_the_demo_page_under_15_mb(tmp_path: Path, capsys) -> None:
    out = tmp_path / "demo.html"
    assert main(["publish", str(DEMO), "-o", str(out)]) == 0
    text = out.read_text(encoding="utf-8")
    assert out.stat().st_size < 15e6
    for case in ("base", "qualifying", "race_start"):
        assert f"<td>{case}</td>" in text
    assert text.count('<img src="data:image/png;base64,') == 2
    assert not re.search(r"""(src|href)=["']https?://""", text)  # nothing fetched from the network
    if viewer_script() is not None:
        assert 'id="mm-scene"' in text
    assert "wrote" in capsys.readouterr().out


@pytest.fixture(scope="module")
def browser():
    sync_api = pytest.importorskip("playwright.sync_api", reason="playwright is not installed (pip extra dev)")
    if CHROMIUM is None:
        pytest.skip("no chromium on this machine (Debian package 'chromium'; .ci/run installs it)")
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM,
                              args=["--no-sandbox", "--disable-gpu", "--use-gl=swiftshader",
                                    "--enable-unsafe-swiftshader", "--disable-background-networking"])
        yield b
        b.close()


def test_the_page_opens_offline_in_chromium_with_a_drawn_3d_view(tmp_path: Path, browser) -> None:
    if viewer_script() is None:
        pytest.fail("the viewer bundle is missing: `make viewer` builds it (make test does)")
    models = load_case_models(DEMO)
    path = write_page(build_page(models, str(DEMO), PageOptions(pictures=False)), tmp_path / "page.html")
    ctx = browser.new_context(viewport={"width": 1400, "height": 1000}, offline=True)
    page = ctx.new_page()
    errors: list[str] = []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: errors.append(f"request {r.url}") if not r.url.startswith(("file:", "data:")) else None)
    page.goto(path.as_uri())
    page.wait_for_function("document.getElementById('mm-view').dataset.ready !== undefined", timeout=30000)
    assert page.eval_on_selector("#mm-view", "e => e.dataset.ready") == "yes"
    shot = tmp_path / "view.png"
    page.locator("#mm-view canvas").screenshot(path=str(shot))
    from PIL import Image

    pixels = np.asarray(Image.open(shot).convert("RGB"), dtype=int)
    background = np.array([0xF4, 0xF1, 0xEA])
    drawn = np.abs(pixels - background).sum(axis=2) > 30
    assert drawn.mean() > 0.05, f"only {drawn.mean():.3%} of the 3-D canvas differs from the background"
    # hiding every group leaves only the marks: far fewer drawn pixels
    for box in page.query_selector_all("input[data-mm-group]"):
        box.uncheck()
    page.locator("#mm-view canvas").screenshot(path=str(shot))
    hidden = np.abs(np.asarray(Image.open(shot).convert("RGB"), dtype=int) - background).sum(axis=2) > 30
    assert hidden.mean() < 0.5 * drawn.mean()
    assert errors == []
    ctx.close()


def test_the_print_view_fits_the_page_width(tmp_path: Path, browser) -> None:
    models = load_case_models(DEMO)
    path = write_page(build_page(models, str(DEMO), PageOptions(pictures=False)), tmp_path / "page.html")
    # A4 is 210 mm wide; less 2 x 12 mm margins that is 186 mm = 703 CSS px at 96 px/in.
    ctx = browser.new_context(viewport={"width": 703, "height": 1000}, offline=True)
    page = ctx.new_page()
    page.goto(path.as_uri())
    page.emulate_media(media="print")
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 703, f"print view is {width} px wide, wider than the A4 text width (703 px)"
    pdf = page.pdf(format="A4")
    assert pdf.startswith(b"%PDF") and len(pdf) > 10_000
    ctx.close()


def test_extras_show_the_results_of_the_other_commands(tmp_path: Path) -> None:
    # The demo car declares uncertainties and a [chassis] section: both sections appear with the numbers of their own
    # commands' data; a ballast result and a previous version appear only when given.
    from massmodel.page.extras import collect_extras
    from massmodel.report.uncertainty import report_uncertainty

    models = load_case_models(DEMO)
    extras = collect_extras(models, confidence=0.95)
    assert set(extras) == {"uncertainty", "chassis"}
    u = report_uncertainty(models["base"], 0.95)
    assert extras["uncertainty"]["quantities"]["mass"] == u["quantities"]["mass"]
    # one row per rule and case it applies in, as the rule table
    assert len(extras["uncertainty"]["rules_at_confidence"]) == sum(len(m.rules) for m in models.values())
    page = build_page(models, str(DEMO), PageOptions(pictures=False, view3d=False, extras=extras))
    assert page.sections[-3:] == ("uncertainty", "chassis", "cautions")
    g = u["growth"]["predicted_mass_kg"]
    assert f"{g:.2f}\u2009kg" in page.html
    share = extras["chassis"]["roll"]["lateral_load_transfer_front_share"]
    assert f"{100 * share:.1f}\u2009%" in page.html
    previous = REPO / "parts_demo" / "brindlecombe_bl3_previous.toml"
    with_diff = collect_extras(models, previous=previous)
    d = with_diff["changes"]
    assert d["delta_mass_kg"] == pytest.approx(models["base"].mass_properties().mass - load_case_models(previous)[
        "base"].mass_properties().mass, rel=1e-9, abs=1e-9)


def test_a_ballast_file_that_is_not_a_placement_result_is_refused(tmp_path: Path, capsys) -> None:
    model = tmp_path / "car.toml"
    model.write_text(SMALL)
    bogus = tmp_path / "plan.json"
    bogus.write_text('{"format": "something else"}')
    out = tmp_path / "page.html"
    assert main(["publish", str(model), "-o", str(out), "--no-pictures", "--ballast", str(bogus)]) == 2
    err = capsys.readouterr().err
    assert str(bogus) in err and "not a place-ballast result" in err and err.count("\n") == 1
    assert not out.exists()
    # the ballast file is an input too: the page may not overwrite it
    assert main(["publish", str(model), "-o", str(bogus), "--no-pictures", "--ballast", str(bogus)]) == 2
    assert bogus.read_text() == '{"format": "something else"}'
