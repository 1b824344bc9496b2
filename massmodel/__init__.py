"""massmodel: parametric 3-D mass models of vehicles.

The core (units, expressions, shapes, mass properties, model files, vehicle balance, report) needs numpy alone.
CAD export and packaging (OpenCascade through OCP), meshes (trimesh) and rendering (pyvista) load only when used.

Quick use::

    import massmodel as mm
    model = mm.load_model("parts_demo/brindlecombe_bl3.toml")
    total = model.mass_properties()
    balance = mm.static_balance(total, model.vehicle)

In a notebook, :func:`open_model` reads the file once and answers what-ifs with new objects (see
:mod:`massmodel.notebook` and docs/api.md)::

    car = mm.open_model("parts_demo/brindlecombe_bl3.toml")
    car.with_parameters(fuel_mass="10 kg").check_rules()

The notebook facade (``open_model``, ``point_mass``, ``OpenedModel``) is imported on first use.
"""

from __future__ import annotations

from typing import Any

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
from massmodel.report.views import Report, RuleResults
from massmodel.vehicle.balance import Balance, Bound, RuleResult, check_rules, static_balance
from massmodel.vehicle.transfer import TransferredLoads, load_transfer

__version__ = "0.1.0"

#: Names loaded on first use (module ``__getattr__``): name → module.
_LAZY = {"open_model": "massmodel.notebook", "point_mass": "massmodel.notebook", "OpenedModel": "massmodel.notebook"}


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'massmodel' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


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
    "OpenedModel",
    "Pose",
    "Report",
    "RotationKind",
    "Rule",
    "RuleCheck",
    "RuleResult",
    "RuleResults",
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
    "open_model",
    "point_mass",
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
