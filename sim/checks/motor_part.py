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
from sim.checks.supply import Supply
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError
from sim.parts.drivetrain import MOTOR_SIM_SPEC, motor_sim_values
from sim.parts.motor_constants import (  # one definition, shared with the simulation
    CURRENT_CONVENTIONS,
    RPM_PER_RAD_S,
    SPEED_CONSTANT_VOLTAGES,
    back_emf_constant,
    back_emf_from_torque_constant,
    speed_constant,
    speed_to_torque_constant,
    torque_constant,
    torque_to_speed_constant,
)

__all__ = [
    "CURRENT_CONVENTIONS",
    "RPM_PER_RAD_S",
    "SPEED_CONSTANT_VOLTAGES",
    "MotorPart",
    "back_emf_constant",
    "back_emf_from_torque_constant",
    "load_motor_part",
    "motor_from_table",
    "speed_constant",
    "speed_to_torque_constant",
    "torque_constant",
    "torque_to_speed_constant",
]


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
    thermal: th.ThermalNetwork | None
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
        if self.thermal is None:
            raise ValueError(f"motor {self.name}: no thermal network (a quick motor)")
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
THERMAL_KEYS = ("thermal_resistance_winding_housing_k_per_w",
                "thermal_resistance_housing_ambient_k_per_w",
                "thermal_capacity_winding_j_per_k", "thermal_capacity_housing_j_per_k")

MOTOR_SPEC: dict[str, Field] = {
    "kind": Field(str, default="motor", choices=("motor",)),
    "name": Field(str, required=True),
    "note": Field(str, "where the numbers come from", default=""),
    **MOTOR_SIM_SPEC,  # kV or Kt, resistance, winding, rotor inertia: sim.parts.drivetrain
    "no_load_current_a": Field(float, "A, DC-equivalent", min=0.0),
    "friction_torque_nm": Field(float, "N m", default=0.0, min=0.0),
    "viscous_friction_nm_s_per_rad": Field(float, "N m s/rad", default=0.0, min=0.0),
    "hysteresis_loss_w_s_per_rad": Field(float, "W per rad/s", default=0.0, min=0.0),
    "eddy_loss_w_s2_per_rad2": Field(float, "W per (rad/s)^2", default=0.0, min=0.0),
    # the thermal network: all four, or none (a quick motor; its heating is then not checked)
    **{k: Field(float, "K/W" if "resistance" in k else "J/K", **_POS)  # type: ignore[arg-type]
       for k in THERMAL_KEYS},
    "insulation_class": Field(str, check=_class_check),
    "max_winding_temp_c": Field(float, "C"),
    "ambient_temp_c": Field(float, "C", default=25.0),
    "continuous_torque_nm": Field(float, "N m at the motor shaft", **_POS),  # type: ignore[arg-type]
    "peak_torque_nm": Field(float, "N m at the motor shaft", **_POS),  # type: ignore[arg-type]
}


def load_motor_part(path: str | Path) -> MotorPart:
    """Read and validate a motor part file (see ``models/parts/motor_demo.toml``)."""
    return motor_from_table(load_toml(path, "motor part file"), str(path))


def motor_from_table(table: dict, file: str) -> MotorPart:
    """Validate a motor part table (as read from ``file``) into a :class:`MotorPart`.

    The constants the simulation uses come from :func:`sim.parts.drivetrain.motor_sim_values`,
    the same function the simulation calls. A part without its thermal network is a quick
    motor: ``thermal`` is None and the motor check leaves it out (and says so)."""
    v = validate(table, MOTOR_SPEC, file=file)
    k = motor_sim_values(table, file)["back_emf_v_s_per_rad"]
    given = [key for key in THERMAL_KEYS if v[key] is not None]
    if given and len(given) < len(THERMAL_KEYS):
        missing = next(key for key in THERMAL_KEYS if v[key] is None)
        raise InputError(file, missing, "all four thermal network keys or none (" +
                         ", ".join(THERMAL_KEYS) + ")")
    net = th.ThermalNetwork(*(v[key] for key in (THERMAL_KEYS[2], THERMAL_KEYS[3],
                                                  THERMAL_KEYS[0], THERMAL_KEYS[1]))
                            ) if given else None
    limits = []
    if v["insulation_class"] is not None:
        limits.append(th.insulation_limit_c(v["insulation_class"]))
    if v["max_winding_temp_c"] is not None:
        limits.append(v["max_winding_temp_c"])
    if not limits and net is not None:
        raise InputError(file, "insulation_class",
                         "insulation_class (IEC 60085) or max_winding_temp_c")
    t_max = min(limits) if limits else math.nan
    if t_max <= v["ambient_temp_c"]:
        raise InputError(file, "max_winding_temp_c", "a winding limit above ambient_temp_c",
                         t_max)
    friction = v["friction_torque_nm"] + k * (v["no_load_current_a"] or 0.0)
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


def current_limit_torque_nm(motor: MotorPart, supply: Supply,
                            current_limit_dc_a: float | None = None) -> float:
    """Electromagnetic torque at the driver current limit, N m: the supply's limit in its
    stated convention, or a joint's own limit given as DC-equivalent amperes."""
    if current_limit_dc_a is not None:
        return motor.back_emf_v_s_per_rad * current_limit_dc_a
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
