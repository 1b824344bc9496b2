"""Load cases: named running conditions of one model (e.g. qualifying fuel, full tank, driver out).

A load case re-evaluates the model file with parameter overrides and a selection of parts:

- ``overrides`` replace parameter definitions (after the file's own, before the command line's ``--set``);
- ``switch_off`` leaves parts or whole groups out;
- ``switch_on`` brings in parts or groups that the file marks ``optional = true`` (left out of the base model).

The model as the file describes it, with no case, is the case named ``"base"`` (:data:`BASE_CASE`). A rule with a
``case`` field applies only in the cases it names (``"base"`` included); a rule without one applies in the base and in
every case whose ``general_rules`` is true. The model-file syntax is in docs/modelfile.md ("Load cases").

This module holds the plain data and the selection rules; the file loader (:mod:`massmodel.modelfile.loader`) builds one
:class:`~massmodel.core.model.Model` per case with them, and :func:`massmodel.vehicle.balance.check_rules_in_cases`
evaluates every rule in its case. It imports no other model module (the model refers to its load cases).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Protocol

from .groups import in_group

__all__ = ["BASE_CASE", "LoadCase", "case_includes", "rule_applies"]

BASE_CASE = "base"


@dataclass(frozen=True, slots=True)
class LoadCase:
    """One named running condition of a model file.

    Parameters
    ----------
    name : str
        Unique name (letters, digits, ``_ . -``), used by ``--case NAME`` and by rules' ``case`` field.
    description : str
        Free text shown beside the name.
    overrides : tuple of (str, str)
        Parameter name → expression text (not evaluated), in file order.
    switch_off : tuple of str
        Part or group paths left out in this case.
    switch_on : tuple of str
        Part or group paths, marked optional in the file, brought in for this case.
    general_rules : bool
        Whether rules without a ``case`` field are checked in this case.
    file : str
        The file the case was defined in (for messages).
    """

    name: str
    description: str = ""
    overrides: tuple[tuple[str, str], ...] = ()
    switch_off: tuple[str, ...] = ()
    switch_on: tuple[str, ...] = ()
    general_rules: bool = True
    file: str = ""

    @property
    def override_map(self) -> dict[str, str]:
        """The parameter overrides as a dict (name → expression text)."""
        return dict(self.overrides)


def case_includes(path: str, optional: bool, case: LoadCase | None) -> bool:
    """Whether the part ``path`` belongs to the model of ``case`` (None: the base model).

    An optional part is in only when a ``switch_on`` path contains it; any part is out when a ``switch_off`` path
    contains it (switching off wins, so a case may bring in a group but leave one of its parts out).
    """
    if case is None:
        return not optional
    if any(in_group(path, g) for g in case.switch_off):
        return False
    return not optional or any(in_group(path, g) for g in case.switch_on)


class _CaseBound(Protocol):
    """Anything limited to some load cases (a `massmodel.core.model.Rule`): the case names, empty for all."""

    @property
    def cases(self) -> tuple[str, ...]: ...


def rule_applies(rule: _CaseBound, case: LoadCase | None) -> bool:
    """Whether ``rule`` is checked in ``case`` (None: the base model)."""
    name = BASE_CASE if case is None else case.name
    if rule.cases:
        return name in rule.cases
    return True if case is None else case.general_rules


def check_cases(cases: Sequence[LoadCase], paths: Iterable[str], optional: Iterable[str]) -> list[tuple[LoadCase, str, str]]:
    """Problems with the part selections of ``cases``: (case, field, message) for each bad path.

    Parameters
    ----------
    cases : sequence of LoadCase
    paths : iterable of str
        Every part path the file defines (optional ones included).
    optional : iterable of str
        The paths of the optional parts.
    """
    all_paths = list(paths)
    optional_paths = set(optional)
    problems = []
    for case in cases:
        for key, wanted in (("switch_off", case.switch_off), ("switch_on", case.switch_on)):
            for g in wanted:
                members = [p for p in all_paths if in_group(p, g)]
                if not members:
                    problems.append((case, key, f"no part or group '{g}' in the model"))
                elif key == "switch_on" and not any(p in optional_paths for p in members):
                    problems.append((case, key, f"'{g}' is in the base model already; mark its [[part]] or [[group]] "
                                                "with optional = true to switch it on only in some cases"))
    return problems

