"""massmodel.core.compiled: when "auto" picks the compiled twin of a numpy path, and its lazy import.

Expected values are the rules of the module, written out here (thresholds and which import errors mean "no numba").
"""

from __future__ import annotations

import sys
import types

import pytest

from massmodel.core import batch
from massmodel.core.compiled import auto_kernel, import_compiled


def test_auto_picks_by_size_and_by_what_is_loaded(monkeypatch: pytest.MonkeyPatch) -> None:
    name = "massmodel_test_compiled_twin"
    monkeypatch.delitem(sys.modules, name, raising=False)
    yes, no = (lambda: True), (lambda: False)
    assert auto_kernel(999, name, 1000, 10, yes) == "numpy"  # not loaded: only from load_at
    assert auto_kernel(1000, name, 1000, 10, yes) == "numba"
    assert auto_kernel(10**9, name, 1000, 10, no) == "numpy"  # not available: never
    monkeypatch.setitem(sys.modules, name, types.ModuleType(name))  # loaded: from loaded_at
    assert auto_kernel(10, name, 1000, 10, yes) == "numba"
    assert auto_kernel(9, name, 1000, 10, yes) == "numpy"


def test_a_missing_third_party_module_means_no_compiled_path(monkeypatch: pytest.MonkeyPatch) -> None:
    pytest.importorskip("numba")  # find_spec("numba") must succeed for the import to be tried
    # an ImportError naming a module outside massmodel (numba or llvmlite broken): None, the numpy path runs
    monkeypatch.setitem(sys.modules, "llvmlite_test_missing", None)
    assert import_compiled("llvmlite_test_missing") is None


@pytest.mark.parametrize("name", ["massmodel.core.kernels", "massmodel.uncertainty.sampler"])
def test_an_import_error_inside_massmodel_is_raised(monkeypatch: pytest.MonkeyPatch, name: str) -> None:
    pytest.importorskip("numba")
    monkeypatch.setitem(sys.modules, name, None)  # importing it now raises ImportError naming it
    with pytest.raises(ImportError) as raised:
        import_compiled(name)
    assert raised.value.name == name


def test_the_roll_up_kernel_does_not_hide_a_broken_module(monkeypatch: pytest.MonkeyPatch) -> None:
    pytest.importorskip("numba")
    monkeypatch.setitem(sys.modules, "massmodel.core.kernels", None)
    batch._numba_kernel.cache_clear()
    try:
        with pytest.raises(ImportError) as raised:
            batch.kernel_for(10, "numba")
        assert not isinstance(raised.value, batch.BatchError)
    finally:
        batch._numba_kernel.cache_clear()
