"""The linear single-track ("bicycle") model: understeer gradient, characteristic speed, yaw response.

States x = (v_y, r): lateral velocity at the CG (m/s, left positive) and yaw rate (rad/s, anticlockwise seen from
above positive); input δ, the front road-wheel steer angle (rad). With a, b the CG's distances behind the front
axle and ahead of the rear axle, m the mass, I_z the yaw inertia about the CG, C_f and C_r the axle cornering
stiffnesses (N/rad) and u the forward speed, the slip angles are α_f = δ − (v_y + a·r)/u and α_r = −(v_y − b·r)/u,
the tyre forces C·α, and

    m (v̇_y + u r) = C_f α_f + C_r α_r,       I_z ṙ = a C_f α_f − b C_r α_r,

i.e. ẋ = A x + B δ with

    A = [[−(C_f + C_r)/(m u),      −(a C_f − b C_r)/(m u) − u],
         [−(a C_f − b C_r)/(I_z u), −(a² C_f + b² C_r)/(I_z u)]],   B = [C_f/m, a C_f/I_z].

(Pacejka, *Tyre and Vehicle Dynamics*, ch. 1; Milliken & Milliken, *Race Car Vehicle Dynamics*, SAE 1995, ch. 5;
Jazar, *Vehicle Dynamics*, Springer 2008, ch. 10 — from memory.) Small angles, constant speed, linear tyres, no
roll or load transfer, no steering compliance.

Steady state (Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 6; from memory): δ = L/R + K·a_y with the
understeer gradient K = m_f/C_f − m_r/C_r (rad per m/s², m_f = m b/L and m_r = m a/L the axle masses); K > 0
understeer, characteristic speed √(L/K); K < 0 oversteer, critical speed √(−L/K); yaw-rate gain
r/δ = u/(L + K u²).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError

__all__ = ["SingleTrack", "YawResponse", "state_matrices", "steady_state", "yaw_response", "step_yaw_rate"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class SingleTrack:
    """Inputs of the single-track model (SI): mass kg, yaw inertia kg·m², a and b m, C_f and C_r N/rad."""

    mass: float
    yaw_inertia: float
    a: float
    b: float
    cornering_front: float
    cornering_rear: float

    def __post_init__(self) -> None:
        for name in ("mass", "yaw_inertia", "cornering_front", "cornering_rear"):
            if not getattr(self, name) > 0.0:
                raise UsageError(f"single-track model: {name.replace('_', ' ')} must be positive")
        if not (self.a > 0.0 and self.b > 0.0):
            raise UsageError("single-track model: the CG must lie between the axles")

    @property
    def wheelbase(self) -> float:
        return self.a + self.b

    @property
    def understeer_gradient(self) -> float:
        """K = m_f/C_f − m_r/C_r, rad per m/s² (multiply by g0 for rad per g)."""
        L = self.wheelbase
        return self.mass * self.b / L / self.cornering_front - self.mass * self.a / L / self.cornering_rear


def state_matrices(model: SingleTrack, speed: float) -> tuple[FloatArray, FloatArray]:
    """(A (2, 2), B (2,)) of ẋ = A x + B δ at a forward speed u > 0, m/s (module notes)."""
    if not speed > 0.0:
        raise UsageError(f"speed {speed!r} m/s: the single-track model needs a positive forward speed")
    m, iz, a, b = model.mass, model.yaw_inertia, model.a, model.b
    cf, cr, u = model.cornering_front, model.cornering_rear, speed
    A = np.array([
        [-(cf + cr) / (m * u), -(a * cf - b * cr) / (m * u) - u],
        [-(a * cf - b * cr) / (iz * u), -(a * a * cf + b * b * cr) / (iz * u)],
    ])
    B = np.array([cf / m, a * cf / iz])
    return A, B


@dataclass(frozen=True, slots=True)
class YawResponse:
    """Yaw response at one speed.

    Attributes
    ----------
    speed : float
        m/s.
    yaw_rate_gain : float or None
        Steady r/δ, 1/s (None above the critical speed: no steady state).
    natural_frequency : float or None
        ω_n = √det(A), rad/s (None when det(A) ≤ 0: unstable).
    damping_ratio : float or None
        ζ = −tr(A)/(2 ω_n).
    time_to_90 : float or None
        Time after a step steer until the yaw rate first reaches 90 % of its steady value, s.
    """

    speed: float
    yaw_rate_gain: float | None
    natural_frequency: float | None
    damping_ratio: float | None
    time_to_90: float | None


def steady_state(model: SingleTrack, speed: float) -> float | None:
    """Steady yaw-rate gain r/δ = u/(L + K u²), 1/s; None when L + K u² ≤ 0 (at or above the critical speed)."""
    den = model.wheelbase + model.understeer_gradient * speed**2
    return speed / den if den > 0.0 else None


def step_yaw_rate(model: SingleTrack, speed: float, times: FloatArray, steer: float = 1.0) -> FloatArray:
    """Yaw rate after a step steer δ at t = 0 from straight running, rad/s, at the given times.

    Closed form through the eigen-decomposition A = V Λ V⁻¹: x(t) = V diag((e^{λt} − 1)/λ) V⁻¹ B δ (the solution of
    ẋ = A x + B δ from x(0) = 0).
    """
    A, B = state_matrices(model, speed)
    lam, V = np.linalg.eig(A)
    scale = max(1.0, float(np.abs(lam).max()))
    if abs(lam[0] - lam[1]) < 1e-6 * scale or np.any(np.abs(lam) < 1e-12):
        # a repeated eigenvalue (critical damping) or a zero one: perturb A by 1e-6 relative (the yaw rate moves
        # by about that fraction, far below any use of it) so that V is invertible and no λ is zero
        lam, V = np.linalg.eig(A + np.diag([1e-6 * scale, -1e-6 * scale]))
    coef = np.linalg.solve(V, B.astype(complex)) * steer
    t = np.asarray(times, dtype=float)[:, None]
    phi = (np.exp(lam[None, :] * t) - 1.0) / lam[None, :]
    x = (phi * coef[None, :]) @ V.T
    return np.real(x[:, 1])


def yaw_response(model: SingleTrack, speed: float) -> YawResponse:
    """Steady gain, natural frequency, damping ratio and 90 % time at a speed (module notes)."""
    A, _ = state_matrices(model, speed)
    det = float(np.linalg.det(A))
    gain = steady_state(model, speed)
    if det <= 0.0:
        return YawResponse(speed, gain, None, None, None)
    wn = math.sqrt(det)
    zeta = -float(np.trace(A)) / (2.0 * wn)
    t90 = None
    if gain is not None and zeta > 0.0:
        horizon = 20.0 / (zeta * wn) if zeta < 1.0 else 20.0 * zeta / wn
        t = np.linspace(0.0, horizon, 20001)
        r = step_yaw_rate(model, speed, t) / gain
        above = np.nonzero(r >= 0.9)[0]
        if above.size:
            k = int(above[0])
            lo, hi = t[k - 1], t[k]
            for _ in range(60):  # bisection on the closed form
                mid = 0.5 * (lo + hi)
                if step_yaw_rate(model, speed, np.array([mid]))[0] / gain >= 0.9:
                    hi = mid
                else:
                    lo = mid
            t90 = 0.5 * (lo + hi)
    return YawResponse(speed, gain, wn, zeta, t90)
