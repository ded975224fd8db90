"""Duty spectra built straight from samples with numpy, without a record: the bin routes.

Every spectrum here is made by ``numpy.histogram2d`` (a general-purpose reference library)
from a list of (torque, speed, dt) samples, so each figure can be recomputed from the samples
themselves by its textbook definition. These checks were written to kill surviving mutants of
``sim/loads/spectra.py`` (docs/mutation.md).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim.core.errors import InputError
from sim.loads.spectra import (
    JointSpectrum,
    combine_spectra,
    equivalent_torque_bounds,
    equivalent_torque_detail,
    equivalent_torque_nm,
    histogram_equivalent_torque_nm,
    load_duration,
    parse_exponent,
    quadrant_split,
    rms_torque_nm,
)

TE = np.array([-40.0, -20.0, 0.0, 10.0, 30.0])
SE = np.array([-5.0, 0.0, 5.0])


def _from_samples(tq, w, dt, *, moments=True, sq=False, powers=None, joint="j",
                  source="histogram"):
    """A spectrum of samples ``tq`` (N m), ``w`` (rad/s), ``dt`` (s) by numpy.histogram2d."""
    tq, w, dt = (np.asarray(x, float) for x in (tq, w, dt))
    rev = np.abs(w) * dt / (2 * math.pi)

    def h(weights):
        return np.histogram2d(tq, w, bins=[TE, SE], weights=weights)[0]

    return JointSpectrum(
        joint, TE, SE, h(dt), h(rev), float(dt.sum()), float(np.abs(tq).max()), source,
        h(tq * rev) if moments else None, h(tq * dt) if moments else None,
        float((tq**2 * dt).sum()) if sq else None,
        None if powers is None else {p: float((np.abs(tq)**p * np.abs(w) * dt).sum())
                                     for p in powers},
        float((np.abs(w) * dt).sum()) if powers is not None else None)


# samples off the bin centres, two torques in one bin (12 and 28 N m share [10, 30))
TQ = [-30.0, -5.0, 3.0, 12.0, 28.0, 28.0]
W = [2.0, -1.0, 4.0, 1.5, -3.0, 0.5]
DT = [0.1, 0.3, 0.2, 0.15, 0.05, 0.2]


def test_rms_from_the_bins_is_the_time_rms_of_one_level_per_bin():
    # RMS = sqrt(integral T^2 dt / T) (definition). With one torque per bin the in-bin
    # time-weighted mean is that torque, so the bin route is exact; numpy on the samples.
    tq, w, dt = [-30.0, -5.0, 3.0, 12.0], [2.0, -1.0, 4.0, 1.5], [0.1, 0.3, 0.2, 0.15]
    sp = _from_samples(tq, w, dt)
    want = math.sqrt(np.sum(np.square(tq) * dt) / np.sum(dt))
    assert rms_torque_nm(sp) == pytest.approx(want, rel=1e-12)
    # the exact route (integral of T^2 held) equals it too; zero duration gives zero
    assert rms_torque_nm(_from_samples(tq, w, dt, sq=True)) == pytest.approx(want, rel=1e-12)
    # with two torques in one bin the bin route is a lower bound (Jensen), the exact one exact
    sp2, sq2 = _from_samples(TQ, W, DT), _from_samples(TQ, W, DT, sq=True)
    exact = math.sqrt(np.sum(np.square(TQ) * np.asarray(DT)) / np.sum(DT))
    assert rms_torque_nm(sq2) == pytest.approx(exact, rel=1e-12)
    assert rms_torque_nm(sp2) < exact * (1 - 1e-4)
    # without moments the bin centre stands for the bin: centres -30, -10, 5, 20 N m
    cen = _from_samples(tq, w, dt, moments=False)
    want_c = math.sqrt(np.sum(np.square([-30.0, -10.0, 5.0, 20.0]) * dt) / np.sum(dt))
    assert rms_torque_nm(cen) == pytest.approx(want_c, rel=1e-12)
    empty = JointSpectrum("j", TE, SE, np.zeros((4, 2)), np.zeros((4, 2)), 0.0, 0.0)
    assert rms_torque_nm(empty) == 0.0
    assert rms_torque_nm(JointSpectrum("j", TE, SE, np.zeros((4, 2)), np.zeros((4, 2)), 2.0,
                                       0.0)) == 0.0


def test_bin_equivalent_torque_and_its_bounds_bracket_the_sample_p_mean():
    # Palmgren's revolution-weighted p-mean [sum |T|^p N / sum N]^(1/p) (Harris & Kotzalas,
    # Rolling Bearing Analysis) from the samples; the bin route uses in-bin means, low by
    # Jensen's inequality, and the chord of x^p over each bin bounds it from above.
    tq, w, dt = map(np.asarray, (TQ, W, DT))
    n = np.abs(w) * dt
    for p in (3.0, 10 / 3):
        true = float((np.sum(np.abs(tq)**p * n) / n.sum()) ** (1 / p))
        sp = _from_samples(tq, w, dt)
        low, up = equivalent_torque_bounds(sp, p)
        assert low == pytest.approx(histogram_equivalent_torque_nm(sp, p), rel=1e-15)
        assert low < true * (1 - 1e-4) and up is not None and up > true * (1 + 1e-4)
        # by hand: bin [10, 30) holds 12 N m (1.5*0.15 rad) and 28 N m (3*0.05 + 0.5*0.2)
        # in two speed bins; the other bins hold one torque each, exact
        assert sp.revolutions.sum() == pytest.approx(n.sum() / (2 * math.pi), rel=1e-12)
        assert equivalent_torque_nm(sp, p) == pytest.approx(low, rel=1e-15)
        d = equivalent_torque_detail(sp, p)
        assert d["route"] == "histogram" and d["value"] == pytest.approx(low, rel=1e-15)
        assert d["bias_bound"] == pytest.approx(up / low - 1.0, rel=1e-12)
        # a spectrum holding the power sum for p: exact route, no bias
        ex = _from_samples(tq, w, dt, powers=[p])
        assert equivalent_torque_nm(ex, p) == pytest.approx(true, rel=1e-12)
        assert equivalent_torque_detail(ex, p) == {"value": pytest.approx(true, rel=1e-12),
                                                    "route": "exact", "bias_bound": 0.0}
        # ... but not for another exponent: the bin route again
        assert equivalent_torque_detail(ex, p + 0.5)["route"] == "histogram"


def test_chord_bound_is_attained_when_a_bin_holds_only_its_edges():
    # x^p convex: with equal revolutions at both edges a and b of a bin the in-bin mean of
    # |T|^p is (a^p + b^p)/2, exactly the chord at the mean (a + b)/2; the lower estimate is
    # ((a + b)/2)^p (Jensen). Bin [10, 30] of TE, one speed bin.
    p = 3.0
    sp = _from_samples([10.0, 29.999999999], [1.0, 1.0], [0.5, 0.5])
    low, up = equivalent_torque_bounds(sp, p)
    assert low == pytest.approx(20.0, rel=1e-9)
    assert up == pytest.approx(((10.0**p + 30.0**p) / 2) ** (1 / p), rel=1e-9)
    assert equivalent_torque_detail(sp, p)["bias_bound"] == pytest.approx(up / low - 1, rel=1e-9)
    # a bin across zero torque ([-20, 0] is not across; [0, 10] is not either): use edges
    # across zero, where only b^p = max(|lo|, |hi|)^p bounds the bin
    te = np.array([-10.0, 30.0])
    across = JointSpectrum("j", te, SE, np.array([[1.0, 0.0]]), np.array([[2.0, 0.0]]),
                           1.0, 5.0, "histogram", np.array([[2.0 * 5.0, 0.0]]), None)
    low, up = equivalent_torque_bounds(across, p)
    assert low == pytest.approx(5.0, rel=1e-12) and up == pytest.approx(30.0, rel=1e-12)
    # p < 1: x^p is concave, no chord bound; nothing turned: zero
    assert equivalent_torque_bounds(sp, 0.5)[1] is None
    assert equivalent_torque_detail(sp, 0.5)["bias_bound"] is None
    still = JointSpectrum("j", TE, SE, np.ones((4, 2)), np.zeros((4, 2)), 8.0, 3.0)
    assert equivalent_torque_bounds(still, p) == (0.0, 0.0)
    assert equivalent_torque_detail(still, p)["bias_bound"] == 0.0


def test_combined_spectrum_is_the_weighted_sum_of_the_samples():
    # two runs, weights 3 and 0.5: the combination equals the spectrum of all samples with
    # dt scaled by each weight (sums are linear; numpy on the joined samples)
    a = (TQ[:3], W[:3], DT[:3])
    b = (TQ[3:], W[3:], DT[3:])
    sa = _from_samples(*a, sq=True, powers=[3.0, 10 / 3])
    sb = _from_samples(*b, sq=True, powers=[3.0], source="series")
    c = combine_spectra([(sa, 3.0), (sb, 0.5)])
    dt = np.concatenate([np.asarray(a[2]) * 3.0, np.asarray(b[2]) * 0.5])
    ref = _from_samples(TQ, W, dt, sq=True, powers=[3.0])
    for name in ("time_s", "revolutions", "torque_revolutions_nm", "torque_time_nm_s"):
        np.testing.assert_allclose(getattr(c, name), getattr(ref, name), rtol=1e-12, atol=0)
    assert c.duration_s == pytest.approx(ref.duration_s, rel=1e-12)
    assert c.torque_sq_time_nm2_s == pytest.approx(ref.torque_sq_time_nm2_s, rel=1e-12)
    assert c.abs_angle_rad == pytest.approx(ref.abs_angle_rad, rel=1e-12)
    assert list(c.power_sums) == [3.0]  # only the exponent both hold
    assert c.power_sums[3.0] == pytest.approx(ref.power_sums[3.0], rel=1e-12)
    assert c.peak_torque_nm == 30.0 and c.source == "mixed"
    # a part of weight zero adds nothing and its peak does not count
    z = combine_spectra([(sa, 1.0), (sb, 0.0)])
    assert z.peak_torque_nm == 30.0 and z.duration_s == pytest.approx(sa.duration_s)
    assert combine_spectra([(sb, 1.0), (sa, 0.0)]).peak_torque_nm == 28.0
    assert combine_spectra([(sa, 0.0)]).peak_torque_nm == 0.0
    assert combine_spectra([(sa, 1.0), (sa, 2.0)]).source == "histogram"
    # one part without the moments: the sum has none
    assert combine_spectra([(sa, 1.0), (_from_samples(*b, moments=False), 1.0)]
                           ).torque_time_nm_s is None
    assert combine_spectra([(sa, 1.0), (_from_samples(*b), 1.0)]).power_sums is None
    with pytest.raises(InputError, match="at least one spectrum"):
        combine_spectra([])


def test_load_duration_curve_by_hand():
    # time at or above each level (the load-duration curve of power engineering), by hand:
    # one torque per bin: |-30| 0.1 s, |3| 0.2 s, |12| 0.15 s, |-5| 0.3 s
    sp = _from_samples([-30.0, -5.0, 3.0, 12.0], [2.0, -1.0, 4.0, 1.5], [0.1, 0.3, 0.2, 0.15])
    level, at_or_above = load_duration(sp)
    np.testing.assert_allclose(level, [30.0, 12.0, 5.0, 3.0], rtol=1e-12)
    np.testing.assert_allclose(at_or_above, [0.1, 0.25, 0.55, 0.75], rtol=1e-12)


@pytest.mark.parametrize(("text", "want"), [("3", 3.0), ("10/3", 10 / 3), ("3.333", 3.333),
                                            (" 4 / 2 ", 2.0), ("1/8", 0.125)])
def test_life_exponent_text(text, want):
    # 3 for ball and 10/3 for roller bearings (ISO 281, basic rating life)
    assert parse_exponent(text) == want


@pytest.mark.parametrize("text", ["0", "-3", "1/0", "abc", "inf", "nan", "3/x", "/3", "2/-1"])
def test_bad_life_exponent_text_is_refused(text):
    with pytest.raises(InputError) as e:
        parse_exponent(text)
    # the message names the option, the text given and what was expected (RULES: bad input)
    assert e.value.file == "--exponent" and e.value.key == text
    assert e.value.expected == "a positive number such as 3 or 10/3"


def _bin_means(tq, wts):
    """Per (torque bin, speed bin) weighted mean torque of the samples, by hand with numpy."""
    return (np.histogram2d(TQ, W, bins=[TE, SE], weights=np.multiply(tq, wts))[0],
            np.histogram2d(TQ, W, bins=[TE, SE], weights=wts)[0])


def test_bin_routes_weight_by_time_or_by_revolutions_as_each_figure_needs():
    # speed bin (0, 5] of torque bin [10, 30) holds 12 N m (1.5 rad/s, 0.15 s) and 28 N m
    # (0.5 rad/s, 0.2 s): time-weighted mean 21.14, revolution-weighted 16.92 N m, so a figure
    # over time (RMS, load-duration, quadrants) and one over revolutions (T_eq) differ
    tq, w, dt = map(np.asarray, (TQ, W, DT))
    sp = _from_samples(tq, w, dt)
    mt, t = _bin_means(tq, dt)
    mr, n = _bin_means(tq, np.abs(w) * dt)
    tmean = np.where(t > 0, mt / np.where(t > 0, t, 1), 0.0)
    rmean = np.where(n > 0, mr / np.where(n > 0, n, 1), 0.0)
    assert tmean[3, 1] == pytest.approx((12 * 0.15 + 28 * 0.2) / 0.35, rel=1e-12)
    assert rmean[3, 1] == pytest.approx((12 * 0.225 + 28 * 0.1) / 0.325, rel=1e-12)
    assert rms_torque_nm(sp) == pytest.approx(math.sqrt((tmean**2 * t).sum() / t.sum()),
                                              rel=1e-12)
    for p in (1.5, 3.0):
        want = ((np.abs(rmean)**p * n).sum() / n.sum()) ** (1 / p)
        assert histogram_equivalent_torque_nm(sp, p) == pytest.approx(want, rel=1e-12)
    level, at_or_above = load_duration(sp)
    keep = t.ravel() > 0
    order = np.argsort(-np.abs(tmean).ravel()[keep])
    np.testing.assert_allclose(level, np.abs(tmean).ravel()[keep][order], rtol=1e-12)
    np.testing.assert_allclose(at_or_above, np.cumsum(t.ravel()[keep][order]), rtol=1e-12)
    # the chord bound of bin [10, 30) uses the revolution-weighted mean (a, b = 10, 30):
    one = _from_samples([12.0, 28.0], [1.5, 0.5], [0.15, 0.2])
    m = (12 * 0.225 + 28 * 0.1) / 0.325
    chord = (10.0**3 * (30 - m) + 30.0**3 * (m - 10)) / 20
    assert equivalent_torque_bounds(one, 3.0) == (pytest.approx(m, rel=1e-12),
                                                  pytest.approx(chord ** (1 / 3), rel=1e-12))


def test_chord_bound_of_bins_touching_zero_and_of_linear_and_mild_exponents():
    # a bin with an edge at zero is not across zero: chord from 0 to its far edge
    # ([0, 10) holding 3 N m: chord 10^p * 3/10; [-20, 0) holding -5 N m: 20^p * 5/20)
    for tq, b in ((3.0, 10.0), (-5.0, 20.0)):
        sp = _from_samples([tq], [1.0], [1.0])
        for p in (1.5, 3.0):
            assert equivalent_torque_bounds(sp, p)[1] == pytest.approx(
                (b**p * abs(tq) / b) ** (1 / p), rel=1e-12)
        # p = 1: x^1 is its own chord, the bound closes on the estimate
        low, up = equivalent_torque_bounds(sp, 1.0)
        assert up == pytest.approx(low, rel=1e-12) and low == pytest.approx(abs(tq), rel=1e-12)
    # a bin across zero with its upper edge below 1 N m: bounded by the larger |edge|^p
    te = np.array([-10.0, 0.5])
    across = JointSpectrum("j", te, SE, np.array([[1.0, 0.0]]), np.array([[2.0, 0.0]]),
                           1.0, 5.0, "histogram", np.array([[-2.0 * 4.0, 0.0]]), None)
    assert equivalent_torque_bounds(across, 3.0) == (pytest.approx(4.0, rel=1e-12),
                                                     pytest.approx(10.0, rel=1e-12))
    # torques below 1 N m: the share is still up/low - 1
    small = _from_samples([0.2, 0.4], [1.0, 1.0], [1.0, 1.0])
    low, up = equivalent_torque_bounds(small, 3.0)
    assert low == pytest.approx(0.3, rel=1e-12)
    assert equivalent_torque_detail(small, 3.0)["bias_bound"] == pytest.approx(up / low - 1)
    assert up / low - 1 > 0.1


def test_rms_of_zero_duration_is_zero_even_with_the_exact_integral():
    z = JointSpectrum("j", TE, SE, np.zeros((4, 2)), np.zeros((4, 2)), 0.0, 0.0,
                      torque_sq_time_nm2_s=0.0)
    assert rms_torque_nm(z) == 0.0


def test_quadrants_by_hand():
    # driving: torque and speed of one sign (power out of the joint); braking: opposite signs.
    # Samples: +12 N m at +1.5 rad/s 0.15 s (driving), -5 at -1 0.3 s (driving),
    # -30 at +2 0.1 s (braking), +3 at -4 0.2 s (braking)
    sp = _from_samples([12.0, -5.0, -30.0, 3.0], [1.5, -1.0, 2.0, -4.0], [0.15, 0.3, 0.1, 0.2])
    q = quadrant_split(sp)
    assert q["driving"]["time_s"] == pytest.approx(0.45, rel=1e-12)
    assert q["braking"]["time_s"] == pytest.approx(0.3, rel=1e-12)
    tp = 2 * math.pi
    assert q["driving"]["revolutions"] == pytest.approx((0.225 + 0.3) / tp, rel=1e-12)
    assert q["braking"]["revolutions"] == pytest.approx((0.2 + 0.8) / tp, rel=1e-12)
    assert q["neg_torque_neg_speed"]["time_s"] == pytest.approx(0.3, rel=1e-12)
    # a torque bin of mean 0.5 N m counts positive, zero torque counts positive (convention of
    # sim.loads.spectra.quadrant_split), a speed bin centred on 0 counts positive
    for tq in (0.5, 0.0):
        s = _from_samples([tq], [2.0], [1.0])
        assert quadrant_split(s)["pos_torque_pos_speed"]["time_s"] == pytest.approx(1.0)
    se = np.array([-1.0, 1.0, 1.5])  # centres 0 and 1.25
    s0 = JointSpectrum("j", TE, se, np.array([[0, 0], [0, 0], [0, 0], [1.0, 0]]),
                       np.zeros((4, 2)), 1.0, 20.0)
    assert quadrant_split(s0)["pos_torque_pos_speed"]["time_s"] == 1.0
    se = np.array([0.0, 1.0, 1.5])  # centres 0.5 and 1.25
    s1 = JointSpectrum("j", TE, se, np.array([[0, 0], [0, 0], [0, 0], [1.0, 0]]),
                       np.zeros((4, 2)), 1.0, 20.0)
    assert quadrant_split(s1)["pos_torque_pos_speed"]["time_s"] == 1.0
