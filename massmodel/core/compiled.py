"""The compiled (numba) twin of a numpy path: when "auto" picks it, and its lazy import.

Standard library only: numba is imported by the compiled module itself, and only when :func:`import_compiled` is
called. Used by :mod:`massmodel.core.batch` (the roll-up kernel) and :mod:`massmodel.uncertainty.montecarlo` (the
Monte Carlo sampler).
"""

from __future__ import annotations

import importlib
import importlib.util
import sys
from collections.abc import Callable
from types import ModuleType

__all__ = ["auto_kernel", "import_compiled"]


def import_compiled(name: str) -> ModuleType | None:
    """The module ``name`` (one that imports numba), imported now; None when numba is not installed or does not
    import (a broken numba/llvmlite install: the numpy path still works).

    An ImportError raised from massmodel itself (a missing module or name of this package) is a bug of the package
    and is raised, not taken for a missing numba, which would tell the user to install what is installed.
    """
    if importlib.util.find_spec("numba") is None:
        return None
    try:
        return importlib.import_module(name)
    except ImportError as exc:
        if (exc.name or "").split(".")[0] == "massmodel":
            raise
        return None


def auto_kernel(elements: int, module: str, load_at: int, loaded_at: int, available: Callable[[], bool]) -> str:
    """What "auto" picks for a job of ``elements`` (parts, or samples × parts): "numba" when ``available()`` and
    either the compiled ``module`` is already loaded in this process and ``elements`` ≥ ``loaded_at``, or
    ``elements`` ≥ ``load_at`` (enough to repay loading it); else "numpy"."""
    wanted = elements >= (loaded_at if module in sys.modules else load_at)
    return "numba" if wanted and available() else "numpy"
