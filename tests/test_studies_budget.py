"""The mass budget sums back to the report's totals (CSV and XLSX), and the Dask run equals the local run."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.modelfile.loader import load_model, read_source
from massmodel.report.budget import BUDGET_COLUMNS, budget_csv, write_budget_xlsx
from massmodel.report.summary import build_report
from massmodel.studies.budget import mass_budget
from massmodel.studies.sweep import Study, grid_points, parse_range, run_points

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


def test_budget_csv_part_rows_sum_to_the_report_totals() -> None:
    model = load_model(CAR, case="race_start")
    report = build_report(model)
    rows = _rows(budget_csv(mass_budget(model)))
    parts = [r for r in rows if r["row"] == "part"]
    assert len(parts) == len(model.components) and rows[-1]["row"] == "total"
    mass = sum(float(r["mass_kg"]) for r in parts)
    assert abs(mass - report["mass_kg"]) <= 1e-9
    moments = np.array([sum(float(r[f"m_{a}_kg_m"]) for r in parts) for a in "xyz"])
    cg = moments / mass
    assert np.max(np.abs(cg - np.array(report["cg_m"]))) <= 1e-9
    # I_C = sum(I_O) - M S(C), S(d) = |d|^2 E - d d^T (parallel-axis theorem, Goldstein et al. 2002 §5.3)
    names = {"xx": (0, 0), "yy": (1, 1), "zz": (2, 2), "xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}
    origin = np.zeros((3, 3))
    for n, (i, j) in names.items():
        origin[i, j] = origin[j, i] = sum(float(r[f"I{n}_origin_kg_m2"]) for r in parts)
    about_cg = origin - mass * (np.dot(cg, cg) * np.eye(3) - np.outer(cg, cg))
    assert np.max(np.abs(about_cg - np.array(report["inertia_cg_kg_m2"]))) <= 1e-9
    # group subtotals equal the report's group roll-ups
    groups = {g["path"]: g for g in report["groups"]}
    for r in rows:
        if r["row"] == "group":
            assert abs(float(r["mass_kg"]) - groups[r["path"]]["mass_kg"]) <= 1e-9
            assert int(r["parts"]) == groups[r["path"]]["parts"]
    assert {r["maturity"] for r in parts} <= {"estimated", "calculated", "measured"}
    assert "uncertainty" not in " ".join(BUDGET_COLUMNS)  # the model has none to give


def test_budget_xlsx_total_row_is_formulas_over_the_part_rows(tmp_path: Path) -> None:
    openpyxl = pytest.importorskip("openpyxl", reason="openpyxl (the xlsx extra) is not installed")
    model = load_model(CAR)
    path = tmp_path / "budget.xlsx"
    write_budget_xlsx(mass_budget(model), path)
    ws = openpyxl.load_workbook(path).active
    header = [c.value for c in ws[1]]
    assert header == BUDGET_COLUMNS
    col = {h: i for i, h in enumerate(header)}
    body = list(ws.iter_rows(min_row=2, values_only=True))
    total = body[-1]
    n = len(body)  # data rows 2 .. n, total in row n + 1
    assert total[col["row"]] == "total"
    assert total[col["mass_kg"]] == f'=SUMIF($A$2:$A${n},"part",E2:E{n})'
    letters = {h: openpyxl.utils.get_column_letter(i + 1) for h, i in col.items()}
    t = n + 1
    for h in header:  # every summed column sums its own column over the part rows
        if h.startswith(("m_", "I")) and h.endswith(("_kg_m", "_origin_kg_m2")):
            assert total[col[h]] == f'=SUMIF($A$2:$A${n},"part",{letters[h]}2:{letters[h]}{n})'
    assert total[col["cg_x_m"]] == f"={letters['m_x_kg_m']}{t}/{letters['mass_kg']}{t}"
    # tensor convention: I_C,xx = I_O,xx - M (y^2 + z^2), I_C,xy = I_O,xy + M x y (parallel-axis theorem)
    cy, cz, cx = (f"{letters[f'cg_{a}_m']}{t}" for a in "yzx")
    m = f"{letters['mass_kg']}{t}"
    assert total[col["Ixx_cg_kg_m2"]] == f"={letters['Ixx_origin_kg_m2']}{t}-{m}*({cy}^2+{cz}^2)"
    assert total[col["Ixy_cg_kg_m2"]] == f"={letters['Ixy_origin_kg_m2']}{t}+{m}*{cx}*{cy}"
    part_mass = sum(r[col["mass_kg"]] for r in body[:-1] if r[col["row"]] == "part")
    assert abs(part_mass - model.mass_properties().mass) <= 1e-9


def test_budget_command_writes_csv(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "budget.csv"
    assert main(["budget", str(CAR), "--csv", str(out)]) == 0
    assert "TOTAL" in capsys.readouterr().out
    assert _rows(out.read_text())[-1]["row"] == "total"
    assert main(["budget", str(CAR), "--xlsx", str(tmp_path / "b.csv")]) == 2


def test_dask_run_equals_the_local_run() -> None:
    pytest.importorskip("distributed", reason="dask.distributed (the cluster extra) is not installed")
    from distributed import Client, LocalCluster

    from massmodel.studies.cluster import run_points_dask

    source = read_source(CAR)
    base = load_model(CAR)
    ranges = [parse_range("fuel_mass=29kg:3kg:7", base), parse_range("ride_height=35mm,45mm", base)]
    study = Study(source, ("fuel_mass", "ride_height"))
    points = grid_points(ranges)
    local = run_points(study, points, chunk=4)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        seen: list[int] = []
        remote = run_points_dask(study, points, chunk=3, client=client, progress=lambda d, t: seen.append(d))
    assert np.array_equal(local[0], remote[0]) and np.array_equal(local[1], remote[1])
    assert seen[-1] == len(points) == 14


def test_budget_mass_uncertainty_matches_the_rss_propagation() -> None:
    # The total row's u_mass equals the RSS standard uncertainty of the total mass of massmodel.uncertainty
    # (Zimmerman & Nakai, SAWE Paper 3360; shared density errors summed linearly, GUM §5.2, from memory); a part
    # cut from a banded material carries its own share of that density error; a model without [uncertainty] has
    # no u_mass.
    from massmodel.modelfile.loader import load_model, loads_model
    from massmodel.studies.budget import mass_budget
    from massmodel.uncertainty import rss_uncertainties
    from massmodel.uncertainty.inputs import uncertainty_inputs

    demo = load_model(Path(__file__).resolve().parents[1] / "parts_demo" / "brindlecombe_bl3.toml")
    b = mass_budget(demo)
    assert b.total.u_mass == pytest.approx(rss_uncertainties(demo)["mass"].u, rel=1e-9)
    unc = uncertainty_inputs(demo)
    for r in b.rows:
        if r.kind == "part":
            i = unc.paths.index(r.path)
            k = unc.density_group[i]
            shared = unc.mass[i] * unc.u_density[k] if k >= 0 else 0.0
            assert r.u_mass == pytest.approx(float(np.hypot(unc.u_mass[i], shared)), rel=1e-12)
    plain = loads_model('[model]\nname = "p"\n[[part]]\npath = "a/b"\nshape = "point"\nmass = "1 kg"\n'
                        'maturity = "measured"\n')
    assert all(r.u_mass is None for r in mass_budget(plain).rows)
