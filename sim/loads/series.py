"""Figures from the stored time series of a record: rainflow, stance/swing, exceedances, hold.

Takes a run record with time series (the every-step duty series, ``/joints/<joint>/...`` or
``/steps/<joint>/...`` when the other series are decimated, and ``/feet/<leg>/contact``) and
gives per joint its :class:`SeriesFigures`
(:func:`series_figures`): rainflow cycle totals of the load torque, the stance/swing split of
the spectrum, exceedance counts and time held at near-zero speed; and the rainflow cycle
matrices on given edges (:func:`cycle_matrices`). Records written histogram-only have no
series; these figures are then unavailable, with the reason
(:func:`series_unavailable_reason`).

Memory does not grow with the record: series are read ``rows`` samples at a time, and rainflow
cycles are not kept but added up as they close (:class:`sim.loads.damage.CycleTally`).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from sim.core.errors import RecordError
from sim.loads.damage import BasquinCurve, CycleMatrix, CycleTally, CycleTotals
from sim.loads.rainflow import ReversalStream
from sim.loads.spectra import TWO_PI, JointSpectrum
from sim.record import RunRecord

DEFAULT_HOLD_SPEED_RAD_S = 0.1
DEFAULT_HOLD_TORQUE_NM = 0.5
SERIES_CHUNK_ROWS = 262144


@dataclass(frozen=True)
class SeriesFigures:
    """Figures of one joint from the stored series of one record (or a weighted sum of
    records). Times in s, counts as numbers, all per the period the figures stand for.

    stance, swing: spectra on the histogram bins for samples with the joint's foot in / out
        of contact, or None when the record has no contact flags.
    hold_time_s: time with |speed| <= hold speed and |torque| >= hold torque.
    hold_torque_sq_time_nm2_s: integral of torque^2 over that time (for its RMS).
    levels_nm, upcrossings, time_above_s: |torque| rising above each level (count) and time
        spent above it.
    rainflow: totals of the rainflow cycles of the joint torque (ASTM E1049-85 5.4.4, residue
        as halves): counts, largest range, Miner sums on the S-N lines asked for and, after
        :func:`sim.loads.report.with_cycle_matrices`, the range x mean matrix. The cycles are not kept.
    duration_s: time covered by the series (samples x sample period).
    """

    joint: str
    duration_s: float
    stance: JointSpectrum | None
    swing: JointSpectrum | None
    hold_time_s: float
    hold_torque_sq_time_nm2_s: float
    levels_nm: tuple[float, ...]
    upcrossings: tuple[float, ...]
    time_above_s: tuple[float, ...]
    rainflow: CycleTotals


def _bin_index(edges: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Bin of each value as ``searchsorted(edges, x, "right") - 1`` clipped to the bins (the
    record writer's rule); uses arithmetic on evenly spaced edges, corrected at the edges."""
    nb = len(edges) - 1
    width = (edges[-1] - edges[0]) / nb
    if nb < 2 or not np.allclose(np.diff(edges), width, rtol=1e-12, atol=0.0):
        return np.clip(np.searchsorted(edges, x, side="right") - 1, 0, nb - 1)
    i = np.floor((x - edges[0]) / width)
    np.clip(i, 0, nb - 1, out=i)
    i = i.astype(np.intp)
    i -= (x < edges[i]) & (i > 0)
    i += (x >= edges[i + 1]) & (i < nb - 1)
    return i


