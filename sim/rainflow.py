"""Rainflow cycle counting (ASTM E1049-85, section 5.4.4) and Palmgren-Miner damage.

Three stages, each usable on its own:

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
3. :func:`count_by_range`, :meth:`Cycles.matrix` (range x mean) and Palmgren-Miner damage
   with a Basquin S-N line (:class:`BasquinCurve`).

Sources: ASTM E1049-85 (reapproved 2011), Standard practices for cycle counting in fatigue
analysis, section 5.4.4; Matsuishi & Endo (1968); Miner, J. Appl. Mech. 12 (1945) A159-A164;
Basquin, Proc. ASTM 10 (1910).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from sim.errors import InputError

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

    ``feed(chunk)`` in order, then ``finish()`` returns the :class:`Cycles`.
    """

    def __init__(self) -> None:
        self._n = 0  # samples seen
        self._last = 0.0  # last sample value
        self._sign = 0.0  # sign of the last non-zero slope
        self._vals: list[np.ndarray] = []  # final reversals not yet peeled
        self._idx: list[np.ndarray] = []
        self._cycles: list[Cycles] = []
        self._pend_v = np.zeros(0)
        self._pend_i = np.zeros(0, dtype=np.int64)

    def feed(self, chunk: object) -> None:
        x = _as_series(chunk)
        if x.size == 0:
            return
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
        self._cycles.extend(parts)
        self._pend_v, self._pend_i = v_left[:-1], i_left[:-1]

    def finish(self) -> Cycles:
        """All cycles of the series fed so far (closed ones, then the residue as halves)."""
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


@dataclass(frozen=True)
class BasquinCurve:
    """S-N line in range form: N(S) = cycles_ref * (range_ref / S) ** exponent.

    Basquin (1910) written for load ranges (the log-linear form N = N_D (S_D/S)^k). Ranges at
    or below ``cutoff_range`` do no damage (an endurance cut-off; 0 means none). The
    reference point and exponent must come from test or material data.

    ::

        log S |\\
              |  \\  slope -1/k
              |    \\
              |      o (cycles_ref, range_ref)
              |        \\________ cutoff (optional)
              +------------------ log N
    """

    range_ref: float
    cycles_ref: float
    exponent: float
    cutoff_range: float = 0.0

    def __post_init__(self) -> None:
        for name in ("range_ref", "cycles_ref", "exponent"):
            val = getattr(self, name)
            if not (np.isfinite(val) and val > 0):
                raise InputError(None, f"sn.{name}", "a positive number", val)
        if not (np.isfinite(self.cutoff_range) and self.cutoff_range >= 0):
            raise InputError(None, "sn.cutoff_range", "a number >= 0", self.cutoff_range)

    def cycles_to_failure(self, range_: np.ndarray | float) -> np.ndarray:
        """Allowed cycles N at each range (inf at zero range or at/below the cut-off)."""
        s = np.asarray(range_, float)
        with np.errstate(divide="ignore"):
            n = self.cycles_ref * (self.range_ref / s) ** self.exponent
        return np.where((s <= self.cutoff_range) | (s <= 0), np.inf, n)

    def range_for_cycles(self, cycles: np.ndarray | float) -> np.ndarray:
        """Inverse of :meth:`cycles_to_failure` on the sloped part of the line."""
        n = np.asarray(cycles, float)
        return self.range_ref * (self.cycles_ref / n) ** (1.0 / self.exponent)


def miner_damage(cycles: Cycles, curve: BasquinCurve) -> float:
    """Palmgren-Miner damage sum D = sum n_i / N_i (failure predicted at D = 1)."""
    if cycles.range.size == 0:
        return 0.0
    return float((cycles.count / curve.cycles_to_failure(cycles.range)).sum())


def damage_equivalent_range(cycles: Cycles, exponent: float, n_eq: float) -> float:
    """Range that does the same Miner damage in ``n_eq`` cycles on a line of slope ``exponent``:
    S_eq = (sum n_i S_i^k / n_eq) ** (1/k)."""
    if n_eq <= 0:
        raise InputError(None, "n_eq", "a positive number of cycles", n_eq)
    return float(((cycles.count * cycles.range**exponent).sum() / n_eq) ** (1.0 / exponent))
