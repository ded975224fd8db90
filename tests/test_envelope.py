"""Actuator clamp: a command beyond the envelope is delivered at the envelope value.

Hand calculation of the DC-equivalent motor limits (Hughes & Drury, Electric Motors and
Drives, brushless DC drive equations; from memory): voltage balance V = R_ll I + k w_m with
R_ll = 2 R_phase, torque T = k I, output tau = N T, output speed w = w_m / N.
"""

from __future__ import annotations

import pytest

from sim.drive.envelope import Envelope
from sim.robot.model import Actuator

ACT = Actuator(gear_ratio=10.0, rotor_inertia_kg_m2=5e-5, torque_constant_nm_a=0.1,
               current_limit_a=20.0, phase_resistance_ohm=0.25, bus_voltage_v=24.0,
               mass_kg=0.5, housing_radius_m=0.04, housing_length_m=0.04)


def test_current_limit_at_standstill():
    env = Envelope.of(ACT)
    # 20 A x 0.1 N m/A x 10 = 20 N m
    assert env.clamp(50.0, 0.0) == pytest.approx(20.0)
    assert env.clamp(-50.0, 0.0) == pytest.approx(-20.0)
    assert env.clamp(7.0, 0.0) == pytest.approx(7.0)


def test_voltage_limit_at_speed_by_hand():
    env = Envelope.of(ACT)
    w = 15.0  # rad/s at the output -> 150 rad/s at the motor, back-EMF 15 V
    # current available: (24 - 15) V / 0.5 ohm = 18 A -> 1.8 N m -> 18 N m at the output
    assert env.clamp(50.0, w) == pytest.approx(18.0, rel=1e-12)
    # braking against the motion: (-24 - 15) / 0.5 = -78 A, current limit -20 A wins
    assert env.clamp(-50.0, w) == pytest.approx(-20.0, rel=1e-12)
    w = 22.0  # back-EMF 22 V: (24 - 22) / 0.5 = 4 A -> 4 N m
    assert env.clamp(50.0, w) == pytest.approx(4.0, rel=1e-12)


def test_no_load_and_corner_speed_by_hand():
    env = Envelope.of(ACT)
    assert env.no_load_speed_rad_s == pytest.approx(24.0 / (0.1 * 10), rel=1e-12)  # 24 rad/s
    # corner: (24 - 0.5 x 20) / (0.1) = 140 rad/s at the motor = 14 rad/s at the output
    assert env.corner_speed_rad_s == pytest.approx(14.0, rel=1e-12)
    assert ACT.peak_torque_nm == pytest.approx(20.0)
