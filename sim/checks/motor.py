"""Motor parts and the motor check: operating points, torque-speed envelope, heating, ratings.

Motor constants and current conventions (derivation: power balance of a sinusoidal PMSM,
``T omega = sum_k e_k i_k``; Krishnan, *Permanent Magnet Synchronous and Brushless DC Motor
Drives*, CRC 2010, ch. on dq models, from memory):

* ``kV`` (rpm/V) is the no-load speed per volt of **line-to-line peak** back-EMF (the bus
  voltage at the SVPWM / six-step limit); ``k = 60 / (2 pi kV)`` in V s/rad = N m/A for the
  DC-equivalent (bus / six-step line) current.  A kV quoted per volt of line-to-line RMS gives
  ``k = sqrt(2) * 60 / (2 pi kV)``.
* Torque constant by current convention: DC-equivalent ``k``; phase peak (amplitude-invariant
  ``i_q``) ``sqrt(3)/2 k``; phase RMS ``sqrt(3/2) k``; power-invariant dq ``k / sqrt(2)``.
* Copper loss ``P_cu = (T/k)^2 R_LL`` with line-to-line resistance ``R_LL = 2 R_ph`` (star) or
  ``2/3 R_ph`` (delta); the same for every convention.

Through a reducer of ratio ``N`` (joint speed x N = motor speed) the motor shaft torque is
``tau / (N eta_forward)`` when power flows from motor to joint (``tau omega >= 0``) and
``tau eta_back / N`` when the joint back-drives the motor. The motor's electromagnetic torque
adds its drag (friction, no-load current, iron loss) and the torque that accelerates the rotor
and reducer input inertia.

Envelope (steady state, surface PMSM, ``i_d = 0``, inductance neglected, no field weakening):
the terminal voltage ``k omega + I R_LL`` must stay within ``+-V`` (``V`` = largest line-to-line
peak the driver can make: the bus for SVPWM) and the torque within the current limit:
``max(-T_I, k(-V - k omega)/R) <= T <= min(T_I, k(V - k omega)/R)``; corner speed
``(V - I_lim R)/k``, no-load speed ``V/k``. All four quadrants follow from the same inequality.

Results are estimates; manufacturer ratings, local codes and licensed engineering practice take
precedence. Not modelled: inductance and field weakening, magnet temperature (k falls when hot),
cogging, driver switching and conduction losses beyond the stated inverter efficiency, heat
from the reducer, forced cooling.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sim.checks import thermal as th
from sim.checks.supply import (
    CURRENT_CONVENTIONS,
    Supply,
    battery_current_a,
    bus_power_w,
)
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError
from sim.record import RunRecord, open_record

SPEED_CONSTANT_VOLTAGES = ("line_to_line_peak", "line_to_line_rms")
RPM_PER_RAD_S = 60.0 / (2.0 * math.pi)
_CONV_FACTOR = {"dc_equivalent": 1.0, "phase_peak": math.sqrt(3.0) / 2.0,
                "phase_rms": math.sqrt(1.5), "power_invariant": 1.0 / math.sqrt(2.0)}
CAUTION = ("Estimates only: manufacturer ratings, local codes and licensed engineering practice "
           "take precedence. Not modelled: inductance and field weakening, magnet heating, "
           "cogging, driver losses beyond the stated efficiency, reducer heat, forced cooling.")


# -- constants and conventions --------------------------------------------------------------
def back_emf_constant(speed_constant_rpm_per_v: float,
                      voltage: str = "line_to_line_peak") -> float:
    """``k`` in V s/rad (line-to-line peak per rad/s) from kV in rpm/V: ``60/(2 pi kV)``,
    times sqrt(2) when kV is quoted per volt of line-to-line RMS."""
    if voltage not in SPEED_CONSTANT_VOLTAGES:
        raise ValueError(f"voltage convention must be one of {SPEED_CONSTANT_VOLTAGES}")
    k = RPM_PER_RAD_S / speed_constant_rpm_per_v
    return k * math.sqrt(2.0) if voltage == "line_to_line_rms" else k


def speed_constant(back_emf_v_s_per_rad: float, voltage: str = "line_to_line_peak") -> float:
    """Inverse of :func:`back_emf_constant`: kV in rpm/V."""
    k = back_emf_v_s_per_rad / math.sqrt(2.0) if voltage == "line_to_line_rms" else (
        back_emf_v_s_per_rad)
    if voltage not in SPEED_CONSTANT_VOLTAGES:
        raise ValueError(f"voltage convention must be one of {SPEED_CONSTANT_VOLTAGES}")
    return RPM_PER_RAD_S / k


def torque_constant(back_emf_v_s_per_rad: float, current: str = "dc_equivalent") -> float:
    """Torque constant (N m/A) for a current convention, from ``k`` (see module docstring)."""
    if current not in _CONV_FACTOR:
        raise ValueError(f"current convention must be one of {CURRENT_CONVENTIONS}")
    return back_emf_v_s_per_rad * _CONV_FACTOR[current]


def back_emf_from_torque_constant(torque_constant_nm_per_a: float,
                                  current: str = "dc_equivalent") -> float:
    """Inverse of :func:`torque_constant`: ``k`` in V s/rad."""
    if current not in _CONV_FACTOR:
        raise ValueError(f"current convention must be one of {CURRENT_CONVENTIONS}")
    return torque_constant_nm_per_a / _CONV_FACTOR[current]


def speed_to_torque_constant(speed_constant_rpm_per_v: float, current: str,
                             voltage: str = "line_to_line_peak") -> float:
    """kV (rpm/V) -> torque constant (N m/A) under the stated conventions."""
    return torque_constant(back_emf_constant(speed_constant_rpm_per_v, voltage), current)


def torque_to_speed_constant(torque_constant_nm_per_a: float, current: str,
                             voltage: str = "line_to_line_peak") -> float:
    """Torque constant (N m/A) -> kV (rpm/V) under the stated conventions."""
    return speed_constant(back_emf_from_torque_constant(torque_constant_nm_per_a, current),
                          voltage)


# -- the part -------------------------------------------------------------------------------
@dataclass(frozen=True)
class MotorPart:
    """A motor described by datasheet-style parameters (SI; see ``docs/motor.md``).

    back_emf_v_s_per_rad: ``k`` (line-to-line peak back-EMF per rad/s = DC-equivalent N m/A).
    phase_resistance_ohm_20c, winding (``star``/``delta``): copper at 20 C.
    drag: ``friction_torque_nm`` (Coulomb, includes no-load current x k), viscous, and iron loss
    ``P = hysteresis |w| + eddy w^2`` (W), all heating the housing node.
    """

    name: str
    back_emf_v_s_per_rad: float
    phase_resistance_ohm_20c: float
    rotor_inertia_kg_m2: float
    thermal: th.ThermalNetwork
    max_winding_temp_c: float
    winding: str = "star"
    friction_torque_nm: float = 0.0
    viscous_friction_nm_s_per_rad: float = 0.0
    hysteresis_loss_w_s_per_rad: float = 0.0
    eddy_loss_w_s2_per_rad2: float = 0.0
    ambient_temp_c: float = 25.0
    insulation_class: str | None = None
    continuous_torque_nm: float | None = None
    peak_torque_nm: float | None = None
    note: str = ""
    file: str | None = None

    @property
    def speed_constant_rpm_per_v(self) -> float:
        return speed_constant(self.back_emf_v_s_per_rad)

    def torque_constant_nm_per_a(self, current: str = "dc_equivalent") -> float:
        return torque_constant(self.back_emf_v_s_per_rad, current)

    def line_resistance_ohm(self, winding_temp_c: float | np.ndarray = 20.0
                            ) -> float | np.ndarray:
        """Line-to-line resistance at a winding temperature (IEC 60028 alpha), ohm."""
        r_ll = (2.0 if self.winding == "star" else 2.0 / 3.0) * self.phase_resistance_ohm_20c
        return r_ll * th.copper_resistance_ratio(winding_temp_c)

    @property
    def motor_constant_nm_per_sqrt_w(self) -> float:
        """``K_m = k / sqrt(R_LL)`` at 20 C."""
        return self.back_emf_v_s_per_rad / math.sqrt(float(self.line_resistance_ohm(20.0)))

    def drag_torque_nm(self, speed_rad_s: np.ndarray) -> np.ndarray:
        """Friction and iron-loss drag the electromagnetic torque must overcome, N m."""
        w = np.asarray(speed_rad_s, float)
        return ((self.friction_torque_nm + self.hysteresis_loss_w_s_per_rad) * np.sign(w)
                + (self.viscous_friction_nm_s_per_rad + self.eddy_loss_w_s2_per_rad2) * w)

    def derived_continuous_torque_nm(self, ambient_c: float | None = None) -> float:
        """Stall torque that holds the winding at its limit in steady state, N m.

        ``T = k sqrt(P / R_LL(T_max))`` with ``P = (T_max - T_a) / (R_wh + R_ha)``.
        """
        ta = self.ambient_temp_c if ambient_c is None else ambient_c
        p = max(self.max_winding_temp_c - ta, 0.0) / float(self.thermal.total_resistance_k_per_w)
        return self.back_emf_v_s_per_rad * math.sqrt(
            p / float(self.line_resistance_ohm(self.max_winding_temp_c)))

    def rated_continuous_torque_nm(self, ambient_c: float | None = None) -> tuple[float, str]:
        if self.continuous_torque_nm is not None:
            return self.continuous_torque_nm, "part"
        return self.derived_continuous_torque_nm(ambient_c), "thermal model"


def _class_check(value: str) -> str | None:
    if str(value).strip().upper() not in th.INSULATION_CLASSES_C:
        return "an IEC 60085 thermal class: " + ", ".join(th.INSULATION_CLASSES_C)
    return None


_POS = {"min": 0.0, "min_inclusive": False}
MOTOR_SPEC: dict[str, Field] = {
    "kind": Field(str, default="motor", choices=("motor",)),
    "name": Field(str, required=True),
    "note": Field(str, "where the numbers come from", default=""),
    "speed_constant_rpm_per_v": Field(float, "rpm/V", **_POS),  # type: ignore[arg-type]
    "speed_constant_voltage": Field(str, default="line_to_line_peak",
                                    choices=SPEED_CONSTANT_VOLTAGES),
    "torque_constant_nm_per_a": Field(float, "N m/A", **_POS),  # type: ignore[arg-type]
    "torque_constant_current": Field(str, choices=CURRENT_CONVENTIONS),
    "phase_resistance_ohm_20c": Field(float, "ohm", required=True, **_POS),  # type: ignore[arg-type]
    "winding": Field(str, default="star", choices=("star", "delta")),
    "rotor_inertia_kg_m2": Field(float, "kg m^2", required=True, min=0.0),
    "no_load_current_a": Field(float, "A, DC-equivalent", min=0.0),
    "friction_torque_nm": Field(float, "N m", default=0.0, min=0.0),
    "viscous_friction_nm_s_per_rad": Field(float, "N m s/rad", default=0.0, min=0.0),
    "hysteresis_loss_w_s_per_rad": Field(float, "W per rad/s", default=0.0, min=0.0),
    "eddy_loss_w_s2_per_rad2": Field(float, "W per (rad/s)^2", default=0.0, min=0.0),
    "thermal_resistance_winding_housing_k_per_w": Field(float, "K/W", required=True, **_POS),  # type: ignore[arg-type]
    "thermal_resistance_housing_ambient_k_per_w": Field(float, "K/W", required=True, **_POS),  # type: ignore[arg-type]
    "thermal_capacity_winding_j_per_k": Field(float, "J/K", required=True, **_POS),  # type: ignore[arg-type]
    "thermal_capacity_housing_j_per_k": Field(float, "J/K", required=True, **_POS),  # type: ignore[arg-type]
    "insulation_class": Field(str, check=_class_check),
    "max_winding_temp_c": Field(float, "C"),
    "ambient_temp_c": Field(float, "C", default=25.0),
    "continuous_torque_nm": Field(float, "N m at the motor shaft", **_POS),  # type: ignore[arg-type]
    "peak_torque_nm": Field(float, "N m at the motor shaft", **_POS),  # type: ignore[arg-type]
}


def load_motor_part(path: str | Path) -> MotorPart:
    """Read and validate a motor part file (see ``models/parts/motor_demo.toml``)."""
    file = str(path)
    v = validate(load_toml(path, "motor part file"), MOTOR_SPEC, file=file)
    kv, kt = v["speed_constant_rpm_per_v"], v["torque_constant_nm_per_a"]
    if (kv is None) == (kt is None):
        raise InputError(file, "speed_constant_rpm_per_v",
                         "exactly one of speed_constant_rpm_per_v or torque_constant_nm_per_a")
    if kt is not None:
        if v["torque_constant_current"] is None:
            raise InputError(file, "torque_constant_current", "the current convention of the "
                             "torque constant: one of " + ", ".join(CURRENT_CONVENTIONS))
        k = back_emf_from_torque_constant(kt, v["torque_constant_current"])
    else:
        if v["torque_constant_current"] is not None:
            raise InputError(file, "torque_constant_current",
                             "no current convention without torque_constant_nm_per_a")
        k = back_emf_constant(kv, v["speed_constant_voltage"])
    limits = []
    if v["insulation_class"] is not None:
        limits.append(th.insulation_limit_c(v["insulation_class"]))
    if v["max_winding_temp_c"] is not None:
        limits.append(v["max_winding_temp_c"])
    if not limits:
        raise InputError(file, "insulation_class",
                         "insulation_class (IEC 60085) or max_winding_temp_c")
    t_max = min(limits)
    if t_max <= v["ambient_temp_c"]:
        raise InputError(file, "max_winding_temp_c", "a winding limit above ambient_temp_c",
                         t_max)
    friction = v["friction_torque_nm"] + k * (v["no_load_current_a"] or 0.0)
    net = th.ThermalNetwork(v["thermal_capacity_winding_j_per_k"],
                            v["thermal_capacity_housing_j_per_k"],
                            v["thermal_resistance_winding_housing_k_per_w"],
                            v["thermal_resistance_housing_ambient_k_per_w"])
    return MotorPart(
        name=v["name"], back_emf_v_s_per_rad=k,
        phase_resistance_ohm_20c=v["phase_resistance_ohm_20c"],
        rotor_inertia_kg_m2=v["rotor_inertia_kg_m2"], thermal=net, max_winding_temp_c=t_max,
        winding=v["winding"], friction_torque_nm=friction,
        viscous_friction_nm_s_per_rad=v["viscous_friction_nm_s_per_rad"],
        hysteresis_loss_w_s_per_rad=v["hysteresis_loss_w_s_per_rad"],
        eddy_loss_w_s2_per_rad2=v["eddy_loss_w_s2_per_rad2"],
        ambient_temp_c=v["ambient_temp_c"], insulation_class=v["insulation_class"],
        continuous_torque_nm=v["continuous_torque_nm"], peak_torque_nm=v["peak_torque_nm"],
        note=v["note"], file=file)


# -- operating points and envelope ----------------------------------------------------------
def motor_operating_points(joint_torque_nm: np.ndarray, joint_speed_rad_s: np.ndarray,
                           ratio: float | np.ndarray, efficiency_forward: float | np.ndarray,
                           efficiency_back: float | np.ndarray
                           ) -> tuple[np.ndarray, np.ndarray]:
    """Motor shaft torque (N m) and speed (rad/s) behind a reducer.

    ``tau / (N eta_f)`` where ``tau omega >= 0`` (motor drives), ``tau eta_b / N`` where the joint
    back-drives the motor; speed ``omega N``. Shapes broadcast.
    """
    tau = np.asarray(joint_torque_nm, float)
    w = np.asarray(joint_speed_rad_s, float)
    forward = np.sign(tau) * np.sign(w) >= 0.0  # signs, not tau w: that may underflow
    tm = np.where(forward, tau / (ratio * efficiency_forward), tau * efficiency_back / ratio)
    return tm, w * ratio


def joint_torque_from_motor(motor_torque_nm: np.ndarray, joint_speed_rad_s: np.ndarray,
                            ratio: float, efficiency_forward: float, efficiency_back: float
                            ) -> np.ndarray:
    """Inverse of :func:`motor_operating_points` for the torque, N m at the joint."""
    tm = np.asarray(motor_torque_nm, float)
    forward = np.sign(tm) * np.sign(np.asarray(joint_speed_rad_s, float)) >= 0.0
    return np.where(forward, tm * ratio * efficiency_forward, tm * ratio / efficiency_back)


def current_limit_torque_nm(motor: MotorPart, supply: Supply) -> float:
    """Electromagnetic torque at the driver current limit (stated convention), N m."""
    return motor.torque_constant_nm_per_a(supply.current_limit_convention) * (
        supply.current_limit_a)


def envelope_nm(motor: MotorPart, speed_rad_s: np.ndarray, line_voltage_v: float | np.ndarray,
                current_limit_torque: float, winding_temp_c: float | np.ndarray = 20.0
                ) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper electromagnetic torque (N m) reachable at each motor speed.

    ``line_voltage_v``: largest line-to-line peak voltage (bus x modulation factor).
    """
    k = motor.back_emf_v_s_per_rad
    r = motor.line_resistance_ohm(winding_temp_c)
    w = np.asarray(speed_rad_s, float)
    upper = np.minimum(current_limit_torque, k * (line_voltage_v - k * w) / r)
    lower = np.maximum(-current_limit_torque, k * (-line_voltage_v - k * w) / r)
    return lower, upper


