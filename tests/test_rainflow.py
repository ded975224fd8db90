"""Rainflow counting and Miner damage against the standard and the reference library."""

from __future__ import annotations

import math

import numpy as np
import pytest
import rainflow
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.core.errors import InputError
from sim.loads.damage import (
    BasquinCurve,
    CycleTally,
    ExactSum,
    combine_totals,
    cycle_matrix_edges,
    damage_equivalent_range,
    miner_damage,
)
from sim.loads.rainflow import (
    Cycles,
    ReversalStream,
    concat_cycles,
    count_by_range,
    extract_cycles,
    find_reversals,
)
from tests.helpers import held_elements

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


# -- totals of cycles fed in chunks (bounded memory) -----------------------------------------

wide_floats = st.lists(st.floats(-1e300, 1e300, allow_nan=False, allow_infinity=False)
                       | st.floats(-1e-300, 1e-300), max_size=80)


@settings(max_examples=200, deadline=None)
@given(wide_floats, st.lists(st.integers(0, 80), max_size=5), st.randoms(use_true_random=False))
def test_exact_sum_is_the_correctly_rounded_sum_in_any_order_and_batches(xs, cuts, rnd):
    # reference: Python's math.fsum (Shewchuk's algorithm, correctly rounded sum of floats)
    want = math.fsum(xs)
    ys = list(xs)
    rnd.shuffle(ys)
    acc = ExactSum()
    prev = 0
    for c in [*sorted(min(c, len(ys)) for c in cuts), len(ys)]:
        acc.add(np.asarray(ys[prev:c], float))
        prev = c
    assert acc.value() == want
    assert ExactSum(xs).value() == want
    assert float(acc.exact()) == want


def _gait_like(n, seed=3, start=0):
    rng = np.random.default_rng(seed)
    t = (start + np.arange(n)) * 1e-3
    return 8 * np.sin(2 * np.pi * 2.3 * t) + 3 * np.sin(6 * np.pi * 2.3 * t + 1) \
        + 0.3 * rng.standard_normal(n)


CURVES = (BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=5.0),
          BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=3.0, cutoff_range=2.0))
EDGES = (np.linspace(0.0, 25.0, 11), np.linspace(-12.0, 12.0, 9))


def _tally_in_chunks(x, size, edges=EDGES):
    s = ReversalStream(keep=False)
    t = CycleTally(CURVES, (3.0, 5.0), edges)
    for a in range(0, x.size, size):
        t.add(s.feed(x[a:a + size]))
    t.add(s.finish())
    return t.totals()


def _same_totals(a, b):
    assert (a.closed, a.residue, a.total, a.max_range, a.mean_min, a.mean_max, a.damage,
            a.range_moments) == (b.closed, b.residue, b.total, b.max_range, b.mean_min,
                                 b.mean_max, b.damage, b.range_moments)
    assert np.array_equal(a.matrix.counts, b.matrix.counts)


@settings(max_examples=150, deadline=None)
@given(st.one_of(small_ints, floats), st.integers(1, 7))
def test_tally_of_small_chunks_equals_tally_of_one_chunk_and_the_cycle_list(seq, size):
    # metamorphic (chunking changes nothing, to the bit) and against the whole-series cycle
    # list, itself checked against rainflow 3.2.0 above; sums against math.fsum
    x = np.asarray(seq, float)
    whole = _tally_in_chunks(x, max(1, x.size))
    _same_totals(_tally_in_chunks(x, size), whole)
    c = extract_cycles(x)
    assert whole.closed == np.count_nonzero(c.count == 1.0)
    assert whole.residue == c.count[c.count == 0.5].sum() and whole.total == c.total
    assert whole.max_range == (c.range.max() if c.range.size else 0.0)
    assert np.array_equal(whole.matrix.counts, c.matrix(*EDGES))
    for curve, d in zip(CURVES, whole.damage, strict=True):
        assert d == math.fsum((c.count / curve.cycles_to_failure(c.range)).tolist())
        assert d == miner_damage(c, curve)
    for k, m in zip((3.0, 5.0), whole.range_moments, strict=True):
        assert m == math.fsum((c.count * c.range**k).tolist())


