"""Rainflow counting and Miner damage against the standard and the reference library."""

from __future__ import annotations

import numpy as np
import pytest
import rainflow
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.errors import InputError
from sim.rainflow import (
    BasquinCurve,
    ReversalStream,
    count_by_range,
    damage_equivalent_range,
    extract_cycles,
    find_reversals,
    miner_damage,
)

# ASTM E1049-85 (reapproved 2011), section 5.4.4, example load history (peaks and valleys A..I)
ASTM_HISTORY = [-2, 1, -3, 5, -1, 3, -4, 4, -2]


def _pairs(c):
    return list(zip(*(a.tolist() for a in count_by_range(c)), strict=True))


def _as_tuples(c):
    return sorted(zip(c.range.tolist(), c.mean.tolist(), c.count.tolist(),
                      c.i_start.tolist(), c.i_end.tolist(), strict=True))


def test_astm_e1049_example_cycle_table():
    # ASTM E1049-85 section 5.4.4 cycle table: range 3 -> 0.5, 4 -> 1.5, 6 -> 0.5, 8 -> 1.0,
    # 9 -> 0.5 cycles; total 4 cycles
    got = _pairs(extract_cycles(ASTM_HISTORY))
    assert got == [(3.0, 0.5), (4.0, 1.5), (6.0, 0.5), (8.0, 1.0), (9.0, 0.5)]
    assert extract_cycles(ASTM_HISTORY).total == 4.0


def test_astm_example_individual_cycles_match_rainflow_package():
    # rainflow 3.2.0 extract_cycles gives (range, mean, count, i_start, i_end) per cycle
    ref = sorted(rainflow.extract_cycles(ASTM_HISTORY))
    assert _as_tuples(extract_cycles(ASTM_HISTORY)) == ref
    # the one closed cycle of the example is -1 <-> 3 (range 4, mean 1), samples 4 and 5
    c = extract_cycles(ASTM_HISTORY)
    full = c.count == 1.0
    assert c.range[full].tolist() == [4.0] and c.mean[full].tolist() == [1.0]
    assert (c.i_start[full].tolist(), c.i_end[full].tolist()) == ([4], [5])


small_ints = st.lists(st.integers(-4, 4), max_size=60)
floats = st.lists(st.floats(-1e3, 1e3, allow_nan=False, width=32), max_size=60)


@settings(max_examples=300, deadline=None)
@given(st.one_of(small_ints, floats))
def test_random_sequences_match_rainflow_package(seq):
    # reference: rainflow 3.2.0 (ASTM E1049-85 5.4.4), cycle by cycle including sample indices
    x = np.asarray(seq, float)
    assert _as_tuples(extract_cycles(x)) == sorted(rainflow.extract_cycles(x.tolist()))
    assert _pairs(extract_cycles(x)) == rainflow.count_cycles(x.tolist())


@settings(max_examples=150, deadline=None)
@given(small_ints)
def test_reversals_match_rainflow_package(seq):
    # reference: rainflow 3.2.0 reversals() (first and last point kept, plateaus at last sample)
    v, i = find_reversals(seq)
    ref = list(rainflow.reversals([float(s) for s in seq]))
    assert list(zip(i.tolist(), v.tolist(), strict=True)) == [(a, float(b)) for a, b in ref]


def test_long_mixed_series_uses_vectorised_passes_and_matches_package():
    # long enough that several vectorised passes run before the stack remainder
    rng = np.random.default_rng(7)
    t = np.arange(30000) * 1e-3
    x = np.round(10 * np.sin(2 * np.pi * 3 * t) * (1 + t) + rng.normal(size=t.size), 1)
    x[5000:5100] = x[5000]  # a plateau
    assert _as_tuples(extract_cycles(x)) == sorted(rainflow.extract_cycles(x.tolist()))


def test_nested_history_is_handled_exactly():
    # a damped then growing oscillation closes one cycle per pass: the stack fallback finishes
    a = np.concatenate([np.arange(600, 0, -1), np.arange(1, 601)]).astype(float)
    x = a * np.where(np.arange(a.size) % 2 == 0, 1.0, -1.0)
    assert _as_tuples(extract_cycles(x)) == sorted(rainflow.extract_cycles(x.tolist()))


