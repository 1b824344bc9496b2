"""The mass budget as CSV and as an XLSX workbook whose total row is spreadsheet formulas over the part rows.

Columns are SI with the unit in the name. The part rows sum to the totals: ``mass_kg`` and the first moments
``m_x_kg_m`` … add up directly; the CG is Σ moment / Σ mass; the tensor about the model's CG is Σ ``I_O`` minus
``M S(C)`` (see :mod:`massmodel.studies.budget`). Group rows are subtotals: sum only the rows whose ``row`` is
``part``.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

from massmodel.core.atomic import write_atomic, write_text_atomic
from massmodel.core.errors import UsageError
from massmodel.studies.budget import TENSOR_ENTRIES, Budget, BudgetRow

__all__ = ["BUDGET_COLUMNS", "budget_csv", "write_budget_csv", "write_budget_xlsx", "format_budget"]

BUDGET_COLUMNS = (
    ["row", "path", "depth", "parts", "mass_kg", "cg_x_m", "cg_y_m", "cg_z_m", "m_x_kg_m", "m_y_kg_m", "m_z_kg_m"]
    + [f"I{n}_cg_kg_m2" for n, _, _ in TENSOR_ENTRIES]
    + [f"I{n}_origin_kg_m2" for n, _, _ in TENSOR_ENTRIES]
    + ["mass_source", "maturity", "material", "u_mass_kg"]
)


def _cells(r: BudgetRow) -> list[Any]:
    mp = r.props
    io_ = r.inertia_origin
    return ([r.kind, r.path, r.depth, r.parts, mp.mass, *mp.center.tolist(), *r.moment.tolist()]
            + [float(mp.inertia[i, j]) for _, i, j in TENSOR_ENTRIES]
            + [float(io_[i, j]) for _, i, j in TENSOR_ENTRIES]
            + [r.source, r.maturity, r.material, "" if r.u_mass is None else r.u_mass])


def budget_csv(b: Budget) -> str:
    """The budget as CSV text (numbers written with full precision)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(BUDGET_COLUMNS)
    for r in b.rows:
        w.writerow([repr(c) if isinstance(c, float) else c for c in _cells(r)])
    return buf.getvalue()


def write_budget_csv(b: Budget, path: str | Path) -> None:
    """Write :func:`budget_csv` through a temporary file and a rename."""
    write_text_atomic(path, budget_csv(b))


def write_budget_xlsx(b: Budget, path: str | Path) -> None:
    """Write the budget as an XLSX workbook (openpyxl, the optional extra ``xlsx``): one sheet, groups outlined,
    the total row as formulas over the part rows (SUMIF on the ``row`` column) so that edits recompute.

    Raises
    ------
    ValueError
        openpyxl is not installed.
    """
    try:
        from openpyxl import Workbook
        from openpyxl.utils import get_column_letter
    except ImportError:
        raise UsageError("XLSX output needs openpyxl: pip install 'massmodel[xlsx]' (or write --csv)") from None
    wb = Workbook()
    ws = wb.active
    ws.title = "mass budget"
    ws.append(BUDGET_COLUMNS)
    for r in b.rows[:-1]:
        ws.append(_cells(r))
        ws.row_dimensions[ws.max_row].outline_level = max(0, r.depth - 1)
    n = ws.max_row
    col = {name: get_column_letter(i + 1) for i, name in enumerate(BUDGET_COLUMNS)}

    def total(name: str) -> str:
        c = col[name]
        return f'=SUMIF(${col["row"]}$2:${col["row"]}${n},"part",{c}2:{c}{n})'

    t = n + 1
    m = f"{col['mass_kg']}{t}"
    cells: dict[str, Any] = {"row": "total", "path": "", "depth": 0, "parts": total("parts")}
    cells["mass_kg"] = total("mass_kg")
    for axis in "xyz":
        cells[f"m_{axis}_kg_m"] = total(f"m_{axis}_kg_m")
        cells[f"cg_{axis}_m"] = f"={col[f'm_{axis}_kg_m']}{t}/{m}"
    cg = {a: f"{col[f'cg_{a}_m']}{t}" for a in "xyz"}
    for name, i, j in TENSOR_ENTRIES:
        cells[f"I{name}_origin_kg_m2"] = total(f"I{name}_origin_kg_m2")
        origin = f"{col[f'I{name}_origin_kg_m2']}{t}"
        a, c = "xyz"[i], "xyz"[j]
        if i == j:  # I_C = I_O - M (|C|^2 - C_a^2)
            others = [cg[k] for k in "xyz" if k != a]
            cells[f"I{name}_cg_kg_m2"] = f"={origin}-{m}*({others[0]}^2+{others[1]}^2)"
        else:  # I_C,ab = I_O,ab + M C_a C_b (tensor convention)
            cells[f"I{name}_cg_kg_m2"] = f"={origin}+{m}*{cg[a]}*{cg[c]}"
    totals = b.total
    cells.update({"mass_source": totals.source, "maturity": totals.maturity, "material": totals.material,
                  # an uncertainty is not a sum of the rows' uncertainties: the computed value, not a formula
                  "u_mass_kg": "" if totals.u_mass is None else totals.u_mass})
    ws.append([cells.get(h, "") for h in BUDGET_COLUMNS])
    ws.freeze_panes = "C2"
    ws.column_dimensions[col["path"]].width = 42
    write_atomic(path, lambda p: wb.save(p), suffix=".xlsx")


def format_budget(b: Budget, max_depth: int = 1) -> str:
    """A short terminal summary: the groups down to ``max_depth`` and the total."""
    from .summary import _num, table

    rows = []
    for r in b.rows:
        if r.kind == "part" or (r.kind == "group" and r.depth > max_depth):
            continue
        mp = r.props
        rows.append([r.path or "TOTAL", str(r.parts), f"{mp.mass:.3f}",
                     *(_num(x * 1e3, ".1f") for x in mp.center), r.maturity, r.source])
    head = f"Mass budget of {b.model} (case {b.case}): {len(b.rows) - 1} rows of parts and groups, total last"
    return head + "\n" + table(["group", "parts", "mass (kg)", "CG x (mm)", "CG y (mm)", "CG z (mm)", "lowest maturity",
                                "source"], rows, "lrrrrrll")