def test_tally_of_a_long_series_in_chunks_equals_the_whole_series():
    # a long gait-like load with noise: many vectorised passes per chunk
    x = _gait_like(60000)
    whole = _tally_in_chunks(x, x.size)
    for size in (5, 997, 4096):
        _same_totals(_tally_in_chunks(x, size), whole)
    c = extract_cycles(x)
    assert whole.total == c.total > 1000
    assert np.array_equal(whole.matrix.counts, c.matrix(*EDGES))
    # the largest range of ASTM E1049-85 counting with the residue as halves spans the
    # series' extremes (they are never removed by a closure)
    assert whole.max_range == x.max() - x.min()
    assert whole.damage[0] == pytest.approx(miner_damage(c, CURVES[0]), rel=1e-14)
    assert whole.damage_equivalent_range(5.0, 100.0) == pytest.approx(
        damage_equivalent_range(c, 5.0, 100.0), rel=1e-14)


@settings(max_examples=100, deadline=None)
@given(small_ints, st.lists(st.integers(0, 60), max_size=4))
def test_stream_without_keeping_returns_every_cycle_once(seq, cuts):
    # the cycles returned by feed() and finish() together are those of rainflow 3.2.0
    x = np.asarray(seq, float)
    s = ReversalStream(keep=False)
    got = []
    prev = 0
    for c in [*sorted(min(c, x.size) for c in cuts), x.size]:
        got += _as_tuples(s.feed(x[prev:c]))
        prev = c
    got += _as_tuples(s.finish())
    assert sorted(got) == sorted(rainflow.extract_cycles(x.tolist()))


def test_weighted_totals_equal_the_scaled_cycle_lists_taken_together():
    # records of a usage mix: each record's cycles count `weight` times; reference: the
    # concatenated scaled cycle lists, summed with math.fsum (exact sums, rounded once)
    xs = [_gait_like(5000, seed=1), 0.5 * _gait_like(3000, seed=2), np.asarray(ASTM_HISTORY)]
    ws = [9000.0, 0.37, 20.0]
    combined = combine_totals([(_tally_in_chunks(x, 777), w) for x, w in zip(xs, ws,
                                                                              strict=True)])
    ref = concat_cycles(extract_cycles(x).scaled(w) for x, w in zip(xs, ws, strict=True))
    assert combined.total == math.fsum(ref.count.tolist())
    halves = np.concatenate([extract_cycles(x).count == 0.5 for x in xs])
    assert combined.residue == math.fsum(ref.count[halves].tolist())
    assert combined.max_range == ref.range.max()
    assert (combined.mean_min, combined.mean_max) == (ref.mean.min(), ref.mean.max())
    got = combined.matrix.counts
    for (a, b), n in np.ndenumerate(got):  # each bin: math.fsum of the scaled counts in it
        inside = ref.count * (_bin_of(ref, EDGES) == (a, b)).all(axis=1)
        assert n == math.fsum(inside.tolist())
    assert got == pytest.approx(ref.matrix(*EDGES), rel=1e-13)  # a running float sum
    assert combined.damage[0] == pytest.approx(miner_damage(ref, CURVES[0]), rel=1e-13)


def _bin_of(c, edges):
    """[cycle, 2] range and mean bin of each cycle, by the rule of Cycles.matrix."""
    re_, me = edges
    ir = np.clip(np.searchsorted(re_, c.range, side="right") - 1, 0, len(re_) - 2)
    im = np.clip(np.searchsorted(me, c.mean, side="right") - 1, 0, len(me) - 2)
    return np.stack([ir, im], axis=1)


