"""massmodel: parametric 3-D mass models of vehicles.

The core (units, expressions, shapes, mass properties, model files, vehicle balance, report) needs numpy alone.
CAD export and packaging (cadquery/OCP), meshes (trimesh) and rendering (pyvista) load only when used.

Quick use::

    import massmodel as mm
    model = mm.load_model("parts_demo/car.toml")
    total = model.mass_properties()
    balance = mm.static_balance(total, model.vehicle)
"""

from __future__ import annotations

from massmodel.core.frames import Pose, RotationKind, reflection_across_plane, rotation_from_sequence
from massmodel.core.loadcases import LoadCase
from massmodel.core.massprops import (
    InertiaError,
    MassProperties,
    combine,
    combine_arrays,
    inertia_about_point,
    inertia_in_axes,
    principal_axes,
    products_positive,
    radii_of_gyration,
    transform,
    translate,
    validate_inertia,
)
from massmodel.core.materials import Material, builtin_materials
from massmodel.core.model import (
    AllowedContact,
    Component,
    Cutout,
    MassSource,
    Maturity,
    Model,
    Rule,
    RuleCheck,
    Slot,
    Vehicle,
)
from massmodel.modelfile.loader import (
    ModelFileError,
    ModelSource,
    build_model,
    load_case_models,
    load_model,
    loads_model,
    read_source,
    source_from_text,
)
from massmodel.report.summary import build_report, format_report
from massmodel.vehicle.balance import Balance, Bound, RuleResult, check_rules, static_balance
from massmodel.vehicle.transfer import TransferredLoads, load_transfer

__version__ = "0.1.0"

__all__ = [
    "AllowedContact",
    "Balance",
    "Bound",
    "Component",
    "Cutout",
    "InertiaError",
    "LoadCase",
    "MassProperties",
    "MassSource",
    "Material",
    "Maturity",
    "Model",
    "ModelFileError",
    "ModelSource",
    "Pose",
    "RotationKind",
    "Rule",
    "RuleCheck",
    "RuleResult",
    "Slot",
    "TransferredLoads",
    "Vehicle",
    "build_model",
    "build_report",
    "builtin_materials",
    "check_rules",
    "combine",
    "combine_arrays",
    "format_report",
    "inertia_about_point",
    "inertia_in_axes",
    "load_case_models",
    "load_model",
    "load_transfer",
    "loads_model",
    "principal_axes",
    "products_positive",
    "radii_of_gyration",
    "read_source",
    "reflection_across_plane",
    "rotation_from_sequence",
    "source_from_text",
    "static_balance",
    "transform",
    "translate",
    "validate_inertia",
]