class _JointAccumulator:
    def __init__(self, joint: str, te: np.ndarray, se: np.ndarray, dt: float,
                 levels: Sequence[float], hold_speed: float, hold_torque: float,
                 with_contact: bool, curves: Sequence[BasquinCurve] = ()):
        self.joint, self.te, self.se, self.dt = joint, te, se, dt
        self.levels = np.asarray(levels, float)
        self.hold_speed, self.hold_torque = hold_speed, hold_torque
        shape = (len(te) - 1, len(se) - 1)
        self.maps = ({k: [np.zeros(shape) for _ in range(4)] for k in ("stance", "swing")}
                     if with_contact else None)
        self.hold_t = 0.0
        self.hold_t2 = 0.0
        self.up = np.zeros(len(levels))
        self.above = np.zeros(len(levels))
        self.prev_above = np.zeros(len(levels), dtype=bool)
        self.first = True
        self.rf = ReversalStream(keep=False)
        self.tally = CycleTally(curves)
        self.n = 0
        self._extra = {"stance": (0.0, 0.0), "swing": (0.0, 0.0)}  # (int torque^2 dt, peak)

    def feed(self, tau: np.ndarray, w: np.ndarray, contact: np.ndarray | None) -> None:
        dt = self.dt
        self.n += tau.size
        self.tally.add(self.rf.feed(tau))
        a = np.abs(tau)
        aw = np.abs(w)
        hold = (aw <= self.hold_speed) & (a >= self.hold_torque)
        self.hold_t += float(hold.sum()) * dt
        self.hold_t2 += float((tau[hold] ** 2).sum()) * dt
        for k, lv in enumerate(self.levels):
            ab = a > lv
            self.above[k] += float(ab.sum()) * dt
            prev = np.concatenate(([self.prev_above[k] if not self.first else False], ab[:-1]))
            self.up[k] += float((ab & ~prev).sum())
            self.prev_above[k] = bool(ab[-1])
        self.first = False
        if self.maps is not None and contact is not None:
            size = (len(self.te) - 1) * (len(self.se) - 1)
            shape = self.maps["stance"][0].shape
            swing = contact == 0
            # one bincount per quantity: stance bins first, swing bins after them
            flat = (_bin_index(self.te, tau) * (len(self.se) - 1) + _bin_index(self.se, w)
                    + size * swing)
            n2 = 2 * size
            t_w = tau * aw
            sums = (np.bincount(flat, minlength=n2) * dt,
                    np.bincount(flat, weights=aw, minlength=n2) * (dt / TWO_PI),
                    np.bincount(flat, weights=t_w, minlength=n2) * (dt / TWO_PI),
                    np.bincount(flat, weights=tau, minlength=n2) * dt)
            t2 = tau * tau
            for k, (key, m) in enumerate((("stance", ~swing), ("swing", swing))):
                acc = self.maps[key]
                for q in range(4):
                    acc[q] += sums[q][k * size:(k + 1) * size].reshape(shape)
                sq = float(np.sum(t2, where=m)) * dt
                peak = float(np.max(a, where=m, initial=0.0))
                self._extra[key] = (self._extra[key][0] + sq, max(self._extra[key][1], peak))

    def result(self) -> SeriesFigures:
        dur = self.n * self.dt
        specs: dict[str, JointSpectrum | None] = {"stance": None, "swing": None}
        if self.maps is not None:
            for key, acc in self.maps.items():
                t2, peak = self._extra[key]
                specs[key] = JointSpectrum(self.joint, self.te, self.se, acc[0], acc[1],
                                           float(acc[0].sum()), peak, "series", acc[2],
                                           acc[3], t2)
        return SeriesFigures(self.joint, dur, specs["stance"], specs["swing"], self.hold_t,
                             self.hold_t2, tuple(self.levels.tolist()), tuple(self.up.tolist()),
                             tuple(self.above.tolist()), self._rainflow())

    def _rainflow(self) -> CycleTotals:
        self.tally.add(self.rf.finish())
        return self.tally.totals()


def series_unavailable_reason(rec: RunRecord, joints: Sequence[str]) -> str | None:
    """Why the series figures cannot be computed for ``rec`` (None if they can).

    A record whose series are decimated but which lacks the every-step duty series (format
    1) is refused instead (:meth:`sim.record.RunRecord.require_duty_series`): its figures
    would look safer than the run was."""
    if rec.n_samples == 0:
        return (f"{rec.path} holds histograms only (no time series): rainflow, stance/swing, "
                "exceedance counts and series-based hold time are unavailable")
    rec.require_duty_series()
    if not all(rec.has(rec.duty_name(j, "torque_nm")) for j in joints):
        return (f"{rec.path} holds histograms only (no time series): rainflow, stance/swing, "
                "exceedance counts and series-based hold time are unavailable")
    return None


