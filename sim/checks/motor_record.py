"""What the motor and supply check finds in one record.

Takes one run record, the drives of the checked joints and the supply, and gives a
:class:`RecordResult` (:func:`record_result`): per joint the winding temperatures
(:mod:`.motor_heating`), RMS and peak torque at the motor against its ratings, time outside
the torque-speed envelope at the sagging bus voltage, and per record the battery current,
bus voltage and the energy breakdown, with decimated series and operating-point densities for
the figures.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from sim.checks import thermal as th
from sim.checks.motor_duty import (
    Drive,
    DutyChunk,
    MotorBank,
    duty_chunks,
    envelope_nm_bank,
    sampled_distance_m,
    thermal_step_maps,
)
from sim.checks.motor_heating import thermal_analysis
from sim.checks.motor_part import current_limit_torque_nm
from sim.checks.supply import Supply, battery_current_a, bus_power_w
from sim.core.errors import InputError
from sim.record import open_record


@dataclass(frozen=True)
class JointMotorResult:
    """Motor result of one joint over one record (temperatures in C, torques at the motor)."""

    joint: str
    winding_limit_c: float
    winding_peak_c: float | None          # periodic steady state; None on thermal runaway
    winding_peak_mission_c: float | None  # from cold over the mission (None without mission)
    minutes_to_limit: float | None        # from cold, if the limit is ever reached
    thermal_runaway: bool
    rms_torque_nm: float
    peak_torque_nm: float
    continuous_torque_nm: float
    continuous_torque_source: str
    peak_torque_rating_nm: float
    outside_envelope_s: float
    over_speed_s: float
    duration_s: float
    peak_speed_rad_s: float
    mean_copper_loss_w: float
    mean_housing_loss_w: float

    @property
    def outside_envelope_share(self) -> float:
        return self.outside_envelope_s / self.duration_s if self.duration_s > 0 else 0.0


@dataclass(frozen=True)
class RecordSupplyResult:
    """Supply result of one record; energies in J over the record, series decimated."""

    duration_s: float
    peak_current_a: float
    mean_square_current_a2: float
    mean_current_a: float
    peak_regen_current_a: float
    min_bus_voltage_v: float
    collapse_s: float
    distance_m: float | None
    total_mass_kg: float
    energy_j: dict[str, float]


@dataclass(frozen=True)
class RecordResult:
    """Everything the motor and supply check found in one record."""

    path: str
    weight: float
    joints: dict[str, JointMotorResult]
    supply: RecordSupplyResult
    series_time_s: np.ndarray                 # [block] block start times
    winding_temp_c: dict[str, np.ndarray]     # [block] max per block (steady state)
    battery_current_a: np.ndarray             # [block, 3] min, mean, max
    density: dict[str, np.ndarray]            # [speed_bin, torque_bin] seconds
    density_speed_edges_rad_s: dict[str, np.ndarray]
    density_torque_edges_nm: dict[str, np.ndarray]



ENERGY_TERMS = ("joint_work", "reducer_loss", "copper_loss", "iron_friction_loss",
                "rotor_kinetic", "inverter_loss", "auxiliary", "regen_dumped",
                "pack_internal_loss", "battery_terminal", "battery_chemical", "regenerated",
                "motor_regeneration")


class _RecordTally:
    """Running sums over the chunks of one record, all motors at once (``[motor]`` arrays).

    Winding temperatures start from the periodic steady state found by
    :func:`~.motor_heating.thermal_analysis`; series are decimated to blocks of ``block``
    samples (min, mean and max of the battery current, max of each winding temperature).
    """

    def __init__(self, bank: MotorBank, supply: Supply, thermal: Mapping[str, np.ndarray],
                 t_lim: np.ndarray, dt: float, density_bins: int, block: int,
                 has_velocity: bool):
        nm = len(bank.joints)
        self.bank, self.supply, self.t_lim, self.dt, self.block = bank, supply, t_lim, dt, block
        # fixed density edges from the nominal envelope
        v_line = supply.bus_voltage_v * supply.line_voltage_factor
        w0 = v_line / bank.k[:, 0]
        self.s_edges = [np.linspace(-1.25 * w0[i], 1.25 * w0[i], density_bins + 1)
                        for i in range(nm)]
        self.t_edges = [np.linspace(-1.25 * t_lim[i], 1.25 * t_lim[i], density_bins + 1)
                        for i in range(nm)]
        self.dens = [np.zeros((density_bins, density_bins)) for _ in range(nm)]
        self.acc = {k: 0.0 for k in ENERGY_TERMS}
        self.sum_t2 = np.zeros(nm)
        self.peak_t = np.zeros(nm)
        self.peak_w = np.zeros(nm)
        self.outside = np.zeros(nm)
        self.over = np.zeros(nm)
        self.cu_sum = np.zeros(nm)
        self.hs_sum = np.zeros(nm)
        self.i_peak, self.i_min, self.i2_sum = -np.inf, np.inf, 0.0
        self.i_sum, self.v_min, self.collapse_n = 0.0, np.inf, 0
        self.dist: float | None = 0.0 if has_velocity else None
        self.peak_rise = thermal["start_w"].copy()
        self.state = (thermal["start_w"].copy(), thermal["start_h"].copy())
        self.ser_t: list[np.ndarray] = []
        self.ser_temp: list[np.ndarray] = []
        self.ser_i: list[np.ndarray] = []

    def add(self, c: DutyChunk) -> None:
        """Winding temperatures, currents, envelope and energy over one chunk."""
        bank, supply, dt = self.bank, self.supply, self.dt
        pre = th.prefix_maps(thermal_step_maps(bank, dt, c))
        after_w, after_h = th.apply_map(pre, self.state[0][:, None], self.state[1][:, None])
        before_w = np.concatenate([self.state[0][:, None], after_w[:, :-1]], axis=1)
        self.state = (after_w[:, -1].copy(), after_h[:, -1].copy())
        self.peak_rise = np.maximum(self.peak_rise, after_w.max(axis=1))
        temp_c = bank.ambient + before_w
        r_hot = bank.r20 * th.copper_resistance_ratio(temp_c)
        copper = c.current ** 2 * r_hot
        p_em = c.t_em * c.w_m
        p_elec = p_em + copper
        p_bus_m = bus_power_w(p_elec, supply.inverter_efficiency)
        p_net = p_bus_m.sum(axis=0) + supply.auxiliary_power_w
        if supply.regeneration_absorbed:
            p_batt, dumped = p_net, np.zeros_like(p_net)
        else:
            p_batt, dumped = np.maximum(p_net, 0.0), np.maximum(-p_net, 0.0)
        i_batt, col = battery_current_a(p_batt, supply.bus_voltage_v, supply.pack_resistance_ohm)
        v_term = supply.bus_voltage_v - i_batt * supply.pack_resistance_ohm
        lower, upper = envelope_nm_bank(bank, c.w_m, v_term * supply.line_voltage_factor,
                                        self.t_lim[:, None], r_hot)
        tol = 1e-9 * (1.0 + np.abs(c.t_em))
        self.outside += ((c.t_em > upper + tol) | (c.t_em < lower - tol)).sum(axis=1) * dt
        self.over += (np.abs(c.w_m) * bank.k > v_term * supply.line_voltage_factor).sum(
            axis=1) * dt
        self.sum_t2 += (c.t_em ** 2).sum(axis=1) * dt
        self.peak_t = np.maximum(self.peak_t, np.abs(c.t_em).max(axis=1))
        self.peak_w = np.maximum(self.peak_w, np.abs(c.w_m).max(axis=1))
        self.cu_sum += copper.sum(axis=1) * dt
        self.hs_sum += c.drag_w.sum(axis=1) * dt
        self._add_energy(c, copper, p_elec, p_bus_m, p_net, p_batt, dumped, i_batt)
        self.i_peak = max(self.i_peak, float(i_batt.max()))
        self.i_min = min(self.i_min, float(i_batt.min()))
        self.i2_sum += float((i_batt ** 2).sum()) * dt
        self.i_sum += float(i_batt.sum()) * dt
        self.v_min = min(self.v_min, float(v_term.min()))
        self.collapse_n += int(col.sum())
        if self.dist is not None and c.speed_xy is not None:
            self.dist += float(c.speed_xy.sum()) * dt
        self._add_density_and_series(c, after_w, i_batt)

    def _add_energy(self, c: DutyChunk, copper: np.ndarray, p_elec: np.ndarray,
                    p_bus_m: np.ndarray, p_net: np.ndarray, p_batt: np.ndarray,
                    dumped: np.ndarray, i_batt: np.ndarray) -> None:
        acc, dt = self.acc, self.dt
        p_joint = c.tau * c.w
        acc["joint_work"] += float(p_joint.sum()) * dt
        acc["reducer_loss"] += float((c.t_shaft * c.w_m - p_joint).sum()) * dt
        acc["copper_loss"] += float(copper.sum()) * dt
        acc["iron_friction_loss"] += float(c.drag_w.sum()) * dt
        acc["rotor_kinetic"] += float(c.kinetic_w.sum()) * dt
        acc["inverter_loss"] += float((p_bus_m - p_elec).sum()) * dt
        acc["auxiliary"] += self.supply.auxiliary_power_w * len(p_net) * dt
        acc["regen_dumped"] += float(dumped.sum()) * dt
        acc["pack_internal_loss"] += (float((i_batt ** 2).sum()) * self.supply.pack_resistance_ohm
                                      * dt)
        acc["battery_terminal"] += float(p_batt.sum()) * dt
        acc["regenerated"] += float(np.maximum(-p_net, 0.0).sum()) * dt
        acc["motor_regeneration"] += float(np.maximum(-p_bus_m, 0.0).sum()) * dt

    def _add_density_and_series(self, c: DutyChunk, after_w: np.ndarray,
                                i_batt: np.ndarray) -> None:
        s_edges, t_edges = self.s_edges, self.t_edges
        for i in range(len(self.dens)):
            h, _, _ = np.histogram2d(np.clip(c.w_m[i], s_edges[i][0], s_edges[i][-1]),
                                     np.clip(c.t_em[i], t_edges[i][0], t_edges[i][-1]),
                                     bins=(s_edges[i], t_edges[i]))
            self.dens[i] += h * self.dt
        starts = np.arange(0, c.t_em.shape[1], self.block)
        self.ser_t.append((c.start + starts) * self.dt)
        self.ser_temp.append(np.maximum.reduceat(self.bank.ambient + after_w, starts, axis=1))
        cnt = np.diff(np.append(starts, c.t_em.shape[1]))
        self.ser_i.append(np.stack([np.minimum.reduceat(i_batt, starts),
                                    np.add.reduceat(i_batt, starts) / cnt,
                                    np.maximum.reduceat(i_batt, starts)], axis=1))

    def joint_results(self, drives: Mapping[str, Drive], thermal: Mapping[str, np.ndarray],
                      mission_s: float | None, duration: float) -> dict[str, JointMotorResult]:
        """Per joint: winding temperatures, torques against the ratings, envelope times."""
        joints: dict[str, JointMotorResult] = {}
        ok = thermal["ok"]
        for i, j in enumerate(self.bank.joints):
            mot = drives[j].motor
            ta = float(self.bank.ambient[i, 0])
            cont, src = mot.rated_continuous_torque_nm(ta)
            t_lim = self.t_lim
            peak_rating = t_lim[i] if mot.peak_torque_nm is None else min(
                mot.peak_torque_nm, t_lim[i])
            mins = thermal["minutes_to_limit"][i]
            mp = thermal["mission_peak_rise"][i]
            joints[j] = JointMotorResult(
                joint=j, winding_limit_c=mot.max_winding_temp_c,
                winding_peak_c=float(ta + self.peak_rise[i]) if ok[i] else None,
                winding_peak_mission_c=None if mission_s is None else float(ta + mp),
                minutes_to_limit=None if not math.isfinite(mins) else float(mins),
                thermal_runaway=not bool(ok[i]),
                rms_torque_nm=math.sqrt(self.sum_t2[i] / duration),
                peak_torque_nm=float(self.peak_t[i]),
                continuous_torque_nm=cont, continuous_torque_source=src,
                peak_torque_rating_nm=float(peak_rating),
                outside_envelope_s=float(self.outside[i]), over_speed_s=float(self.over[i]),
                duration_s=duration, peak_speed_rad_s=float(self.peak_w[i]),
                mean_copper_loss_w=float(self.cu_sum[i] / duration),
                mean_housing_loss_w=float(self.hs_sum[i] / duration))
        return joints

    def supply_result(self, duration: float, total_mass_kg: float) -> RecordSupplyResult:
        """Battery current, bus voltage and the energy breakdown (J) over the record."""
        acc = dict(self.acc)
        acc["battery_chemical"] = acc["battery_terminal"] + acc["pack_internal_loss"]
        return RecordSupplyResult(
            duration_s=duration, peak_current_a=self.i_peak,
            mean_square_current_a2=self.i2_sum / duration,
            mean_current_a=self.i_sum / duration, peak_regen_current_a=self.i_min,
            min_bus_voltage_v=self.v_min, collapse_s=self.collapse_n * self.dt,
            distance_m=self.dist, total_mass_kg=total_mass_kg, energy_j=acc)


def record_result(path: str | Path, weight: float, drives: Mapping[str, Drive],
                  supply: Supply, mission_s: float | None, ambient_c: float | None,
                  rows: int, allow_failed: bool, density_bins: int, series_points: int
                  ) -> RecordResult:
    """Check the motors of ``drives`` and the supply over one record (weight: its share of a
    day, carried along). Two passes of the record go to the winding temperatures
    (:func:`~.motor_heating.thermal_analysis`) and one to everything else."""
    bank = MotorBank(drives, ambient_c)
    with open_record(path) as rec:
        rec.require_completed(allow_failed)
        for j in bank.joints:
            rec.check_joint(j)
        attrs = rec.attrs
        rec.require_duty_series()
        dt = rec.duty_period_s  # every step: the figures do not depend on the decimation
        n = rec.duty_length
        if n == 0:
            raise InputError(str(path), "time_s", "a record with at least one sample")
        thermal = thermal_analysis(rec, bank, dt, n, rows, mission_s)
        block = max(1, math.ceil(n / series_points))
        rows_b = max(block, (rows // block) * block)
        t_lim = np.array([current_limit_torque_nm(drives[j].motor, supply, drives[j].current_limit_a)
                          for j in bank.joints])
        tally = _RecordTally(bank, supply, thermal, t_lim, dt, density_bins, block,
                             rec.has("base/velocity_m_s"))
        for c in duty_chunks(rec, bank, rows_b):
            tally.add(c)
        if rec.has_step_series:  # decimated: the distance from the sampled base velocity
            tally.dist = sampled_distance_m(rec, rows)
        duration = n * dt
        total_mass_kg = float(attrs.get("total_mass_kg", 0.0))
    return RecordResult(
        path=str(path), weight=weight, joints=tally.joint_results(drives, thermal, mission_s,
                                                                 duration),
        supply=tally.supply_result(duration, total_mass_kg),
        series_time_s=np.concatenate(tally.ser_t),
        winding_temp_c={j: np.concatenate([s[i] for s in tally.ser_temp])
                        for i, j in enumerate(bank.joints)},
        battery_current_a=np.concatenate(tally.ser_i),
        density={j: tally.dens[i] for i, j in enumerate(bank.joints)},
        density_speed_edges_rad_s={j: tally.s_edges[i] for i, j in enumerate(bank.joints)},
        density_torque_edges_nm={j: tally.t_edges[i] for i, j in enumerate(bank.joints)})
