"""Safety cautions shown in reports and the README.

massmodel computes; it does not approve. These lines go with every report whose job can hurt someone.
"""

from __future__ import annotations

__all__ = ["GENERAL", "BALLAST", "MACHINING", "HANDLING", "LIFTING", "SCALES", "CHASSIS", "for_report"]

GENERAL = (
    "massmodel results are engineering estimates. The series' technical regulations, the scrutineers' "
    "measurements and licensed engineering practice decide compliance and safety."
)
BALLAST = (
    "Ballast must be fixed so that it cannot come loose: bolted through primary structure with fasteners and "
    "locking as the series' regulations require, sealed where they require it, and inspected after every event."
)
MACHINING = (
    "Machining or grinding tungsten heavy alloy makes dust that is a respiratory hazard: use wet machining, "
    "extraction and respiratory protection, and follow the supplier's safety data sheet."
)
HANDLING = "Heavy blocks need safe handling: lifting aids, two people where needed, and protective footwear."
LIFTING = (
    "Lifting a car (axle-lift, pendulum or corner-weight work): block the suspension, secure the car against "
    "rolling, use rated lifting equipment and stands, never work under a car held only by a jack, keep people clear."
)
SCALES = "Scales and pads: calibrated, on level ground, loaded and unloaded smoothly, car secured against rolling."
CHASSIS = (
    "Roll, load transfer, aero and yaw figures are linear, steady-state estimates from a few inputs (rigid chassis, "
    "linear springs and tyres, small angles): do not trust them near the grip limit or to judge whether a car is "
    "safe to drive. Track testing and the team's own vehicle simulation decide set-up and handling; change set-up "
    "in small steps and check it on track."
)


def for_report(*topics: str) -> list[str]:
    """Caution lines for the given topics ('ballast', 'machining', 'handling', 'lifting', 'scales', 'chassis'),
    general first."""
    table = {"ballast": BALLAST, "machining": MACHINING, "handling": HANDLING, "lifting": LIFTING, "scales": SCALES,
             "chassis": CHASSIS}
    return [GENERAL] + [table[t] for t in topics]
