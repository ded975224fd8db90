"""Actuator torque limits at the joint output: current limit and voltage-limited envelope.

DC-equivalent motor model (steady state, inductance neglected, no field weakening), the form
that a surface PM motor under i_d = 0 and space-vector modulation reduces to (see e.g.
Hughes & Drury, Electric Motors and Drives, ch. on brushless DC drives; from memory):

    V_needed = R_ll i + k w_m,   |V_needed| <= V_bus,   |i| <= I_max,   T_m = k i

with k the DC-equivalent torque constant (= back-EMF constant, V s/rad), R_ll = 2 R_phase (star
winding, two phases conduct), w_m = N w the motor speed. At the joint output tau = N T_m, so

    tau_hi(w) = min( N k I_max,  N k (V_bus - k N w) / R_ll )
    tau_lo(w) = max(-N k I_max,  N k (-V_bus - k N w) / R_ll )

Where the back-EMF exceeds the bus (|w| beyond no-load speed) the band collapses and the joint
is given the braking limit. Reducer losses are not in this envelope (see the motor checks).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sim.robot.model import Actuator


@dataclass(frozen=True)
class Envelope:
    """Pre-computed constants of one joint's envelope: tau in [lo(w), hi(w)].

    a = N k I_max (N m), b = N k V / R_ll (N m), c = N^2 k^2 / R_ll (N m s/rad).
    """

    a: float
    b: float
    c: float

    @classmethod
    def of(cls, act: Actuator) -> Envelope:
        n, k = act.gear_ratio, act.torque_constant_nm_a
        r_ll = 2.0 * act.phase_resistance_ohm
        return cls(n * k * act.current_limit_a, n * k * act.bus_voltage_v / r_ll,
                   n * n * k * k / r_ll)

    def limits(self, speed_rad_s: np.ndarray | float) -> tuple[np.ndarray, np.ndarray]:
        """``(tau_lo, tau_hi)`` at joint speed ``speed_rad_s`` (vectorised)."""
        w = np.asarray(speed_rad_s, float)
        hi = np.minimum(self.a, self.b - self.c * w)
        lo = np.maximum(-self.a, -self.b - self.c * w)
        hi = np.maximum(hi, lo)
        return lo, hi

    def clamp(self, torque_nm: np.ndarray | float, speed_rad_s: np.ndarray | float) -> np.ndarray:
        lo, hi = self.limits(speed_rad_s)
        return np.clip(np.asarray(torque_nm, float), lo, hi)

    @property
    def no_load_speed_rad_s(self) -> float:
        """Speed where tau_hi reaches zero: b / c = V / (k N)."""
        return self.b / self.c

    @property
    def corner_speed_rad_s(self) -> float:
        """Speed where the voltage limit meets the current limit: (b - a) / c."""
        return max(0.0, (self.b - self.a) / self.c)
