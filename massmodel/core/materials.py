"""Materials: a density (kg/m³) with an optional band and its source.

The built-in library lives in ``massmodel/data/materials.toml``; a model file adds its own materials. There is no
default material: a part without a mass source is an error.
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from types import MappingProxyType

from massmodel.core.errors import UserError

__all__ = ["Material", "MaterialError", "builtin_materials", "material_from_fields"]


class MaterialError(UserError, ValueError):
    """A material entry that cannot be used; ``field`` names the offending field when there is one."""

    def __init__(self, message: str, field: str | None = None) -> None:
        super().__init__(message)
        self.field = field


@dataclass(frozen=True, slots=True)
class Material:
    """A material.

    Parameters
    ----------
    key : str
        Identifier used in model files (snake_case).
    name : str
        Human-readable name.
    density : float
        Nominal density, kg/m³.
    density_min, density_max : float or None
        Band given by the source (e.g. ASTM B777 class limits), kg/m³.
    source : str
        Where the numbers come from.
    flag : str
        Provenance flag: "R" read in the source, "R2" secondary source, "M" from memory, "user" from a model file.
    """

    key: str
    name: str
    density: float
    density_min: float | None = None
    density_max: float | None = None
    source: str = ""
    flag: str = ""

    def __post_init__(self) -> None:
        for label, value in (("density", self.density), ("density_min", self.density_min),
                             ("density_max", self.density_max)):
            if value is not None and not (value > 0.0 and value < float("inf")):
                raise MaterialError(f"material '{self.key}': {label} must be a positive finite density", label)
        lo = self.density_min if self.density_min is not None else self.density
        hi = self.density_max if self.density_max is not None else self.density
        if not lo <= self.density <= hi:
            if self.density_min is not None and self.density_max is not None:
                raise MaterialError(
                    f"material '{self.key}': density {self.density:g} kg/m^3 lies outside its band "
                    f"[{lo:g}, {hi:g}] kg/m^3",
                    "density",
                )
            # one bound given: that bound is on the wrong side of the nominal density
            name, bound, side = ("density_min", lo, "above") if self.density_min is not None else (
                "density_max", hi, "below")
            raise MaterialError(
                f"material '{self.key}': density {self.density:g} kg/m^3 lies outside its band "
                f"({name} {bound:g} kg/m^3 is {side} it)",
                name,
            )

    @property
    def band(self) -> tuple[float, float]:
        """(lowest, highest) density, kg/m³; the nominal value twice when no band is given."""
        lo = self.density_min if self.density_min is not None else self.density
        hi = self.density_max if self.density_max is not None else self.density
        return lo, hi


def material_from_fields(key: str, fields: Mapping[str, object], parse_density: object, flag: str) -> Material:
    """Build a :class:`Material` from a TOML table.

    Parameters
    ----------
    key : str
        Material id.
    fields : mapping
        The table: ``density`` (required), ``density_min``, ``density_max``, ``name``, ``source``, ``flag``.
    parse_density : callable
        ``parse_density(field_name, value) -> float`` converting a value with units to kg/m³ (raises on error).
    flag : str
        Default provenance flag.
    """
    known = {"name", "density", "density_min", "density_max", "source", "flag"}
    unknown = set(fields) - known
    if unknown:
        raise MaterialError(
            f"material '{key}': unknown field(s) {sorted(unknown)}; known: {sorted(known)}", sorted(unknown)[0]
        )
    if "density" not in fields:
        raise MaterialError(f"material '{key}': field 'density' is missing", "density")
    conv = parse_density  # callable

    def opt(name: str) -> float | None:
        return conv(name, fields[name]) if name in fields else None  # type: ignore[operator]

    return Material(
        key=key,
        name=str(fields.get("name", key)),
        density=conv("density", fields["density"]),  # type: ignore[operator]
        density_min=opt("density_min"),
        density_max=opt("density_max"),
        source=str(fields.get("source", "")),
        flag=str(fields.get("flag", flag)),
    )


@lru_cache(maxsize=1)
def builtin_materials() -> Mapping[str, Material]:
    """The library shipped with massmodel (``massmodel/data/materials.toml``), read once."""
    from .expr import evaluate
    from .units import DENSITY

    # the data file ships inside the package (package-data in pyproject.toml); a plain path read keeps
    # importlib.resources (and zipfile) out of the start-up of every command
    text = (Path(__file__).parent / "data" / "materials.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)

    def density(name: str, value: object) -> float:
        q = evaluate(value, {})  # type: ignore[arg-type]
        if q.dim != DENSITY:
            raise MaterialError(f"built-in material field {name}: {value!r} is not a density")
        return q.value

    out = {key: material_from_fields(key, table, density, flag="R") for key, table in data.items()}
    return MappingProxyType(out)
