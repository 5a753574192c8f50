"""fringe.io.forked: a call in a forked child gives what the same call gives in-process.

Consistency checks (no outside source): the value, the exception and the in-process
fallback (``FRINGE_WORKERS=1``) must match a plain call.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from fringe.io.forked import ForkedCall, forking_enabled
from fringe.model.errors import FringeError, FringeInputError


def _values(n: int, *, scale: float = 1.0) -> dict:
    return {"pid": os.getpid(), "array": np.arange(n) * scale}


def _fails(message: str):
    raise FringeInputError(message)


class _Unpicklable(Exception):
    def __reduce__(self):
        raise TypeError("no pickling")


def _fails_unpicklably():
    raise _Unpicklable("lock held")


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork")
def test_value_comes_back_from_a_child_process(monkeypatch):
    monkeypatch.delenv("FRINGE_WORKERS", raising=False)
    assert forking_enabled()
    out = ForkedCall(_values, 5, scale=2.0).result()
    assert out["pid"] != os.getpid()  # it really ran elsewhere
    np.testing.assert_array_equal(out["array"], np.arange(5) * 2.0)


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork")
def test_child_exception_is_raised_by_result(monkeypatch):
    monkeypatch.delenv("FRINGE_WORKERS", raising=False)
    call = ForkedCall(_fails, "`x` must be positive; got -1")
    with pytest.raises(FringeInputError, match="`x` must be positive; got -1"):
        call.result()
    with pytest.raises(FringeError, match="_Unpicklable: lock held"):
        ForkedCall(_fails_unpicklably).result()


def test_workers_1_runs_in_process(monkeypatch):
    monkeypatch.setenv("FRINGE_WORKERS", "1")
    assert not forking_enabled()
    out = ForkedCall(_values, 3).result()
    assert out["pid"] == os.getpid()
    np.testing.assert_array_equal(out["array"], np.arange(3))
    with pytest.raises(FringeInputError, match="inline"):
        ForkedCall(_fails, "inline").result()


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork")
def test_prefetched_helium_properties_equal_direct_ones(monkeypatch):
    # the forked prefetch must hand back exactly what CoolProp gives in-process
    import fringe.io.prefetch as pf
    import fringe.physics.quench as q

    monkeypatch.delenv("FRINGE_WORKERS", raising=False)
    direct = q.lookup_helium_properties(291.0, 100e3, 101325.0)
    monkeypatch.setattr(pf, "sys", type("S", (), {"modules": {}})())  # as if not imported yet
    pf.prefetch_helium_properties(291.0, 100e3, 101325.0)
    assert q.helium_properties_expected(291.0, 100e3, 101325.0)
    q.helium_properties.cache_clear()
    assert q.helium_properties(291.0, 100e3, 101325.0) == direct
    assert not q.helium_properties_expected(291.0, 100e3, 101325.0)


def test_expected_helium_properties_are_collected_once(monkeypatch):
    # a value promised by expect_helium_properties replaces the CoolProp look-up once;
    # a promise that fails falls back to the look-up here
    import fringe.physics.quench as q

    key = (290.5, 100.5e3, 101325.0)
    direct = q.lookup_helium_properties(*key)
    calls = []
    q.helium_properties.cache_clear()
    q.expect_helium_properties(*key, lambda: calls.append(1) or direct)
    assert q.helium_properties_expected(*key)
    assert q.helium_properties(*key) is direct and calls == [1]
    assert not q.helium_properties_expected(*key)

    def broken():
        raise RuntimeError("worker died")

    q.helium_properties.cache_clear()
    q.expect_helium_properties(*key, broken)
    assert q.helium_properties(*key) == direct
    q.helium_properties.cache_clear()


def test_no_fork_while_other_threads_run(monkeypatch):
    # a thread holding a lock at the fork could hang the child: run in-process instead
    import threading

    monkeypatch.delenv("FRINGE_WORKERS", raising=False)
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        assert not forking_enabled()
        assert ForkedCall(_values, 2).result()["pid"] == os.getpid()
    finally:
        stop.set()
        t.join()


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork")
def test_report_prefetch_is_the_lookup_the_budget_makes(monkeypatch, demo_site):
    # the prefetch must ask for exactly the key quench_budget later asks for, or the
    # CoolProp import would run twice (once wasted in the child)
    import fringe.io.prefetch as pf
    import fringe.physics.quench as q
    from fringe.analysis.quench import budget_for_site

    monkeypatch.delenv("FRINGE_WORKERS", raising=False)
    monkeypatch.setattr(pf, "sys", type("S", (), {"modules": {}})())  # as if not imported yet
    q._EXPECTED.clear()
    q.helium_properties.cache_clear()
    pf.prefetch_quench_data(demo_site)
    assert len(q._EXPECTED) == 1
    budget_for_site(demo_site, demo_site.quench[0])
    assert not q._EXPECTED  # collected by the budget's own look-up