def no_load_speed_rad_s(motor: MotorPart, line_voltage_v: float) -> float:
    """``V / k``, rad/s."""
    return line_voltage_v / motor.back_emf_v_s_per_rad


def corner_speed_rad_s(motor: MotorPart, line_voltage_v: float, current_limit_torque: float,
                       winding_temp_c: float = 20.0) -> float:
    """Speed where the voltage limit meets the current limit: ``(V - I R)/k``, rad/s."""
    k = motor.back_emf_v_s_per_rad
    i = current_limit_torque / k
    return (line_voltage_v - i * float(motor.line_resistance_ohm(winding_temp_c))) / k


def rms(values: np.ndarray) -> float:
    """Root mean square of equally spaced samples."""
    v = np.asarray(values, float)
    return float(np.sqrt(np.mean(v * v))) if v.size else 0.0


# -- the check ------------------------------------------------------------------------------
@dataclass(frozen=True)
class Drive:
    """What drives one joint: motor, reducer ratio and efficiencies, reducer input inertia."""

    motor: MotorPart
    ratio: float
    efficiency_forward: float
    efficiency_back: float
    input_inertia_kg_m2: float = 0.0


def _as_drive(x: Any) -> Drive:
    if isinstance(x, Drive):
        return x
    return Drive(*x)


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


