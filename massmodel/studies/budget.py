"""The mass budget: every part and every group subtotal with mass, CG, inertia, mass source and maturity, laid out
so that a spreadsheet sums the part rows back to the model's totals.

Each row carries, besides its CG and its tensor about its own CG, the first moments ``m r`` and the tensor about
the model origin ``I_O = I_G + m S(r)`` (``S(d) = |d|² E − d dᵀ``, parallel-axis theorem; Goldstein, Poole & Safko,
*Classical Mechanics*, 3rd ed. (2002), §5.3). These add over parts: ``M = Σ m``, ``C = Σ m r / M`` and
``I_C = Σ I_O − M S(C)``.

Where the model declares uncertainties (an ``[uncertainty]`` section), every row also carries the standard
uncertainty of its mass (k = 1): the parts' independent errors add in quadrature and every part cut from one banded
material shares that material's density error, so those add linearly within a row before the quadrature
(Zimmerman & Nakai, SAWE Paper 3360, 2005, for the quadrature; GUM, JCGM 100:2008, §5.2 for the correlated terms,
from memory; :mod:`massmodel.uncertainty`). These do not add over rows: a spreadsheet sums masses, not their
uncertainties.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties, combine_arrays, parallel_axis_shift
from massmodel.core.model import Model
from massmodel.uncertainty.inputs import UncertaintyInputs, declares_uncertainty, uncertainty_inputs

__all__ = ["BudgetRow", "Budget", "mass_budget", "TENSOR_ENTRIES"]

FloatArray = npt.NDArray[np.float64]
#: The six tensor entries in the order of the columns: (name, row, column).
TENSOR_ENTRIES = (("xx", 0, 0), ("yy", 1, 1), ("zz", 2, 2), ("xy", 0, 1), ("xz", 0, 2), ("yz", 1, 2))


@dataclass(frozen=True, slots=True)
class BudgetRow:
    """One line of the budget: a part, a group subtotal or the total.

    Attributes
    ----------
    kind : str
        ``part``, ``group`` or ``total``.
    path : str
        Part or group path (``""`` for the total).
    depth : int
        Number of path segments (0 for the total).
    parts : int
        Parts summed in the row (1 for a part).
    props : MassProperties
        Mass, CG and tensor about the row's own CG, model frame.
    source, maturity, material : str
        Of a part; a group's maturity is its lowest (``estimated`` < ``calculated`` < ``measured``) and its
        source ``mixed`` when the parts differ.
    """

    kind: str
    path: str
    depth: int
    parts: int
    props: MassProperties
    source: str
    maturity: str
    material: str
    u_mass: float | None = None

    @property
    def moment(self) -> FloatArray:
        """First moment about the model origin, m·r, kg·m."""
        return self.props.mass * self.props.center

    @property
    def inertia_origin(self) -> FloatArray:
        """Tensor about the model origin, model axes, kg·m²."""
        return self.props.inertia + parallel_axis_shift(self.props.mass, self.props.center)


@dataclass(frozen=True, slots=True)
class Budget:
    """Rows in tree order (each group before its members), the total last."""

    model: str
    case: str
    source: str
    rows: tuple[BudgetRow, ...]

    @property
    def total(self) -> BudgetRow:
        return self.rows[-1]


_MATURITY_ORDER = ("estimated", "calculated", "measured")


def _summary(values: list[str], order: tuple[str, ...] | None = None) -> str:
    distinct = sorted(set(values))
    if order is not None:
        return min(distinct, key=order.index)
    return distinct[0] if len(distinct) == 1 else "mixed"


def _u_mass(unc: UncertaintyInputs | None, idx: npt.NDArray[np.intp]) -> float | None:
    """Standard uncertainty (kg) of the mass of the parts ``idx``: independent errors in quadrature, each shared
    density error summed over its parts first (see the module notes); None without declared uncertainties."""
    if unc is None:
        return None
    independent = float(np.sum(unc.u_mass[idx] ** 2))
    groups = unc.density_group[idx]
    shared = 0.0
    for k in np.unique(groups[groups >= 0]):
        mass_k = float(np.sum(unc.mass[idx][groups == k]))
        shared += (mass_k * float(unc.u_density[k])) ** 2
    return float(np.sqrt(independent + shared))


def mass_budget(model: Model) -> Budget:
    """The budget of a model (parts, group subtotals, total; see the module notes).

    Raises
    ------
    ValueError
        A model with no parts.
    """
    if not model.components:
        raise UsageError(f"{model.source or model.name}: the model has no parts")
    masses, centers, inertias = model._all_arrays()
    members: dict[str, list[int]] = {}
    for i, c in enumerate(model.components):
        segs = c.path.split("/")
        for k in range(1, len(segs)):
            members.setdefault("/".join(segs[:k]), []).append(i)
    order: list[tuple[str, str]] = [(c.path, "part") for c in model.components] + [(g, "group") for g in members]
    # tree order: a group sorts just before its members (its path is a prefix of theirs); parts keep file order
    # inside their group through the stable sort on the group path
    position = {c.path: i for i, c in enumerate(model.components)}
    order.sort(key=lambda item: (item[0].split("/")[:-1] if item[1] == "part" else item[0].split("/"),
                                 item[1] == "part", position.get(item[0], -1)))
    rows = []
    comps = model.components
    unc = uncertainty_inputs(model) if declares_uncertainty(model) else None
    for path, kind in order:
        if kind == "part":
            i = position[path]
            c = comps[i]
            rows.append(BudgetRow("part", path, path.count("/") + 1, 1, c.props, c.source.value, c.maturity.value,
                                  c.material or "", _u_mass(unc, np.array([i]))))
        else:
            idx = np.array(members[path])
            props = MassProperties(*combine_arrays(masses[idx], centers[idx], inertias[idx]))
            rows.append(BudgetRow(
                "group", path, path.count("/") + 1, len(idx), props,
                _summary([comps[i].source.value for i in idx]),
                _summary([comps[i].maturity.value for i in idx], _MATURITY_ORDER),
                _summary([comps[i].material or "" for i in idx]),
                _u_mass(unc, idx),
            ))
    total = model.mass_properties()
    rows.append(BudgetRow("total", "", 0, len(comps), total, _summary([c.source.value for c in comps]),
                          _summary([c.maturity.value for c in comps], _MATURITY_ORDER),
                          _summary([c.material or "" for c in comps]), _u_mass(unc, np.arange(len(comps)))))
    return Budget(model.name, model.case, model.source, tuple(rows))
