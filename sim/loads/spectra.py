"""Duty spectra: run records reduced to time and revolutions at torque/speed levels.

Two sources feed the figures, and every result says which one it used:

* ``"histogram"`` - the record's every-step histograms and summary (accumulated at the
  simulation step, whatever the series decimation): time and revolutions at level, exact
  revolutions, exact in-bin mean torques, peak and RMS torque.
* ``"series"`` - the stored time series (``/joints/<joint>/...`` and ``/feet/<leg>/contact``,
  sampled every ``sample_period_s``), read in chunks: rainflow cycles, stance/swing split,
  exceedance counts and time held at near-zero speed. Records written histogram-only have no
  series; these figures are then reported as unavailable, with the reason.

Memory does not grow with the record: series are read ``rows`` samples at a time, and rainflow
cycles are not kept but added up as they close (:class:`sim.loads.rainflow.CycleTally`). The cycle
matrix of the CSV and the plot spans the cycles found, so its edges are known only after a
first pass; :func:`with_cycle_matrices` counts the matrix in a second pass over the torque.

Post-processing works on records alone and never imports the physics engine.

Library API for later checks: :func:`usage_spectra` (spectra of one day of use of a
:class:`sim.loads.mix.UsageMix`), :func:`spectrum_from_record`, :func:`equivalent_torque_nm`,
:func:`mean_abs_speed_rad_s`, :func:`rms_torque_nm`; :func:`duty_loads` computes everything
the ``gaitload loads`` command reports.
"""

from __future__ import annotations

import dataclasses
import fnmatch
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from sim.core.errors import InputError, RecordError
from sim.loads.mix import UsageMix
from sim.loads.rainflow import (
    BasquinCurve,
    CycleMatrix,
    CycleTally,
    CycleTotals,
    ReversalStream,
    combine_matrices,
    combine_totals,
    cycle_matrix_edges,
)
from sim.record import RunRecord, open_record

TWO_PI = 2.0 * math.pi
DEFAULT_EXPONENTS: tuple[str, ...] = ("3", "3.333")  # keys as in the documented JSON
DEFAULT_HOLD_SPEED_RAD_S = 0.1
DEFAULT_HOLD_TORQUE_NM = 0.5
DEFAULT_LEVEL_SHARES = (0.5, 0.75, 0.9)
SERIES_CHUNK_ROWS = 262144
CYCLE_MATRIX_BINS = 20  # range and mean bins of the cycle matrix (CSV, plot)