# ---- record reading ------------------------------------------------------------------------
class _Bank:
    """Parameters of all checked motors stacked as ``[motor, 1]`` arrays."""

    def __init__(self, drives: Mapping[str, Drive], ambient_c: float | None):
        self.joints = list(drives)
        d = [drives[j] for j in self.joints]
        col = lambda xs: np.array(xs, float)[:, None]  # noqa: E731
        self.k = col([x.motor.back_emf_v_s_per_rad for x in d])
        self.r20 = col([float(x.motor.line_resistance_ohm(20.0)) for x in d])
        self.inertia = col([x.motor.rotor_inertia_kg_m2 + x.input_inertia_kg_m2 for x in d])
        self.rotor = col([x.motor.rotor_inertia_kg_m2 for x in d])
        self.ratio = col([x.ratio for x in d])
        self.eta_f = col([x.efficiency_forward for x in d])
        self.eta_b = col([x.efficiency_back for x in d])
        self.coulomb = col([x.motor.friction_torque_nm + x.motor.hysteresis_loss_w_s_per_rad
                            for x in d])
        self.viscous = col([x.motor.viscous_friction_nm_s_per_rad
                            + x.motor.eddy_loss_w_s2_per_rad2 for x in d])
        self.ambient = col([x.motor.ambient_temp_c if ambient_c is None else ambient_c
                            for x in d])
        self.limit = col([x.motor.max_winding_temp_c for x in d])
        self.net = th.ThermalNetwork(
            col([x.motor.thermal.capacity_winding_j_per_k for x in d]),
            col([x.motor.thermal.capacity_housing_j_per_k for x in d]),
            col([x.motor.thermal.resistance_winding_housing_k_per_w for x in d]),
            col([x.motor.thermal.resistance_housing_ambient_k_per_w for x in d]))


