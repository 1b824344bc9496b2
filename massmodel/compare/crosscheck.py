"""The check of a model against a CAD estimate: the comparison as declared and, when it fails, its diagnosis.

Joins :mod:`massmodel.compare.check` (item-by-item comparison against tolerances) and
:mod:`massmodel.compare.diagnose` (the convention mix-ups that would explain a failure); neither imports this module.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from massmodel.core.model import Model

from .check import Comparison, Tolerances, compare, model_side
from .diagnose import Diagnosis, diagnose
from .estimate import WHOLE, Estimate, normalise

__all__ = ["CHECK_FORMAT", "FRAME", "EstimateCheck", "check_estimate"]


FRAME = ("model axes and model origin; each tensor about its item's CG with axes parallel to the model axes; "
         "off-diagonal I_xy = -integral(x*y dm) (tensor / negative product convention); differences are "
         "estimate - model")


@dataclass(frozen=True, slots=True, eq=False)
class EstimateCheck:
    """The whole job: the comparison as declared and, when it fails, the diagnosis (see :mod:`massmodel.compare.diagnose`).

    ``passed`` is the comparison *as declared*: an explained mix-up still fails, since the file is wrong as it
    stands.
    """

    model: Model
    estimate: Estimate
    selection: str
    as_declared: Comparison
    diagnosis: Diagnosis | None

    @property
    def passed(self) -> bool:
        return self.as_declared.passed

    @property
    def cautions(self) -> list[str]:
        """The general caution, and the ballast one when the compared parts include ballast in a slot."""
        from massmodel.core import cautions

        ballast = any(c.slot for c in self.model.select([self.selection]))
        return cautions.for_report("ballast") if ballast else cautions.for_report()

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (SI, units in the keys)."""
        est = self.estimate
        return {
            "format": CHECK_FORMAT,
            "model": self.model.name,
            "model_source": self.model.source,
            "selection": self.selection or WHOLE,
            "estimate": {"source": est.source, "kind": est.kind, "description": est.description,
                         "declared": est.conventions.to_dict(), "open_to_doubt": sorted(est.doubtful),
                         "notes": list(est.notes)},
            "frame": FRAME,
            "tolerances": self.as_declared.tolerances.to_dict(),
            "passed": self.passed,
            "as_declared": self.as_declared.to_dict(),
            "diagnosis": None if self.diagnosis is None else self.diagnosis.to_dict(),
            "cautions": self.cautions,
        }


#: Format tag of the JSON output of :meth:`EstimateCheck.to_dict`.
CHECK_FORMAT = "massmodel-crossweigh/1"


def check_estimate(model: Model, estimate: Estimate, selection: str = "", tol: Tolerances | None = None,
                   *, diagnose_failures: bool = True, pairs: bool = True) -> EstimateCheck:
    """Compare the model (or its group ``selection``) with an estimate; diagnose a failure.

    Raises
    ------
    EstimateError, ValueError
        For items or a selection naming nothing in the model, and impossible tensors as declared.
    """
    tol = tol or Tolerances()
    model_props = model_side(model, estimate, selection)
    raw = compare(estimate.groups, model_props, normalise(estimate), tol)
    diagnosis = diagnose(estimate, model_props, raw, tol, pairs=pairs) if diagnose_failures and not raw.passed else None
    return EstimateCheck(model, estimate, selection, raw, diagnosis)
