"""First-order propagation of the part uncertainties to the totals, by root sum of squares (RSS).

Every quantity ``q`` (total mass, CG, inertia about the CG, axle and corner loads, front share, CG height, the value
of a rule) is linearised in the part errors: ``δq = Σ gm_i δm_i + Σ gc_i · δc_i + Σ gi_i e_i + Σ gd_k ε_k``
(``e_i`` the relative error of part i's own tensor, ``ε_k`` the relative density error shared by density group k),
and ``u_q² = Σ (gm_i u_mi)² + Σ (gc_ia u_cia)² + Σ (gi_i u_ei)² + Σ (gd_k u_εk)²`` (GUM §5.1.2; a shared density
error is one input whose sensitivity sums over its parts: GUM §5.2, correlated inputs; section numbers from memory).

For the totals the sensitivities are those of Zimmerman & Nakai, "Are You Sure? Uncertainty in Mass Properties
Engineering", SAWE Paper 3360 (2005), as transcribed in a secondary source, with dᵢ = xᵢ − x̄:

* ``σ_W = √Σ σ_wᵢ²``
* ``σ_x̄ = √Σ[(wᵢ σ_xᵢ)² + (σ_wᵢ dᵢ)²] / Σwᵢ``
* ``σ_Ixx = √Σ[σ_Ixxᵢ² + (2wᵢ(yᵢ−ȳ)σ_yᵢ)² + (2wᵢ(zᵢ−z̄)σ_zᵢ)² + (((yᵢ−ȳ)²+(zᵢ−z̄)²)σ_wᵢ)²]``

The vehicle quantities are functions of the total mass and CG only; their partials with respect to (M, CG) are taken
by central differences of the same function the Monte Carlo uses (:func:`vehicle_values`), which is exact here
because each is a polynomial of degree two at most in any one of M, x, y, z.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.model import Model, Vehicle

from .inputs import UncertaintyInputs, uncertainty_inputs

__all__ = ["Quantity", "QUANTITIES", "Sensitivity", "RssEstimate", "vehicle_values", "sensitivities",
           "rss_of", "rss_uncertainties", "VEHICLE_QUANTITIES"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class Quantity:
    """A propagated quantity: key (JSON-ready), SI unit and a label for tables."""

    name: str
    unit: str
    label: str


QUANTITIES: tuple[Quantity, ...] = (
    Quantity("mass", "kg", "total mass"),
    Quantity("cg_x", "m", "CG x (model axes)"),
    Quantity("cg_y", "m", "CG y (model axes)"),
    Quantity("cg_z", "m", "CG z (model axes)"),
    Quantity("ixx", "kg*m^2", "I_xx about the CG (model axes)"),
    Quantity("iyy", "kg*m^2", "I_yy about the CG (model axes)"),
    Quantity("izz", "kg*m^2", "I_zz about the CG (model axes)"),
    Quantity("front", "kg", "front axle load"),
    Quantity("rear", "kg", "rear axle load"),
    Quantity("front_left", "kg", "front left corner"),
    Quantity("front_right", "kg", "front right corner"),
    Quantity("rear_left", "kg", "rear left corner"),
    Quantity("rear_right", "kg", "rear right corner"),
    Quantity("front_fraction", "fraction", "front share"),
    Quantity("cg_height", "m", "CG height above ground"),
)
VEHICLE_QUANTITIES = ("front", "rear", "front_left", "front_right", "rear_left", "rear_right", "front_fraction",
                      "cg_height")


def vehicle_values(mass: FloatArray, center: FloatArray, vehicle: Vehicle) -> dict[str, FloatArray]:
    """Axle and corner loads (kg), front share and CG height (m) from total masses (n,) and CGs (n, 3).

    The same statics as :func:`massmodel.vehicle.balance.static_balance` (Jazar 2008, ch. 2: F_front = m a2 / l;
    lever rule across each axle), vectorised over samples.
    """
    mass = np.asarray(mass, dtype=float)
    center = np.asarray(center, dtype=float)
    station = center @ vehicle.forward
    a1 = vehicle.front_axle_station - station
    a2 = station - vehicle.rear_axle_station
    y = center @ vehicle.left
    front = mass * a2 / vehicle.wheelbase
    rear = mass * a1 / vehicle.wheelbase
    fl = front * (0.5 * vehicle.track_front + y) / vehicle.track_front
    rl = rear * (0.5 * vehicle.track_rear + y) / vehicle.track_rear
    return {
        "front": front, "rear": rear, "front_left": fl, "front_right": front - fl, "rear_left": rl,
        "rear_right": rear - rl, "front_fraction": a2 / vehicle.wheelbase,
        "cg_height": center @ vehicle.up - vehicle.ground_level,
    }


@dataclass(frozen=True, slots=True, eq=False)
class Sensitivity:
    """First-order sensitivities of one quantity to the part errors (see the module text).

    gm : (N,) per kg of part mass; gc : (N, 3) per m of part CG; gi : (N,) per unit relative error of the part's own
    tensor. The density sensitivities follow: ``gd = D (gm m + gi)`` with D the (K, N) group indicator.
    """

    value: float
    gm: FloatArray
    gc: FloatArray
    gi: FloatArray

    def density(self, inputs: UncertaintyInputs) -> FloatArray:
        """(K,) sensitivity to each shared relative density error (the part's mass and tensor scale together)."""
        return inputs.density_matrix() @ (self.gm * inputs.mass + self.gi)  # type: ignore[no-any-return]


def sensitivities(model: Model, inputs: UncertaintyInputs | None = None) -> dict[str, Sensitivity]:
    """Nominal value and first-order sensitivities of every quantity of :data:`QUANTITIES` (vehicle quantities only
    when the model has a vehicle)."""
    inp = inputs or uncertainty_inputs(model)
    m, c = inp.mass, inp.center
    n = len(m)
    total = float(m.sum())
    cg = (m @ c) / total
    d = c - cg  # dᵢ = xᵢ − x̄
    zeros = np.zeros(n)
    out: dict[str, Sensitivity] = {"mass": Sensitivity(total, np.ones(n), np.zeros((n, 3)), zeros)}
    for a, axis in enumerate("xyz"):
        gc = np.zeros((n, 3))
        gc[:, a] = m / total
        out[f"cg_{axis}"] = Sensitivity(float(cg[a]), d[:, a] / total, gc, zeros)
    r2 = (d**2).sum(axis=1)
    for a, axis in enumerate("xyz"):
        others = [b for b in range(3) if b != a]
        value = float(inp.inertia_diag[:, a].sum() + (m * (r2 - d[:, a] ** 2)).sum())
        gc = np.zeros((n, 3))
        gc[:, others] = 2.0 * m[:, None] * d[:, others]  # Zimmerman & Nakai: 2 wᵢ (yᵢ − ȳ)
        out[f"i{axis}{axis}"] = Sensitivity(value, r2 - d[:, a] ** 2, gc, inp.inertia_diag[:, a].copy())
    if model.vehicle is not None:
        out.update(_vehicle_sensitivities(model.vehicle, total, cg, out))
    return out


def _vehicle_sensitivities(
    vehicle: Vehicle, total: float, cg: FloatArray, base: Mapping[str, Sensitivity]
) -> dict[str, Sensitivity]:
    """Chain rule: q(M, x̄, ȳ, z̄) with its partials by central differences of :func:`vehicle_values`."""
    x0 = np.array([total, *cg])
    steps = np.array([1e-3 * total, 1e-3, 1e-3, 1e-3])
    points = np.repeat(x0[None, :], 9, axis=0)
    for k in range(4):
        points[1 + 2 * k, k] += steps[k]
        points[2 + 2 * k, k] -= steps[k]
    values = vehicle_values(points[:, 0], points[:, 1:], vehicle)
    inputs = [base["mass"], base["cg_x"], base["cg_y"], base["cg_z"]]
    out = {}
    for name, v in values.items():
        partial = [(v[1 + 2 * k] - v[2 + 2 * k]) / (2.0 * steps[k]) for k in range(4)]
        gm = sum(p * s.gm for p, s in zip(partial, inputs, strict=True))
        gc = sum(p * s.gc for p, s in zip(partial, inputs, strict=True))
        out[name] = Sensitivity(float(v[0]), np.asarray(gm), np.asarray(gc), np.zeros_like(base["mass"].gi))
    return out


@dataclass(frozen=True, slots=True)
class RssEstimate:
    """A quantity's nominal value and RSS standard uncertainty (k = 1), SI.

    ``u_parts`` is the share of the independent part errors, ``u_density`` that of the shared density errors
    (``u² = u_parts² + u_density²``); ``u_density_if_independent`` is what the density term would be if each part's
    density were (wrongly) taken as independent — shown to make the correlation visible.
    """

    quantity: Quantity
    value: float
    u: float
    u_parts: float
    u_density: float
    u_density_if_independent: float


def rss_of(sens: Sensitivity, inputs: UncertaintyInputs, quantity: Quantity) -> RssEstimate:
    """RSS standard uncertainty of one quantity from its sensitivities."""
    var_parts = float(((sens.gm * inputs.u_mass) ** 2).sum() + ((sens.gc * inputs.u_cg) ** 2).sum()
                      + ((sens.gi * inputs.u_inertia) ** 2).sum())
    var_density = float(((sens.density(inputs) * inputs.u_density) ** 2).sum())
    grouped = inputs.density_group >= 0
    per_part = (sens.gm * inputs.mass + sens.gi)[grouped] * inputs.u_density[inputs.density_group[grouped]]
    return RssEstimate(quantity, sens.value, float(np.sqrt(var_parts + var_density)), float(np.sqrt(var_parts)),
                       float(np.sqrt(var_density)), float(np.sqrt((per_part**2).sum())))


def rss_uncertainties(model: Model, inputs: UncertaintyInputs | None = None) -> dict[str, RssEstimate]:
    """RSS standard uncertainties of every quantity of :data:`QUANTITIES` (those the model has).

    Parameters
    ----------
    model : Model
    inputs : UncertaintyInputs, optional
        Default: :func:`~massmodel.uncertainty.inputs.uncertainty_inputs` of the model.

    Returns
    -------
    dict of str to RssEstimate
        Keyed by :attr:`Quantity.name`, in the order of :data:`QUANTITIES`.

    References
    ----------
    Zimmerman & Nakai, SAWE Paper 3360 (2005) (via a secondary source); JCGM 100:2008 (GUM) §5.1.2, §5.2 (from memory).
    """
    inp = inputs or uncertainty_inputs(model)
    sens = sensitivities(model, inp)
    return {q.name: rss_of(sens[q.name], inp, q) for q in QUANTITIES if q.name in sens}
