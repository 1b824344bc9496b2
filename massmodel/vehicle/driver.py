"""A seated driver as a sub-assembly of body segments (ellipsoids and cylinders) from anthropometric tables.

From the driver's mass, stature and seat-back angle, and three points of the seating position (the hip point, the
left ankle at the pedals, the left wrist at the steering wheel), :func:`seated_segments` returns fourteen segments:
trunk, head and neck, and both upper arms, forearms, hands, thighs, shanks and feet, each with its mass, its shape and
its pose. The right limbs mirror the left ones across the driver's own mid-plane (through the hip point, normal to
the vehicle's left direction).

Data (flags as in docs/references.md §10):

- Segment masses (% of body mass) and CG locations (% of segment length from the proximal end): Plagenhoef, Evans &
  Abdelnour (1983), "Anatomical data for analyzing human motion", Research Quarterly for Exercise and Sport 54(2),
  as transcribed on a university biomechanics lab page (http://www.d.umn.edu/~mlevy/CLASSES/ESAT3300/LABS/LAB8_COM/
  bsp.htm; R2). The trunk CG there is an estimate after Winter from Dempster's data, endpoints mid-hips to
  mid-shoulders. As transcribed the male masses sum to 100.70 % with both limbs counted; **this module normalises
  them** (each fraction is divided by the sum), so the segments always add up to the driver's mass. The female
  masses sum to 100.00 %.
- Segment lengths as fractions of stature H: Winter, *Biomechanics and Motor Control of Human Movement*, 4th ed.
  (Wiley, 2009), Fig. 4.1, after Drillis & Contini (1966) — **from memory**: shoulder height 0.818 H, hip (greater
  trochanter) 0.530 H, knee 0.285 H, ankle 0.039 H; upper arm 0.186 H, forearm 0.146 H, hand 0.108 H, foot length
  0.152 H, foot width 0.055 H, shoulder width 0.259 H, hip width 0.191 H.
- Segment densities, used only to size the shapes (volume = mass / density): Dempster (1955) as given in Winter,
  4th ed. (2009), Table 4.1 — **from memory**.

Geometry (assumptions of this model, no source):

- the trunk runs from the hip point to the mid-shoulder point, ``seat_back_angle`` from vertical, reclined rearwards;
  the head and neck continue from the mid-shoulder point at ``neck_angle`` from vertical (default: in line with the
  trunk); "proximal" for the head and neck is read as the end joined to the trunk;
- hip joints lie at ± (hip width / 2 − thigh radius) beside the hip point, shoulder joints at ± (shoulder width / 2 −
  upper-arm radius) beside the mid-shoulder point;
- each leg is a two-link chain from its hip joint to the ankle point, the knee bending upwards; each arm a two-link
  chain from its shoulder joint to the wrist point, the elbow bending downwards and a little outwards (towards down +
  half outwards); each bends in the plane through the chain's ends and that direction; the hand continues the
  forearm; the foot stands normal to the shank, toes upwards;
- cylinders (upper arm, forearm, thigh, shank) span one segment length and are centred on the tabulated CG, so they
  sit shifted by (0.5 − CG fraction) × length towards the proximal joint; ellipsoids: trunk (width = shoulder
  width, depth from the volume), head and neck (round section), hand (width twice its thickness), foot (width = foot
  width).

The segment inertia is that of each shape scaled to its mass (not the tabulated radii of gyration), so the driver's
inertia is an estimate; its mass and CG follow the tables.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UserError
from massmodel.core.frames import Pose
from massmodel.core.shapes import Cylinder, Ellipsoid

__all__ = [
    "DriverError",
    "SegmentData",
    "SEGMENT_DATA",
    "STATURE_FRACTIONS",
    "SEGMENT_DENSITY",
    "SeatedPosture",
    "Segment",
    "segment_fractions",
    "seated_segments",
]

FloatArray = npt.NDArray[np.float64]


class DriverError(UserError, ValueError):
    """A seated-driver input that cannot be used; ``field`` names the input (e.g. ``wrist_point``)."""

    def __init__(self, field: str, message: str) -> None:
        self.field = field
        self.message = message
        super().__init__(f"field '{field}': {message}")


@dataclass(frozen=True, slots=True)
class SegmentData:
    """One published set of segment parameters.

    ``segments`` maps a segment name to (mass % of body mass for ONE segment, CG % of segment length from the
    proximal end). The limb segments (all but trunk and head_neck) occur twice.
    """

    key: str
    citation: str
    segments: Mapping[str, tuple[float, float]]

    @property
    def percent_sum(self) -> float:
        """Sum of the mass percentages with both limbs counted, as transcribed (%)."""
        return sum(p * (1 if n in _AXIAL else 2) for n, (p, _) in self.segments.items())


_AXIAL = ("trunk", "head_neck")
_LIMBS = ("upper_arm", "forearm", "hand", "thigh", "shank", "foot")
_PLAGENHOEF = ("Plagenhoef, Evans & Abdelnour (1983), Research Quarterly for Exercise and Sport 54(2), as "
               "transcribed on a university biomechanics lab page (R2)")

# (mass %, CG % from proximal) per segment, one side: docs/references.md §10 (male) and the same lab page (female).
SEGMENT_DATA: dict[str, SegmentData] = {
    "plagenhoef_1983_male": SegmentData("plagenhoef_1983_male", _PLAGENHOEF + ", male; masses normalised from "
                                        "100.70 %", {
        "head_neck": (8.96, 55.0), "trunk": (46.84, 50.0), "upper_arm": (3.25, 43.6), "forearm": (1.87, 43.0),
        "hand": (0.65, 46.8), "thigh": (10.50, 43.3), "shank": (4.75, 43.4), "foot": (1.43, 50.0),
    }),
    "plagenhoef_1983_female": SegmentData("plagenhoef_1983_female", _PLAGENHOEF + ", female", {
        "head_neck": (8.20, 55.0), "trunk": (45.00, 50.0), "upper_arm": (2.90, 45.8), "forearm": (1.57, 43.4),
        "hand": (0.50, 46.8), "thigh": (11.75, 42.8), "shank": (5.35, 41.9), "foot": (1.33, 50.0),
    }),
}

# Winter, 4th ed. (2009), Fig. 4.1 after Drillis & Contini (1966): fractions of stature (from memory).
STATURE_FRACTIONS: dict[str, float] = {
    "shoulder_height": 0.818, "hip_height": 0.530, "knee_height": 0.285, "ankle_height": 0.039,
    "upper_arm": 0.186, "forearm": 0.146, "hand": 0.108, "foot": 0.152, "foot_width": 0.055,
    "shoulder_width": 0.259, "hip_width": 0.191,
}

# Dempster (1955) via Winter, 4th ed. (2009), Table 4.1: segment densities, kg/m^3 (from memory).
SEGMENT_DENSITY: dict[str, float] = {
    "hand": 1160.0, "forearm": 1130.0, "upper_arm": 1070.0, "foot": 1100.0, "shank": 1090.0, "thigh": 1050.0,
    "head_neck": 1110.0, "trunk": 1030.0,
}


def segment_lengths(stature: float) -> dict[str, float]:
    """Segment lengths, m, for a stature in m (Winter 2009, Fig. 4.1, from memory; see the module notes)."""
    f = STATURE_FRACTIONS
    return {
        "trunk": (f["shoulder_height"] - f["hip_height"]) * stature,
        "head_neck": (1.0 - f["shoulder_height"]) * stature,
        "upper_arm": f["upper_arm"] * stature,
        "forearm": f["forearm"] * stature,
        "hand": f["hand"] * stature,
        "thigh": (f["hip_height"] - f["knee_height"]) * stature,
        "shank": (f["knee_height"] - f["ankle_height"]) * stature,
        "foot": f["foot"] * stature,
    }


def segment_fractions(data: SegmentData) -> dict[str, float]:
    """Mass fraction of every one of the fourteen segments (``left/thigh``, ``right/thigh``, …), summing to 1.

    Each transcribed percentage is divided by the set's sum with both limbs counted (100.70 % for the Plagenhoef
    male set, which is therefore normalised; 100.00 % for the female set).
    """
    total = data.percent_sum
    out = {n: data.segments[n][0] / total for n in _AXIAL}
    for side in ("left", "right"):
        out.update({f"{side}/{n}": data.segments[n][0] / total for n in _LIMBS})
    return out


@dataclass(frozen=True, slots=True)
class SeatedPosture:
    """Inputs of the seated-driver model, SI, in one frame (the points and directions in the same coordinates).

    Parameters
    ----------
    mass : float
        Driver mass, kg (the segments share it by the table's fractions).
    stature : float
        Standing height, m.
    seat_back_angle : float
        Trunk line from vertical, reclined rearwards, rad (0 = upright).
    hip_point : (3,) float
        Mid-point between the hip joints, m.
    ankle_point, wrist_point : (3,) float
        Left ankle joint (at the pedals) and left wrist (at the steering wheel), m; the right ones are mirrored.
    forward, left, up : (3,) float
        Vehicle directions in this frame (orthonormal, right-handed).
    neck_angle : float or None
        Head-and-neck line from vertical, reclined rearwards, rad; None: in line with the trunk.
    """

    mass: float
    stature: float
    seat_back_angle: float
    hip_point: FloatArray
    ankle_point: FloatArray
    wrist_point: FloatArray
    forward: FloatArray
    left: FloatArray
    up: FloatArray
    neck_angle: float | None = None


@dataclass(frozen=True, slots=True, eq=False)
class Segment:
    """One body segment: ``name`` (e.g. ``left/thigh``), shape in its own frame, ``pose`` (segment frame → posture
    frame), mass kg, and the joint centres ``proximal`` and ``distal`` and the CG ``cg`` (3,) in m, posture frame."""

    name: str
    shape: Cylinder | Ellipsoid
    pose: Pose
    mass: float
    proximal: FloatArray
    distal: FloatArray
    cg: FloatArray


def _unit(v: FloatArray) -> FloatArray:
    return v / np.linalg.norm(v)


def _frame(direction: FloatArray, lateral: FloatArray, fallback: FloatArray) -> FloatArray:
    """Rotation whose z column is ``direction`` and y column the part of ``lateral`` normal to it."""
    z = _unit(direction)
    y = lateral - (lateral @ z) * z
    if np.linalg.norm(y) < 1e-9:
        y = fallback - (fallback @ z) * z
    y = _unit(y)
    return np.column_stack([np.cross(y, z), y, z])


def _two_link(start: FloatArray, end: FloatArray, l1: float, l2: float, pole: FloatArray, fallback: FloatArray,
              field: str, what: str) -> FloatArray:
    """The middle joint of a chain start–end with link lengths l1, l2, bending towards ``pole`` (law of cosines)."""
    span = end - start
    d = float(np.linalg.norm(span))
    if d > l1 + l2 + 1e-12 or d < abs(l1 - l2) - 1e-12:
        raise DriverError(field, f"out of reach: the {what} spans {d:.3f} m but can span only "
                                 f"{abs(l1 - l2):.3f} .. {l1 + l2:.3f} m for this stature; move the point")
    u = span / d
    w = pole - (pole @ u) * u
    if np.linalg.norm(w) < 1e-9:
        w = fallback - (fallback @ u) * u
    w = _unit(w)
    a = (d * d + l1 * l1 - l2 * l2) / (2.0 * d)
    return np.asarray(start + a * u + math.sqrt(max(l1 * l1 - a * a, 0.0)) * w)


def _check(p: SeatedPosture) -> None:
    if not (math.isfinite(p.mass) and p.mass > 0.0):
        raise DriverError("mass", "must be a positive mass")
    if not 1.0 <= p.stature <= 2.5:
        raise DriverError("stature", f"{p.stature:.3f} m: expected a standing height from 1.0 m to 2.5 m")
    if not 0.0 <= p.seat_back_angle <= math.radians(80.0):
        raise DriverError("seat_back_angle", f"{math.degrees(p.seat_back_angle):.1f} deg: expected 0 deg (upright) "
                                             "to 80 deg, reclined rearwards from vertical")
    if p.neck_angle is not None and not math.radians(-45.0) <= p.neck_angle <= math.radians(90.0):
        raise DriverError("neck_angle", f"{math.degrees(p.neck_angle):.1f} deg: expected -45 deg to 90 deg from "
                                        "vertical")
    for name in ("ankle_point", "wrist_point"):
        if float((getattr(p, name) - p.hip_point) @ p.left) <= 0.0:
            raise DriverError(name, "give the LEFT-side point (it must lie to the left of the hip point; the right "
                                    "side is mirrored)")


def seated_segments(posture: SeatedPosture, data: SegmentData) -> list[Segment]:
    """The fourteen body segments of a seated driver (see the module notes for the data and assumptions).

    Parameters
    ----------
    posture : SeatedPosture
    data : SegmentData
        One of :data:`SEGMENT_DATA`.

    Returns
    -------
    list of Segment
        trunk, head_neck, then left and right upper_arm, forearm, hand, thigh, shank, foot.

    Raises
    ------
    DriverError
        Naming the input: a bad mass, stature or angle, a right-side point, a point out of reach.
    """
    p = posture
    _check(p)
    fwd, left, up = (np.asarray(v, dtype=float) for v in (p.forward, p.left, p.up))
    hip = np.asarray(p.hip_point, dtype=float)
    lengths = segment_lengths(p.stature)
    fractions = segment_fractions(data)
    mass = {n: fractions[n] * p.mass for n in fractions}
    cg_at = {n: data.segments[n][1] / 100.0 for n in data.segments}

    def volume(name: str) -> float:
        return mass[name if name in _AXIAL else f"left/{name}"] / SEGMENT_DENSITY[name]

    radius = {n: math.sqrt(volume(n) / (math.pi * lengths[n])) for n in ("upper_arm", "forearm", "thigh", "shank")}
    h = p.stature
    hip_offset = STATURE_FRACTIONS["hip_width"] * h / 2.0 - radius["thigh"]
    shoulder_offset = STATURE_FRACTIONS["shoulder_width"] * h / 2.0 - radius["upper_arm"]
    for offset, what in ((hip_offset, "hip width"), (shoulder_offset, "shoulder width")):
        if offset <= 0.0:
            raise DriverError("mass", f"{p.mass:.1f} kg gives limb segments wider than the {what} of a "
                                      f"{h:.2f} m stature")

    def line(angle: float) -> FloatArray:
        return np.asarray(math.cos(angle) * up - math.sin(angle) * fwd)

    shoulder_mid = hip + lengths["trunk"] * line(p.seat_back_angle)
    head_top = shoulder_mid + lengths["head_neck"] * line(
        p.seat_back_angle if p.neck_angle is None else p.neck_angle)
    segments = [
        _segment("trunk", hip, shoulder_mid, mass["trunk"], cg_at["trunk"], left, fwd, _wide_ellipsoid(
            volume("trunk"), lengths["trunk"], STATURE_FRACTIONS["shoulder_width"] * h)),
        _segment("head_neck", shoulder_mid, head_top, mass["head_neck"], cg_at["head_neck"], left, fwd,
                 _round_ellipsoid(volume("head_neck"), lengths["head_neck"])),
    ]
    for side, sign in (("left", 1.0), ("right", -1.0)):
        def mirror(q: FloatArray, sign: float = sign) -> FloatArray:
            return q if sign > 0 else q - 2.0 * float((q - hip) @ left) * left

        hip_joint = hip + sign * hip_offset * left
        shoulder = shoulder_mid + sign * shoulder_offset * left
        ankle = mirror(np.asarray(p.ankle_point, dtype=float))
        wrist = mirror(np.asarray(p.wrist_point, dtype=float))
        knee = _two_link(hip_joint, ankle, lengths["thigh"], lengths["shank"], up, fwd, "ankle_point",
                         f"{side} leg from hip joint to ankle")
        elbow = _two_link(shoulder, wrist, lengths["upper_arm"], lengths["forearm"], -up + 0.5 * sign * left, -fwd,
                          "wrist_point", f"{side} arm from shoulder joint to wrist")
        shank_dir = _unit(ankle - knee)
        foot_dir = up - (up @ shank_dir) * shank_dir
        foot_dir = _unit(foot_dir if np.linalg.norm(foot_dir) > 1e-9 else fwd)
        hand_end = wrist + lengths["hand"] * _unit(wrist - elbow)
        toe = ankle + lengths["foot"] * foot_dir
        for name, a, b in (("upper_arm", shoulder, elbow), ("forearm", elbow, wrist), ("thigh", hip_joint, knee),
                           ("shank", knee, ankle)):
            segments.append(_segment(f"{side}/{name}", a, b, mass[f"{side}/{name}"], cg_at[name], left, fwd,
                                     Cylinder(radius=radius[name], length=lengths[name])))
        segments.append(_segment(f"{side}/hand", wrist, hand_end, mass[f"{side}/hand"], cg_at["hand"], left, fwd,
                                 _flat_ellipsoid(volume("hand"), lengths["hand"])))
        segments.append(_segment(f"{side}/foot", ankle, toe, mass[f"{side}/foot"], cg_at["foot"], left, fwd,
                                 _wide_ellipsoid(volume("foot"), lengths["foot"], STATURE_FRACTIONS["foot_width"] * h)))
    return segments


def _segment(name: str, proximal: FloatArray, distal: FloatArray, mass: float, cg_fraction: float,
             lateral: FloatArray, fallback: FloatArray, shape: Cylinder | Ellipsoid) -> Segment:
    """A segment whose shape is centred on the CG at ``cg_fraction`` of the way from proximal to distal."""
    cg = proximal + cg_fraction * (distal - proximal)
    pose = Pose(_frame(distal - proximal, lateral, fallback), cg)
    return Segment(name, shape, pose, mass, np.array(proximal, dtype=float), np.array(distal, dtype=float), cg)


def _wide_ellipsoid(volume: float, length: float, width: float) -> Ellipsoid:
    """Ellipsoid of the given volume: semi_z = length/2 along the segment, semi_y = width/2, depth from the volume."""
    c, b = 0.5 * length, 0.5 * width
    return Ellipsoid(semi_x=volume / (4.0 / 3.0 * math.pi * b * c), semi_y=b, semi_z=c)


def _round_ellipsoid(volume: float, length: float) -> Ellipsoid:
    c = 0.5 * length
    a = math.sqrt(volume / (4.0 / 3.0 * math.pi * c))
    return Ellipsoid(semi_x=a, semi_y=a, semi_z=c)


def _flat_ellipsoid(volume: float, length: float) -> Ellipsoid:
    c = 0.5 * length
    a = math.sqrt(volume / (4.0 / 3.0 * math.pi * 2.0 * c))
    return Ellipsoid(semi_x=a, semi_y=2.0 * a, semi_z=c)