@settings(max_examples=150, deadline=None)
@given(small_ints, st.lists(st.integers(0, 60), max_size=4))
def test_chunked_stream_equals_whole_series(seq, cuts):
    # metamorphic: splitting the series into chunks changes no cycle
    x = np.asarray(seq, float)
    s = ReversalStream()
    prev = 0
    for c in [*sorted(min(c, x.size) for c in cuts), x.size]:
        s.feed(x[prev:c])
        prev = c
    assert _as_tuples(s.finish()) == _as_tuples(extract_cycles(x))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.integers(-50, 50), min_size=3, max_size=60))
def test_doubling_sample_rate_changes_no_cycle_count(seq):
    # metamorphic: samples inserted halfway between neighbours (linear interpolation) are not
    # turning points, so ranges and counts stay and indices double
    x = np.asarray(seq, float)
    fine = np.empty(2 * x.size - 1)
    fine[0::2] = x
    fine[1::2] = 0.5 * (x[:-1] + x[1:])
    a, b = extract_cycles(x), extract_cycles(fine)
    assert _pairs(a) == _pairs(b)
    assert sorted((2 * a.i_start).tolist()) == sorted(b.i_start.tolist())


def test_nan_is_rejected():
    with pytest.raises(InputError, match="finite"):
        extract_cycles([0.0, np.nan, 1.0])


def test_matrix_keeps_every_cycle():
    c = extract_cycles(ASTM_HISTORY)
    m = c.matrix(np.arange(0, 11.0), np.arange(-2, 3.0))
    assert m.sum() == c.total
    # range 8: two half cycles (5 <-> -3 and -4 <-> 4), 1.0 in the ASTM E1049-85 table
    assert m[8].sum() == 1.0


def test_miner_damage_of_astm_cycles():
    # Miner (1945) sum over the ASTM E1049-85 5.4.4 table with N = 1e6 (10/S)^5:
    # D = sum n (S/10)^5 / 1e6 = 6.7838e-7 per pass (hand calculation from the table)
    curve = BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=5.0)
    d = miner_damage(extract_cycles(ASTM_HISTORY), curve)
    assert d == pytest.approx(6.7838e-7, rel=1e-4)
    # damage-equivalent range over 4 cycles (same table): 7.0127
    s_eq = damage_equivalent_range(extract_cycles(ASTM_HISTORY), 5.0, 4.0)
    assert s_eq == pytest.approx(7.0127, rel=1e-4)
    # and 4 cycles at S_eq do the same damage (definition of the equivalent range)
    assert 4.0 / curve.cycles_to_failure(s_eq) == pytest.approx(d, rel=1e-12)


def test_basquin_worked_value():
    # Basquin (1910): sigma_a = sigma_f' (2 N_f)^b; sigma_f' = 1000 MPa, b = -0.1,
    # sigma_a = 300 MPa give N_f = 0.5 * 0.3^-10 = 84 675 cycles. In range form the reference
    # point is range 2 sigma_f' at N = 0.5 cycles and the exponent is -1/b = 10.
    curve = BasquinCurve(range_ref=2000.0, cycles_ref=0.5, exponent=10.0)
    assert float(curve.cycles_to_failure(600.0)) == pytest.approx(84675, rel=1e-4)


@settings(max_examples=50, deadline=None)
@given(st.floats(1.0, 1e9), st.floats(2.0, 12.0))
def test_basquin_inverse_pair_round_trip(n, k):
    curve = BasquinCurve(range_ref=20.0, cycles_ref=1e6, exponent=k)
    assert float(curve.cycles_to_failure(curve.range_for_cycles(n))) == pytest.approx(n, rel=1e-9)


@settings(max_examples=50, deadline=None)
@given(st.floats(0.1, 10.0))
def test_scaling_load_scales_damage_by_k_power_m(scale):
    # metamorphic: ranges scale with the load, so D scales by scale^exponent (no cut-off)
    x = np.asarray(ASTM_HISTORY, float)
    curve = BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=4.0)
    d1 = miner_damage(extract_cycles(x), curve)
    d2 = miner_damage(extract_cycles(scale * x), curve)
    assert d2 == pytest.approx(d1 * scale**4.0, rel=1e-9)


def test_cutoff_removes_small_ranges_and_bad_curves_are_refused():
    curve = BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=5.0, cutoff_range=8.5)
    d = miner_damage(extract_cycles(ASTM_HISTORY), curve)
    assert d == pytest.approx(0.5 * 0.9**5 / 1e6)  # only the half cycle of range 9 counts
    with pytest.raises(InputError, match="positive"):
        BasquinCurve(range_ref=10.0, cycles_ref=-1.0, exponent=5.0)