@dataclass
class _Chunk:
    start: int
    tau: np.ndarray        # [motor, rows] joint torque
    w: np.ndarray          # [motor, rows] joint speed
    t_em: np.ndarray       # electromagnetic torque at the motor
    w_m: np.ndarray        # motor speed
    current: np.ndarray    # DC-equivalent current T_em / k
    t_shaft: np.ndarray
    drag_w: np.ndarray     # friction + iron loss power (housing heat)
    kinetic_w: np.ndarray  # J alpha w
    speed_xy: np.ndarray | None  # [rows] horizontal base speed


def simulated_drive_effects(rec: RunRecord) -> tuple[bool, bool]:
    """``(rotors, losses)``: whether the run simulated motor rotors and reducer losses."""
    import tomllib

    if rec.attrs.get("load_torque", "torque_nm") != "gearbox_torque_nm":
        return False, False
    try:
        scn = tomllib.loads(str(rec.attrs.get("scenario_toml", "")))
    except tomllib.TOMLDecodeError:
        return False, False
    drive = scn.get("drive", {})
    rotors = drive.get("rotor_inertia", "off") != "off"
    losses = False
    if drive.get("losses", True):
        from sim.robot.model import model_from_data

        acts = model_from_data(tomllib.loads(str(rec.attrs["model_toml"])),
                               str(rec.path)).actuators.values()
        losses = any(a.friction_coulomb_nm > 0 or a.friction_viscous_nm_s_rad > 0
                     or a.efficiency_forward < 1 or a.efficiency_back < 1 for a in acts)
    return rotors, losses


