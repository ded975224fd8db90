"""Duty spectra: run records reduced to time and revolutions at torque/speed levels.

Post-processing works on records alone and never imports the physics engine.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sim.record import RunRecord


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
        duration_s: time the spectrum stands for (after any usage-mix scaling).
        peak_torque_nm: largest |torque| seen (exact, not binned).
        source: ``"histogram"`` (accumulated every step) or ``"series"`` (from raw samples).
    """

    joint: str
    torque_edges_nm: np.ndarray
    speed_edges_rad_s: np.ndarray
    time_s: np.ndarray
    revolutions: np.ndarray
    duration_s: float
    peak_torque_nm: float
    source: str = "histogram"

    @property
    def torque_centres_nm(self) -> np.ndarray:
        e = self.torque_edges_nm
        return 0.5 * (e[:-1] + e[1:])

    @property
    def speed_centres_rad_s(self) -> np.ndarray:
        e = self.speed_edges_rad_s
        return 0.5 * (e[:-1] + e[1:])

    def scaled(self, factor: float) -> JointSpectrum:
        """The same spectrum standing for ``factor`` times as much time."""
        return JointSpectrum(self.joint, self.torque_edges_nm, self.speed_edges_rad_s,
                             self.time_s * factor, self.revolutions * factor,
                             self.duration_s * factor,
                             self.peak_torque_nm, self.source)


def spectrum_from_record(rec: RunRecord, joint: str) -> JointSpectrum:
    """The every-step histogram of ``joint`` in ``rec`` as a :class:`JointSpectrum`."""
    time_s, revs, te, se = rec.histogram(joint)
    s = rec.summary(joint)
    return JointSpectrum(joint, te, se, time_s, revs, s.duration_s, s.peak_torque_nm,
                         "histogram")


def mean_abs_speed_rad_s(spec: JointSpectrum) -> float:
    """Time-weighted mean of |speed| over the spectrum (rad/s)."""
    total = spec.time_s.sum()
    if total <= 0:
        return 0.0
    return float(spec.revolutions.sum() * 2.0 * np.pi / total)


def equivalent_torque_nm(spec: JointSpectrum, exponent: float) -> float:
    """Revolution-weighted p-th power mean torque (Palmgren's variable-load mean).

    T_eq = [ sum |T_i|^p N_i / sum N_i ]^(1/p), N_i revolutions in bin i (Harris & Kotzalas,
    Rolling Bearing Analysis; Shigley ch. 11, variable loading). Zero if nothing turned.
    """
    rev = spec.revolutions.sum(axis=1)  # per torque bin
    total = rev.sum()
    if total <= 0:
        return 0.0
    tc = np.abs(spec.torque_centres_nm)
    return float(((tc**exponent * rev).sum() / total) ** (1.0 / exponent))
