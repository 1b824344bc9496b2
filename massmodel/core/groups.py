"""Part paths and groups: a part's path is its group names and its own name joined by '/'.

A group is a path prefix ending on a '/' boundary; the empty group '' holds every part. Used by the model
objects, the load cases and every selection by group (rules, reports, ballast slots).
"""

from __future__ import annotations

__all__ = ["in_group"]


def in_group(path: str, group: str) -> bool:
    """Whether ``path`` lies in ``group`` (a path prefix on '/' boundaries; '' contains everything)."""
    return group == "" or path == group or path.startswith(group + "/")
