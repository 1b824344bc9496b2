"""Inputs of the propagation: each part's standard uncertainties, the shared density errors, the growth allowance.

Three kinds of error are modelled, all as standard uncertainties (coverage factor k = 1):

* independent per part: mass (kg), each CG coordinate (m, model axes) and a relative error of the part's own inertia
  tensor about its CG (the tensor scales by ``1 + e``) — given in the model file (``[uncertainty]``, see
  :mod:`massmodel.modelfile.uncertainty`) or taken from :data:`MATURITY_DEFAULTS`;
* correlated, one per material with a density band: every part whose mass is density × volume of that material
  shares one density error (the bar stock of one supplier is all heavy or all light). The band is taken as a
  uniform distribution, whose standard uncertainty is half-width / √3 (GUM §4.3.7, rectangular distribution; section
  number from memory);
* measured parts weighed on a scale of stated resolution δ: u = δ / (2√3), the rectangular distribution of a digital
  indication (GUM §F.2.2.1; section number from memory).

The growth allowance (a predicted increase of the mass as the design matures) is carried beside, never mixed into,
the uncertainty.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.model import MassSource, Maturity, Model
from massmodel.core.uncertainty import PartUncertainty

__all__ = [
    "MaturityDefault",
    "MATURITY_DEFAULTS",
    "UncertaintyInputs",
    "default_part_uncertainty",
    "uncertainty_inputs",
    "growth_summary",
    "declares_uncertainty",
    "RECTANGULAR",
]

FloatArray = npt.NDArray[np.float64]

#: Standard uncertainty of a rectangular (uniform) distribution per unit half-width: 1/√3 (GUM §4.3.7, from memory).
RECTANGULAR = 1.0 / math.sqrt(3.0)


@dataclass(frozen=True, slots=True)
class MaturityDefault:
    """Default uncertainties and growth allowance of a part of one maturity.

    Parameters
    ----------
    mass : float
        Relative standard uncertainty of the mass (fraction).
    cg : float
        Standard uncertainty of each CG coordinate, m.
    inertia : float
        Relative standard uncertainty of the part's own inertia (fraction).
    growth : float
        Mass growth allowance (fraction of the mass).
    source : str
        Where the numbers come from.
    """

    mass: float
    cg: float
    inertia: float
    growth: float
    source: str


#: Defaults by maturity. The uncertainties are common practice, no source. The growth allowances follow the
#: published margin guideline transcribed in the project's references (contingency up to 20 % for a new design;
#: read in a secondary source) and AIAA S-120A-2015's mass growth allowance table (about 20-30 % for estimates down
#: to 0-1 % for weighed hardware; values from memory).
MATURITY_DEFAULTS = MappingProxyType({
    Maturity.ESTIMATED: MaturityDefault(
        0.10, 0.020, 0.30, 0.20,
        "uncertainty: common practice, no source; growth 20 %: new-design contingency of a published margin "
        "guideline (secondary source) and AIAA S-120A-2015 (from memory)"),
    Maturity.CALCULATED: MaturityDefault(
        0.03, 0.005, 0.10, 0.05,
        "uncertainty: common practice, no source; growth 5 %: common practice, no source (within AIAA S-120A-2015's "
        "range for drawings, from memory)"),
    Maturity.MEASURED: MaturityDefault(
        0.005, 0.002, 0.05, 0.0,
        "uncertainty: common practice, no source; growth 0 % for weighed hardware: AIAA S-120A-2015 (from memory)"),
})


def default_part_uncertainty(
    mass: float, maturity: Maturity, default: MaturityDefault, scale_resolution: float | None = None
) -> PartUncertainty:
    """A part's uncertainty from the defaults of its maturity.

    Parameters
    ----------
    mass : float
        The part's mass, kg.
    maturity : Maturity
    default : MaturityDefault
        The defaults for that maturity.
    scale_resolution : float, optional
        Resolution of the scale a MEASURED part was weighed on, kg: its mass uncertainty is then δ/(2√3) (GUM
        §F.2.2.1, from memory) instead of the default fraction.
    """
    if maturity is Maturity.MEASURED and scale_resolution is not None:
        u_mass = 0.5 * scale_resolution * RECTANGULAR
        how = f"scale resolution {scale_resolution:g} kg"
    else:
        u_mass = default.mass * mass
        how = f"default for {maturity.value}"
    return PartUncertainty(u_mass, (default.cg,) * 3, default.inertia, default.growth, origin=how)


def declares_uncertainty(model: Model) -> bool:
    """Whether the model file gave uncertainties (an ``[uncertainty]`` section: every part then carries a record)."""
    return any(c.uncertainty is not None for c in model.components)


def _readonly(a: Any, dtype: Any = float) -> Any:
    out = np.ascontiguousarray(a, dtype=dtype)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, slots=True, eq=False)
class UncertaintyInputs:
    """The arrays the propagation works on (N parts, K density groups; SI, model frame; read-only).

    Attributes
    ----------
    paths : tuple of str
    mass : (N,) float
        kg.
    center : (N, 3) float
        CG of each part, m.
    inertia_diag : (N, 3) float
        Diagonal of each part's own tensor about its CG (I_xx, I_yy, I_zz), kg·m², model axes.
    u_mass : (N,) float
        Independent standard uncertainty of the mass, kg.
    u_cg : (N, 3) float
        Independent standard uncertainty of each CG coordinate, m.
    u_inertia : (N,) float
        Relative standard uncertainty of the own tensor (fraction).
    growth : (N,) float
        Growth allowance (fraction of the mass).
    density_keys : tuple of str
        The K materials with a density band used by density × volume parts.
    density_group : (N,) int
        Index into ``density_keys``, -1 for parts without a shared density error.
    density_low, density_high : (K,) float
        Band edges as relative errors of the nominal density (ρ_min/ρ − 1, ρ_max/ρ − 1).
    u_density : (K,) float
        Relative standard uncertainty of each density: (high − low)/2/√3 (uniform band).
    origins : tuple of str
        Where each part's values came from.
    """

    paths: tuple[str, ...]
    mass: FloatArray
    center: FloatArray
    inertia_diag: FloatArray
    u_mass: FloatArray
    u_cg: FloatArray
    u_inertia: FloatArray
    growth: FloatArray
    density_keys: tuple[str, ...]
    density_group: npt.NDArray[np.int64]
    density_low: FloatArray
    density_high: FloatArray
    u_density: FloatArray
    origins: tuple[str, ...]

    @property
    def density_offset(self) -> FloatArray:
        """(K,) mean relative density error: the band's middle against the nominal (zero for a mid-band nominal)."""
        return 0.5 * (self.density_low + self.density_high)  # type: ignore[no-any-return]

    def density_matrix(self) -> FloatArray:
        """(K, N) indicator: row k is 1 for the parts of density group k."""
        out = np.zeros((len(self.density_keys), len(self.paths)))
        idx = np.flatnonzero(self.density_group >= 0)
        out[self.density_group[idx], idx] = 1.0
        return out