@dataclass(frozen=True)
class JointSpectrum:
    """Time at each torque x speed level for one joint.

    Attributes (SI; arrays are ``[torque_bin, speed_bin]`` or edges):
        joint: joint name, e.g. ``fl_knee``.
        torque_edges_nm: ``[nt + 1]`` bin edges of joint output torque.
        speed_edges_rad_s: ``[ns + 1]`` bin edges of joint output speed (signed).
        time_s: ``[nt, ns]`` seconds spent in each bin.
        revolutions: ``[nt, ns]`` output revolutions in each bin (exact sums of |speed| dt/2pi
            when built from a record, so mean speed carries no binning error).
        duration_s: time the spectrum stands for. From a record: the record's duration. From
            :func:`usage_spectra`: seconds of use in ONE DAY of the mix (sum over entries of
            weight x record duration; for a lone record, the record's duration).
        peak_torque_nm: largest |torque| seen (exact, not binned).
        source: ``"histogram"`` (accumulated every step) or ``"series"`` (from raw samples).
        torque_revolutions_nm: ``[nt, ns]`` sum of torque x revolutions in each bin (N m rev),
            or None; divided by ``revolutions`` it is the exact revolution-weighted mean
            torque inside the bin.
        torque_time_nm_s: ``[nt, ns]`` sum of torque x time in each bin (N m s), or None.
        torque_sq_time_nm2_s: exact integral of torque^2 dt over the whole spectrum (N^2 m^2 s)
            or None (then RMS is estimated from the bins).
    """

    joint: str
    torque_edges_nm: np.ndarray
    speed_edges_rad_s: np.ndarray
    time_s: np.ndarray
    revolutions: np.ndarray
    duration_s: float
    peak_torque_nm: float
    source: str = "histogram"
    torque_revolutions_nm: np.ndarray | None = None
    torque_time_nm_s: np.ndarray | None = None
    torque_sq_time_nm2_s: float | None = None

    @property
    def torque_centres_nm(self) -> np.ndarray:
        e = self.torque_edges_nm
        return 0.5 * (e[:-1] + e[1:])

    @property
    def speed_centres_rad_s(self) -> np.ndarray:
        e = self.speed_edges_rad_s
        return 0.5 * (e[:-1] + e[1:])

    def bin_mean_torque_nm(self, weight: str = "time") -> np.ndarray:
        """``[nt, ns]`` mean torque inside each bin (``weight`` "time" or "revolutions"),
        exact when the record holds the moments, else the bin centre; centre in empty bins."""
        centre = np.broadcast_to(self.torque_centres_nm[:, None], self.time_s.shape)
        mom, w = ((self.torque_time_nm_s, self.time_s) if weight == "time"
                  else (self.torque_revolutions_nm, self.revolutions))
        if mom is None:
            return np.array(centre)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = np.where(w > 0, mom / np.where(w > 0, w, 1.0), centre)
        return mean

    def scaled(self, factor: float) -> JointSpectrum:
        """The same spectrum standing for ``factor`` times as much time."""
        return JointSpectrum(
            self.joint, self.torque_edges_nm, self.speed_edges_rad_s,
            self.time_s * factor, self.revolutions * factor, self.duration_s * factor,
            self.peak_torque_nm, self.source,
            None if self.torque_revolutions_nm is None else self.torque_revolutions_nm * factor,
            None if self.torque_time_nm_s is None else self.torque_time_nm_s * factor,
            None if self.torque_sq_time_nm2_s is None else self.torque_sq_time_nm2_s * factor)


def combine_spectra(parts: Sequence[tuple[JointSpectrum, float]],
                    names: Sequence[str] | None = None) -> JointSpectrum:
    """Sum of ``weight * spectrum`` over ``parts`` (same joint, same bin edges).

    ``names`` (one per part, e.g. record paths) only label the error when edges differ.
    """
    if not parts:
        raise InputError(None, "spectra", "at least one spectrum to combine")
    first = parts[0][0]
    labels = list(names) if names is not None else [f"part {i}" for i in range(len(parts))]
    for (s, _), label in zip(parts, labels, strict=True):
        if (s.torque_edges_nm.shape != first.torque_edges_nm.shape
                or s.speed_edges_rad_s.shape != first.speed_edges_rad_s.shape
                or not np.array_equal(s.torque_edges_nm, first.torque_edges_nm)
                or not np.array_equal(s.speed_edges_rad_s, first.speed_edges_rad_s)):
            raise InputError(label, f"histograms/{s.joint}",
                             f"the same torque and speed bin edges as {labels[0]} "
                             "(spectra on different bins cannot be added exactly)")
    sc = [s.scaled(w) for s, w in parts]

    def total(name: str) -> Any:
        vals = [getattr(s, name) for s in sc]
        return None if any(v is None for v in vals) else sum(vals[1:], vals[0])

    sources = {s.source for s in sc}
    return JointSpectrum(
        first.joint, first.torque_edges_nm, first.speed_edges_rad_s,
        total("time_s"), total("revolutions"), float(sum(s.duration_s for s in sc)),
        max(s.peak_torque_nm for s, w in parts if w > 0) if any(w > 0 for _, w in parts) else 0.0,
        sources.pop() if len(sources) == 1 else "mixed",
        total("torque_revolutions_nm"), total("torque_time_nm_s"),
        total("torque_sq_time_nm2_s"))


def spectrum_from_record(rec: RunRecord, joint: str) -> JointSpectrum:
    """The every-step histogram of ``joint`` in ``rec`` as a :class:`JointSpectrum`
    (with exact in-bin torque moments and the exact integral of torque^2)."""
    time_s, revs, te, se = rec.histogram(joint)
    try:
        trev, ttime = rec.histogram_moments(joint)
    except KeyError:  # records written before the moments were stored
        trev, ttime = None, None
    s = rec.summary(joint)
    return JointSpectrum(joint, te, se, time_s, revs, s.duration_s, s.peak_torque_nm,
                         "histogram", trev, ttime, s.rms_torque_nm**2 * s.duration_s)