def _chunks(rec: RunRecord, bank: _Bank, rows: int) -> Iterator[_Chunk]:
    names = [f"joints/{j}/{q}" for j in bank.joints for q in ("torque_nm", "speed_rad_s")]
    has_v = rec.has("base/velocity_m_s")
    if has_v:
        names.append("base/velocity_m_s")
    dt = float(rec.attrs["sample_period_s"])
    nj = len(bank.joints)
    rotors, losses = simulated_drive_effects(rec)
    # what the simulation already contains is not added again: with rotors simulated, the
    # recorded torque_nm (motor torque x ratio) includes the rotor's inertia; with reducer
    # losses simulated, it includes the reducer's friction and efficiency
    eta_f = np.ones_like(bank.eta_f) if losses else bank.eta_f
    eta_b = np.ones_like(bank.eta_b) if losses else bank.eta_b
    inertia = bank.inertia - bank.rotor if rotors else bank.inertia
    prev: np.ndarray | None = None
    for start, arrays in rec.iter_chunks(names, rows):
        tau = np.stack(arrays[0:2 * nj:2])
        w = np.stack(arrays[1:2 * nj:2])
        t_sh, w_m = motor_operating_points(tau, w, bank.ratio, eta_f, eta_b)
        before = w_m[:, :1] if prev is None else prev
        alpha = np.diff(w_m, axis=1, prepend=before) / dt
        prev = w_m[:, -1:]
        drag_t = bank.coulomb * np.sign(w_m) + bank.viscous * w_m
        t_em = t_sh + drag_t + inertia * alpha
        speed_xy = None
        if has_v:
            v = arrays[-1]
            speed_xy = np.hypot(v[:, 0], v[:, 1])
        yield _Chunk(start, tau, w, t_em, w_m, t_em / bank.k, t_sh, drag_t * w_m,
                     inertia * alpha * w_m, speed_xy)


def _step_maps(bank: _Bank, dt: float, c: _Chunk) -> th.Maps:
    i2r = c.current ** 2 * bank.r20
    beta = i2r * th.COPPER_ALPHA_20C_PER_K
    pw = i2r * th.copper_resistance_ratio(bank.ambient)
    return th.step_maps(bank.net, dt, beta, pw, c.drag_w)


def _cycle_pass(rec: RunRecord, bank: _Bank, dt: float, rows: int
                ) -> tuple[th.Maps, np.ndarray]:
    """Whole-record map per motor and the largest winding-row sum of any prefix map."""
    nm = len(bank.joints)
    total = th.identity_map((nm,))
    amax = np.zeros(nm)
    for c in _chunks(rec, bank, rows):
        pre = th.prefix_maps(_step_maps(bank, dt, c))
        glob = th.compose(tuple(x[:, None] for x in total), pre)  # type: ignore[arg-type]
        amax = np.maximum(amax, (glob[0] + glob[1]).max(axis=1))
        total = tuple(x[:, -1] for x in glob)  # type: ignore[assignment]
    return total, amax


