"""The per-fluid saturation memo of orcscreen.properties stays bounded (issue 15: at most 1 MiB per
fluid) and never changes a result.

References: the bound itself is the project's requirement (1 MiB per fluid); memory is measured
with Python's tracemalloc. Saturated states are checked against CoolProp's high-level PropsSI,
which, with CoolProp loaded the way orcscreen loads it (no superancillaries; tests/conftest.py),
solves the phase equilibrium iteratively: an algorithm independent of the Chebyshev curves that
sat_T evaluates. 1e-9 relative is inside their agreement at reduced temperatures 0.5-0.97
(test_saturation.py checks 1e-8 over the whole range).
"""

from __future__ import annotations

import gc
import tracemalloc

import pytest

from orcscreen import properties as P

MiB = 1024 * 1024
NAME = "R245fa"
FIELDS = (("p_Pa", "P", 0.0), ("hL", "H", 0.0), ("hV", "H", 1.0), ("sL", "S", 0.0), ("sV", "S", 1.0),
          ("vL", "D", 0.0), ("vV", "D", 1.0))


def _temperatures(fluid, n):
    """n distinct temperatures [K] between reduced temperatures 0.5 and 0.97, each a new float."""
    lo, hi = 0.5 * fluid.T_crit_K, 0.97 * fluid.T_crit_K
    return (lo + (hi - lo) * i / n for i in range(n))


def _coolprop(T_K, out, q):
    from CoolProp.CoolProp import PropsSI

    value = PropsSI(out, "T", T_K, "Q", q, NAME)
    return 1.0 / value if out == "D" else value


def test_memo_of_one_fluid_stays_within_its_entries_and_one_mebibyte():
    """Five times the bound in distinct temperatures through a fresh fluid: the memo never holds
    more than SAT_MEMO_ENTRIES states, and the memory it holds at the end, and at its largest on
    the way (tracemalloc), stays within 1 MiB (the issue's bound)."""
    fluid = P.Fluid(NAME)
    fluid.sat_T(0.6 * fluid.T_crit_K)  # builds the curves before the measurement
    fluid._sat_cache.clear()
    gc.collect()
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        tracemalloc.reset_peak()
        largest = 0
        for T in _temperatures(fluid, 5 * P.SAT_MEMO_ENTRIES):
            fluid.sat_T(T)
            largest = max(largest, len(fluid._sat_cache))
        gc.collect()
        held, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert largest == len(fluid._sat_cache) == P.SAT_MEMO_ENTRIES
    assert held - base <= MiB, (held - base) / MiB
    assert peak - base <= MiB, (peak - base) / MiB


def test_states_after_eviction_equal_a_fresh_computation_and_coolprop():
    """Temperatures pushed out of the memo give, when asked again, exactly the states they gave
    before (the memo changes no result) and CoolProp's PropsSI values to 1e-9 relative; a
    temperature asked between every other one stays in the memo, its state the one object
    computed first (the least recently used goes, not the oldest)."""
    fluid = P.Fluid(NAME)
    temps = list(_temperatures(fluid, 3 * P.SAT_MEMO_ENTRIES))
    early = temps[:5]
    hot = 0.8 * fluid.T_crit_K
    first = {T: fluid.sat_T(T) for T in early}
    hot_state = fluid.sat_T(hot)
    for T in temps[5:]:
        fluid.sat_T(T)
        assert fluid.sat_T(hot) is hot_state  # never evicted, never computed again
    for T in early:
        assert T not in fluid._sat_cache
        again = fluid.sat_T(T)
        assert again == first[T]
        for key, out, q in FIELDS:
            assert getattr(again, key) == pytest.approx(_coolprop(T, out, q), rel=1e-9), (T, key)


def test_a_state_from_the_memo_equals_a_fresh_computation():
    """A state served from the memo equals the one a fluid with an empty memo computes, bit for
    bit, and CoolProp's PropsSI to 1e-9 relative."""
    warm, cold = P.Fluid(NAME), P.Fluid(NAME)
    T = 0.75 * warm.T_crit_K
    warm.sat_T(T)
    served = warm.sat_T(T)
    assert T in warm._sat_cache and T not in cold._sat_cache
    assert served == cold.sat_T(T)
    assert served.p_Pa == pytest.approx(_coolprop(T, "P", 0.0), rel=1e-9)
