"""The electrical supply shared by all motors: driver limits, DC bus and battery pack.

The ``[supply]`` table of a drivetrain file (all SI)::

    [supply]
    bus_voltage_v = 24.0                 # open-circuit pack voltage used for the envelope
    current_limit_a = 30.0               # driver current limit per motor
    current_limit_convention = "dc_equivalent"  # or phase_peak, phase_rms, power_invariant
    modulation = "svpwm"                 # svpwm | six_step (line-line peak = bus) | sinusoidal
    inverter_efficiency = 0.95           # per motor, applied in both power directions
    regeneration_absorbed = true         # false: net regenerated power is dumped, not stored
    cell_count = 6                       # cells in series
    parallel_count = 1                   # parallel strings
    cell_internal_resistance_ohm = 0.004 # per cell, DC
    auxiliary_power_w = 0.0              # constant draw of computer, sensors, ...

Battery model (common practice): an open-circuit voltage ``V_oc`` behind the pack resistance
``R = cell_count * R_cell / parallel_count``. For a bus power ``P`` the terminal voltage is
``V = V_oc - I R`` with ``I = P / V``, hence ``I = (V_oc - sqrt(V_oc^2 - 4 R P)) / (2 R)``.
When ``4 R P > V_oc^2`` the pack cannot deliver ``P`` at any current (collapse); the current is
then held at ``V_oc / (2 R)`` (maximum power point) and the time is reported.

Bus power of one motor: ``P_bus = P_elec / eta`` when it draws power and ``P_elec * eta`` when
it returns power (``P_elec`` = electromagnetic power + copper loss). Motors share the bus, so
one motor's regeneration feeds another before any reaches the pack.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from sim.core.config import validate
from sim.parts.drivetrain import MODULATIONS, SUPPLY_SPEC, line_voltage_factor
from sim.parts.motor_constants import CURRENT_CONVENTIONS

__all__ = ["CURRENT_CONVENTIONS", "MODULATIONS", "SUPPLY_SPEC", "Supply", "load_supply"]


@dataclass(frozen=True)
class Supply:
    """Driver and battery parameters (see module docstring for the meaning of each)."""

    bus_voltage_v: float
    current_limit_a: float
    inverter_efficiency: float
    regeneration_absorbed: bool
    current_limit_convention: str = "dc_equivalent"
    modulation: str = "svpwm"
    cell_count: int = 1
    parallel_count: int = 1
    cell_internal_resistance_ohm: float = 0.0
    auxiliary_power_w: float = 0.0
    file: str | None = None

    @property
    def pack_resistance_ohm(self) -> float:
        return self.cell_count * self.cell_internal_resistance_ohm / self.parallel_count

    @property
    def line_voltage_factor(self) -> float:
        """Largest line-to-line peak voltage per volt of bus: 1 (SVPWM, six-step) or sqrt(3)/2
        (sine-triangle PWM without third-harmonic injection, phase amplitude V_dc/2)."""
        return line_voltage_factor(self.modulation)


def load_supply(table: dict[str, Any] | None, file: str | None) -> Supply:
    """Validate the ``[supply]`` table of ``file`` (unknown keys are errors) into a Supply."""
    v = validate(table or {}, SUPPLY_SPEC, file=file, prefix="supply.")
    return Supply(file=None if file is None else str(file), **v)


def bus_power_w(electrical_w: np.ndarray, inverter_efficiency: float) -> np.ndarray:
    """Bus-side power of one motor, W: ``P/eta`` drawing, ``P*eta`` regenerating."""
    p = np.asarray(electrical_w, float)
    return np.where(p >= 0.0, p / inverter_efficiency, p * inverter_efficiency)


def battery_current_a(power_w: np.ndarray, open_circuit_v: float, resistance_ohm: float
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Pack current (A, positive discharging) for terminal power ``power_w`` and whether the pack
    collapsed at that sample (``4 R P > V_oc^2``). Shapes follow ``power_w``."""
    p = np.asarray(power_w, float)
    v = float(open_circuit_v)
    r = float(resistance_ohm)
    if r == 0.0:
        return p / v, np.zeros(p.shape, bool)
    disc = v * v - 4.0 * r * p
    collapse = disc < 0.0
    root = np.sqrt(np.maximum(disc, 0.0))
    # (V - sqrt(V^2 - 4RP)) / 2R written as 2P / (V + sqrt(.)) to avoid cancellation
    current = 2.0 * p / (v + root)
    return np.where(collapse, v / (2.0 * r), current), collapse


def pack_energy_wh(cell_count: int, capacity_ah: float, cell_voltage_v: float = 3.7) -> float:
    """Nominal pack energy, Wh = cells x nominal cell voltage x capacity (common practice)."""
    return cell_count * cell_voltage_v * capacity_ah
