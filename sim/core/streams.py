"""Block-wise streaming statistics of multichannel series: fed block by block, O(1) memory,
equal to the same statistic computed on the whole series at once.

Takes ``[sample, channel]`` blocks of any length (the run recorder hands over up to a few
thousand steps at a time); gives, at the end, per channel:

* :class:`PowerSums` - ``sum |x|^p |w| dt`` for a set of exponents ``p`` and ``sum |w| dt``
  (the exact moments of a revolution-weighted p-th power mean).
* :class:`SignReversals` - how often the sign of the sample-to-sample change reverses,
  changes of at most ``deadband`` left out (they neither count nor carry a sign).
* :class:`HighFrequencyShare` - ``sum (x - lowpass(x))^2`` and ``sum x^2``, the low-pass a
  zero-phase Butterworth filter (forward and backward, :func:`scipy.signal.sosfiltfilt`).

Why zero phase: a causal low-pass lags, so ``x - lowpass(x)`` would keep part of the slow
signal (a 2nd-order Butterworth at 100 Hz lags a 3 Hz gait by about 2.4 degrees, leaving
some 4 % of its amplitude in the residual) and the share would grow with the gait's own
amplitude. Forward-backward filtering has no phase lag; its magnitude response is the square
of the Butterworth's. Why it stays exact across blocks: each block is filtered together with
the last ``margin`` finished samples before it and only samples at least ``margin`` samples
from either cut are finished, so the start-up transients at the cuts (which decay like
``r^k``, ``r`` the largest pole radius) have fallen below 1e-15 of the signal; the true start
and end of the series are filtered with the same padding as a whole-series call.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np


class PowerSums:
    """``sum |x|^p |w| dt`` per exponent and ``sum |w| dt``, every sample (no binning)."""

    def __init__(self, n_channels: int, exponents: Sequence[float]):
        self.exponents = tuple(float(p) for p in exponents)
        self.power = np.zeros((len(self.exponents), n_channels))
        self.weight = np.zeros(n_channels)

    def feed(self, x: np.ndarray, w: np.ndarray, dt: float) -> None:
        ax = np.abs(np.asarray(x, float))
        aw = np.abs(np.asarray(w, float))
        self.weight += aw.sum(axis=0) * dt
        for i, p in enumerate(self.exponents):
            self.power[i] += (ax ** p * aw).sum(axis=0) * dt


class SignReversals:
    """Reversals of the sign of the sample-to-sample change, per channel.

    A change of at most ``deadband[channel]`` is left out: it neither counts nor sets the
    sign (a held value that moves by rounding noise is not a reversal).
    """

    def __init__(self, n_channels: int, deadband: Sequence[float] | float = 0.0):
        self.deadband = np.broadcast_to(np.asarray(deadband, float), (n_channels,)).copy()
        self.count = np.zeros(n_channels, dtype=np.int64)
        self.samples = 0
        self._last: np.ndarray | None = None
        self._sign = np.zeros(n_channels)

    def feed(self, x: np.ndarray) -> None:
        x = np.asarray(x, float)
        if x.shape[0] == 0:
            return
        prev = x[:1] if self._last is None else self._last[None, :]
        d = np.diff(x, axis=0, prepend=prev)
        self.samples += x.shape[0]
        self._last = x[-1].copy()
        for k in range(x.shape[1]):
            dk = d[:, k]
            s = np.sign(dk[np.abs(dk) > self.deadband[k]])
            if s.size == 0:
                continue
            if self._sign[k] != 0.0:
                s = np.concatenate(([self._sign[k]], s))
            self.count[k] += int(np.count_nonzero(s[1:] != s[:-1]))
            self._sign[k] = s[-1]


def butterworth_lowpass(cutoff_hz: float, dt: float, order: int = 4) -> np.ndarray:
    """Second-order sections of a digital Butterworth low-pass (:func:`scipy.signal.butter`)."""
    from scipy import signal

    return np.asarray(signal.butter(order, cutoff_hz, fs=1.0 / dt, output="sos"))


def settle_samples(sos: np.ndarray, tolerance: float = 1e-15) -> int:
    """Samples after which a start-up transient of the filter ``sos`` has decayed below
    ``tolerance`` of its size: ``log(tolerance) / log(r)``, ``r`` the largest pole radius."""
    from scipy import signal

    _, poles, _ = signal.sos2zpk(sos)
    r = float(np.abs(poles).max())
    return math.ceil(math.log(tolerance) / math.log(r)) + 1


class HighFrequencyShare:
    """Streaming ``sum (x - lowpass(x))^2`` and ``sum x^2`` per channel (module docstring).

    ``result()`` after ``finish()`` gives ``(sum_residual_sq, sum_sq)``; the share of the
    signal's RMS above the cut-off is ``sqrt(sum_residual_sq / sum_sq)``. Equal to the same
    sums over :func:`scipy.signal.sosfiltfilt` of the whole series (default padding).
    """

    def __init__(self, n_channels: int, dt: float, cutoff_hz: float, order: int = 4):
        self.cutoff_hz = float(cutoff_hz)
        self.order = order
        self.sos = butterworth_lowpass(cutoff_hz, dt, order)
        self.margin = settle_samples(self.sos)
        # sosfiltfilt's default pad length (scipy.signal.sosfiltfilt)
        n_sec = self.sos.shape[0]
        self.padlen = 3 * (2 * n_sec + 1 - min(int((self.sos[:, 2] == 0).sum()),
                                              int((self.sos[:, 5] == 0).sum())))
        self.sum_residual_sq = np.zeros(n_channels)
        self.sum_sq = np.zeros(n_channels)
        self.samples = 0
        self._lead = np.zeros((0, n_channels))  # finished samples kept as the next lead-in
        self._pending = np.zeros((0, n_channels))
        self.finished = False

    def _filter(self, win: np.ndarray, first: int, stop: int) -> None:
        from scipy import signal

        y = signal.sosfiltfilt(self.sos, win, axis=0)
        x = win[first:stop]
        r = x - y[first:stop]
        self.sum_residual_sq += (r * r).sum(axis=0)
        self.sum_sq += (x * x).sum(axis=0)

    def feed(self, x: np.ndarray) -> None:
        x = np.asarray(x, float)
        if x.shape[0] == 0:
            return
        self.samples += x.shape[0]
        self._pending = np.concatenate([self._pending, x])
        m = self.margin
        if self._pending.shape[0] <= m + self.padlen:
            return
        win = np.concatenate([self._lead, self._pending])
        first, stop = self._lead.shape[0], win.shape[0] - m
        self._filter(win, first, stop)
        self._lead = win[max(0, stop - m):stop].copy()
        self._pending = win[stop:].copy()

    def finish(self) -> None:
        """Finish the last samples (the true end of the series)."""
        if self.finished:
            return
        self.finished = True
        if self._pending.shape[0] == 0:
            return
        win = np.concatenate([self._lead, self._pending])
        if win.shape[0] <= self.padlen:  # too short to filter: not measured
            self.samples = 0
            self.sum_residual_sq[:] = 0.0
            self.sum_sq[:] = 0.0
            return
        self._filter(win, self._lead.shape[0], win.shape[0])
        self._pending = self._pending[:0]

    def shares(self) -> np.ndarray | None:
        """``sqrt(sum_residual_sq / sum_sq)`` per channel (0 where the signal is all zero),
        or None if the series was too short to filter."""
        if not self.finished:
            self.finish()
        if self.samples == 0:
            return None
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.sum_sq > 0, np.sqrt(self.sum_residual_sq
                                                     / np.where(self.sum_sq > 0, self.sum_sq,
                                                                1.0)), 0.0)
