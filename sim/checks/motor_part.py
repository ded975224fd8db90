"""Motor parts: constants and conventions, the part file, operating points and envelope.

Takes a motor part file (``models/parts/motor_demo.toml``) and gives a :class:`MotorPart`;
takes joint torque and speed behind a reducer and gives motor operating points and the
steady-state torque-speed envelope. The check itself is in :mod:`sim.checks.motor`.

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
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from sim.checks import thermal as th
from sim.checks.supply import CURRENT_CONVENTIONS, Supply
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError

SPEED_CONSTANT_VOLTAGES = ("line_to_line_peak", "line_to_line_rms")
RPM_PER_RAD_S = 60.0 / (2.0 * math.pi)
_CONV_FACTOR = {"dc_equivalent": 1.0, "phase_peak": math.sqrt(3.0) / 2.0,
                "phase_rms": math.sqrt(1.5), "power_invariant": 1.0 / math.sqrt(2.0)}


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
