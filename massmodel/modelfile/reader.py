"""The file layer of model files: the error type, reading TOML, and merging a model that ``extends`` another.

Split from :mod:`massmodel.modelfile.loader` (which re-exports :class:`ModelFileError`), so that the helpers of the
loader can raise the error without importing the loader itself.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

try:  # tomli is the standard library's tomllib compiled (about 4x faster on a 10,000-part file); same results
    from tomli import TOMLDecodeError
    from tomli import loads as toml_loads
except ImportError:  # pragma: no cover - tomli is a dependency, tomllib the fallback
    from tomllib import TOMLDecodeError  # type: ignore[assignment]
    from tomllib import loads as toml_loads

__all__ = ["ModelFileError", "read_toml", "parse_toml", "resolve_extends", "LIST_SECTIONS", "SOURCE_KEY"]


class ModelFileError(ValueError):
    """A problem in a model file, naming the file, the item and the field (one line of text)."""

    def __init__(self, file: str, item: str | None, field: str | None, message: str) -> None:
        message = " ".join(line.strip() for line in message.splitlines() if line.strip())
        self.file = file
        self.item = item
        self.field = field
        self.message = message
        where = file
        if item:
            where += f": {item}"
        if field:
            where += f", field '{field}'"
        super().__init__(f"{where}: {message}")


def parse_toml(text: str, label: str) -> dict[str, Any]:
    """Parse TOML text; a syntax error becomes a :class:`ModelFileError` naming ``label`` and the line."""
    try:
        return toml_loads(text)
    except TOMLDecodeError as exc:
        raise ModelFileError(label, None, None, f"not valid TOML: {exc}") from None


def read_toml(path: Path, label: str, referrer: tuple[str, str, str] | None = None) -> dict[str, Any]:
    """Parse a TOML file. A file that cannot be read is blamed on ``referrer`` (file, item, field) when given:
    the mistake is then the reference (e.g. ``rulebook = "..."``), not the missing file."""
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        reason = exc.strerror or str(exc)
        if referrer is not None:
            raise ModelFileError(*referrer, f"cannot read '{path}' ({reason})") from None
        raise ModelFileError(label, None, None, f"cannot read the file ({reason})") from None
    return parse_toml(text, label)


LIST_SECTIONS = ("group", "part", "slot", "rule", "case", "driver", "allowed_contact")
SOURCE_KEY = "__file__"  # which file a merged table came from (set by resolve_extends, removed before use)


_TABLE_SECTIONS = {"parameters": "must be a table of name = value", "materials": "must be a table",
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
        for table in base.get(key, []):
            if isinstance(table, dict):
                table.setdefault(SOURCE_KEY, str(base_path))
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
    for key in data:
        if key not in merged:
            merged[key] = data[key]
    return merged
