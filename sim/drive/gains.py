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
loop is evaluated every step; one step maps ``(x, dt v)`` by ``[[1 - a, 1 - b], [-a, 1 - b]]``
with ``a = kp dt^2 / J``, ``b = kd dt / J`` (:func:`step_matrix`), characteristic polynomial
``z^2 - (2 - a - b) z + (1 - b)``. By the Jury conditions for ``z^2 + c1 z + c0`` (roots inside
the unit circle iff ``|c0| < 1``, ``1 + c1 + c0 > 0``, ``1 - c1 + c0 > 0``; E. I. Jury, *Theory
and Application of the z-Transform Method*, 1964; from memory) it is stable iff ``0 < b < 2``
and ``a + 2 b < 4``: ``(kp dt^2 + 2 kd dt) / J < 4`` (the same bound as
:func:`sim.drive.dynamics.mesh_step_number`; with kp = 0, ``kd dt / J < 2``). Stable is not
clean: a root on the negative real axis makes the torque alternate in sign from step to step
(chatter). Both roots have a positive real part iff ``b <= 1`` and ``a + b < 2`` (real roots:
positive sum ``2 - a - b`` and product ``1 - b``; complex roots: real part ``(2 - a - b)/2``;
:func:`step_is_alternation_free`). The derived gains keep ``(kp dt^2 + 2 kd dt) / J <=
STEP_NUMBER_MAX`` = 0.5, an eighth of the stability bound and well inside the alternation-free
region (``b <= 0.25``, ``a + b <= 0.5``; common practice: a wide margin for the inertia that
the pose and the contacts change); where the target bandwidth would pass it, the bandwidth is
lowered to the largest ``w`` that keeps it: ``w^2 dt^2 + 4 zeta w dt = STEP_NUMBER_MAX``.

Control period. Targets and feed-forward change every control period ``T``; the bandwidth is
also kept below a tenth of the update rate, ``w <= 2 pi / (10 T)`` (a digital controller
samples about ten times its closed-loop bandwidth: common practice; Franklin, Powell &
Workman, *Digital Control of Dynamic Systems*, from memory).

Defaults (scenario ``[control]``, ``gains = "derived"``): ``bandwidth_hz = 16`` and
``damping_ratio = 1.0``: a critically damped joint well below the quality screen's 100 Hz
cut-off (common practice for position loops under torque feed-forward). 16 Hz was chosen from
trots of robots of 6, 15 and 35 kg with the complete dynamics (exact rotors, foot pad): the
shares above 100 Hz stay below 0.13 and the knee peaks change by at most 1 % when the step is
halved; 20 Hz with the command hold broke the 10 % step-halving limit, 12 Hz softened the
stance (docs/control.md). The shipped scenarios command fixed speeds and periods, so the
bandwidth is one figure for every robot size. Gains a scenario writes
(``[control.kp_nm_rad]``, ``[control.kd_nm_s_rad]`` per joint kind or joint, or a segment's)
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
SAMPLES_PER_PERIOD = 10.0  # control updates per period of the bandwidth, at least
DEFAULT_BANDWIDTH_HZ = 16.0
DEFAULT_DAMPING_RATIO = 1.0


def step_number(kp: float, kd: float, inertia_kg_m2: float, dt: float) -> float:
    """``(kp dt^2 + 2 kd dt) / J``: the explicit loop is stable below 4 (module docstring)."""
    return (kp * dt * dt + 2.0 * kd * dt) / inertia_kg_m2


def largest_bandwidth_rad_s(damping_ratio: float, dt: float,
                            limit: float = STEP_NUMBER_MAX) -> float:
    """The ``w`` with ``w^2 dt^2 + 4 zeta w dt = limit`` (positive root)."""
    z = damping_ratio
    return (-4.0 * z * dt + math.sqrt(16.0 * z * z * dt * dt + 4.0 * dt * dt * limit)) \
        / (2.0 * dt * dt)


def step_matrix(kp: float, kd: float, inertia_kg_m2: float, dt: float) -> np.ndarray:
    """One explicit step of ``J x'' = -kp x - kd x'`` on ``(x, dt v)`` (module docstring)."""
    a, b = kp * dt * dt / inertia_kg_m2, kd * dt / inertia_kg_m2
    return np.array([[1.0 - a, 1.0 - b], [-a, 1.0 - b]])


def step_is_stable(kp: float, kd: float, inertia_kg_m2: float, dt: float) -> bool:
    """Jury: ``0 < b < 2`` and ``a + 2 b < 4`` (``a = kp dt^2 / J``, ``b = kd dt / J``)."""
    a, b = kp * dt * dt / inertia_kg_m2, kd * dt / inertia_kg_m2
    return 0.0 < b < 2.0 and a + 2.0 * b < 4.0


def step_is_alternation_free(kp: float, kd: float, inertia_kg_m2: float, dt: float) -> bool:
    """Both roots of the step with a positive real part: ``b <= 1`` and ``a + b < 2``."""
    a, b = kp * dt * dt / inertia_kg_m2, kd * dt / inertia_kg_m2
    return b <= 1.0 and a + b < 2.0


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
                written_kd: Mapping[str, float | None] | None = None,
                control_period_s: float | None = None) -> dict[str, JointGains]:
    """Gains of every joint: derived (module docstring) unless the scenario writes them
    (``written_kp`` / ``written_kd``: joint kind or joint name -> value or None; a joint's
    value wins over its kind's)."""
    inertia = swing_inertias(model, q_stance, rotors)
    w_max = largest_bandwidth_rad_s(damping_ratio, dt)
    w_period = math.inf if control_period_s is None else \
        2.0 * math.pi / (SAMPLES_PER_PERIOD * control_period_s)
    out = {}
    for j in JOINT_NAMES:
        J = inertia[j]
        w = 2.0 * math.pi * bandwidth_hz
        source = "derived"
        if w > w_period:
            w, source = w_period, "derived, bandwidth lowered for the control period"
        if w > w_max:
            w, source = w_max, "derived, bandwidth lowered for the step"
        kp, kd = J * w * w, 2.0 * damping_ratio * J * w
        wk, wd = (_written(written_kp, j), _written(written_kd, j))
        if wk is not None or wd is not None:
            kp = kp if wk is None else float(wk)
            kd = kd if wd is None else float(wd)
            source = "scenario" if wk is not None and wd is not None else \
                ("scenario kp, derived kd" if wk is not None else "derived kp, scenario kd")
        bw = math.sqrt(kp / J) / (2.0 * math.pi) if kp > 0 else 0.0
        zeta = kd / (2.0 * math.sqrt(kp * J)) if kp > 0 else math.inf
        out[j] = JointGains(kp, kd, J, bw, zeta, step_number(kp, kd, J, dt), source)
    return out


def _written(table: Mapping[str, float | None] | None, joint: str) -> float | None:
    """The value a scenario writes for ``joint``: its own, else its kind's, else None."""
    if not table:
        return None
    v = table.get(joint)
    return table.get(joint.split("_")[1]) if v is None else v
