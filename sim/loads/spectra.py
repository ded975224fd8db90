"""Duty spectra: run records reduced to time and revolutions at torque/speed levels.

Takes run records (or a usage mix of them) and gives a :class:`JointSpectrum` per joint from
the record's every-step histograms and summary (accumulated at the simulation step, whatever
the series decimation): time and revolutions at level, exact revolutions, exact in-bin mean
torques, peak and RMS torque. Every figure built on a spectrum says it came from the
``"histogram"`` source; the figures from the stored time series (rainflow, stance/swing,
exceedances, hold time; source ``"series"``) are in :mod:`sim.loads.series`, and everything
the ``gaitload loads`` command reports is gathered by :mod:`sim.loads.report`.

Post-processing works on records alone and never imports the physics engine.

Library API for later checks: :func:`usage_spectra` (spectra of one day of use of a
:class:`sim.loads.mix.UsageMix`), :func:`spectrum_from_record`, :func:`equivalent_torque_nm`
(exact from the record's every-step power sums when it holds the exponent, else from the
bins with the bias bound of :func:`equivalent_torque_bounds`), :func:`mean_abs_speed_rad_s`,
:func:`rms_torque_nm`.
"""

from __future__ import annotations

import fnmatch
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from sim.core.errors import InputError, RecordError
from sim.loads.mix import UsageMix
from sim.record import RunRecord

TWO_PI = 2.0 * math.pi


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
        power_sums: ``{p: sum |T|^p |w| dt}`` over every step ((N m)^p rad) for the life
            exponents the record holds, or None; with ``abs_angle_rad`` (sum |w| dt) they give
            the exact equivalent torque (:func:`equivalent_torque_nm`).
        abs_angle_rad: sum |w| dt over every step (rad), or None.
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
    power_sums: dict[float, float] | None = None
    abs_angle_rad: float | None = None

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
            None if self.torque_sq_time_nm2_s is None else self.torque_sq_time_nm2_s * factor,
            None if self.power_sums is None else {p: v * factor
                                                  for p, v in self.power_sums.items()},
            None if self.abs_angle_rad is None else self.abs_angle_rad * factor)


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
    sums = [s.power_sums for s in sc]
    powers = None
    if all(x is not None for x in sums):
        keys = set.intersection(*(set(x) for x in sums if x is not None))
        powers = {p: float(sum(x[p] for x in sums if x is not None)) for p in sorted(keys)}
    return JointSpectrum(
        first.joint, first.torque_edges_nm, first.speed_edges_rad_s,
        total("time_s"), total("revolutions"), float(sum(s.duration_s for s in sc)),
        max(s.peak_torque_nm for s, w in parts if w > 0) if any(w > 0 for _, w in parts) else 0.0,
        sources.pop() if len(sources) == 1 else "mixed",
        total("torque_revolutions_nm"), total("torque_time_nm_s"),
        total("torque_sq_time_nm2_s"), powers, total("abs_angle_rad"))


def spectrum_from_record(rec: RunRecord, joint: str) -> JointSpectrum:
    """The every-step histogram of ``joint`` in ``rec`` as a :class:`JointSpectrum`
    (with exact in-bin torque moments and the exact integral of torque^2)."""
    time_s, revs, te, se = rec.histogram(joint)
    try:
        trev, ttime = rec.histogram_moments(joint)
    except KeyError:  # records written before the moments were stored
        trev, ttime = None, None
    s = rec.summary(joint)
    sums = rec.power_sums(joint)  # None in records of format 1
    return JointSpectrum(joint, te, se, time_s, revs, s.duration_s, s.peak_torque_nm,
                         "histogram", trev, ttime, s.rms_torque_nm**2 * s.duration_s,
                         None if sums is None else sums[0], None if sums is None else sums[1])


def mean_abs_speed_rad_s(spec: JointSpectrum) -> float:
    """Time-weighted mean of |speed| over the spectrum (rad/s): n_m = sum |n_i| t_i / sum t_i
    (Shigley ch. 11, variable loading), from exact revolutions."""
    total = spec.time_s.sum()
    if total <= 0:
        return 0.0
    return float(spec.revolutions.sum() * TWO_PI / total)


EXPONENT_MATCH_REL = 1e-12  # a stored power sum serves an exponent this close to its own


