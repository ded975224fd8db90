"""Figures of duty spectra (matplotlib, Agg backend, imported only when a plot is asked for).

Every figure is written atomically (temporary file beside the target, then ``os.replace``)
and without a timestamp or software tag, so the same inputs give the same bytes.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from sim.figures.common import pyplot, save_png
from sim.loads.damage import CycleMatrix
from sim.loads.spectra import JointSpectrum, load_duration

_pyplot = pyplot
_save = save_png


def plot_time_at_level(spec: JointSpectrum, path: str | Path, title: str = "") -> Path:
    """Torque x speed map of time at level (hours, log colour scale); empty bins blank."""
    plt = _pyplot()
    from matplotlib.colors import LogNorm

    hours = spec.time_s / 3600.0
    data = np.ma.masked_less_equal(hours, 0.0)
    fig, ax = plt.subplots(figsize=(6.4, 4.8))
    if data.count():
        mesh = ax.pcolormesh(spec.speed_edges_rad_s, spec.torque_edges_nm, data,
                             norm=LogNorm(vmin=float(data.min()), vmax=float(data.max())),
                             shading="flat")
        fig.colorbar(mesh, ax=ax, label="time at level (h)")
    ax.set_xlabel("joint speed (rad/s)")
    ax.set_ylabel("joint torque (N m)")
    ax.set_title(title or f"{spec.joint}: time at level ({spec.source})")
    return _save(fig, path)


def plot_load_duration(spec: JointSpectrum, path: str | Path, title: str = "") -> Path:
    """Load-duration curve: |torque| against hours at or above that torque."""
    plt = _pyplot()
    level, t = load_duration(spec)
    fig, ax = plt.subplots(figsize=(6.4, 4.8))
    if level.size:
        ax.step(t / 3600.0, level, where="post")
    ax.set_xlabel("time at or above the torque (h)")
    ax.set_ylabel("|joint torque| (N m)")
    ax.set_title(title or f"{spec.joint}: load-duration curve ({spec.source})")
    ax.grid(True, alpha=0.3)
    return _save(fig, path)


def plot_rainflow_matrix(matrix: CycleMatrix, joint: str, path: str | Path) -> Path:
    """Rainflow cycle matrix (range x mean), log colour scale of cycles."""
    plt = _pyplot()
    from matplotlib.colors import LogNorm

    re_, me = matrix.range_edges, matrix.mean_edges
    m = np.ma.masked_less_equal(matrix.counts, 0.0)
    fig, ax = plt.subplots(figsize=(6.4, 4.8))
    if m.count():
        mesh = ax.pcolormesh(me, re_, m, norm=LogNorm(vmin=float(m.min()), vmax=float(m.max())),
                             shading="flat")
        fig.colorbar(mesh, ax=ax, label="cycles")
    ax.set_xlabel("cycle mean torque (N m)")
    ax.set_ylabel("cycle torque range (N m)")
    ax.set_title(f"{joint}: rainflow matrix (ASTM E1049-85, series)")
    return _save(fig, path)
