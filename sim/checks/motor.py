"""The motor check: motors and the shared supply against one record or a usage mix.

Takes the drives of the checked joints (motor part behind a reducer, :mod:`.motor_part`), the
supply (:mod:`.supply`) and a run record or a usage mix, and gives a :class:`MotorReport`
(:func:`check_motors`): per joint the winding temperature against its limit, RMS torque
against the continuous rating, peak torque against the peak rating and the time outside the
envelope, with a verdict; for the whole robot the battery current, bus sag and energy per
hour, per metre and the cost of transport. Each record is one cycle of a periodic activity
(:mod:`.motor_record`); a mix weights the records by hours per day.

Results are estimates; manufacturer ratings, local codes and licensed engineering practice take
precedence. Not modelled: inductance and field weakening, magnet temperature (k falls when hot),
cogging, driver switching and conduction losses beyond the stated inverter efficiency, heat
from the reducer, forced cooling.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sim.checks.motor_duty import Drive, as_drive
from sim.checks.motor_record import RecordResult, record_result
from sim.checks.supply import Supply
from sim.core.errors import InputError

CAUTION = ("Estimates only: manufacturer ratings, local codes and licensed engineering practice "
           "take precedence. Not modelled: inductance and field weakening, magnet heating, "
           "cogging, driver losses beyond the stated efficiency, reducer heat, forced cooling.")



def _none_if_inf(x: float | None) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(x)


MIN_TRAVEL_SPEED_M_S = 0.02  # below this mean speed, energy per metre is not reported


@dataclass(frozen=True)
class MotorReport:
    """Motor and supply check over one record or a usage mix (weights = hours per day)."""

    records: tuple[RecordResult, ...]
    drives: dict[str, Drive]
    supply: Supply
    mission_s: float | None
    envelope_tolerance_share: float = 0.0
    notes: tuple[str, ...] = field(default_factory=tuple)

    # per joint, aggregated over records
    def joint_summary(self, joint: str) -> dict[str, Any]:
        res = [r.joints[joint] for r in self.records]
        w = np.array([r.weight for r in self.records])
        first = res[0]
        steady = [x.winding_peak_c for x in res]
        peak_ss = None if any(s is None for s in steady) else max(s for s in steady if s)
        mission = [x.winding_peak_mission_c for x in res if x.winding_peak_mission_c is not None]
        peak_mission = max(mission) if mission else None
        minutes = [x.minutes_to_limit for x in res if x.minutes_to_limit is not None]
        ms = float(np.sum(w * np.array([x.rms_torque_nm ** 2 for x in res])) / np.sum(w))
        rms_t = math.sqrt(ms)
        peak_t = max(x.peak_torque_nm for x in res)
        out_s = sum(x.outside_envelope_s for x in res)
        share = float(np.sum(w * np.array([x.outside_envelope_share for x in res])) / np.sum(w))
        limit = first.winding_limit_c
        judged = peak_mission if self.mission_s is not None else peak_ss
        reasons = []
        if judged is None or judged > limit:
            reasons.append("winding temperature")
        if rms_t > first.continuous_torque_nm:
            reasons.append("rms torque")
        if peak_t > first.peak_torque_rating_nm:
            reasons.append("peak torque")
        if share > self.envelope_tolerance_share:
            reasons.append("outside envelope")
        return {
            "motor": self.drives[joint].motor.name,
            "winding_peak_c": _none_if_inf(peak_ss),
            "winding_peak_mission_c": _none_if_inf(peak_mission),
            "winding_limit_c": limit,
            "margin_k": None if peak_ss is None else limit - peak_ss,
            "minutes_to_limit": min(minutes) if minutes else None,
            "thermal_runaway": any(x.thermal_runaway for x in res),
            "rms_torque_nm": rms_t,
            "continuous_torque_nm": first.continuous_torque_nm,
            "continuous_torque_source": first.continuous_torque_source,
            "rms_torque_ratio": rms_t / first.continuous_torque_nm,
            "peak_torque_nm": peak_t,
            "peak_torque_rating_nm": first.peak_torque_rating_nm,
            "peak_torque_ratio": peak_t / first.peak_torque_rating_nm,
            "outside_envelope_s": out_s,
            "outside_envelope_share": share,
            "over_speed_s": sum(x.over_speed_s for x in res),
            "peak_motor_speed_rad_s": max(x.peak_speed_rad_s for x in res),
            "mean_copper_loss_w": float(np.sum(w * np.array(
                [x.mean_copper_loss_w for x in res])) / np.sum(w)),
            "verdict": "fail" if reasons else "pass",
            "fail_reasons": reasons,
        }

    def supply_summary(self) -> dict[str, Any]:
        recs = [r.supply for r in self.records]
        w = np.array([r.weight for r in self.records])
        wsum = float(np.sum(w))

        def wavg(vals: Iterable[float]) -> float:
            return float(np.sum(w * np.array(list(vals))) / wsum)

        keys = list(recs[0].energy_j)
        power_w = {k: wavg(r.energy_j[k] / r.duration_s for r in recs) for k in keys}
        drawn_w = power_w["battery_chemical"]
        dist = [r.distance_m for r in recs]
        speed_m_s = None if any(d is None for d in dist) else wavg(
            (d or 0.0) / r.duration_s for d, r in zip(dist, recs, strict=True))
        mass = recs[0].total_mass_kg
        # standing still (or drifting) has no meaningful energy per metre
        moving = speed_m_s is not None and speed_m_s >= MIN_TRAVEL_SPEED_M_S
        per_m = drawn_w / speed_m_s if (moving and speed_m_s) else None
        cot = (drawn_w / (mass * 9.80665 * speed_m_s)
               if (moving and speed_m_s and mass > 0) else None)
        v_oc = self.supply.bus_voltage_v
        return {
            "peak_current_a": max(r.peak_current_a for r in recs),
            "rms_current_a": math.sqrt(wavg(r.mean_square_current_a2 for r in recs)),
            "mean_current_a": wavg(r.mean_current_a for r in recs),
            "peak_regen_current_a": min(r.peak_regen_current_a for r in recs),
            "min_bus_voltage_v": min(r.min_bus_voltage_v for r in recs),
            "sag_v": v_oc - min(r.min_bus_voltage_v for r in recs),
            "collapse_s": sum(r.collapse_s for r in recs),
            "energy_wh_per_h": drawn_w,
            "energy_j_per_m": per_m,
            "mean_speed_m_s": speed_m_s,
            "cost_of_transport": cot,
            "regeneration_absorbed": self.supply.regeneration_absorbed,
            "regenerated_wh_per_h": power_w["regenerated"],
            "motor_regeneration_wh_per_h": power_w["motor_regeneration"],
            "breakdown_wh_per_h": {k: power_w[k] for k in (
                "joint_work", "reducer_loss", "copper_loss", "iron_friction_loss",
                "rotor_kinetic", "inverter_loss", "auxiliary", "regen_dumped",
                "pack_internal_loss", "battery_terminal")},
        }

    def to_json(self) -> dict[str, Any]:
        """``{"joints": {joint: {...}}, "supply": {...}, ...}`` (JSON-ready, SI units)."""
        return {
            "joints": {j: self.joint_summary(j) for j in self.drives},
            "supply": self.supply_summary(),
            "mission_s": self.mission_s,
            "records": [{"path": r.path, "weight": r.weight, "duration_s": r.supply.duration_s}
                        for r in self.records],
            "notes": list(self.notes),
            "caution": CAUTION,
        }

    def to_text(self) -> str:
        """A fixed-width table for the terminal."""
        rows = [f"{'joint':<10} {'wind.peak C':>11} {'limit C':>8} {'min to lim':>10} "
                f"{'rms/cont':>8} {'peak/rat':>8} {'out env s':>9} verdict"]
        for j in self.drives:
            s = self.joint_summary(j)
            wp = "runaway" if s["winding_peak_c"] is None else f"{s['winding_peak_c']:.1f}"
            mt = "-" if s["minutes_to_limit"] is None else f"{s['minutes_to_limit']:.1f}"
            rows.append(f"{j:<10} {wp:>11} {s['winding_limit_c']:>8.0f} {mt:>10} "
                        f"{s['rms_torque_ratio']:>8.2f} {s['peak_torque_ratio']:>8.2f} "
                        f"{s['outside_envelope_s']:>9.3f} {s['verdict']}")
        p = self.supply_summary()

        def opt(x: float | None, fmt: str) -> str:
            return "-" if x is None else format(x, fmt)

        rows += ["",
                 f"battery current: peak {p['peak_current_a']:.1f} A, rms "
                 f"{p['rms_current_a']:.1f} A, regen peak {p['peak_regen_current_a']:.1f} A; "
                 f"sag {p['sag_v']:.2f} V (min {p['min_bus_voltage_v']:.2f} V)",
                 f"energy: {p['energy_wh_per_h']:.1f} Wh/h, "
                 f"{opt(p['energy_j_per_m'], '.1f')} J/m, cost of transport "
                 f"{opt(p['cost_of_transport'], '.2f')}; regenerated "
                 f"{p['regenerated_wh_per_h']:.1f} Wh/h "
                 f"({'absorbed' if p['regeneration_absorbed'] else 'dumped'})",
                 CAUTION]
        return "\n".join(rows)



def _usage_entries(source: Any) -> list[tuple[str, float]]:
    """``[(record_path, hours_per_day)]`` from a record path, a list of pairs or a usage mix."""
    if isinstance(source, str | Path):
        p = Path(source)
        if p.suffix.lower() == ".toml":
            from sim.loads.mix import resolve_usage

            return [(str(e.path), e.hours_per_day) for e in resolve_usage(p).entries
                    if e.kind == "duty"]
        return [(str(p), 1.0)]
    out = [(str(r), float(h)) for r, h in source]
    if not out:
        raise InputError(None, "source", "at least one run record")
    for r, h in out:
        if not (h > 0):
            raise InputError(r, "hours_per_day", "a positive number of hours per day", h)
    return out


def check_motors(source: str | Path | Sequence[tuple[str | Path, float]],
                 drives: Mapping[str, Any], supply: Supply, *,
                 mission_s: float | None = None, ambient_c: float | None = None,
                 allow_failed: bool = False, envelope_tolerance_share: float = 0.0,
                 rows: int = 65536, density_bins: int = 60,
                 series_points: int = 2000) -> MotorReport:
    """Check the motors of ``drives`` (joint -> Drive or ``(MotorPart, ratio, eta_f, eta_b[,
    input_inertia_kg_m2])``) and the shared supply against one record or a usage mix.

    Each record is treated as one cycle of a periodic activity: winding temperatures are the
    periodic steady state of the record repeated; with ``mission_s`` also the peak over a
    mission of that length from cold (ambient). Records must be completed runs.
    """
    if mission_s is not None and not mission_s > 0:
        raise InputError(None, "mission_s", "a positive mission length in seconds", mission_s)
    if not drives:
        raise InputError(None, "drives", "at least one joint with a motor")
    dv = {j: as_drive(d) for j, d in drives.items()}
    for j, d in dv.items():
        if not (d.ratio > 0 and 0 < d.efficiency_forward <= 1 and 0 < d.efficiency_back <= 1):
            raise InputError(d.motor.file, j, "ratio > 0 and efficiencies in (0, 1]",
                             (d.ratio, d.efficiency_forward, d.efficiency_back))
    results = tuple(
        record_result(path, w, dv, supply, mission_s, ambient_c, rows, allow_failed,
                       density_bins, series_points)
        for path, w in _usage_entries(source))
    notes = []
    if any(r.supply.distance_m is None for r in results):
        notes.append("no base velocity in a record: energy per metre and cost of transport "
                     "not computed")
    return MotorReport(records=results, drives=dv, supply=supply, mission_s=mission_s,
                       envelope_tolerance_share=envelope_tolerance_share, notes=tuple(notes))
