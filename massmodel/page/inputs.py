"""What a page section is built from (:class:`PageInputs`) and what it gives (:class:`Section`)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

__all__ = ["PageInputs", "Section"]


@dataclass(frozen=True)
class Section:
    """One section of the page: an anchor id, a title and its HTML body."""

    key: str
    title: str
    body: str


@dataclass(frozen=True)
class PageInputs:
    """What the page shows.

    Attributes
    ----------
    reports : mapping of str to dict
        Load case → the JSON report of that case's model (:func:`massmodel.report.summary.build_report`), base first.
    source : str
        The model file.
    pictures : list of (str, str, str)
        (base64 PNG, alt text, caption) of each picture.
    view3d : bool
        Whether the page holds a 3-D view (False: the model has no shaped part).
    view_groups : list of (name, colour, mass kg, parts)
        The groups the 3-D view can hide.
    extras : mapping
        Results of other commands that have a section of their own (keyed by section).
    notes : list of str
        Lines about what the page could not include, shown in the header.
    """

    reports: Mapping[str, dict[str, Any]]
    source: str
    pictures: list[tuple[str, str, str]] = field(default_factory=list)
    view3d: bool = False
    view_groups: list[tuple[str, str, float, int]] = field(default_factory=list)
    extras: Mapping[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    @property
    def base(self) -> dict[str, Any]:
        return next(iter(self.reports.values()))
