"""Block-wise streaming statistics of multichannel series: fed block by block, O(1) memory,
equal to the same statistic computed on the whole series at once.

Takes ``[sample, channel]`` blocks of any length (the run recorder hands over up to a few
thousand steps at a time); gives, at the end, per channel:

* :class:`PowerSums` - ``sum |x|^p |w| dt`` for a set of exponents ``p`` and ``sum |w| dt``
  (the exact moments of a revolution-weighted p-th power mean).
* :class:`SignReversals` - how often the sign of the sample-to-sample change reverses,
  changes of at most ``deadband`` left out (they neither count nor carry a sign).
* :class:`HighFrequencyShare` - ``sum (x - lowpass(x))^2`` and ``sum x^2``, the low-pass a
  centred (zero-phase) windowed-sinc FIR filter.

Why zero phase: a causal low-pass lags, so ``x - lowpass(x)`` would keep part of the slow
signal (a 2nd-order Butterworth at 100 Hz lags a 3 Hz gait by about 2.4 degrees, leaving
some 4 % of its amplitude in the residual) and the share would grow with the gait's own
amplitude; a centred symmetric FIR has no lag, and leaves below 1e-3 of a slow signal (its
pass-band ripple: the 101-tap filter at 1 kHz passes 3 Hz with a gain of 1.0006). Why an FIR and not a forward-backward IIR: the FIR
streams exactly (each block is convolved with the ``2 K`` samples before it, so block edges
change nothing: the result equals the whole-series convolution), and it needs only numpy in
the simulation loop (``scipy.signal`` would add half a second of import and some 70 MiB to
every run). The first and last ``K`` samples of a series, which lack a full window, are left
out of the sums rather than padded, so the series' ends do not bias the share either.
"""

from __future__ import annotations

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


def lowpass_taps(cutoff_hz: float, dt: float, half_length: int) -> np.ndarray:
    """Symmetric low-pass FIR of ``2 half_length + 1`` taps: the windowed-sinc design
    (ideal low-pass impulse response ``2 fc dt sinc(2 fc dt n)`` times a Hamming window),
    scaled to unit gain at zero frequency - the design of :func:`scipy.signal.firwin` with
    ``window="hamming"``. Zero phase when centred: no lag between the signal and its low-pass.
    """
    n = np.arange(-half_length, half_length + 1, dtype=float)
    m = 2 * half_length + 1
    h = np.sinc(2.0 * cutoff_hz * dt * n) * (0.54 - 0.46 * np.cos(2.0 * np.pi * np.arange(m)
                                                                    / (m - 1)))
    return h / h.sum()


HALF_LENGTH_S = 0.05  # half the FIR's length in time: 101 taps at 1 kHz, a 33 Hz transition


class HighFrequencyShare:
    """Streaming ``sum (x - lowpass(x))^2`` and ``sum x^2`` per channel (module docstring).

    The low-pass is the centred (zero-phase) FIR of :func:`lowpass_taps`, ``K`` taps each
    side (``K = HALF_LENGTH_S / dt``). The sums run over every sample with ``K`` samples on
    both sides, so the first and last ``K`` samples of the series are left out and no end of
    the series is padded. Each block is convolved together with the ``2 K`` samples before it,
    so the result equals the whole-series ``valid`` convolution at any block lengths.
    """

    def __init__(self, n_channels: int, dt: float, cutoff_hz: float):
        self.cutoff_hz = float(cutoff_hz)
        self.half_length = max(1, round(HALF_LENGTH_S / dt))
        self.taps = lowpass_taps(cutoff_hz, dt, self.half_length)
        self.sum_residual_sq = np.zeros(n_channels)
        self.sum_sq = np.zeros(n_channels)
        self.samples = 0  # samples in the sums
        self._tail = np.zeros((0, n_channels))

    def feed(self, x: np.ndarray) -> None:
        x = np.asarray(x, float)
        if x.shape[0] == 0:
            return
        buf = np.concatenate([self._tail, x]) if self._tail.shape[0] else x
        k = self.half_length
        if buf.shape[0] > 2 * k:
            h = self.taps
            mid = buf[k:buf.shape[0] - k]
            for c in range(buf.shape[1]):
                r = mid[:, c] - np.convolve(buf[:, c], h, "valid")
                self.sum_residual_sq[c] += float(r @ r)
                self.sum_sq[c] += float(mid[:, c] @ mid[:, c])
            self.samples += mid.shape[0]
            buf = buf[buf.shape[0] - 2 * k:]
        self._tail = buf.copy()

    def shares(self) -> np.ndarray | None:
        """``sqrt(sum_residual_sq / sum_sq)`` per channel (0 where the signal is all zero),
        or None if the series was too short (at most ``2 K`` samples)."""
        if self.samples == 0:
            return None
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.sum_sq > 0, np.sqrt(self.sum_residual_sq
                                                     / np.where(self.sum_sq > 0, self.sum_sq,
                                                                1.0)), 0.0)
