"""Block-wise streaming statistics (sim.core.streams) against whole-series references."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from sim.core.streams import HighFrequencyShare, PowerSums, SignReversals

BLOCKS = (1, 5, 8000, 3, 150, 151, 2000, 9000, 7)


def _feed(acc, x):
    """Feed ``x`` in blocks of uneven lengths (as the run recorder's flushes are)."""
    i = k = 0
    while i < x.shape[0]:
        b = BLOCKS[k % len(BLOCKS)]
        acc.feed(x[i:i + b])
        i += b
        k += 1


def _series(n, dt, seed=1):
    rng = np.random.default_rng(seed)
    t = np.arange(n) * dt
    return np.stack([10 * np.sin(2 * np.pi * 3 * t) + rng.normal(0, 0.5, n),
                     np.cumsum(rng.normal(0, 1, n)),
                     np.where(np.arange(n) % 2 == 0, 1.0, -1.0) * 0.3 + 5.0], axis=1)


@pytest.mark.parametrize("dt", [1e-3, 5e-4])
def test_high_frequency_share_equals_a_whole_series_fir(dt):
    # reference: scipy.signal.firwin (windowed-sinc design, Hamming window) and
    # scipy.signal.convolve over the whole series at once ('valid': the samples with a full
    # window on both sides)
    x = _series(23456, dt)
    h = HighFrequencyShare(3, dt, 100.0)
    _feed(h, x)
    got = h.shares()
    k = h.half_length
    taps = signal.firwin(2 * k + 1, 100.0, fs=1.0 / dt, window="hamming")
    np.testing.assert_allclose(h.taps, taps, rtol=0, atol=1e-15)
    assert h.samples == x.shape[0] - 2 * k
    ref = []
    for c in range(3):
        r = x[k:-k, c] - signal.convolve(x[:, c], taps, mode="valid")
        ref.append(np.sqrt((r * r).sum() / (x[k:-k, c] ** 2).sum()))
    assert got is not None
    np.testing.assert_allclose(got, ref, rtol=1e-12)


def test_high_frequency_share_of_two_tones():
    # A sin(3 Hz) + B sin(300 Hz): the share above 100 Hz is B / sqrt(A^2 + B^2) (Parseval);
    # the FIR passes 3 Hz within its pass-band ripple (gain 1.0006, scipy.signal.freqz) and
    # stops 300 Hz (gain 2.6e-4): within 2e-3 of the ideal
    dt, n = 1e-3, 30000
    t = np.arange(n) * dt
    a, b = 10.0, 2.0
    x = (a * np.sin(2 * np.pi * 3 * t) + b * np.sin(2 * np.pi * 300 * t))[:, None]
    h = HighFrequencyShare(1, dt, 100.0)
    _feed(h, x)
    got = h.shares()
    assert got is not None
    assert got[0] == pytest.approx(b / math.hypot(a, b), rel=2e-3)


def test_a_slow_signal_leaves_almost_nothing_above_the_cut_off():
    # zero phase: a causal low-pass would leave its lag in the residual (a few per cent of a
    # 3 Hz signal at a 100 Hz cut-off); the centred FIR leaves its pass-band ripple only
    dt, n = 1e-3, 20000
    t = np.arange(n) * dt
    h = HighFrequencyShare(1, dt, 100.0)
    _feed(h, (20.0 * np.sin(2 * np.pi * 3 * t) + 5.0)[:, None])
    got = h.shares()
    assert got is not None and got[0] < 1e-3


def test_high_frequency_share_of_a_too_short_series_is_not_measured():
    h = HighFrequencyShare(2, 1e-3, 100.0)
    h.feed(np.ones((2 * h.half_length, 2)))
    assert h.shares() is None


def test_sign_reversals_match_a_whole_series_count():
    x = _series(20000, 1e-3, seed=4)
    acc = SignReversals(3, 1e-9)
    _feed(acc, x)
    for k in range(3):
        d = np.diff(x[:, k])
        s = np.sign(d[np.abs(d) > 1e-9])
        assert acc.count[k] == np.count_nonzero(s[1:] != s[:-1])
    # period-2 alternation reverses at every change after the first: n - 2 reversals
    assert acc.count[2] == 20000 - 2


def test_sign_reversals_of_a_sine_and_of_a_held_value():
    # a sine has two turning points per period; rounding noise below the dead band is ignored
    dt, f, n = 1e-3, 2.0, 10000
    t = np.arange(n) * dt
    x = np.stack([np.sin(2 * np.pi * f * t + 0.1),
                  5.0 + 1e-12 * np.where(np.arange(n) % 2 == 0, 1.0, -1.0)], axis=1)
    acc = SignReversals(2, [1e-9, 1e-9])
    _feed(acc, x)
    assert acc.count[0] == round(2 * f * n * dt)
    assert acc.count[1] == 0


@pytest.mark.parametrize("p", [3.0, 10.0 / 3.0, 9.0])
def test_power_sums_of_a_sine(p):
    # mean of |sin|^p over a period = Gamma((p+1)/2) / (sqrt(pi) Gamma(p/2 + 1)) (DLMF 5.12.2,
    # the beta integral); a Riemann sum over whole periods of a smooth periodic function is
    # exact to rounding, so sum |A sin|^p |w| dt = |w| T A^p * that mean
    dt, f, n, a, w = 1e-3, 2.0, 20000, 7.0, -1.5
    t = np.arange(n) * dt
    tau = (a * np.sin(2 * np.pi * f * t))[:, None]
    spd = np.full_like(tau, w)
    acc = PowerSums(1, [p])
    i = k = 0
    while i < n:
        b = BLOCKS[k % len(BLOCKS)]
        acc.feed(tau[i:i + b], spd[i:i + b], dt)
        i += b
        k += 1
    mean = math.gamma((p + 1) / 2) / (math.sqrt(math.pi) * math.gamma(p / 2 + 1))
    assert acc.power[0, 0] == pytest.approx(abs(w) * n * dt * a ** p * mean, rel=1e-9)
    assert acc.weight[0] == pytest.approx(abs(w) * n * dt, rel=1e-12)
