"""Joint gains from the robot: stiffness and damping per joint from the inertia it moves.

Each joint's PD loop ``tau = kp (q* - q) + kd (qd* - qd)`` acting on the inertia ``J`` the
joint moves is the second-order system ``J x'' + kd x' + kp x = 0``, of natural frequency
``w = sqrt(kp / J)`` and damping ratio ``zeta = kd / (2 sqrt(kp J))`` (Ogata, *Modern Control
Engineering*, ch. on second-order systems; from memory). For a target bandwidth ``w`` and
damping ratio ``zeta``::

    kp = J w^2,    kd = 2 zeta J w

``J`` is the inertia a torque on the joint alone meets in the nominal stance with the leg in
the air (``1 / (H^-1)_jj`` of the floating-base mass matrix, :func:`sim.drive.backdrive.mass_matrix`),
plus ``N^2 J_rotor`` when rotors are simulated: the swing leg, the lightest case, which is
where an explicit loop is closest to its limit.

Discrete-time limit. The engine integrates with semi-implicit Euler at the step ``dt`` and the
loop is evaluated every step; one step maps ``(x, v)`` to ``v' = v - dt (kp x + kd v) / J``,
``x' = x + dt v'``, which is stable when ``(kp dt^2 + 2 kd dt) / J < 4`` (Jury conditions on
the step's 2x2 matrix; the same bound as :func:`sim.drive.dynamics.mesh_step_number`). Near
the bound the loop rings at the step rate: the torque flips sign every step (chatter). The
derived gains keep ``(kp dt^2 + 2 kd dt) / J <= STEP_NUMBER_MAX`` = 0.5, an eighth of the
bound (common practice: a wide margin for the inertia that the pose and the contacts change,
and for the feed-forward updated at the control period); where the target bandwidth would
pass it, the bandwidth is lowered to the largest ``w`` that keeps it:
``w^2 dt^2 + 4 zeta w dt = STEP_NUMBER_MAX``.

Defaults (scenario ``[control]``): ``bandwidth_hz`` = 16 times the leg's pendulum frequency
(:func:`derived_bandwidth_hz`, 12 Hz on the demo; 14 Hz on a 6 kg and 10.6 Hz on a 35 kg
robot scaled from it) and ``damping_ratio = 1.0``: a critically damped joint well below the
screen's 100 Hz cut-off (common practice for position loops under torque feed-forward; the
factor 16 was chosen from trots of 6, 15 and 35 kg robots, docs/gaits.md). Gains a scenario
writes (``[control.kp_nm_rad]``, ``[control.kd_nm_s_rad]`` per joint kind, or a segment's)
win over the derived ones.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from sim import JOINT_NAMES
from sim.robot.model import RobotModel

STEP_NUMBER_MAX = 0.5  # (kp dt^2 + 2 kd dt) / J allowed; semi-implicit Euler is stable below 4
DEFAULT_BANDWIDTH_HZ = 12.0
DEFAULT_DAMPING_RATIO = 1.0
BANDWIDTH_PER_LEG_FREQUENCY = 16.0  # bandwidth / (sqrt(g / L) / 2 pi)


def derived_bandwidth_hz(model: RobotModel) -> float:
    """16 times the leg's pendulum frequency ``sqrt(g / L) / 2 pi`` (``L`` = thigh + shank):
    12 Hz on the demo's 0.44 m legs. Dynamic similarity (Froude: times scale as
    ``sqrt(L / g)``; Alexander, *Principles of Animal Locomotion*, from memory) keeps the
    loop as fast, relative to the gait, on a small robot as on a large one."""
    L = model.leg["thigh_length_m"] + model.leg["shank_length_m"]
    return BANDWIDTH_PER_LEG_FREQUENCY * math.sqrt(9.80665 / L) / (2.0 * math.pi)


def step_number(kp: float, kd: float, inertia_kg_m2: float, dt: float) -> float:
    """``(kp dt^2 + 2 kd dt) / J``: the explicit loop is stable below 4 (module docstring)."""
    return (kp * dt * dt + 2.0 * kd * dt) / inertia_kg_m2


def largest_bandwidth_rad_s(damping_ratio: float, dt: float,
                            limit: float = STEP_NUMBER_MAX) -> float:
    """The ``w`` with ``w^2 dt^2 + 4 zeta w dt = limit`` (positive root)."""
    z = damping_ratio
    return (-4.0 * z * dt + math.sqrt(16.0 * z * z * dt * dt + 4.0 * dt * dt * limit)) \
        / (2.0 * dt * dt)


def swing_inertias(model: RobotModel, q_stance: np.ndarray, rotors: bool) -> dict[str, float]:
    """Inertia (kg m^2) each joint moves in the nominal stance, leg in the air: ``1/(H^-1)_jj``
    of the floating-base mass matrix, with ``N^2 J_rotor`` on the diagonal when ``rotors``."""
    from sim.drive.backdrive import mass_matrix

    H, _ = mass_matrix(model, np.asarray(q_stance).reshape(4, 3), armature=rotors)
    hinv = np.linalg.inv(H)
    return {j: 1.0 / float(hinv[6 + i, 6 + i]) for i, j in enumerate(JOINT_NAMES)}


@dataclass(frozen=True)
class JointGains:
    """One joint's gains and how they came about."""

    kp_nm_rad: float
    kd_nm_s_rad: float
    inertia_kg_m2: float
    bandwidth_hz: float  # of kp and kd on the inertia (as derived, or as written)
    damping_ratio: float
    step_number: float  # (kp dt^2 + 2 kd dt) / J
    source: str  # "derived", "derived, bandwidth lowered for the step" or "scenario"

    def to_json(self) -> dict[str, float | str]:
        return {"kp_nm_rad": self.kp_nm_rad, "kd_nm_s_rad": self.kd_nm_s_rad,
                "inertia_kg_m2": self.inertia_kg_m2, "bandwidth_hz": self.bandwidth_hz,
                "damping_ratio": self.damping_ratio, "step_number": self.step_number,
                "source": self.source}


def joint_gains(model: RobotModel, q_stance: np.ndarray, dt: float, rotors: bool,
                bandwidth_hz: float = DEFAULT_BANDWIDTH_HZ,
                damping_ratio: float = DEFAULT_DAMPING_RATIO,
                written_kp: Mapping[str, float | None] | None = None,
                written_kd: Mapping[str, float | None] | None = None) -> dict[str, JointGains]:
    """Gains of every joint: derived (module docstring) unless the scenario writes them for
    the joint's kind (``written_kp`` / ``written_kd``: kind -> value or None)."""
    inertia = swing_inertias(model, q_stance, rotors)
    w_max = largest_bandwidth_rad_s(damping_ratio, dt)
    out = {}
    for j in JOINT_NAMES:
        kind = j.split("_")[1]
        J = inertia[j]
        w = 2.0 * math.pi * bandwidth_hz
        source = "derived"
        if w > w_max:
            w, source = w_max, "derived, bandwidth lowered for the step"
        kp, kd = J * w * w, 2.0 * damping_ratio * J * w
        wk = (written_kp or {}).get(kind)
        wd = (written_kd or {}).get(kind)
        if wk is not None or wd is not None:
            kp = kp if wk is None else float(wk)
            kd = kd if wd is None else float(wd)
            source = "scenario"
        bw = math.sqrt(kp / J) / (2.0 * math.pi) if kp > 0 else 0.0
        zeta = kd / (2.0 * math.sqrt(kp * J)) if kp > 0 else math.inf
        out[j] = JointGains(kp, kd, J, bw, zeta, step_number(kp, kd, J, dt), source)
    return out