def _candidate_pass(rec: RunRecord, bank: _Bank, dt: float, rows: int, sw: np.ndarray,
                    sh: np.ndarray, nlim: np.ndarray, limit_rise: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Peak winding rise over the record from each start state ``[motor, Q]`` (counting the
    start and samples ``< nlim``) and the first sample index whose end state reaches
    ``limit_rise[motor]`` (-2: the start state already does; -1: never)."""
    peak = sw.copy()
    first = np.where(sw >= limit_rise[:, None], -2, -1).astype(np.int64)
    state = th.identity_map((sw.shape[0],))
    sub = 4096
    for c in _chunks(rec, bank, rows):
        pre = th.prefix_maps(_step_maps(bank, dt, c))
        glob = th.compose(tuple(x[:, None] for x in state), pre)  # type: ignore[arg-type]
        state = tuple(x[:, -1] for x in glob)  # type: ignore[assignment]
        n = glob[0].shape[1]
        for s0 in range(0, n, sub):
            a0 = glob[0][:, None, s0:s0 + sub]
            a1 = glob[1][:, None, s0:s0 + sub]
            v0 = glob[4][:, None, s0:s0 + sub]
            rise = a0 * sw[:, :, None] + a1 * sh[:, :, None] + v0  # [motor, Q, sub]
            idx = c.start + s0 + np.arange(rise.shape[2])
            rise = np.where(idx[None, None, :] < nlim[:, :, None], rise, -np.inf)
            peak = np.maximum(peak, rise.max(axis=2))
            hit = rise >= limit_rise[:, None, None]
            newly = hit.any(axis=2) & (first == -1)
            if newly.any():
                first = np.where(newly, idx[0] + np.argmax(hit, axis=2), first)
    return peak, first


def _iterate_cycles(cycle: th.Maps, q_max: int) -> tuple[np.ndarray, np.ndarray]:
    """Cycle-start states from cold for q = 0..q_max: ``([motor, q_max+1], [...])``."""
    nm = cycle[0].shape[0]
    xw = np.zeros((nm, q_max + 1))
    xh = np.zeros((nm, q_max + 1))
    with np.errstate(over="ignore", invalid="ignore"):
        for q in range(1, q_max + 1):
            xw[:, q], xh[:, q] = th.apply_map(cycle, xw[:, q - 1], xh[:, q - 1])
    return xw, xh


_MAX_CYCLES = 2_000_000
_GRID = 48


def _crossing_bound(cycle_i: th.Maps, ok: bool, sw: float, sh: float, amax: float,
                    margin: float, limit: float) -> int:
    """A cycle count from cold after which the cycle peak surely passes the limit.

    With periodic steady state: the cycle-start state approaches ``theta*`` from below and the
    cycle peak is ``max_k a_k . x + c_k`` with ``a_k >= 0``, so it is within
    ``amax * max(theta* - x)`` of the steady peak. On runaway: until the start state passes.
    """
    xw, xh = 0.0, 0.0
    for q in range(_MAX_CYCLES):
        if ok:
            gap = max(sw - xw, sh - xh)
            if amax * gap < margin or gap <= 1e-12 * max(sw, 1.0):
                return q
        elif xw >= limit or not math.isfinite(xw):
            return q
        a, b = th.apply_map(cycle_i, np.asarray(xw), np.asarray(xh))
        xw, xh = float(a), float(b)
    return _MAX_CYCLES


def _thermal_analysis(rec: RunRecord, bank: _Bank, dt: float, n: int, rows: int,
                      mission_s: float | None) -> dict[str, np.ndarray]:
    """Periodic steady state, mission from cold and time from cold to the winding limit."""
    cycle, amax = _cycle_pass(rec, bank, dt, rows)
    sw, sh, ok = th.periodic_state(cycle)
    nm = len(bank.joints)
    limit_rise = (bank.limit - bank.ambient)[:, 0]
    t_cyc = n * dt
    m = r = 0  # mission: m full records and r samples from cold
    if mission_s is not None:
        m = math.floor(mission_s / t_cyc + 1e-12)
        r = round((mission_s - m * t_cyc) / dt)
        if m > _MAX_CYCLES:
            raise InputError(rec.path.as_posix(), "mission_s",
                             f"a mission of at most {_MAX_CYCLES} record lengths", mission_s)
    xw, xh = _iterate_cycles(cycle, max(m, 1))
    # candidates: 0 steady state, 1 full cycle m-1 from cold, 2 partial cycle m (r samples)
    s_w = np.stack([np.where(ok, sw, 0.0), xw[:, max(m - 1, 0)], xw[:, m]], axis=1)
    s_h = np.stack([np.where(ok, sh, 0.0), xh[:, max(m - 1, 0)], xh[:, m]], axis=1)
    nlim = np.array([[n, n if m >= 1 else 0, r]] * nm, dtype=np.int64)
    peak0, _ = _candidate_pass(rec, bank, dt, rows, s_w, s_h, nlim, limit_rise)
    steady_peak = np.where(ok, peak0[:, 0], np.inf)
    mission_peak = np.full(nm, np.nan)
    if mission_s is not None:
        if m >= 1:
            mission_peak = np.maximum(peak0[:, 1], peak0[:, 2])
        else:
            mission_peak = peak0[:, 2]
    # time from cold to the limit: bracket the first cycle whose peak reaches it
    minutes = np.full(nm, np.nan)
    todo = [int(i) for i in np.flatnonzero(steady_peak >= limit_rise)]
    lo = {i: -1 for i in todo}
    hi: dict[int, int] = {}
    hi_first: dict[int, int] = {}
    starts: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    for i in todo:
        cyc_i = tuple(x[i] for x in cycle)
        hi[i] = _crossing_bound(cyc_i, bool(ok[i]), float(sw[i]), float(sh[i]),
                                float(amax[i]), float(steady_peak[i] - limit_rise[i]),
                                float(limit_rise[i]))
        sub_cycle = tuple(x[i:i + 1] for x in cycle)
        starts[i] = _iterate_cycles(sub_cycle, hi[i])  # type: ignore[arg-type]
    while todo:
        qs = np.zeros((nm, _GRID), dtype=np.int64)
        for i in todo:
            cand = np.unique(np.linspace(lo[i] + 1, hi[i], _GRID).round().astype(np.int64))
            qs[i] = np.concatenate([cand, np.full(_GRID - cand.size, cand[-1])])
        c_w = np.zeros((nm, _GRID))
        c_h = np.zeros((nm, _GRID))
        lim = np.full(nm, np.inf)
        for i in todo:
            c_w[i], c_h[i] = starts[i][0][0, qs[i]], starts[i][1][0, qs[i]]
            lim[i] = limit_rise[i]
        _, first = _candidate_pass(rec, bank, dt, rows, c_w, c_h,
                                   np.full((nm, _GRID), n, dtype=np.int64), lim)
        still = []
        for i in todo:
            reached = first[i] != -1
            if not reached.any():  # not reached within the bound (steady peak at the limit)
                continue
            if (~reached).any():
                lo[i] = max(lo[i], int(qs[i][~reached].max()))
            k = int(np.argmin(np.where(reached, qs[i], np.iinfo(np.int64).max)))
            hi[i], hi_first[i] = int(qs[i][k]), int(first[i][k])
            if hi[i] - lo[i] <= 1:
                t_in = 0.0 if hi_first[i] == -2 else (hi_first[i] + 1) * dt
                minutes[i] = (hi[i] * t_cyc + t_in) / 60.0
            else:
                still.append(i)
        todo = still
    return {"start_w": s_w[:, 0], "start_h": s_h[:, 0], "ok": ok,
            "steady_peak_rise": steady_peak, "mission_peak_rise": mission_peak,
            "minutes_to_limit": minutes}


def _record_result(path: str | Path, weight: float, drives: Mapping[str, Drive],
                   supply: Supply, mission_s: float | None, ambient_c: float | None,
                   rows: int, allow_failed: bool, density_bins: int, series_points: int
                   ) -> RecordResult:
    bank = _Bank(drives, ambient_c)
    with open_record(path) as rec:
        rec.require_completed(allow_failed)
        for j in bank.joints:
            rec.check_joint(j)
        attrs = rec.attrs
        dt = float(attrs["sample_period_s"])
        n = rec.n_samples
        if n == 0:
            raise InputError(str(path), "time_s", "a record with at least one sample")
        thermal = _thermal_analysis(rec, bank, dt, n, rows, mission_s)
        nm = len(bank.joints)
        block = max(1, math.ceil(n / series_points))
        rows_b = max(block, (rows // block) * block)
        # fixed density edges from the nominal envelope
        v_line = supply.bus_voltage_v * supply.line_voltage_factor
        t_lim = np.array([current_limit_torque_nm(drives[j].motor, supply)
                          for j in bank.joints])
        w0 = v_line / bank.k[:, 0]
        s_edges = [np.linspace(-1.25 * w0[i], 1.25 * w0[i], density_bins + 1) for i in range(nm)]
        t_edges = [np.linspace(-1.25 * t_lim[i], 1.25 * t_lim[i], density_bins + 1)
                   for i in range(nm)]
        dens = [np.zeros((density_bins, density_bins)) for _ in range(nm)]
        acc = {k: 0.0 for k in ("joint_work", "reducer_loss", "copper_loss",
                                "iron_friction_loss", "rotor_kinetic", "inverter_loss",
                                "auxiliary", "regen_dumped", "pack_internal_loss",
                                "battery_terminal", "battery_chemical", "regenerated",
                                "motor_regeneration")}
        sum_t2 = np.zeros(nm)
        peak_t = np.zeros(nm)
        peak_w = np.zeros(nm)
        outside = np.zeros(nm)
        over = np.zeros(nm)
        cu_sum = np.zeros(nm)
        hs_sum = np.zeros(nm)
        i_peak, i_min, i2_sum, i_sum, v_min, collapse_n = -np.inf, np.inf, 0.0, 0.0, np.inf, 0
        dist = 0.0 if rec.has("base/velocity_m_s") else None
        peak_rise = thermal["start_w"].copy()
        state = (thermal["start_w"].copy(), thermal["start_h"].copy())
        ser_t: list[np.ndarray] = []
        ser_temp: list[np.ndarray] = []
        ser_i: list[np.ndarray] = []
        r_pack = supply.pack_resistance_ohm
        for c in _chunks(rec, bank, rows_b):
            pre = th.prefix_maps(_step_maps(bank, dt, c))
            after_w, after_h = th.apply_map(pre, state[0][:, None], state[1][:, None])
            before_w = np.concatenate([state[0][:, None], after_w[:, :-1]], axis=1)
            state = (after_w[:, -1].copy(), after_h[:, -1].copy())
            peak_rise = np.maximum(peak_rise, after_w.max(axis=1))
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
            i_batt, col = battery_current_a(p_batt, supply.bus_voltage_v, r_pack)
            v_term = supply.bus_voltage_v - i_batt * r_pack
            lower, upper = envelope_nm_bank(bank, c.w_m, v_term * supply.line_voltage_factor,
                                            t_lim[:, None], r_hot)
            tol = 1e-9 * (1.0 + np.abs(c.t_em))
            outside += ((c.t_em > upper + tol) | (c.t_em < lower - tol)).sum(axis=1) * dt
            over += (np.abs(c.w_m) * bank.k > v_term * supply.line_voltage_factor).sum(
                axis=1) * dt
            sum_t2 += (c.t_em ** 2).sum(axis=1) * dt
            peak_t = np.maximum(peak_t, np.abs(c.t_em).max(axis=1))
            peak_w = np.maximum(peak_w, np.abs(c.w_m).max(axis=1))
            cu_sum += copper.sum(axis=1) * dt
            hs_sum += c.drag_w.sum(axis=1) * dt
            p_joint = c.tau * c.w
            acc["joint_work"] += float(p_joint.sum()) * dt
            acc["reducer_loss"] += float((c.t_shaft * c.w_m - p_joint).sum()) * dt
            acc["copper_loss"] += float(copper.sum()) * dt
            acc["iron_friction_loss"] += float(c.drag_w.sum()) * dt
            acc["rotor_kinetic"] += float(c.kinetic_w.sum()) * dt
            acc["inverter_loss"] += float((p_bus_m - p_elec).sum()) * dt
            acc["auxiliary"] += supply.auxiliary_power_w * len(p_net) * dt
            acc["regen_dumped"] += float(dumped.sum()) * dt
            acc["pack_internal_loss"] += float((i_batt ** 2).sum()) * r_pack * dt
            acc["battery_terminal"] += float(p_batt.sum()) * dt
            acc["regenerated"] += float(np.maximum(-p_net, 0.0).sum()) * dt
            acc["motor_regeneration"] += float(np.maximum(-p_bus_m, 0.0).sum()) * dt
            i_peak = max(i_peak, float(i_batt.max()))
            i_min = min(i_min, float(i_batt.min()))
            i2_sum += float((i_batt ** 2).sum()) * dt
            i_sum += float(i_batt.sum()) * dt
            v_min = min(v_min, float(v_term.min()))
            collapse_n += int(col.sum())
            if dist is not None and c.speed_xy is not None:
                dist += float(c.speed_xy.sum()) * dt
            for i in range(nm):
                h, _, _ = np.histogram2d(np.clip(c.w_m[i], s_edges[i][0], s_edges[i][-1]),
                                         np.clip(c.t_em[i], t_edges[i][0], t_edges[i][-1]),
                                         bins=(s_edges[i], t_edges[i]))
                dens[i] += h * dt
            starts = np.arange(0, c.t_em.shape[1], block)
            ser_t.append((c.start + starts) * dt)
            ser_temp.append(np.maximum.reduceat(bank.ambient + after_w, starts, axis=1))
            cnt = np.diff(np.append(starts, c.t_em.shape[1]))
            ser_i.append(np.stack([np.minimum.reduceat(i_batt, starts),
                                   np.add.reduceat(i_batt, starts) / cnt,
                                   np.maximum.reduceat(i_batt, starts)], axis=1))
        duration = n * dt
        acc["battery_chemical"] = acc["battery_terminal"] + acc["pack_internal_loss"]
        joints: dict[str, JointMotorResult] = {}
        ok = thermal["ok"]
        for i, j in enumerate(bank.joints):
            mot = drives[j].motor
            ta = float(bank.ambient[i, 0])
            cont, src = mot.rated_continuous_torque_nm(ta)
            peak_rating = t_lim[i] if mot.peak_torque_nm is None else min(
                mot.peak_torque_nm, t_lim[i])
            mins = thermal["minutes_to_limit"][i]
            mp = thermal["mission_peak_rise"][i]
            joints[j] = JointMotorResult(
                joint=j, winding_limit_c=mot.max_winding_temp_c,
                winding_peak_c=float(ta + peak_rise[i]) if ok[i] else None,
                winding_peak_mission_c=None if mission_s is None else float(ta + mp),
                minutes_to_limit=None if not math.isfinite(mins) else float(mins),
                thermal_runaway=not bool(ok[i]),
                rms_torque_nm=math.sqrt(sum_t2[i] / duration), peak_torque_nm=float(peak_t[i]),
                continuous_torque_nm=cont, continuous_torque_source=src,
                peak_torque_rating_nm=float(peak_rating),
                outside_envelope_s=float(outside[i]), over_speed_s=float(over[i]),
                duration_s=duration, peak_speed_rad_s=float(peak_w[i]),
                mean_copper_loss_w=float(cu_sum[i] / duration),
                mean_housing_loss_w=float(hs_sum[i] / duration))
        sup = RecordSupplyResult(
            duration_s=duration, peak_current_a=i_peak, mean_square_current_a2=i2_sum / duration,
            mean_current_a=i_sum / duration, peak_regen_current_a=i_min, min_bus_voltage_v=v_min,
            collapse_s=collapse_n * dt, distance_m=dist,
            total_mass_kg=float(attrs.get("total_mass_kg", 0.0)), energy_j=acc)
        return RecordResult(
            path=str(path), weight=weight, joints=joints, supply=sup,
            series_time_s=np.concatenate(ser_t),
            winding_temp_c={j: np.concatenate([s[i] for s in ser_temp])
                            for i, j in enumerate(bank.joints)},
            battery_current_a=np.concatenate(ser_i),
            density={j: dens[i] for i, j in enumerate(bank.joints)},
            density_speed_edges_rad_s={j: s_edges[i] for i, j in enumerate(bank.joints)},
            density_torque_edges_nm={j: t_edges[i] for i, j in enumerate(bank.joints)})


def envelope_nm_bank(bank: _Bank, w_m: np.ndarray, line_v: np.ndarray, t_lim: np.ndarray,
                     r_hot: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`envelope_nm` for all motors at once (``[motor, sample]``)."""
    k = bank.k
    upper = np.minimum(t_lim, k * (line_v - k * w_m) / r_hot)
    lower = np.maximum(-t_lim, k * (-line_v - k * w_m) / r_hot)
    return lower, upper


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
    dv = {j: _as_drive(d) for j, d in drives.items()}
    for j, d in dv.items():
        if not (d.ratio > 0 and 0 < d.efficiency_forward <= 1 and 0 < d.efficiency_back <= 1):
            raise InputError(d.motor.file, j, "ratio > 0 and efficiencies in (0, 1]",
                             (d.ratio, d.efficiency_forward, d.efficiency_back))
    results = tuple(
        _record_result(path, w, dv, supply, mission_s, ambient_c, rows, allow_failed,
                       density_bins, series_points)
        for path, w in _usage_entries(source))
    notes = []
    if any(r.supply.distance_m is None for r in results):
        notes.append("no base velocity in a record: energy per metre and cost of transport "
                     "not computed")
    return MotorReport(records=results, drives=dv, supply=supply, mission_s=mission_s,
                       envelope_tolerance_share=envelope_tolerance_share, notes=tuple(notes))
