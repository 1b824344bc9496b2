"""Merging a model file that ``extends`` another into one data tree.

The child's tables are merged over the base's before anything is evaluated; tables that came from the base file
are :class:`SourcedTable` objects carrying its name (outside the table's keys, so no key a user writes can be taken
for it), so that errors and geometry paths refer to the file that holds them.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from .reader import ModelFileError, SourcedTable, read_toml, table_source
from .uncertainty import merge_uncertainty

__all__ = ["resolve_extends", "LIST_SECTIONS", "SourcedTable", "table_source"]


LIST_SECTIONS = ("group", "part", "slot", "rule", "case", "driver", "allowed_contact")


_TABLE_SECTIONS = {"model": "must be a table", "parameters": "must be a table of name = value", "materials": "must be a table",
                   "units": "must be a table", "vehicle": "must be a table"}


def _check_section_types(data: dict[str, Any], label: str) -> None:
    """The sections that merging reads must have the right TOML type (the same messages as the loader's)."""
    for key, message in _TABLE_SECTIONS.items():
        if key in data and not isinstance(data[key], dict):
            raise ModelFileError(label, f"[{key}]", None, message)
    for key in LIST_SECTIONS:
        if key in data and not isinstance(data[key], list):
            raise ModelFileError(label, f"[[{key}]]", None, f"write each entry as a [[{key}]] table")


def resolve_extends(data: dict[str, Any], label: str, base_dir: Path, chain: tuple[Path, ...]) -> dict[str, Any]:
    """Merge a model that ``extends`` another file into one data tree.

    The child's parameters override the base's; its [vehicle] and [chassis] replace the base's; materials must not clash; its
    groups, parts, slots and rules are added after the base's; ``remove`` (in [model]) drops base parts and groups
    by path (a group path removes everything in it). [units] must agree, so that bare numbers keep their meaning.
    """
    head = data.get("model", {})
    if not isinstance(head, dict):
        return data
    item = "[model]"
    if "extends" not in head:
        if "remove" in head:
            raise ModelFileError(label, item, "remove", "only a model that 'extends' a base file can remove parts")
        return data
    ref = head["extends"]
    if not isinstance(ref, str):
        raise ModelFileError(label, item, "extends", "expected the path of the base model file")
    base_path = base_dir / ref
    if base_path.resolve() in chain or len(chain) > 8:
        raise ModelFileError(label, item, "extends", f"'{ref}' extends itself (directly or through other files)")
    base = resolve_extends(read_toml(base_path, str(base_path), (label, item, "extends")), str(base_path),
                            base_path.parent, chain + (base_path.resolve(),))
    _check_section_types(data, label)
    _check_section_types(base, str(base_path))
    for key in LIST_SECTIONS:
        base[key] = [SourcedTable(t, str(base_path)) if isinstance(t, dict) and not isinstance(t, SourcedTable)
                     else t for t in base.get(key, [])]
    if data.get("units", base.get("units", {})) != base.get("units", {}):
        raise ModelFileError(label, "[units]", None, f"must be the same as in the base file {base_path} (or absent)")
    remove = head.get("remove", [])
    if not isinstance(remove, list) or not all(isinstance(r, str) for r in remove):
        raise ModelFileError(label, item, "remove", "expected a list of part or group paths of the base model")
    merged: dict[str, Any] = {k: v for k, v in base.items() if k not in ("model",)}
    base_head = dict(base.get("model", {}))
    merged_rulebook: str | None
    if "rulebook" in base_head and "rulebook" not in head:
        merged_rulebook = str((base_path.parent / str(base_head["rulebook"])).resolve())
    else:
        merged_rulebook = head.get("rulebook")
    merged["model"] = {k: v for k, v in head.items() if k not in ("extends", "remove", "rulebook")}
    if merged_rulebook is not None:
        merged["model"]["rulebook"] = merged_rulebook
    merged["parameters"] = {**base.get("parameters", {}), **data.get("parameters", {})}
    if "vehicle" in data:
        merged["vehicle"] = data["vehicle"]
    if "chassis" in data:  # like [vehicle], the child's [chassis] replaces the base's
        merged["chassis"] = data["chassis"]
    mats = dict(base.get("materials", {}))
    for key, value in data.get("materials", {}).items():
        if key in mats:
            raise ModelFileError(label, f"material '{key}'", None, f"already defined in the base file {base_path}")
        mats[key] = value
    merged["materials"] = mats
    for key in LIST_SECTIONS:
        merged[key] = list(base.get(key, [])) + list(data.get(key, []))
    for path in remove:
        before = len(merged["part"]) + len(merged["group"]) + len(merged["driver"])
        for key in ("part", "group", "driver"):
            merged[key] = [t for t in merged[key]
                           if not (isinstance(t, dict) and isinstance(t.get("path"), str)
                                   and (t["path"] == path or t["path"].startswith(path + "/")))]
        if len(merged["part"]) + len(merged["group"]) + len(merged["driver"]) == before:
            raise ModelFileError(label, item, "remove", f"the base model has no part or group '{path}'")
    if "uncertainty" in base or "uncertainty" in data:
        merged["uncertainty"] = merge_uncertainty(base.get("uncertainty"), data.get("uncertainty"), remove,
                                                  str(base_path))
    for key in data:
        if key not in merged:
            merged[key] = data[key]
    return merged