def mean_abs_speed_rad_s(spec: JointSpectrum) -> float:
    """Time-weighted mean of |speed| over the spectrum (rad/s): n_m = sum |n_i| t_i / sum t_i
    (Shigley ch. 11, variable loading), from exact revolutions."""
    total = spec.time_s.sum()
    if total <= 0:
        return 0.0
    return float(spec.revolutions.sum() * TWO_PI / total)


def equivalent_torque_nm(spec: JointSpectrum, exponent: float) -> float:
    """Revolution-weighted p-th power mean torque (Palmgren's variable-load mean).

    T_eq = [ sum |T_i|^p N_i / sum N_i ]^(1/p), N_i revolutions in bin i (Harris & Kotzalas,
    Rolling Bearing Analysis; Shigley ch. 11, variable loading). T_i is the exact
    revolution-weighted mean torque inside bin i when the record holds it, else the bin
    centre. Zero if nothing turned.
    """
    rev = spec.revolutions
    total = rev.sum()
    if total <= 0:
        return 0.0
    tc = np.abs(spec.bin_mean_torque_nm("revolutions"))
    return float(((tc**exponent * rev).sum() / total) ** (1.0 / exponent))


def rms_torque_nm(spec: JointSpectrum) -> float:
    """RMS torque over time (N m): exact from the integral of torque^2 when held, else from
    the time-weighted in-bin mean torques (a lower bound)."""
    if spec.duration_s <= 0:
        return 0.0
    if spec.torque_sq_time_nm2_s is not None:
        return math.sqrt(spec.torque_sq_time_nm2_s / spec.duration_s)
    t = spec.bin_mean_torque_nm("time")
    tot = spec.time_s.sum()
    return float(math.sqrt((t**2 * spec.time_s).sum() / tot)) if tot > 0 else 0.0


def quadrant_split(spec: JointSpectrum) -> dict[str, dict[str, float]]:
    """Time (s) and revolutions per sign of torque and direction of rotation.

    Keys ``pos_torque_pos_speed`` ... ``neg_torque_neg_speed``; torque sign by the in-bin mean
    torque, speed sign by the bin centre (a speed bin across zero is split by its centre).
    ``driving`` (torque and speed of one sign: the joint delivers power) and ``braking``
    (the load drives the joint back) add up the quadrants.
    """
    tpos = spec.bin_mean_torque_nm("time") >= 0
    wpos = np.broadcast_to(spec.speed_centres_rad_s[None, :] >= 0, spec.time_s.shape)
    out: dict[str, dict[str, float]] = {}
    for tname, tm in (("pos", tpos), ("neg", ~tpos)):
        for wname, wm in (("pos", wpos), ("neg", ~wpos)):
            m = tm & wm
            out[f"{tname}_torque_{wname}_speed"] = {
                "time_s": float(spec.time_s[m].sum()),
                "revolutions": float(spec.revolutions[m].sum())}
    for name, a, b in (("driving", "pos_torque_pos_speed", "neg_torque_neg_speed"),
                       ("braking", "pos_torque_neg_speed", "neg_torque_pos_speed")):
        out[name] = {k: out[a][k] + out[b][k] for k in ("time_s", "revolutions")}
    return out


def load_duration(spec: JointSpectrum) -> tuple[np.ndarray, np.ndarray]:
    """Load-duration curve: ``(abs_torque_nm, time_at_or_above_s)``, torque descending.

    Each torque bin is placed at its |time-weighted mean torque|; time summed over speed.
    """
    tm = spec.bin_mean_torque_nm("time")
    t = spec.time_s
    level = np.abs(tm).ravel()
    time = t.ravel()
    keep = time > 0
    level, time = level[keep], time[keep]
    order = np.argsort(-level, kind="stable")
    return level[order], np.cumsum(time[order])