def test_stream_and_tally_state_stays_bounded_over_many_chunks():
    # structural: with keep=False nothing per cycle is held; the tally's arrays keep their
    # size and the stream holds only the reversals not yet closed, which do not pile up
    s = ReversalStream(keep=False)
    t = CycleTally(CURVES, (3.0,), EDGES)
    sizes, pending = [], []
    for k in range(400):
        t.add(s.feed(_gait_like(1000, seed=k, start=1000 * k)))
        sizes.append(held_elements(t))
        pending.append(s.pending)
    assert t.n_closed > 50000  # many cycles went through
    assert len(set(sizes)) == 1  # the tally's arrays never grew
    assert held_elements(s) == 2 * s.pending  # values and indices of pending reversals only
    assert max(pending) < 1000  # less than one chunk of samples, after 400 chunks
    assert all(a._int.bit_length() < 2300 for a in t._damage)  # exact sums: bounded integers


# -- damage helpers by hand (written to kill surviving mutants, docs/mutation.md) ------------


def test_cycle_matrix_edges_by_hand():
    # ranges from 0 to the largest range, means between the extreme means, bins + 1 edges
    r, m = cycle_matrix_edges(8.0, -3.0, 5.0, bins=4)
    np.testing.assert_array_equal(r, [0.0, 2.0, 4.0, 6.0, 8.0])
    np.testing.assert_array_equal(m, [-3.0, -1.0, 1.0, 3.0, 5.0])
    assert len(cycle_matrix_edges(8.0, -3.0, 5.0)[0]) == 21  # 20 bins by default
    # no cycles (max_range 0, mean_min +inf > mean_max -inf): ranges 0-1, means -1-1
    r, m = cycle_matrix_edges(0.0, math.inf, -math.inf, bins=2)
    np.testing.assert_array_equal(r, [0.0, 0.5, 1.0])
    np.testing.assert_array_equal(m, [-1.0, 0.0, 1.0])
    # all cycles on one mean: the zero width is widened to 1 around it
    r, m = cycle_matrix_edges(3.0, 2.0, 2.0, bins=2)
    np.testing.assert_array_equal(r, [0.0, 1.5, 3.0])
    np.testing.assert_array_equal(m, [1.5, 2.0, 2.5])
    np.testing.assert_array_equal(cycle_matrix_edges(-1.0, 0.0, 4.0, bins=1)[0], [0.0, 1.0])


def test_damage_equivalent_range_by_hand():
    # S_eq = (sum n_i S_i^k / n_eq)^(1/k) (Miner 1945 on a Basquin line, range form):
    # 2 cycles of 10 and a half cycle of 20 at k = 3: (2*1000 + 0.5*8000) / 6 = 1000 -> 10
    c = Cycles(np.array([10.0, 10.0, 20.0]), np.zeros(3), np.array([1.0, 1.0, 0.5]),
               np.arange(3), np.arange(1, 4))
    assert damage_equivalent_range(c, 3.0, 6.0) == pytest.approx(10.0, rel=1e-15)
    assert damage_equivalent_range(c, 3.0, 1.0) == pytest.approx(6000.0 ** (1 / 3), rel=1e-15)
    for bad in (0.0, -1.0):
        with pytest.raises(InputError) as e:
            damage_equivalent_range(c, 3.0, bad)
        assert e.value.key == "n_eq" and e.value.got == bad


@pytest.mark.parametrize("name", ["range_ref", "cycles_ref", "exponent"])
@pytest.mark.parametrize("bad", [0.0, -2.0, math.inf, math.nan])
def test_basquin_line_refuses_a_non_positive_reference(name, bad):
    kw = {"range_ref": 10.0, "cycles_ref": 1e6, "exponent": 5.0, name: bad}
    with pytest.raises(InputError) as e:
        BasquinCurve(**kw)
    assert e.value.key == f"sn.{name}" and e.value.expected == "a positive number"
    assert e.value.got is bad or (math.isnan(bad) and math.isnan(e.value.got))


def test_basquin_cutoff_must_be_finite_and_not_negative():
    assert BasquinCurve(10.0, 1e6, 5.0, 0.0).cutoff_range == 0.0
    for bad in (-0.1, math.inf):
        with pytest.raises(InputError) as e:
            BasquinCurve(10.0, 1e6, 5.0, bad)
        assert e.value.key == "sn.cutoff_range" and e.value.got == bad