def series_figures(rec: RunRecord, joints: Sequence[str], levels_nm: Mapping[str, Sequence[float]],
                   hold_speed_rad_s: float = DEFAULT_HOLD_SPEED_RAD_S,
                   hold_torque_nm: float = DEFAULT_HOLD_TORQUE_NM,
                   rows: int = SERIES_CHUNK_ROWS,
                   sn_curves: Sequence[BasquinCurve] = ()) -> dict[str, SeriesFigures]:
    """Series figures of ``joints`` of one record, read in chunks of ``rows`` samples.

    The stance/swing split of a joint uses the contact flag of its own leg (joint name
    prefix before ``_``); without ``/feet/<leg>/contact`` the split is None. Every step of
    the load torque and speed is read (``/steps`` in a decimated record) and counts for the
    time step; the decimated contact flags hold between their samples. The rainflow totals hold the Miner sum on each of
    ``sn_curves`` (and no cycle matrix). Raises :class:`RecordError` if the record has no
    series.
    """
    reason = series_unavailable_reason(rec, joints)
    if reason:
        raise RecordError(str(rec.path), "joints", "time series in the record: " + reason)
    dt = rec.duty_period_s
    legs = {j: j.split("_", 1)[0] for j in joints}
    leg_ok = {leg: rec.has(f"feet/{leg}/contact") for leg in set(legs.values())}
    accs = {}
    for j in joints:
        _, _, te, se = rec.histogram(j)
        accs[j] = _JointAccumulator(j, te, se, dt, levels_nm.get(j, ()), hold_speed_rad_s,
                                    hold_torque_nm, leg_ok[legs[j]], sn_curves)
    names: list[str] = []
    for j in joints:
        names += [load_series_name(rec, j), rec.duty_name(j, "speed_rad_s")]
    leg_list = sorted(leg for leg, ok in leg_ok.items() if ok)
    for arrays, flags in _duty_with_contact(rec, names, leg_list, rows):
        contact = dict(zip(leg_list, flags, strict=True))
        for k, j in enumerate(joints):
            accs[j].feed(np.asarray(arrays[2 * k], float), np.asarray(arrays[2 * k + 1], float),
                         contact.get(legs[j]))
    return {j: a.result() for j, a in accs.items()}


def _duty_with_contact(rec: RunRecord, names: list[str], legs: list[str], rows: int
                       ) -> Iterator[tuple[list[np.ndarray], list[np.ndarray]]]:
    """Chunks of the duty series ``names`` with the contact flags of ``legs`` beside them.

    In a decimated record the flags are sampled every ``decimation`` steps (sample ``i`` at
    step ``i * decimation`` of the duty series); each flag then holds for the steps up to the
    next sample."""
    contact = [f"feet/{leg}/contact" for leg in legs]
    if not rec.has_step_series:
        for _, arrays in rec.iter_chunks(names + contact, rows, reuse=True):
            yield arrays[:len(names)], arrays[len(names):]
        return
    dec = int(rec.attrs["decimation"])
    rows = max(dec, rows // dec * dec)
    flags = rec.iter_chunks(contact, rows // dec) if contact else None
    for _, arrays in rec.iter_chunks(names, rows, reuse=True):
        held: list[np.ndarray] = []
        if flags is not None:
            _, f = next(flags)
            held = [np.repeat(x, dec)[:arrays[0].shape[0]] for x in f]
        yield arrays, held


def load_series_name(rec: RunRecord, joint: str) -> str:
    """Dataset of the every-step load torque of ``joint``: the reducer output torque series
    (``gearbox_torque_nm`` when rotors or reducer losses were simulated, else ``torque_nm``),
    under ``/steps`` in a decimated record (:meth:`sim.record.RunRecord.duty_name`)."""
    return rec.duty_name(joint, str(rec.attrs.get("load_torque", "torque_nm")))


def cycle_matrices(rec: RunRecord, edges: Mapping[str, tuple[np.ndarray, np.ndarray]],
                   rows: int = SERIES_CHUNK_ROWS) -> dict[str, CycleMatrix]:
    """Rainflow cycle matrix of each joint in ``edges`` (joint -> (range edges, mean edges))
    from the load torque series of ``rec``, read in chunks of ``rows`` samples; the same
    cycles as :func:`series_figures`, binned as :meth:`sim.loads.rainflow.Cycles.matrix`."""
    joints = list(edges)
    reason = series_unavailable_reason(rec, joints)
    if reason:
        raise RecordError(str(rec.path), "joints", "time series in the record: " + reason)
    streams = {j: ReversalStream(keep=False) for j in joints}
    tallies = {j: CycleTally(edges=edges[j]) for j in joints}
    for _, arrays in rec.iter_chunks([load_series_name(rec, j) for j in joints], rows,
                                     reuse=True):
        for j, a in zip(joints, arrays, strict=True):
            tallies[j].add(streams[j].feed(np.asarray(a, float)))
    out = {}
    for j in joints:
        tallies[j].add(streams[j].finish())
        m = tallies[j].totals().matrix
        assert m is not None
        out[j] = m
    return out