def parse_exponent(text: str) -> float:
    """``"3"``, ``"3.333"`` or ``"10/3"`` -> float (> 0)."""
    try:
        if "/" in text:
            a, b = text.split("/", 1)
            val = float(a) / float(b)
        else:
            val = float(text)
    except (ValueError, ZeroDivisionError):
        raise InputError("--exponent", text, "a positive number such as 3 or 10/3") from None
    if not (math.isfinite(val) and val > 0):
        raise InputError("--exponent", text, "a positive number such as 3 or 10/3")
    return val


def select_joints(available: Sequence[str], joints: str | Iterable[str] | None,
                  file: str | None = None) -> list[str]:
    """Joints matching ``joints`` (None: all; a string: comma-separated names or fnmatch
    patterns such as ``*_knee``; an iterable: names or patterns), in record order."""
    if joints is None:
        return list(available)
    pats = [p.strip() for p in joints.split(",")] if isinstance(joints, str) else list(joints)
    chosen: set[str] = set()
    for p in pats:
        hit = [j for j in available if fnmatch.fnmatchcase(j, p)]
        if not p or not hit:
            raise InputError(file, "--joints", "a joint name or pattern matching one of: "
                             + ", ".join(available), p)
        chosen.update(hit)
    return [j for j in available if j in chosen]


def _open_entries(mix: UsageMix, allow_failed: bool) -> list[RunRecord]:
    recs = []
    try:
        for e in mix.entries:
            rec = e.open()
            recs.append(rec)
            rec.require_completed(allow_failed)
    except BaseException:
        for r in recs:
            r.close()
        raise
    return recs


def _common_joints(recs: Sequence[RunRecord]) -> list[str]:
    names = recs[0].joint_names
    for r in recs[1:]:
        missing = [j for j in names if j not in r.joint_names]
        if missing:
            raise RecordError(str(r.path), "joint_names",
                              f"the joints of {recs[0].path}: missing " + ", ".join(missing))
    return names


def usage_spectra(mix: UsageMix, joints: str | Iterable[str] | None = None,
                  allow_failed: bool = False) -> dict[str, JointSpectrum]:
    """Per-joint spectra of ONE DAY of use of ``mix`` (from the every-step histograms).

    Each entry's record spectrum is scaled by its weight and the scaled spectra are added.
    ``duration_s`` of each result is the seconds of use per day (``mix.use_s_per_day``), so
    ``time_s.sum() == duration_s``; a life in hours of use from these spectra divided by
    ``mix.use_hours_per_day`` is a life in days. For a lone record (``mix.daily`` False) the
    spectrum is the record's own and a "day" is one pass of it. ``joints``: None (all),
    names, or fnmatch patterns such as ``"*_knee"``. Records not ``completed`` are refused
    unless ``allow_failed``. All records must use the same bin edges per joint.
    """
    recs = _open_entries(mix, allow_failed)
    try:
        chosen = select_joints(_common_joints(recs), joints, str(mix.source))
        out = {}
        for j in chosen:
            parts = [(spectrum_from_record(r, j), e.weight) for r, e in zip(recs, mix.entries,
                                                                            strict=True)]
            out[j] = combine_spectra(parts, [str(e.path) for e in mix.entries])
        return out
    finally:
        for r in recs:
            r.close()


