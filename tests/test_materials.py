"""The built-in materials library against its published sources (docs/references.md §2)."""

from __future__ import annotations

from pathlib import Path

import pytest

from massmodel.core.materials import Material, MaterialError, builtin_materials
from massmodel.modelfile.loader import load_model

G_CM3 = 1000.0  # kg/m^3 per g/cm^3

# ASTM B777-15, Table 1 (flag R): class -> (% W, density_min, density_max) in g/cm^3.
ASTM_B777_TABLE_1 = {1: (90.0, 16.85, 17.30), 2: (92.5, 17.15, 17.85), 3: (95.0, 17.75, 18.35),
                     4: (97.0, 18.25, 18.85)}


@pytest.mark.parametrize("cls", sorted(ASTM_B777_TABLE_1))
def test_tungsten_heavy_alloy_bands_are_astm_b777_table_1(cls: int) -> None:
    # ASTM B777-15, Table 1: the density band of each class; the nominal value is massmodel's mid-band choice.
    tungsten, lo, hi = ASTM_B777_TABLE_1[cls]
    m = builtin_materials()[f"tungsten_b777_class{cls}"]
    assert m.band == pytest.approx((lo * G_CM3, hi * G_CM3), rel=1e-15)
    assert m.density == pytest.approx((lo + hi) / 2 * G_CM3, rel=1e-15)
    assert f"{tungsten:g} % W" in m.name
    assert "ASTM B777-15, Table 1" in m.source and m.flag == "R"


@pytest.mark.parametrize(
    ("key", "g_cm3"),
    [
        ("tungsten", 19.3),  # CRC Handbook, as quoted by a secondary source (R2)
        ("lead", 11.34),  # handbook value via secondary pages (R2)
        ("structural_steel", 7.85),  # EN 1993-1-1 §3.2.6, 7850 kg/m^3 (R2)
        ("aluminium_6061_t6", 2.70),  # Aluminum Association typical, ASM data sheet (R)
        ("aluminium_7075_t6", 2.81),  # Aluminum Association typical, ASM data sheet (R)
        ("ti_6al_4v", 4.43),  # ASM data sheet (R)
        ("cfrp_vf60", 1.6),  # Hull, An Introduction to Composite Materials, 1992 (R2)
    ],
)
def test_reference_densities(key: str, g_cm3: float) -> None:
    assert builtin_materials()[key].density == pytest.approx(g_cm3 * G_CM3, rel=1e-15)


def test_every_entry_has_a_source_and_a_provenance_flag() -> None:
    lib = builtin_materials()
    assert len(lib) >= 11
    for key, m in lib.items():
        assert m.key == key and m.source and m.flag in ("R", "R2", "M"), key
        if m.flag == "M":
            assert "from memory" in m.source, key
        lo, hi = m.band
        assert lo <= m.density <= hi


def block_file(tmp_path: Path, material: str) -> Path:
    path = tmp_path / f"{material}.toml"
    path.write_text(f"""
[model]
name = "block"
[[part]]
path = "ballast/block"
shape = "box"
size = ["100 mm", "50 mm", "20 mm"]
material = "{material}"
maturity = "calculated"
""", encoding="utf-8")
    return path


@pytest.mark.parametrize(("cls", "low_kg", "high_kg"), [(1, 1.685, 1.730), (4, 1.825, 1.885)])
def test_worked_block_check(tmp_path: Path, cls: int, low_kg: float, high_kg: float) -> None:
    # docs/references.md §2 worked check: a 100 x 50 x 20 mm block (100 cm^3) of Class 1 alloy weighs 1.685-1.730 kg;
    # of Class 4, 1.825-1.885 kg.
    block = load_model(block_file(tmp_path, f"tungsten_b777_class{cls}")).component("ballast/block")
    assert block.volume == pytest.approx(100e-6, rel=1e-12)
    lo, hi = builtin_materials()[block.material].band
    assert lo * block.volume == pytest.approx(low_kg, rel=1e-12)
    assert hi * block.volume == pytest.approx(high_kg, rel=1e-12)
    assert block.props.mass == pytest.approx((low_kg + high_kg) / 2, rel=1e-12)


def test_the_library_is_read_only_and_checks_bands() -> None:
    lib = builtin_materials()
    with pytest.raises(TypeError):
        lib["lead"] = lib["tungsten"]  # type: ignore[index]
    with pytest.raises(MaterialError, match="lies outside its band") as info:
        Material("x", "x", 900.0, density_min=1000.0, density_max=1100.0)
    assert info.value.field == "density"
    with pytest.raises(MaterialError, match=r"lies outside its band \(density_min 1000 kg/m\^3 is above it\)") as info:
        Material("x", "x", 900.0, density_min=1000.0)
    assert info.value.field == "density_min"
    with pytest.raises(MaterialError, match=r"\(density_max 800 kg/m\^3 is below it\)") as info:
        Material("x", "x", 900.0, density_max=800.0)
    assert info.value.field == "density_max"
