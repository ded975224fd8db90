"""Figures of the motor and supply check (matplotlib, Agg backend, imported lazily).

Each function writes one PNG atomically (temporary file beside the target, then rename) and
returns its path. Figures carry the caution that results are estimates.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from sim.checks.motor import CAUTION, MotorReport
from sim.checks.motor_part import current_limit_torque_nm, envelope_nm
from sim.checks.motor_record import RecordResult
from sim.figures.common import pyplot as _pyplot
from sim.figures.common import save_png


def _save(fig: Any, path: str | Path) -> Path:
    return save_png(fig, path, dpi=110,
                    caption="Estimates; manufacturer ratings take precedence.")


def _record(report: MotorReport, index: int) -> RecordResult:
    return report.records[index]


def plot_envelope(report: MotorReport, joint: str, path: str | Path, record: int = 0) -> Path:
    """Operating-point density (time per bin, log colour) of ``joint`` on its envelope."""
    plt = _pyplot()
    rec = _record(report, record)
    drive = report.drives[joint]
    motor, supply = drive.motor, report.supply
    s_edges = rec.density_speed_edges_rad_s[joint]
    t_edges = rec.density_torque_edges_nm[joint]
    dens = rec.density[joint]
    fig, ax = plt.subplots(figsize=(6.4, 4.8))
    shown = np.where(dens > 0, dens, np.nan)
    mesh = ax.pcolormesh(s_edges, t_edges, shown.T, cmap="viridis", shading="flat",
                         norm=_lognorm(shown))
    fig.colorbar(mesh, ax=ax, label="time in bin, s")
    w = np.linspace(s_edges[0], s_edges[-1], 400)
    t_lim = current_limit_torque_nm(motor, supply, drive.current_limit_a)
    v_line = supply.bus_voltage_v * supply.line_voltage_factor
    peak = rec.joints[joint].winding_peak_c
    for temp, style, label in ((20.0, "-", "envelope at 20 C"),
                               (peak if peak is not None else motor.max_winding_temp_c, "--",
                                "envelope at peak winding temperature")):
        lo, hi = envelope_nm(motor, w, v_line, t_lim, temp)
        feasible = hi >= lo
        ax.plot(w[feasible], hi[feasible], "k" + style, lw=1, label=label)
        ax.plot(w[feasible], lo[feasible], "k" + style, lw=1)
    ax.set_xlim(s_edges[0], s_edges[-1])
    ax.set_ylim(t_edges[0], t_edges[-1])
    ax.set_xlabel("motor speed, rad/s")
    ax.set_ylabel("electromagnetic torque, N m")
    ax.set_title(f"{joint}: operating points on the torque-speed envelope "
                 f"({supply.bus_voltage_v:g} V, {supply.current_limit_a:g} A)", fontsize=9)
    ax.legend(fontsize=7, loc="upper right")
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def _lognorm(values: np.ndarray) -> Any:
    from matplotlib.colors import LogNorm

    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return None
    lo, hi = float(finite.min()), float(finite.max())
    return LogNorm(vmin=lo, vmax=max(hi, lo * 1.0001))


def plot_winding_temperature(report: MotorReport, path: str | Path, record: int = 0) -> Path:
    """Winding temperature over the record in periodic steady state, one line per joint."""
    plt = _pyplot()
    rec = _record(report, record)
    fig, ax = plt.subplots(figsize=(7.0, 4.2))
    for joint, temp in rec.winding_temp_c.items():
        ax.plot(rec.series_time_s, temp, lw=1, label=joint)
    limits = sorted({d.motor.max_winding_temp_c for d in report.drives.values()})
    for lim in limits:
        ax.axhline(lim, color="r", ls="--", lw=1)
    ax.set_xlabel("time in record, s")
    ax.set_ylabel("winding temperature, C (block maximum)")
    ax.set_title("Winding temperature, record repeated to periodic steady state", fontsize=9)
    ax.legend(fontsize=6, ncol=3)
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def plot_bus_current(report: MotorReport, path: str | Path, record: int = 0) -> Path:
    """Battery current over the record: block mean with the min-max band (negative = regen)."""
    plt = _pyplot()
    rec = _record(report, record)
    cur = rec.battery_current_a
    fig, ax = plt.subplots(figsize=(7.0, 4.2))
    ax.fill_between(rec.series_time_s, cur[:, 0], cur[:, 2], color="C0", alpha=0.3,
                    step="post", label="min-max")
    ax.step(rec.series_time_s, cur[:, 1], where="post", color="C0", lw=1, label="mean")
    ax.axhline(0.0, color="k", lw=0.5)
    ax.set_xlabel("time in record, s")
    ax.set_ylabel("battery current, A (negative: regeneration)")
    absorbed = "absorbed" if report.supply.regeneration_absorbed else "not absorbed"
    ax.set_title(f"Battery current summed over all motors (regeneration {absorbed})",
                 fontsize=9)
    ax.legend(fontsize=7)
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def plot_all(report: MotorReport, directory: str | Path, record: int = 0) -> list[Path]:
    """All figures into ``directory``: ``motor_envelope_<joint>.png``,
    ``winding_temperature.png``, ``bus_current.png``."""
    d = Path(directory)
    out = [plot_envelope(report, j, d / f"motor_envelope_{j}.png", record)
           for j in report.drives]
    out.append(plot_winding_temperature(report, d / "winding_temperature.png", record))
    out.append(plot_bus_current(report, d / "bus_current.png", record))
    return out


__all__ = ["CAUTION", "plot_all", "plot_bus_current", "plot_envelope",
           "plot_winding_temperature"]