def uncertainty_inputs(model: Model, defaults: Any = MATURITY_DEFAULTS) -> UncertaintyInputs:
    """Collect the per-part uncertainties and the density groups of a model.

    Parts without a record (a model file with no ``[uncertainty]`` section, or a model built in Python) take
    ``defaults[maturity]`` (:func:`default_part_uncertainty`).
    """
    masses, centers, tensors = model.arrays()
    n = len(model.components)
    u_mass = np.empty(n)
    u_cg = np.empty((n, 3))
    u_inertia = np.empty(n)
    growth = np.empty(n)
    origins = []
    group = np.full(n, -1, dtype=np.int64)
    keys: dict[str, int] = {}
    for i, c in enumerate(model.components):
        u = c.uncertainty or default_part_uncertainty(masses[i], c.maturity, defaults[c.maturity])
        u_mass[i], u_cg[i], u_inertia[i], growth[i] = u.mass, u.cg, u.inertia, u.growth
        origins.append(u.origin)
        if c.source is MassSource.MATERIAL and c.material is not None:
            mat = model.materials.get(c.material)
            if mat is not None and mat.band[0] < mat.band[1]:
                group[i] = keys.setdefault(c.material, len(keys))
    low = np.empty(len(keys))
    high = np.empty(len(keys))
    for key, k in keys.items():
        mat = model.materials[key]
        lo, hi = mat.band
        low[k], high[k] = lo / mat.density - 1.0, hi / mat.density - 1.0
    return UncertaintyInputs(
        paths=tuple(c.path for c in model.components),
        mass=_readonly(masses),
        center=_readonly(centers),
        inertia_diag=_readonly(np.diagonal(tensors, axis1=1, axis2=2)),
        u_mass=_readonly(u_mass),
        u_cg=_readonly(u_cg),
        u_inertia=_readonly(u_inertia),
        growth=_readonly(growth),
        density_keys=tuple(keys),
        density_group=_readonly(group, np.int64),
        density_low=_readonly(low),
        density_high=_readonly(high),
        u_density=_readonly(0.5 * (high - low) * RECTANGULAR),
        origins=tuple(origins),
    )


def growth_summary(model: Model, inputs: UncertaintyInputs | None = None) -> dict[str, Any]:
    """Current mass, growth allowance by maturity and the predicted mass (current + allowance), kg.

    The allowance is a predicted change of the mass as parts mature (a bias), not an uncertainty: it is never added
    to the standard uncertainty.
    """
    inp = inputs or uncertainty_inputs(model)
    allowance = inp.mass * inp.growth
    by_maturity = {
        m.value: float(sum(a for a, c in zip(allowance, model.components, strict=True) if c.maturity is m))
        for m in Maturity
    }
    current = float(inp.mass.sum())
    return {
        "current_mass_kg": current,
        "growth_allowance_kg": float(allowance.sum()),
        "growth_allowance_by_maturity_kg": by_maturity,
        "predicted_mass_kg": current + float(allowance.sum()),
        "note": "predicted mass = current mass + growth allowance by maturity; the allowance is a predicted change, "
                "not an uncertainty",
    }