# -- figures from the time series -----------------------------------------------------------

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
        :func:`with_cycle_matrices`, the range x mean matrix. The cycles are not kept.
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
    """Why the series figures cannot be computed for ``rec`` (None if they can)."""
    if rec.n_samples == 0 or not all(rec.has(f"joints/{j}/torque_nm") for j in joints):
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
    prefix before ``_``); without ``/feet/<leg>/contact`` the split is None. Each sample
    counts for ``sample_period_s``. The rainflow totals hold the Miner sum on each of
    ``sn_curves`` (and no cycle matrix). Raises :class:`RecordError` if the record has no
    series.
    """
    reason = series_unavailable_reason(rec, joints)
    if reason:
        raise RecordError(str(rec.path), "joints", "time series in the record: " + reason)
    dt = float(rec.attrs.get("sample_period_s") or rec.attrs["time_step_s"])
    legs = {j: j.split("_", 1)[0] for j in joints}
    leg_ok = {leg: rec.has(f"feet/{leg}/contact") for leg in set(legs.values())}
    accs = {}
    for j in joints:
        _, _, te, se = rec.histogram(j)
        accs[j] = _JointAccumulator(j, te, se, dt, levels_nm.get(j, ()), hold_speed_rad_s,
                                    hold_torque_nm, leg_ok[legs[j]], sn_curves)
    names: list[str] = []
    for j in joints:
        names += [load_series_name(rec, j), f"joints/{j}/speed_rad_s"]
    leg_list = sorted(leg for leg, ok in leg_ok.items() if ok)
    names += [f"feet/{leg}/contact" for leg in leg_list]
    for _, arrays in rec.iter_chunks(names, rows, reuse=True):
        contact = {leg: arrays[2 * len(joints) + k] for k, leg in enumerate(leg_list)}
        for k, j in enumerate(joints):
            accs[j].feed(np.asarray(arrays[2 * k], float), np.asarray(arrays[2 * k + 1], float),
                         contact.get(legs[j]))
    return {j: a.result() for j, a in accs.items()}


def load_series_name(rec: RunRecord, joint: str) -> str:
    """Dataset of the load torque of ``joint``: the reducer output torque series
    (``gearbox_torque_nm`` when rotors or reducer losses were simulated, else ``torque_nm``)."""
    return f"joints/{joint}/{rec.attrs.get('load_torque', 'torque_nm')}"


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


# -- everything the loads command reports ---------------------------------------------------

@dataclass(frozen=True)
class JointLoads:
    """All duty figures of one joint for one day of use of a mix (see :func:`duty_loads`).

    spectrum: the day's histogram spectrum. series: weighted series figures of the day, or
    None (``sources`` says why). damage_per_day: Miner damage of the day's rainflow cycles on
    the user's S-N line (None without a line or without series).
    cycle_matrix: the day's rainflow matrix (20 x 20 bins spanning the cycles), set by
    :func:`with_cycle_matrices`; None before that or without series.
    """

    joint: str
    spectrum: JointSpectrum
    exponents: tuple[str, ...]
    equivalent_torque_nm: dict[str, float]
    hold_speed_rad_s: float
    hold_torque_nm: float
    series: SeriesFigures | None
    sources: dict[str, str]
    damage_per_day: float | None = None

    @property
    def cycle_matrix(self) -> CycleMatrix | None:
        return None if self.series is None else self.series.rainflow.matrix

    @property
    def hours(self) -> float:
        return self.spectrum.duration_s / 3600.0

    def to_dict(self) -> dict[str, Any]:
        sp = self.spectrum
        hours = self.hours
        d: dict[str, Any] = {
            "hours": hours,
            "peak_torque_nm": sp.peak_torque_nm,
            "rms_torque_nm": rms_torque_nm(sp),
            "mean_abs_speed_rad_s": mean_abs_speed_rad_s(sp),
            "equivalent_torque_nm": dict(self.equivalent_torque_nm),
            "revolutions": float(sp.revolutions.sum()),
            "quadrants": quadrant_split(sp),
        }
        s = self.series
        if s is not None:
            d["hold"] = {"speed_below_rad_s": self.hold_speed_rad_s,
                         "torque_above_nm": self.hold_torque_nm,
                         "time_s": s.hold_time_s,
                         "share_of_time": s.hold_time_s / s.duration_s if s.duration_s else 0.0,
                         "rms_torque_nm": (math.sqrt(s.hold_torque_sq_time_nm2_s / s.hold_time_s)
                                           if s.hold_time_s > 0 else 0.0)}
            d["exceedances"] = [
                {"level_nm": lv, "count_per_hour": (n / hours if hours else 0.0),
                 "time_above_s_per_hour": (ta / hours if hours else 0.0)}
                for lv, n, ta in zip(s.levels_nm, s.upcrossings, s.time_above_s, strict=True)]
            phases = {}
            for name, ps in (("stance", s.stance), ("swing", s.swing)):
                if ps is not None:
                    phases[name] = {
                        "time_s": float(ps.time_s.sum()),
                        "revolutions": float(ps.revolutions.sum()),
                        "rms_torque_nm": rms_torque_nm(ps),
                        "peak_torque_nm": ps.peak_torque_nm,
                        "mean_abs_speed_rad_s": mean_abs_speed_rad_s(ps),
                        "equivalent_torque_nm": {k: equivalent_torque_nm(ps, parse_exponent(k))
                                                 for k in self.exponents}}
            d["phases"] = phases or None
            c = s.rainflow
            d["rainflow"] = {"cycles": c.total,
                             "half_cycles_from_residue": c.residue,
                             "max_range_nm": c.max_range,
                             "damage_per_day": self.damage_per_day,
                             "life_days": (1.0 / self.damage_per_day
                                           if self.damage_per_day else None),
                             "life_hours": (hours / self.damage_per_day
                                            if self.damage_per_day else None)}
        else:
            d["hold"] = None
            d["exceedances"] = None
            d["phases"] = None
            d["rainflow"] = None
        d["sources"] = dict(self.sources)
        return d


def _weighted_series(parts: Sequence[tuple[SeriesFigures, float]],
                     names: Sequence[str]) -> SeriesFigures:
    f0 = parts[0][0]

    def opt_combine(key: str) -> JointSpectrum | None:
        specs = [(getattr(f, key), w) for f, w in parts]
        if any(s is None for s, _ in specs):
            return None
        return combine_spectra(specs, names)

    return SeriesFigures(
        f0.joint, sum(f.duration_s * w for f, w in parts), opt_combine("stance"),
        opt_combine("swing"), sum(f.hold_time_s * w for f, w in parts),
        sum(f.hold_torque_sq_time_nm2_s * w for f, w in parts), f0.levels_nm,
        tuple(float(sum(f.upcrossings[k] * w for f, w in parts)) for k in range(len(f0.levels_nm))),
        tuple(float(sum(f.time_above_s[k] * w for f, w in parts))
              for k in range(len(f0.levels_nm))),
        combine_totals([(f.rainflow, w) for f, w in parts]))


@dataclass(frozen=True)
class LoadsReport:
    """Result of :func:`duty_loads`: per-joint figures of one day of use plus notes."""

    mix: UsageMix
    joints: dict[str, JointLoads]
    notes: tuple[str, ...] = field(default_factory=tuple)
    sn_curve: BasquinCurve | None = None

    def to_dict(self) -> dict[str, Any]:
        m = self.mix
        return {
            "joints": {j: jl.to_dict() for j, jl in self.joints.items()},
            "mix": {"source": str(m.source), "daily": m.daily,
                    "use_hours_per_day": m.use_hours_per_day,
                    "events_per_day": dict(m.events_per_day),
                    "entries": [{"name": e.name, "record": str(e.path), "kind": e.kind,
                                 "weight": e.weight, "hours_per_day": e.hours_per_day,
                                 "record_duration_s": e.duration_s} for e in m.entries]},
            "sn_curve": (None if self.sn_curve is None else
                         {"range_ref_nm": self.sn_curve.range_ref,
                          "cycles_ref": self.sn_curve.cycles_ref,
                          "exponent": self.sn_curve.exponent,
                          "cutoff_range_nm": self.sn_curve.cutoff_range}),
            "notes": list(self.notes),
        }


CAUTION = ("Results are estimates from simulated duty: manufacturer ratings, local codes and "
           "licensed engineering practice take precedence. Not modelled: wear, lubrication, "
           "temperature effects on materials, and loads outside the recorded runs.")


def duty_loads(mix: UsageMix, joints: str | Iterable[str] | None = None,
               exponents: Sequence[str] = DEFAULT_EXPONENTS,
               levels_nm: Sequence[float] | None = None,
               hold_speed_rad_s: float = DEFAULT_HOLD_SPEED_RAD_S,
               hold_torque_nm: float = DEFAULT_HOLD_TORQUE_NM,
               sn_curve: BasquinCurve | None = None, allow_failed: bool = False,
               rows: int = SERIES_CHUNK_ROWS) -> LoadsReport:
    """All figures of ``gaitload loads`` for one day of use of ``mix``.

    ``exponents`` are strings (``"3"``, ``"10/3"``) kept as the keys of the results.
    ``levels_nm``: exceedance levels; None uses 50, 75 and 90 % of each joint's peak torque.
    """
    exps = {k: parse_exponent(k) for k in exponents}
    curves = () if sn_curve is None else (sn_curve,)
    spectra = usage_spectra(mix, joints, allow_failed)
    names = list(spectra)
    notes = [CAUTION,
             "Rainflow: ASTM E1049-85 section 5.4.4 on each record separately; the residue of "
             "each record is counted as half cycles; counts are scaled by the entry weights.",
             "Equivalent torque: revolution-weighted p-mean of the exact in-bin mean torques "
             "(histogram source, every simulation step)."]
    if not mix.daily:
        notes.append("Records stand for themselves: 'per day' means one pass of the records.")
    levels = {j: (tuple(levels_nm) if levels_nm is not None
                  else tuple(round(f * spectra[j].peak_torque_nm, 6)
                             for f in DEFAULT_LEVEL_SHARES)) for j in names}
    parts: dict[str, list[tuple[SeriesFigures, float]]] = {j: [] for j in names}
    reason = None
    for e in mix.entries:
        with open_record(e.path) as rec:
            reason = series_unavailable_reason(rec, names)
            if reason:
                break
            for j, f in series_figures(rec, names, levels, hold_speed_rad_s, hold_torque_nm,
                                       rows, curves).items():
                parts[j].append((f, e.weight))
    series_parts = None if reason else parts
    if reason:
        notes.append(reason)
    out: dict[str, JointLoads] = {}
    for j in names:
        sp = spectra[j]
        sources = {k: "histogram" for k in ("peak_torque_nm", "rms_torque_nm",
                                            "mean_abs_speed_rad_s", "equivalent_torque_nm",
                                            "revolutions", "quadrants", "time_at_level")}
        ser = None
        dmg = None
        if series_parts is not None:
            ser = _weighted_series(series_parts[j], [str(e.path) for e in mix.entries])
            for k in ("hold", "exceedances", "rainflow"):
                sources[k] = "series"
            sources["phases"] = ("series" if ser.stance is not None else
                                 "unavailable: no /feet/<leg>/contact flags in the record")
            if sn_curve is not None:
                dmg = ser.rainflow.miner_damage(sn_curve)
        else:
            for k in ("hold", "exceedances", "rainflow", "phases"):
                sources[k] = "unavailable: " + (reason or "no series")
        out[j] = JointLoads(j, sp, tuple(exponents),
                            {k: equivalent_torque_nm(sp, p) for k, p in exps.items()},
                            hold_speed_rad_s, hold_torque_nm, ser, sources, dmg)
    return LoadsReport(mix, out, tuple(notes), sn_curve)


def with_cycle_matrices(report: LoadsReport, bins: int = CYCLE_MATRIX_BINS,
                        rows: int = SERIES_CHUNK_ROWS) -> LoadsReport:
    """``report`` with the day's rainflow cycle matrix of every joint that has series figures
    (:attr:`JointLoads.cycle_matrix`): ``bins`` x ``bins`` bins, ranges from 0 to the largest
    range and means between the extreme cycle means over all records (as found by
    :func:`duty_loads`). The edges are known only once every cycle has been seen, so this
    reads the load torque of each record a second time; each record's matrix counts for its
    entry weight. Returns ``report`` itself when there is nothing to add.
    """
    todo = {j: jl for j, jl in report.joints.items()
            if jl.series is not None and jl.series.rainflow.matrix is None}
    if not todo:
        return report
    edges = {}
    for j, jl in todo.items():
        assert jl.series is not None
        r = jl.series.rainflow
        edges[j] = cycle_matrix_edges(r.max_range, r.mean_min, r.mean_max, bins)
    parts: dict[str, list[tuple[CycleMatrix, float]]] = {j: [] for j in todo}
    for e in report.mix.entries:
        with open_record(e.path) as rec:
            for j, m in cycle_matrices(rec, edges, rows).items():
                parts[j].append((m, e.weight))
    joints = dict(report.joints)
    for j, jl in todo.items():
        assert jl.series is not None
        r = dataclasses.replace(jl.series.rainflow, matrix=combine_matrices(parts[j]))
        joints[j] = dataclasses.replace(jl, series=dataclasses.replace(jl.series, rainflow=r))
    return dataclasses.replace(report, joints=joints)