def exact_power_sum(spec: JointSpectrum, exponent: float) -> float | None:
    """The exact ``sum |T|^p |w| dt`` of ``spec`` for ``p = exponent``, if it holds one."""
    if spec.power_sums is None or spec.abs_angle_rad is None:
        return None
    for p, v in spec.power_sums.items():
        if abs(p - exponent) <= EXPONENT_MATCH_REL * exponent:
            return v
    return None


def histogram_equivalent_torque_nm(spec: JointSpectrum, exponent: float) -> float:
    """T_eq from the bins: ``[sum |T_i|^p N_i / sum N_i]^(1/p)``, ``T_i`` the exact
    revolution-weighted mean torque inside bin ``i`` (else the bin centre). Biased low for
    ``p > 1`` (Jensen's inequality: the p-th power of the in-bin mean is below the in-bin mean
    of the p-th power); :func:`equivalent_torque_bounds` bounds the bias."""
    rev = spec.revolutions
    total = rev.sum()
    if total <= 0:
        return 0.0
    tc = np.abs(spec.bin_mean_torque_nm("revolutions"))
    return float(((tc**exponent * rev).sum() / total) ** (1.0 / exponent))


def equivalent_torque_nm(spec: JointSpectrum, exponent: float) -> float:
    """Revolution-weighted p-th power mean torque (Palmgren's variable-load mean).

    T_eq = [ sum |T|^p |w| dt / sum |w| dt ]^(1/p) over every step (Harris & Kotzalas,
    Rolling Bearing Analysis; Shigley ch. 11, variable loading): exact from the record's power
    sums when it holds one for this exponent (3, 10/3, 3.333 and the scenario's
    ``record.life_exponents``), else from the bins (:func:`histogram_equivalent_torque_nm`,
    low by at most the bound of :func:`equivalent_torque_bounds`). Zero if nothing turned.
    """
    exact = exact_power_sum(spec, exponent)
    if exact is not None:
        angle = spec.abs_angle_rad or 0.0
        return float((exact / angle) ** (1.0 / exponent)) if angle > 0 else 0.0
    return histogram_equivalent_torque_nm(spec, exponent)


def equivalent_torque_bounds(spec: JointSpectrum, exponent: float
                             ) -> tuple[float, float | None]:
    """``(lower, upper)`` of the true T_eq given only the bins (``upper`` None for p < 1).

    Within a bin whose |torque| lies in ``[a, b]`` with revolution-weighted mean ``m``, a
    convex ``f(x) = x^p`` (p >= 1) lies below its chord, so the in-bin mean of |T|^p lies
    between ``m^p`` (Jensen) and the chord at ``m``: ``f(a) (b - m)/(b - a) + f(b) (m - a)/(b - a)``.
    A bin across zero torque (mean |T| unknown) is bounded by ``b^p``. Summed with the
    revolutions of the bins this brackets sum |T|^p N. Time outside the outer bins (the
    record's overflow) is not bounded.
    """
    low = histogram_equivalent_torque_nm(spec, exponent)
    if exponent < 1.0:
        return low, None
    rev = spec.revolutions
    total = rev.sum()
    if total <= 0:
        return low, 0.0
    e = spec.torque_edges_nm
    lo, hi = e[:-1], e[1:]
    across = (lo < 0) & (hi > 0)
    a = np.where(across, 0.0, np.minimum(np.abs(lo), np.abs(hi)))[:, None]
    b = np.maximum(np.abs(lo), np.abs(hi))[:, None]
    m = np.clip(np.abs(spec.bin_mean_torque_nm("revolutions")), a, b)
    p = exponent
    width = np.where(b > a, b - a, 1.0)
    chord = np.where(b > a, (a**p * (b - m) + b**p * (m - a)) / width, m**p)
    upper = np.where(np.broadcast_to(across[:, None], m.shape), b**p, chord)
    return low, float(((upper * rev).sum() / total) ** (1.0 / p))


def equivalent_torque_detail(spec: JointSpectrum, exponent: float) -> dict[str, Any]:
    """T_eq with its route: ``{"value": .., "route": "exact" | "histogram",
    "bias_bound": ..}``, ``bias_bound`` the largest share by which the value can be low
    (0 when exact; None when no bound holds)."""
    value = equivalent_torque_nm(spec, exponent)
    if exact_power_sum(spec, exponent) is not None:
        return {"value": value, "route": "exact", "bias_bound": 0.0}
    low, up = equivalent_torque_bounds(spec, exponent)
    bound = None if up is None else (up / low - 1.0 if low > 0 else 0.0)
    return {"value": value, "route": "histogram", "bias_bound": bound}


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

