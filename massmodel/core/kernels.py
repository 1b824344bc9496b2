"""The compiled one-pass roll-up kernel (numba), used by :mod:`massmodel.core.batch` when it pays off.

This module imports numba, so nothing imports it at start-up: :func:`massmodel.core.batch.kernel_for` loads it
lazily, only when the compiled kernel repays numba's one-time cost and only when numba is importable; otherwise the
numpy path of :mod:`massmodel.core.batch` runs. Both give the same results to round-off (tested to 1e-12 relative
in ``tests/test_engine.py``).

Nothing is written twice: the kernel is :func:`massmodel.core.closed_forms.placed_sums_loop` and the closed forms it
calls are the ``_form_*`` functions of :mod:`massmodel.core.closed_forms`, the ones the numpy path evaluates on
arrays; here they are compiled. The loop is compiled with the closed forms bound to their compiled versions; its
machine code is cached on disk by numba beside ``closed_forms.py`` and invalidated when that file changes (the
first call on a machine compiles, about 1.5 s here; later processes load it in about 0.7 s).
"""

from __future__ import annotations

import types

import numba

from . import closed_forms

__all__ = ["placed_sums"]

# Reassociation lets the sums run in SIMD lanes (round-off of the same order as numpy's pairwise sums); NaN and
# infinity keep their meaning, so a NaN rotation still fails the orthogonality test.
_FAST = {"reassoc", "contract", "nsz", "arcp"}

_forms = {f.__name__: numba.njit(inline="always", fastmath=_FAST)(f) for f in closed_forms.FORMS.values()}
_loop = closed_forms.placed_sums_loop
_compiled_globals = {**_loop.__globals__, **_forms}
placed_sums = numba.njit(cache=True, nogil=True, boundscheck=False, fastmath=_FAST)(
    types.FunctionType(_loop.__code__, _compiled_globals, _loop.__name__, _loop.__defaults__, _loop.__closure__)
)
