"""Palmgren-Miner damage on a Basquin S-N line, and exact totals of rainflow cycles.

Takes rainflow cycles (:class:`sim.loads.rainflow.Cycles`) and gives their Miner damage on a
Basquin S-N line (:class:`BasquinCurve`, :func:`miner_damage`), the damage-equivalent range,
and, for long records whose cycles need not be kept, :class:`CycleTally`: it takes the cycles
that a :class:`~sim.loads.rainflow.ReversalStream` closes chunk by chunk and keeps only what
the duty figures use (numbers of closed and half cycles, largest range, extreme means, Miner
sums per S-N line, sums of count x range^k, a range x mean matrix on edges given up front), in
memory that does not grow with the number of cycles. Its sums are exact (:class:`ExactSum`,
rounded once at the end), so the totals do not depend on the order in which cycles arrive and
a record read in chunks of any size gives the same bits as the whole series at once. Totals
of several records combine with weights (:func:`combine_totals`, :func:`combine_matrices`).

Sources: Miner, J. Appl. Mech. 12 (1945) A159-A164; Basquin, Proc. ASTM 10 (1910).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from sim.core.errors import InputError
from sim.loads.rainflow import Cycles


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
    """Palmgren-Miner damage sum D = sum n_i / N_i (failure predicted at D = 1), summed
    exactly and rounded once (the same bits whatever the order of the cycles)."""
    if cycles.range.size == 0:
        return 0.0
    return ExactSum(cycles.count / curve.cycles_to_failure(cycles.range)).value()


def damage_equivalent_range(cycles: Cycles, exponent: float, n_eq: float) -> float:
    """Range that does the same Miner damage in ``n_eq`` cycles on a line of slope ``exponent``:
    S_eq = (sum n_i S_i^k / n_eq) ** (1/k)."""
    if n_eq <= 0:
        raise InputError(None, "n_eq", "a positive number of cycles", n_eq)
    total = ExactSum(cycles.count * cycles.range**exponent).value()
    return float((total / n_eq) ** (1.0 / exponent))


# -- exact totals of cycles fed in chunks ---------------------------------------------------

_EXP_OFFSET = 1074  # np.frexp gives exponents >= -1073 for every finite double (subnormals too)
_SCALE_BITS = _EXP_OFFSET + 53  # every finite double is an integer multiple of 2**-_SCALE_BITS
_EXACT_BATCH = 1 << 24  # values per bincount: partial sums stay below 2**53, so exact


class ExactSum:
    """Exact sum of float64 values added in any order and in any batches; :meth:`value` rounds
    it once to the nearest double (round half to even), so the result does not depend on the
    order or grouping of the additions, unlike a running or pairwise float sum.

    Each finite value is m * 2**(e - 53) with an integer |m| < 2**53 (``numpy.frexp``); the
    mantissas are added per exponent (in two 26-bit halves, so float64 bincounts stay exact)
    into one Python integer counting units of 2**-1127. Non-finite values are added as floats
    and dominate the result, as in an ordinary sum.
    """

    __slots__ = ("_int", "_nonfinite")

    def __init__(self, values: object = ()) -> None:
        self._int = 0
        self._nonfinite = 0.0
        self.add(values)

    def add(self, values: object) -> None:
        x = np.asarray(values, dtype=float).reshape(-1)
        if x.size == 0:
            return
        fin = np.isfinite(x)
        if not fin.all():
            self._nonfinite += float(x[~fin].sum())
            x = x[fin]
        for s in range(0, x.size, _EXACT_BATCH):
            self._add_finite(x[s:s + _EXACT_BATCH])

    def _add_finite(self, x: np.ndarray) -> None:
        if x.size == 0:
            return
        m, e = np.frexp(x)
        mant = np.ldexp(m, 53).astype(np.int64)  # exact: |m| * 2**53 < 2**53
        hi = mant >> 26  # floor, so lo >= 0 and hi * 2**26 + lo == mant
        lo = mant & ((1 << 26) - 1)
        k = (e + _EXP_OFFSET).astype(np.intp)
        sh = np.bincount(k, weights=hi)
        sl = np.bincount(k, weights=lo)
        total = 0
        for kk in np.flatnonzero((sh != 0) | (sl != 0)).tolist():
            total += ((int(sh[kk]) << 26) + int(sl[kk])) << kk
        self._int += total

    def exact(self) -> Fraction:
        """The exact sum of the finite values added (a fraction with a power-of-two
        denominator)."""
        return Fraction(self._int, 1 << _SCALE_BITS)

    def value(self) -> float:
        """The sum rounded once to the nearest double (inf beyond the double range)."""
        try:
            v = self._int / (1 << _SCALE_BITS)  # int / int: correctly rounded in Python
        except OverflowError:
            v = math.inf if self._int > 0 else -math.inf
        return v + self._nonfinite if self._nonfinite else v


def _exact_weighted_sum(values: Sequence[float], weights: Sequence[float]) -> float:
    """sum(w * v) computed exactly and rounded once (values and weights finite)."""
    return float(sum((Fraction(w) * Fraction(v) for v, w in zip(values, weights, strict=True)),
                     Fraction(0)))


@dataclass(frozen=True)
class CycleMatrix:
    """Rainflow cycles binned by range and mean.

    range_edges: ``[nr + 1]``, mean_edges: ``[nm + 1]`` (units of the series).
    counts: ``[nr, nm]`` cycles in each bin (half cycles count 0.5), values outside the edges
        clipped into the first or last bin (as :meth:`Cycles.matrix`).
    """

    range_edges: np.ndarray
    mean_edges: np.ndarray
    counts: np.ndarray


def cycle_matrix_edges(max_range: float, mean_min: float, mean_max: float, bins: int = 20
                       ) -> tuple[np.ndarray, np.ndarray]:
    """Range and mean edges, ``bins`` bins each, spanning cycles whose largest range and
    extreme means are given: ranges from 0 to ``max_range``, means from ``mean_min`` to
    ``mean_max`` (with no cycles, ``mean_min > mean_max``: ranges 0-1 and means -1-1; a zero
    width is widened to 1)."""
    rmax = max_range if max_range > 0 else 1.0
    lo, hi = (mean_min, mean_max) if mean_min <= mean_max else (-1.0, 1.0)
    if hi <= lo:
        lo, hi = lo - 0.5, hi + 0.5
    return np.linspace(0.0, rmax, bins + 1), np.linspace(lo, hi, bins + 1)


@dataclass(frozen=True)
class CycleTotals:
    """What the duty figures use from the rainflow cycles of a series (or the weighted sum of
    several), without the cycles themselves.

    closed: closed cycles (times the weight).
    residue: cycles counted from the residue, 0.5 per half cycle (times the weight).
    total: closed + residue (the cycles of :attr:`Cycles.total`).
    max_range: largest cycle range (0 without cycles); mean_min, mean_max: extreme cycle means
        (+inf and -inf without cycles). Extremes are over every cycle counted, whatever the
        weight.
    curves, damage: the S-N lines and the Miner sum sum(n / N) on each (times the weight).
    exponents, range_moments: exponents k and sum(n * range^k) for each (times the weight).
    matrix: the range x mean :class:`CycleMatrix` (times the weight), or None when no edges
        were given.

    Sums over cycles are exact and rounded once; sums over weighted parts are exact sums of
    the parts' values times their weights, rounded once.
    """

    closed: float
    residue: float
    total: float
    max_range: float
    mean_min: float
    mean_max: float
    curves: tuple[BasquinCurve, ...] = ()
    damage: tuple[float, ...] = ()
    exponents: tuple[float, ...] = ()
    range_moments: tuple[float, ...] = ()
    matrix: CycleMatrix | None = None

    def miner_damage(self, curve: BasquinCurve) -> float:
        """Miner sum on ``curve`` (one of :attr:`curves`)."""
        if curve not in self.curves:
            raise KeyError(f"no Miner sum kept for {curve}")
        return self.damage[self.curves.index(curve)]

    def damage_equivalent_range(self, exponent: float, n_eq: float) -> float:
        """As :func:`damage_equivalent_range`, from the kept sum for ``exponent``."""
        if exponent not in self.exponents:
            raise KeyError(f"no sum of count x range^{exponent} kept")
        if n_eq <= 0:
            raise InputError(None, "n_eq", "a positive number of cycles", n_eq)
        moment = self.range_moments[self.exponents.index(exponent)]
        return float((moment / n_eq) ** (1.0 / exponent))


class CycleTally:
    """Running totals of unscaled rainflow cycles (count 1 for closed, 0.5 for residue
    halves), fed in any batches; :meth:`totals` gives :class:`CycleTotals`.

    Memory is fixed when the tally is made: a few numbers, one exact sum per S-N line and
    per exponent, and two integer matrices when ``edges`` (range edges, mean edges) are given.
    """

    def __init__(self, curves: Sequence[BasquinCurve] = (), exponents: Sequence[float] = (),
                 edges: tuple[np.ndarray, np.ndarray] | None = None) -> None:
        self.curves = tuple(curves)
        self.exponents = tuple(float(k) for k in exponents)
        self.n_closed = 0
        self.n_half = 0
        self.max_range = 0.0
        self.mean_min = math.inf
        self.mean_max = -math.inf
        self._damage = [ExactSum() for _ in self.curves]
        self._moments = [ExactSum() for _ in self.exponents]
        self.edges: tuple[np.ndarray, np.ndarray] | None = None
        self.closed_matrix: np.ndarray | None = None
        self.half_matrix: np.ndarray | None = None
        if edges is not None:
            re_, me = (np.asarray(e, float) for e in edges)
            self.edges = (re_, me)
            shape = (len(re_) - 1, len(me) - 1)
            self.closed_matrix = np.zeros(shape, dtype=np.int64)
            self.half_matrix = np.zeros(shape, dtype=np.int64)

    def add(self, cycles: Cycles) -> None:
        if cycles.range.size == 0:
            return
        full = cycles.count == 1.0
        nf = int(np.count_nonzero(full))
        nh = int(np.count_nonzero(cycles.count == 0.5))
        if nf + nh != cycles.count.size:
            raise ValueError("CycleTally takes unscaled cycles (counts 1 or 0.5)")
        self.n_closed += nf
        self.n_half += nh
        self.max_range = max(self.max_range, float(cycles.range.max()))
        self.mean_min = min(self.mean_min, float(cycles.mean.min()))
        self.mean_max = max(self.mean_max, float(cycles.mean.max()))
        for acc, curve in zip(self._damage, self.curves, strict=True):
            acc.add(cycles.count / curve.cycles_to_failure(cycles.range))
        for acc, k in zip(self._moments, self.exponents, strict=True):
            acc.add(cycles.count * cycles.range**k)
        if self.edges is not None:
            assert self.closed_matrix is not None and self.half_matrix is not None
            re_, me = self.edges
            nr, nm = len(re_) - 1, len(me) - 1
            ir = np.clip(np.searchsorted(re_, cycles.range, side="right") - 1, 0, nr - 1)
            im = np.clip(np.searchsorted(me, cycles.mean, side="right") - 1, 0, nm - 1)
            flat = ir * nm + im
            self.closed_matrix += np.bincount(flat[full], minlength=nr * nm).reshape(nr, nm)
            self.half_matrix += np.bincount(flat[~full], minlength=nr * nm).reshape(nr, nm)

    def totals(self) -> CycleTotals:
        matrix = None
        if self.edges is not None:
            assert self.closed_matrix is not None and self.half_matrix is not None
            matrix = CycleMatrix(self.edges[0], self.edges[1],
                                 self.closed_matrix + 0.5 * self.half_matrix)
        closed = float(self.n_closed)  # counts below 2**52: these sums are exact
        residue = 0.5 * self.n_half
        return CycleTotals(closed, residue, closed + residue,
                           self.max_range, self.mean_min, self.mean_max, self.curves,
                           tuple(a.value() for a in self._damage), self.exponents,
                           tuple(a.value() for a in self._moments), matrix)


def combine_matrices(parts: Sequence[tuple[CycleMatrix, float]]) -> CycleMatrix:
    """Sum of ``weight * counts`` over ``parts`` (matrices on the same edges), each bin
    summed exactly and rounded once."""
    if not parts:
        raise ValueError("combine_matrices needs at least one part")
    m0 = parts[0][0]
    for m, _ in parts:
        if not (np.array_equal(m.range_edges, m0.range_edges)
                and np.array_equal(m.mean_edges, m0.mean_edges)):
            raise ValueError("cycle matrices on different edges cannot be added")
    ws = [w for _, w in parts]
    cols = zip(*(m.counts.ravel().tolist() for m, _ in parts), strict=True)
    counts = np.array([_exact_weighted_sum(c, ws) for c in cols], dtype=float)
    return CycleMatrix(m0.range_edges, m0.mean_edges, counts.reshape(m0.counts.shape))


def combine_totals(parts: Sequence[tuple[CycleTotals, float]]) -> CycleTotals:
    """Totals of several series taken together, each counting ``weight`` times (e.g. records
    of a usage mix): sums weighted exactly and rounded once, extremes over all parts, matrices
    added. All parts need the same S-N lines and exponents, and matrices on the same edges
    (or no matrix in some part: then the result has none)."""
    if not parts:
        raise ValueError("combine_totals needs at least one part")
    ts = [t for t, _ in parts]
    ws = [w for _, w in parts]
    first = ts[0]
    if any(t.curves != first.curves or t.exponents != first.exponents for t in ts):
        raise ValueError("cycle totals kept for different S-N lines or exponents")

    def wsum(values: Iterable[float]) -> float:
        return _exact_weighted_sum(list(values), ws)

    mats = [t.matrix for t in ts]
    matrix = None
    if all(m is not None for m in mats):
        matrix = combine_matrices([(m, w) for m, w in zip(mats, ws, strict=True)
                                   if m is not None])
    nd, nk = len(first.curves), len(first.exponents)
    return CycleTotals(
        wsum(t.closed for t in ts), wsum(t.residue for t in ts), wsum(t.total for t in ts),
        max(t.max_range for t in ts), min(t.mean_min for t in ts), max(t.mean_max for t in ts),
        first.curves, tuple(wsum(t.damage[i] for t in ts) for i in range(nd)),
        first.exponents, tuple(wsum(t.range_moments[i] for t in ts) for i in range(nk)),
        matrix)
