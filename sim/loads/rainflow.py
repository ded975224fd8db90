"""Rainflow cycle counting (ASTM E1049-85, section 5.4.4).

Takes a load series (or a record's series chunk by chunk) and gives its rainflow cycles, in
stages each usable on its own:

1. :func:`find_reversals` - the turning points of a series (vectorised with numpy), with the
   first and last sample kept, plateaus reported at their last sample. :class:`ReversalStream`
   does the same chunk by chunk, so a long record never has to sit in memory.
2. :func:`extract_cycles` - closed cycles and the residue. The three-point rule of ASTM
   E1049-85 section 5.4.4 removes a range Y (points B, C) as one full cycle when the range
   before it is strictly larger and the range after it is at least as large; whatever is left
   at the end (the residue) is counted as **half cycles**, one per remaining range, as the
   standard's section 5.4.4 does. Removals never interfere when they do not share a point, so
   every range that is a local minimum of the range sequence is removed in the same
   vectorised pass; passes repeat until few ranges close, and the standard's stack procedure
   finishes the (short) remainder. The cycles found, with their start and end sample index,
   are the same as those of the stack procedure run alone.
3. :func:`count_by_range` and :meth:`Cycles.matrix` (range x mean).

Palmgren-Miner damage with a Basquin S-N line and the exact totals of cycles fed chunk by
chunk (:class:`~sim.loads.damage.CycleTally`) are in :mod:`sim.loads.damage`.

Sources: ASTM E1049-85 (reapproved 2011), Standard practices for cycle counting in fatigue
analysis, section 5.4.4; Matsuishi & Endo (1968).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from sim.core.errors import InputError

# a vectorised pass that closes fewer ranges than this share of the points left hands the rest
# to the stack procedure (keeps pathological, nested histories linear in time)
_MIN_SHARE_PER_PASS = 0.02
_MIN_PER_PASS = 256


@dataclass(frozen=True)
class Cycles:
    """Counted cycles of one series (arrays of equal length ``[cycle]``).

    range: peak-to-valley range |x_start - x_end| (units of the series, e.g. N m).
    mean: (x_start + x_end) / 2.
    count: 1.0 for a closed cycle, 0.5 for a half cycle of the residue.
    i_start, i_end: sample indices of the two turning points (i_start < i_end).
    """

    range: np.ndarray
    mean: np.ndarray
    count: np.ndarray
    i_start: np.ndarray
    i_end: np.ndarray

    @property
    def total(self) -> float:
        """Number of cycles, half cycles counting 0.5."""
        return float(self.count.sum())

    def scaled(self, factor: float) -> Cycles:
        """The same cycles with counts multiplied by ``factor`` (e.g. repetitions per day)."""
        return Cycles(self.range, self.mean, self.count * factor, self.i_start, self.i_end)

    def matrix(self, range_edges: np.ndarray, mean_edges: np.ndarray) -> np.ndarray:
        """Cycle counts binned ``[range_bin, mean_bin]``; values outside the edges are clipped
        into the first or last bin so no cycle is lost."""
        re_ = np.asarray(range_edges, float)
        me = np.asarray(mean_edges, float)
        ir = np.clip(np.searchsorted(re_, self.range, side="right") - 1, 0, len(re_) - 2)
        im = np.clip(np.searchsorted(me, self.mean, side="right") - 1, 0, len(me) - 2)
        flat = ir * (len(me) - 1) + im
        out = np.bincount(flat, weights=self.count, minlength=(len(re_) - 1) * (len(me) - 1))
        return out.reshape(len(re_) - 1, len(me) - 1)

    def to_pandas(self):  # pragma: no cover - thin convenience
        import pandas as pd

        return pd.DataFrame({"range": self.range, "mean": self.mean, "count": self.count,
                             "i_start": self.i_start, "i_end": self.i_end})


def concat_cycles(parts: Iterable[Cycles]) -> Cycles:
    """Cycles of several series (or several weighted records) taken together."""
    ps = list(parts)
    if not ps:
        return _empty_cycles()
    return Cycles(*(np.concatenate([getattr(p, f) for p in ps])
                    for f in ("range", "mean", "count", "i_start", "i_end")))


def _empty_cycles() -> Cycles:
    z = np.zeros(0)
    zi = np.zeros(0, dtype=np.int64)
    return Cycles(z, z.copy(), z.copy(), zi, zi.copy())


def _as_series(x: object) -> np.ndarray:
    a = np.asarray(x, dtype=float).reshape(-1)
    if not np.all(np.isfinite(a)):
        raise InputError(None, "series", "finite numbers for rainflow counting (found NaN or inf)")
    return a


def find_reversals(series: object) -> tuple[np.ndarray, np.ndarray]:
    """Turning points of ``series``: ``(values, sample_indices)``.

    A point is a reversal where the sign of the slope changes; equal neighbouring samples
    (plateaus) are skipped and a plateau reversal is reported at its last sample. The first
    and the last sample are always kept for series of three samples or more; a series of two
    keeps only its first sample and a single sample gives none (as the reference library
    ``rainflow`` 3.2.0 does, so counts agree exactly).
    """
    x = _as_series(series)
    n = x.size
    if n < 2:
        return np.zeros(0), np.zeros(0, dtype=np.int64)
    if n == 2:
        return x[:1].copy(), np.zeros(1, dtype=np.int64)
    d = np.diff(x)
    if d.all():  # no plateaus: the common case for measured or simulated signals
        up = d > 0
        turn = np.flatnonzero(up[1:] != up[:-1]) + 1
    else:
        nz = np.flatnonzero(d)
        s = d[nz] > 0
        turn = nz[1:][s[1:] != s[:-1]]  # point before the first diff of the new direction
    idx = np.empty(turn.size + 2, dtype=np.int64)
    idx[0] = 0
    idx[1:-1] = turn
    idx[-1] = n - 1
    return x[idx], idx


class ReversalStream:
    """Reversals of a long series fed chunk by chunk (same result as :func:`find_reversals`
    on the whole series), with closed cycles taken out as it goes so memory stays small.

    ``feed(chunk)`` in order; each call returns the cycles that chunk closed. ``finish()``
    then returns all cycles of the series (closed ones, then the residue as halves). With
    ``keep=False`` nothing is kept once returned: ``finish()`` returns only the cycles not
    returned by ``feed`` (the last closures and the residue), and what stays in memory is the
    not yet closed reversals, whatever the length of the series.
    """

    def __init__(self, keep: bool = True) -> None:
        self._keep = keep
        self._n = 0  # samples seen
        self._last = 0.0  # last sample value
        self._sign = 0.0  # sign of the last non-zero slope
        self._cycles: list[Cycles] = []
        self._pend_v = np.zeros(0)  # reversals not yet closed (without the provisional end)
        self._pend_i = np.zeros(0, dtype=np.int64)

    @property
    def pending(self) -> int:
        """Number of reversals held, waiting to close (the state that stays in memory)."""
        return int(self._pend_v.size)

    def feed(self, chunk: object) -> Cycles:
        """Take the next samples; return the cycles they closed."""
        x = _as_series(chunk)
        if x.size == 0:
            return _empty_cycles()
        start = self._n
        if start == 0:
            head_v, head_i = x[:1], np.zeros(1, dtype=np.int64)
            ext = x
            offset = 0
        else:
            head_v, head_i = np.zeros(0), np.zeros(0, dtype=np.int64)
            ext = np.concatenate(([self._last], x))
            offset = start - 1
        d = np.diff(ext)
        nz = np.flatnonzero(d)
        if nz.size:
            s = np.sign(d[nz])
            prev = np.concatenate(([self._sign], s[:-1]))
            mask = (s != prev) & (prev != 0)
            turn = nz[mask]
            tv = ext[turn]
            ti = turn.astype(np.int64) + offset
            self._sign = float(s[-1])
        else:
            tv, ti = np.zeros(0), np.zeros(0, dtype=np.int64)
        self._n += x.size
        self._last = float(x[-1])
        v = np.concatenate((self._pend_v, head_v, tv))
        i = np.concatenate((self._pend_i, head_i, ti))
        # peel with the current last sample as a provisional end point: the range to it can
        # only grow with more data, so every closure found now stays valid
        v_ext = np.append(v, self._last)
        i_ext = np.append(i, self._n - 1)
        parts, v_left, i_left = _peel(v_ext, i_ext, finish=False)
        self._pend_v, self._pend_i = v_left[:-1], i_left[:-1]
        closed = concat_cycles(parts)
        if self._keep:
            self._cycles.append(closed)
        return closed

    def finish(self) -> Cycles:
        """All cycles of the series fed so far (closed ones, then the residue as halves); with
        ``keep=False`` only those not yet returned by :meth:`feed`."""
        if self._n == 0:
            return _empty_cycles()
        if self._n < 3:
            v, i = self._pend_v, self._pend_i  # only the first sample
        else:
            v = np.append(self._pend_v, self._last)
            i = np.append(self._pend_i, self._n - 1)
        parts, _, _ = _peel(v, i, finish=True)
        return concat_cycles([*self._cycles, *parts])


def _cycles_from(a_v: np.ndarray, b_v: np.ndarray, a_i: np.ndarray, b_i: np.ndarray,
                 count: float) -> Cycles:
    return Cycles(np.abs(b_v - a_v), 0.5 * (a_v + b_v), np.full(a_v.size, count),
                  a_i.astype(np.int64), b_i.astype(np.int64))


def _peel(v: np.ndarray, idx: np.ndarray, finish: bool
          ) -> tuple[list[Cycles], np.ndarray, np.ndarray]:
    """Remove closed cycles from reversals ``v`` (sample indices ``idx``).

    Vectorised passes remove every interior range r[k] with r[k-1] > r[k] <= r[k+1]; the
    first and last point are never removed. With ``finish`` the remainder goes through the
    ASTM E1049-85 5.4.4 stack procedure and the residue is returned as half cycles.
    """
    parts: list[Cycles] = []
    while v.size >= 4:
        r = np.diff(v)
        np.abs(r, out=r)
        mid = r[1:-1]
        close = np.greater(r[:-2], mid)
        close &= np.less_equal(mid, r[2:])
        k = np.flatnonzero(close)
        if k.size == 0:
            break
        k += 1
        k1 = k + 1
        parts.append(_cycles_from(v[k], v[k1], idx[k], idx[k1], 1.0))
        keep = np.ones(v.size, dtype=bool)
        keep[k] = False
        keep[k1] = False
        v, idx = v[keep], idx[keep]
        if k.size < max(_MIN_PER_PASS, _MIN_SHARE_PER_PASS * v.size):
            break
    if finish:
        parts.append(_stack_count(v, idx))
    return parts, v, idx


def _stack_count(v: np.ndarray, idx: np.ndarray) -> Cycles:
    """ASTM E1049-85 5.4.4 three-point procedure on reversals (plain loop; used on the short
    remainder left by the vectorised passes)."""
    full_a: list[int] = []
    full_b: list[int] = []
    half_a: list[int] = []
    half_b: list[int] = []
    stack: list[int] = []  # positions into v
    vals = v.tolist()
    start = 0  # position in stack of the current starting point
    for p in range(len(vals)):
        stack.append(p)
        while len(stack) - start >= 3:
            x3, x2, x1 = vals[stack[-1]], vals[stack[-2]], vals[stack[-3]]
            if abs(x3 - x2) < abs(x2 - x1):
                break
            if len(stack) - start == 3:
                half_a.append(stack[start])  # Y holds the starting point: half cycle
                half_b.append(stack[start + 1])
                start += 1
            else:
                full_a.append(stack[-3])
                full_b.append(stack[-2])
                last = stack.pop()
                del stack[-2:]
                stack.append(last)
    rest = stack[start:]
    half_a.extend(rest[:-1])
    half_b.extend(rest[1:])
    fa = np.asarray(full_a, dtype=np.int64)
    fb = np.asarray(full_b, dtype=np.int64)
    ha = np.asarray(half_a, dtype=np.int64)
    hb = np.asarray(half_b, dtype=np.int64)
    return concat_cycles([_cycles_from(v[fa], v[fb], idx[fa], idx[fb], 1.0),
                          _cycles_from(v[ha], v[hb], idx[ha], idx[hb], 0.5)])


def extract_cycles(series: object) -> Cycles:
    """Rainflow cycles of ``series`` by ASTM E1049-85 5.4.4, residue as half cycles.

    >>> ranges, counts = count_by_range(extract_cycles([-2, 1, -3, 5, -1, 3, -4, 4, -2]))
    >>> ranges.tolist(), counts.tolist()
    ([3.0, 4.0, 6.0, 8.0, 9.0], [0.5, 1.5, 0.5, 1.0, 0.5])
    """
    v, idx = find_reversals(series)
    parts, _, _ = _peel(v, idx, finish=True)
    return concat_cycles(parts)


def count_by_range(cycles: Cycles) -> tuple[np.ndarray, np.ndarray]:
    """``(ranges, counts)``: the distinct ranges, ascending, and the cycles at each (equal
    ranges added up, no binning). ``list(zip(*count_by_range(c)))`` has the form of
    ``rainflow.count_cycles``."""
    if cycles.range.size == 0:
        return np.zeros(0), np.zeros(0)
    u, inv = np.unique(cycles.range, return_inverse=True)
    return u, np.bincount(inv, weights=cycles.count, minlength=u.size)
