"""Motor constants and their conventions, shared by the simulation and the motor check.

Derivation: power balance of a sinusoidal PMSM, ``T omega = sum_k e_k i_k`` (Krishnan,
*Permanent Magnet Synchronous and Brushless DC Motor Drives*, CRC 2010, ch. on dq models;
from memory):

* ``kV`` (rpm/V) is the no-load speed per volt of **line-to-line peak** back-EMF (the bus
  voltage at the SVPWM / six-step limit); ``k = 60 / (2 pi kV)`` in V s/rad = N m/A for the
  DC-equivalent (bus / six-step line) current. A kV quoted per volt of line-to-line RMS gives
  ``k = sqrt(2) * 60 / (2 pi kV)``.
* Torque constant by current convention: DC-equivalent ``k``; phase peak (amplitude-invariant
  ``i_q``) ``sqrt(3)/2 k``; phase RMS ``sqrt(3/2) k``; power-invariant dq ``k / sqrt(2)``.
  A current in one convention converts to DC-equivalent amperes by the same factor
  (``I_dc = I_conv x factor``, so that ``T = k I_dc`` is the same torque).
* Copper loss ``P_cu = (T/k)^2 R_LL`` with line-to-line resistance ``R_LL = 2 R_ph`` (star) or
  ``2/3 R_ph`` (delta); the same for every convention.
"""

from __future__ import annotations

import math

SPEED_CONSTANT_VOLTAGES = ("line_to_line_peak", "line_to_line_rms")
CURRENT_CONVENTIONS = ("dc_equivalent", "phase_peak", "phase_rms", "power_invariant")
WINDINGS = ("star", "delta")
RPM_PER_RAD_S = 60.0 / (2.0 * math.pi)
_CONV_FACTOR = {"dc_equivalent": 1.0, "phase_peak": math.sqrt(3.0) / 2.0,
                "phase_rms": math.sqrt(1.5), "power_invariant": 1.0 / math.sqrt(2.0)}


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
    if voltage not in SPEED_CONSTANT_VOLTAGES:
        raise ValueError(f"voltage convention must be one of {SPEED_CONSTANT_VOLTAGES}")
    k = back_emf_v_s_per_rad / math.sqrt(2.0) if voltage == "line_to_line_rms" else (
        back_emf_v_s_per_rad)
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


def dc_equivalent_current_a(current_a: float, convention: str) -> float:
    """A current quoted in ``convention`` as DC-equivalent amperes (same torque for ``k``)."""
    if convention not in _CONV_FACTOR:
        raise ValueError(f"current convention must be one of {CURRENT_CONVENTIONS}")
    return current_a * _CONV_FACTOR[convention]


def line_resistance_ohm(phase_resistance_ohm: float, winding: str) -> float:
    """Line-to-line resistance: ``2 R_ph`` (star) or ``2/3 R_ph`` (delta)."""
    if winding not in WINDINGS:
        raise ValueError(f"winding must be one of {WINDINGS}")
    return (2.0 if winding == "star" else 2.0 / 3.0) * phase_resistance_ohm


def speed_to_torque_constant(speed_constant_rpm_per_v: float, current: str,
                             voltage: str = "line_to_line_peak") -> float:
    """kV (rpm/V) -> torque constant (N m/A) under the stated conventions."""
    return torque_constant(back_emf_constant(speed_constant_rpm_per_v, voltage), current)


def torque_to_speed_constant(torque_constant_nm_per_a: float, current: str,
                             voltage: str = "line_to_line_peak") -> float:
    """Torque constant (N m/A) -> kV (rpm/V) under the stated conventions."""
    return speed_constant(back_emf_from_torque_constant(torque_constant_nm_per_a, current),
                          voltage)
