"""Duty spectra: equivalent torque, mean speed, RMS, splits and series figures."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.core.errors import InputError, RecordError
from sim.loads.damage import BasquinCurve, cycle_matrix_edges
from sim.loads.mix import resolve_usage
from sim.loads.rainflow import concat_cycles, count_by_range, extract_cycles
from sim.loads.report import duty_loads, with_cycle_matrices
from sim.loads.series import cycle_matrices, series_figures
from sim.loads.spectra import (
    JointSpectrum,
    combine_spectra,
    equivalent_torque_nm,
    mean_abs_speed_rad_s,
    quadrant_split,
    rms_torque_nm,
    select_joints,
    spectrum_from_record,
    usage_spectra,
)
from sim.record import open_record
from tests.helpers import held_elements
from tests.loads_records import write_record

RPM = 2 * math.pi / 60


def _steps(levels, t):
    """Piecewise-constant signal: levels [(value, share of time)] over t in [0, 1)."""
    out = np.zeros_like(t)
    edges = np.cumsum([0.0] + [s for _, s in levels])
    for (v, _), a, b in zip(levels, edges[:-1], edges[1:], strict=True):
        out[(t >= a - 1e-12) & (t < b - 1e-12)] = v
    return out


def test_constant_load(tmp_path):
    # constant torque at constant speed: every p-mean is the torque itself
    p = write_record(tmp_path / "c.h5", 1.0, 0.001, {"fl_knee": lambda t: 0 * t + 7.3},
                     {"fl_knee": lambda t: 0 * t - 2.0})
    with open_record(p) as rec:
        sp = spectrum_from_record(rec, "fl_knee")
    for e in (1.0, 3.0, 10 / 3):
        assert equivalent_torque_nm(sp, e) == pytest.approx(7.3, rel=1e-12)
    assert mean_abs_speed_rad_s(sp) == pytest.approx(2.0, rel=1e-12)
    assert rms_torque_nm(sp) == pytest.approx(7.3, rel=1e-12)
    assert sp.revolutions.sum() == pytest.approx(2.0 / (2 * math.pi), rel=1e-12)
    q = quadrant_split(sp)  # positive torque while turning backwards: the load drives it
    assert q["braking"]["time_s"] == pytest.approx(1.0) and q["driving"]["time_s"] == 0.0


def test_two_step_load_gives_closed_form_p_mean(tmp_path):
    # Palmgren's variable-load mean (Harris & Kotzalas, Rolling Bearing Analysis; Shigley
    # ch. 11): T_eq = [(T1^p N1 + T2^p N2) / (N1 + N2)]^(1/p) with N_i the revolutions.
    # 20 N m at 1 rad/s for 0.5 s, 5.5 N m at 3 rad/s for 0.5 s (not on bin centres)
    tq = lambda t: np.where(t < 0.5 - 1e-9, 20.0, 5.5)  # noqa: E731
    w = lambda t: np.where(t < 0.5 - 1e-9, 1.0, 3.0)  # noqa: E731
    p = write_record(tmp_path / "s.h5", 1.0, 0.001, {"fl_knee": tq}, {"fl_knee": w})
    with open_record(p) as rec:
        sp = spectrum_from_record(rec, "fl_knee")
    n1, n2 = 0.5 * 1.0 / (2 * math.pi), 0.5 * 3.0 / (2 * math.pi)
    for e in (3.0, 10 / 3):
        want = ((20.0**e * n1 + 5.5**e * n2) / (n1 + n2)) ** (1 / e)
        assert equivalent_torque_nm(sp, e) == pytest.approx(want, rel=1e-9)
    assert mean_abs_speed_rad_s(sp) == pytest.approx(2.0, rel=1e-9)


def test_reducer_style_life_equals_direct_miner_sum(tmp_path):
    # Rated-life form L_h = L_r (T_r/T_eq)^p (n_r/n_m) follows from the bearing life
    # (C/P)^p law (ISO 281) with Palmgren-Miner summation (Palmgren 1924; Miner 1945):
    # it must equal 1 / sum(q_i / L_i), L_i the life if step i acted alone.
    # Duty: (150 N m, 5 rpm, 0.2), (60 N m, 20 rpm, 0.5), (20 N m, 30 rpm, 0.3); rated point
    # 100 N m, 15 rpm, 6000 h.
    steps = [(150.0, 5.0, 0.2), (60.0, 20.0, 0.5), (20.0, 30.0, 0.3)]
    tq = lambda t: _steps([(a, q) for a, _, q in steps], t)  # noqa: E731
    w = lambda t: _steps([(n * RPM, q) for _, n, q in steps], t)  # noqa: E731
    p = write_record(tmp_path / "r.h5", 1.0, 0.0005, {"fl_knee": tq}, {"fl_knee": w},
                     torque_edges_nm=np.linspace(-200, 200, 81))
    with open_record(p) as rec:
        sp = spectrum_from_record(rec, "fl_knee")
    pexp = 10 / 3
    n_m_rpm = mean_abs_speed_rad_s(sp) / RPM
    life = 6000 * (100 / equivalent_torque_nm(sp, pexp)) ** pexp * (15 / n_m_rpm)
    miner = 1 / sum(q / (6000 * (100 / t) ** pexp * (15 / n)) for t, n, q in steps)
    assert life == pytest.approx(miner, rel=1e-9)
    # hand value of the closed form for this duty: T_eq = 68.719 N m, n_m = 20 rpm,
    # L_h = 15 714.1 h (to the printed digits)
    assert equivalent_torque_nm(sp, pexp) == pytest.approx(68.719, abs=5e-4)
    assert n_m_rpm == pytest.approx(20.0, rel=1e-9)
    assert life == pytest.approx(15714.1, abs=0.05)


def _spectrum(time_s, revs, trev, edges):
    return JointSpectrum("j", edges, np.array([-1.0, 0.0, 1.0]), time_s, revs, 1.0, 1.0,
                         "histogram", trev, None, None)


pos = st.floats(0.01, 10.0)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(1e-3, 40) | st.floats(-40, -1e-3) | st.just(0.0), pos),
                min_size=1, max_size=8),
       st.floats(1.0, 8.0), st.floats(0.1, 10.0))
def test_equivalent_torque_between_min_and_max_and_linear_in_scale(levels, p, k):
    # property: a p-mean lies between the smallest and largest |torque| that turned, and
    # scaling every torque by k scales it by k
    n = len(levels)
    edges = np.linspace(-50, 50, n + 1)
    tq = np.array([t for t, _ in levels])
    revs = np.zeros((n, 2))
    revs[:, 1] = [r for _, r in levels]
    trev = revs * tq[:, None]
    sp = _spectrum(np.ones((n, 2)), revs, trev, edges)
    teq = equivalent_torque_nm(sp, p)
    assert np.abs(tq).min() * (1 - 1e-9) <= teq <= np.abs(tq).max() * (1 + 1e-9)
    sk = _spectrum(np.ones((n, 2)), revs, trev * k, edges * k)
    assert equivalent_torque_nm(sk, p) == pytest.approx(k * teq, rel=1e-9)


def test_doubling_sample_rate_changes_no_cycle_count(tmp_path):
    # metamorphic: a piecewise-linear load whose turning points fall on samples at both rates
    # gives the same rainflow counts at 1 kHz and 2 kHz
    knots_t = np.arange(17) * 0.125
    knots_v = np.array([0, 9, -3, 5, -7, 2, 1, 8, -8, 4, -2, 6, 0, 7, -5, 3, 0], float)

    def tri(t):
        return np.round(np.interp(t, knots_t, knots_v), 9)

    curve = BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=5.0)
    out = []
    for dt in (0.001, 0.0005):
        p = write_record(tmp_path / f"t{dt}.h5", 2.0 + dt, dt, {"fl_knee": tri})  # ends at 2 s
        with open_record(p) as rec:
            r = series_figures(rec, ["fl_knee"], {}, sn_curves=[curve])["fl_knee"].rainflow
            edges = cycle_matrix_edges(r.max_range, r.mean_min, r.mean_max)
            m = cycle_matrices(rec, {"fl_knee": edges})["fl_knee"]
            ranges, counts = count_by_range(extract_cycles(rec.series("fl_knee", "torque_nm")))
        out.append((r, m, ranges, counts))
    (ra, ma, rga, ca), (rb, mb, rgb, cb) = out
    assert np.array_equal(rga, rgb) and np.array_equal(ca, cb)
    assert (ra.closed, ra.residue, ra.max_range, ra.mean_min, ra.mean_max, ra.damage) == \
        (rb.closed, rb.residue, rb.max_range, rb.mean_min, rb.mean_max, rb.damage)
    assert np.array_equal(ma.counts, mb.counts)
    assert ra.total == ca.sum() > 7


def test_stance_swing_hold_and_exceedances(tmp_path):
    # stance (contact 1) for the first 0.6 s with 10 N m held still, then swing at 3 rad/s
    # with a 0 <-> 20 N m square wave at 10 Hz (4 rises above 15 N m)
    tq = lambda t: np.where(t < 0.6 - 1e-9, 10.0,  # noqa: E731
                            np.where(((t - 0.6 + 1e-9) * 10) % 1.0 < 0.5, 0.0, 20.0))
    w = lambda t: np.where(t < 0.6 - 1e-9, 0.0, 3.0)  # noqa: E731
    c = lambda t: (t < 0.6 - 1e-9).astype(int)  # noqa: E731
    p = write_record(tmp_path / "ph.h5", 1.0, 0.001, {"fl_knee": tq}, {"fl_knee": w},
                     contact={"fl": c})
    with open_record(p) as rec:
        f = series_figures(rec, ["fl_knee"], {"fl_knee": [15.0]})["fl_knee"]
    assert f.stance is not None and f.swing is not None
    assert f.stance.time_s.sum() == pytest.approx(0.6)
    assert f.swing.time_s.sum() == pytest.approx(0.4)
    assert rms_torque_nm(f.stance) == pytest.approx(10.0)
    assert f.stance.revolutions.sum() == 0.0
    assert f.swing.revolutions.sum() == pytest.approx(0.4 * 3 / (2 * math.pi))
    assert f.hold_time_s == pytest.approx(0.6)
    assert math.sqrt(f.hold_torque_sq_time_nm2_s / f.hold_time_s) == pytest.approx(10.0)
    assert f.upcrossings == (4.0,)
    assert f.time_above_s[0] == pytest.approx(0.2)


def test_histogram_only_record_says_series_figures_are_unavailable(tmp_path):
    p = write_record(tmp_path / "h.h5", 0.5, 0.001, {"fl_knee": lambda t: 0 * t + 3.0},
                     series=False)
    with open_record(p) as rec, pytest.raises(RecordError, match="histograms only"):
        series_figures(rec, ["fl_knee"], {})
    rep = duty_loads(resolve_usage(p))
    d = rep.joints["fl_knee"].to_dict()
    assert d["rainflow"] is None and d["phases"] is None
    assert d["sources"]["rainflow"].startswith("unavailable") and "histograms only" in \
        d["sources"]["rainflow"]
    assert d["peak_torque_nm"] == 3.0 and d["sources"]["peak_torque_nm"] == "histogram"
    assert any("histograms only" in n for n in rep.notes)


def test_decimated_series_figures_read_every_step(tmp_path):
    # a torque alternating at every step: decimated by 4 its samples are all +4 (no cycle);
    # the figures read the every-step duty series and see every reversal
    def sig(t):
        return np.where(np.round(t / 0.001).astype(int) % 2 == 0, 4.0, -4.0)

    contact = {"fl": lambda t: (t < 0.5).astype(int)}
    every = write_record(tmp_path / "e.h5", 1.0, 0.001, {"fl_knee": sig}, contact=contact)
    dec = write_record(tmp_path / "d.h5", 1.0, 0.001, {"fl_knee": sig}, contact=contact,
                       decimation=4)
    with open_record(every) as a, open_record(dec) as b:
        fa = series_figures(a, ["fl_knee"], {}, hold_torque_nm=1.0)["fl_knee"]
        fb = series_figures(b, ["fl_knee"], {}, hold_torque_nm=1.0)["fl_knee"]
    assert fb.duration_s == pytest.approx(1.0)
    assert fb.hold_time_s == pytest.approx(1.0)
    # about one cycle per two steps (the 4th-step samples alone would give none)
    assert fb.rainflow.total == fa.rainflow.total
    assert fa.rainflow.total > 490
    # the contact flags, sampled every 4th step, hold until the next sample: the split
    # agrees with the every-step one (the flag changes at a sample here)
    assert fb.stance is not None and fa.stance is not None
    assert float(fb.stance.time_s.sum()) == pytest.approx(float(fa.stance.time_s.sum()))


def test_a_decimated_record_without_every_step_series_is_refused(tmp_path):
    p = write_record(tmp_path / "d.h5", 1.0, 0.001, {"fl_knee": lambda t: 0 * t + 4.0},
                     decimation=4, steps=False)
    with open_record(p) as rec, pytest.raises(RecordError, match=r"record.decimation = 4"):
        series_figures(rec, ["fl_knee"], {})


def test_lone_record_usage_spectrum_is_the_record(tmp_path):
    p = write_record(tmp_path / "u.h5", 0.5, 0.001, {"fl_knee": lambda t: 5 * np.sin(9 * t)},
                     {"fl_knee": lambda t: 2 * np.cos(9 * t)})
    spec = usage_spectra(resolve_usage(p), "fl_*")["fl_knee"]
    with open_record(p) as rec:
        ref = spectrum_from_record(rec, "fl_knee")
    assert np.array_equal(spec.time_s, ref.time_s)
    assert spec.duration_s == ref.duration_s
    assert equivalent_torque_nm(spec, 3) == equivalent_torque_nm(ref, 3)


def test_failed_runs_refused_unless_allowed(tmp_path):
    p = write_record(tmp_path / "f.h5", 0.2, 0.001, {}, status="fell")
    with pytest.raises(RecordError, match="completed run"):
        usage_spectra(resolve_usage(p))
    assert "fl_knee" in usage_spectra(resolve_usage(p), allow_failed=True)


def test_combining_different_bins_is_refused():
    a = _spectrum(np.ones((2, 2)), np.ones((2, 2)), None, np.array([-1.0, 0.0, 1.0]))
    b = _spectrum(np.ones((2, 2)), np.ones((2, 2)), None, np.array([-2.0, 0.0, 2.0]))
    with pytest.raises(InputError, match="same torque and speed bin edges"):
        combine_spectra([(a, 1.0), (b, 1.0)], ["a.h5", "b.h5"])


def test_joint_selection():
    names = ["fl_knee", "fl_hip", "hr_knee"]
    assert select_joints(names, "*_knee") == ["fl_knee", "hr_knee"]
    assert select_joints(names, "fl_hip,hr_*") == ["fl_hip", "hr_knee"]
    with pytest.raises(InputError, match="--joints"):
        select_joints(names, "*_ankle")


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(-60, 60) | st.sampled_from([-50.0, -1.0, 0.0, 0.3, 7.0, 50.0]),
                min_size=1, max_size=50))
def test_fast_binning_equals_the_record_writers_rule(xs):
    # the record writer bins with searchsorted(edges, x, "right") - 1, clipped
    from sim.loads.series import _bin_index

    x = np.asarray(xs, float)
    for edges in (np.linspace(-50.0, 50.0, 101), np.linspace(-0.3, 0.9, 13),
                  np.array([-5.0, 0.0, 1.0, 10.0])):
        want = np.clip(np.searchsorted(edges, x, side="right") - 1, 0, len(edges) - 2)
        assert np.array_equal(_bin_index(edges, x), want)


# -- rainflow without keeping the cycles --------------------------------------------------------

def _noisy_record(path, seed, duration_s=3.0, contact=True):
    rng = np.random.default_rng(seed)
    return write_record(
        path, duration_s, 0.001,
        {"fl_knee": lambda t: 8 + 6 * np.sin(2 * np.pi * 3 * t) + rng.normal(size=t.size),
         "hr_hip": lambda t: 2 * np.cos(2 * np.pi * 1.3 * t) + 0.3 * rng.normal(size=t.size)},
        {"fl_knee": lambda t: 4 * np.cos(2 * np.pi * 3 * t), "hr_hip": lambda t: np.sin(t)},
        contact=({"fl": lambda t: (np.sin(2 * np.pi * 3 * t) > 0).astype(int)} if contact
                 else None), block=777)


SN = BasquinCurve(range_ref=10.0, cycles_ref=1e6, exponent=5.0)


def test_series_rainflow_in_small_chunks_equals_the_whole_series(tmp_path):
    # chunks of 7 samples or all at once give the same bits; the reference is the cycle list
    # of the whole series (extract_cycles, checked against rainflow 3.2.0 in test_rainflow)
    p = _noisy_record(tmp_path / "n.h5", 1)
    with open_record(p) as rec:
        a = series_figures(rec, ["fl_knee", "hr_hip"], {}, rows=7, sn_curves=[SN])
        b = series_figures(rec, ["fl_knee", "hr_hip"], {}, rows=10**6, sn_curves=[SN])
        for j in ("fl_knee", "hr_hip"):
            ra, rb = a[j].rainflow, b[j].rainflow
            assert ra == rb  # every total, to the bit (no matrix yet)
            c = extract_cycles(rec.series(j, "torque_nm"))
            assert (ra.total, ra.residue) == (c.total, c.count[c.count == 0.5].sum())
            assert ra.max_range == c.range.max()
            assert (ra.mean_min, ra.mean_max) == (c.mean.min(), c.mean.max())
            assert ra.damage == (math.fsum((c.count / SN.cycles_to_failure(c.range)).tolist()),)
            edges = cycle_matrix_edges(ra.max_range, ra.mean_min, ra.mean_max)
            m7 = cycle_matrices(rec, {j: edges}, rows=7)[j]
            m_all = cycle_matrices(rec, {j: edges}, rows=10**6)[j]
            assert np.array_equal(m7.counts, m_all.counts)
            assert np.array_equal(m7.counts, c.matrix(*edges))


def test_series_accumulator_holds_no_per_cycle_arrays(tmp_path):
    # structural: the accumulator behind series_figures (stance/swing maps, exceedances,
    # rainflow) keeps arrays of fixed size however many chunks and cycles pass; only the
    # stream's not yet closed reversals vary, and they stay below one chunk
    from sim.loads.series import _JointAccumulator

    te, se = np.linspace(-50, 50, 101), np.linspace(-40, 40, 81)
    acc = _JointAccumulator("fl_knee", te, se, 1e-3, [5.0, 10.0], 0.1, 0.5, True, [SN])
    rng = np.random.default_rng(2)
    fixed = []
    for k in range(300):
        t = (1000 * k + np.arange(1000)) * 1e-3
        tau = 8 * np.sin(2 * np.pi * 3 * t) + rng.normal(size=t.size)
        acc.feed(tau, 4 * np.cos(2 * np.pi * 3 * t), (np.sin(2 * np.pi * 3 * t) > 0).astype(int))
        fixed.append(held_elements(acc) - 2 * acc.rf.pending)
        assert acc.rf.pending < 1000
    assert acc.tally.n_closed > 90000  # many cycles went through
    assert len(set(fixed)) == 1
    res = acc.result()
    assert res.rainflow.total == acc.tally.n_closed + 0.5 * acc.tally.n_half


def test_half_cycles_from_residue_scale_with_the_entry_weight(tmp_path):
    # regression: with a mix weight other than 1 the residue half cycles were found by
    # comparing the weighted counts with 0.5, so they read 0 (or took in full cycles)
    p = _noisy_record(tmp_path / "n.h5", 4, duration_s=1.0)
    lone = duty_loads(resolve_usage(p)).joints["fl_knee"].to_dict()["rainflow"]
    m = tmp_path / "mix.toml"
    m.write_text(f'[[duty]]\nrecord = "{p.name}"\nhours_per_day = 2.5\n')
    mixed = duty_loads(resolve_usage(m)).joints["fl_knee"].to_dict()["rainflow"]
    w = 2.5 * 3600 / 1.0
    with open_record(p) as rec:
        c = extract_cycles(rec.series("fl_knee", "torque_nm"))
    assert lone["half_cycles_from_residue"] == c.count[c.count == 0.5].sum() > 0
    assert mixed["half_cycles_from_residue"] == w * lone["half_cycles_from_residue"]
    assert mixed["cycles"] == w * lone["cycles"]


def test_mix_rainflow_equals_the_weighted_cycle_lists_taken_together(tmp_path):
    # a day of two duties and an event: each record's cycles count its entry weight; the
    # reference takes the whole cycle lists of the records, scaled, together (math.fsum)
    recs = [_noisy_record(tmp_path / f"r{k}.h5", 10 + k, duration_s=1.0 + k) for k in range(3)]
    m = tmp_path / "mix.toml"
    m.write_text(f'[[duty]]\nrecord = "{recs[0].name}"\nhours_per_day = 1.5\n'
                 f'[[duty]]\nrecord = "{recs[1].name}"\nhours_per_day = 0.0\n'
                 f'[[event]]\nname = "e"\nper_day = 7\nrecord = "{recs[2].name}"\n')
    mix = resolve_usage(m)
    rep = with_cycle_matrices(duty_loads(mix, sn_curve=SN))
    for j in ("fl_knee", "hr_hip"):
        parts = []
        for e in mix.entries:
            with open_record(e.path) as rec:
                parts.append(extract_cycles(rec.series(j, "torque_nm")).scaled(e.weight))
        ref = concat_cycles(parts)
        jl = rep.joints[j]
        rf = jl.to_dict()["rainflow"]
        assert rf["cycles"] == math.fsum(ref.count.tolist())
        assert rf["max_range_nm"] == ref.range.max()  # zero-weight records count here too
        assert rf["damage_per_day"] == pytest.approx(
            math.fsum((ref.count / SN.cycles_to_failure(ref.range)).tolist()), rel=1e-14)
        cm = jl.cycle_matrix
        edges = cycle_matrix_edges(ref.range.max(), ref.mean.min(), ref.mean.max())
        assert np.array_equal(cm.range_edges, edges[0]) and np.array_equal(cm.mean_edges,
                                                                            edges[1])
        assert cm.counts.sum() == pytest.approx(ref.total, rel=1e-14)
        assert cm.counts == pytest.approx(ref.matrix(*edges), rel=1e-13)


def test_record_spectrum_carries_the_every_step_sums(tmp_path):
    # the spectrum of a record holds the exact every-step sums, recomputed here with numpy from
    # the same signal on the writer's time grid t_k = k dt: sum |T|^3 |w| dt, sum |w| dt,
    # sum T^2 dt, and the in-bin torque x time moments (numpy.histogram2d)
    from tests.loads_records import SE, TE
    dt, n = 0.001, 1000
    t = np.arange(n) * dt
    tq = lambda t: 12.0 * np.sin(2 * math.pi * 3 * t) + 4.0  # noqa: E731
    w = lambda t: 5.0 * np.cos(2 * math.pi * 2 * t)  # noqa: E731
    p = write_record(tmp_path / "r.h5", n * dt, dt, {"fl_knee": tq}, {"fl_knee": w})
    with open_record(p) as rec:
        sp = spectrum_from_record(rec, "fl_knee")
    x, v = tq(t), w(t)
    assert sp.joint == "fl_knee" and sp.source == "histogram"
    assert sp.abs_angle_rad == pytest.approx(np.sum(np.abs(v)) * dt, rel=1e-12)
    assert sp.power_sums[3.0] == pytest.approx(np.sum(np.abs(x)**3 * np.abs(v)) * dt, rel=1e-12)
    assert sp.torque_sq_time_nm2_s == pytest.approx(np.sum(x**2) * dt, rel=1e-9)
    mt = np.histogram2d(x, v, bins=[TE, SE], weights=x * dt)[0]
    np.testing.assert_allclose(sp.torque_time_nm_s, mt, rtol=1e-9, atol=1e-12)
    # exact route differs from the bin route here (several torques per bin)
    exact = (sp.power_sums[3.0] / sp.abs_angle_rad) ** (1 / 3)
    assert equivalent_torque_nm(sp, 3.0) == pytest.approx(exact, rel=1e-12)
