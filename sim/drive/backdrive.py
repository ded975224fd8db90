"""Back-drivability metrics per joint and per leg, from the model alone (pure numpy).

Per joint (:func:`joint_metrics`):

- reflected inertia at the joint output, ``J_refl = N^2 J_r`` (the rotor seen through the
  reducer; e.g. Wensing et al. 2017, below, and any drive-train text);
- breakaway torque to back-drive the unpowered actuator at rest: the reducer's Coulomb
  friction at the output, ``tau_c``;
- back-drive torque at a reference output acceleration ``alpha`` and speed ``w``: by the
  power-flow efficiency model, the output must supply the rotor's inertial torque divided by
  the back-driven efficiency, plus the friction:
  ``tau_bd = tau_c + c w + N^2 J_r alpha / eta_b``.

Per leg (:func:`leg_impact_mitigation`): the impact mitigation factor (IMF) of Wensing, Wang,
Seok, Otten, Lang & Kim, "Proprioceptive actuator design in the MIT Cheetah: impact
mitigation and high-bandwidth physical interaction for dynamic legged robots", IEEE Trans.
Robotics 33(3), 2017, DOI 10.1109/TRO.2016.2640183 (definition from memory)::

    xi = det(I - Lambda Lambda_L^-1),   0 <= xi <= 1

with ``Lambda = (J H^-1 J^T)^-1`` the operational-space inertia at the foot contact point
(Khatib 1987) of the floating-base robot with its joints free (reflected rotor inertias on
the diagonal of the joint-space mass matrix ``H``), and ``Lambda_L`` the same with every joint
locked (the robot as one rigid body). xi = 1: the foot is fully decoupled from the body by
back-drivable joints; xi = 0: the robot hits the ground as one rigid body.

The floating-base mass matrix is assembled from link Jacobians,
``H = sum_i m_i Jv_i^T Jv_i + Jw_i^T (R_i I_i R_i^T) Jw_i`` (e.g. Spong, Hutchinson &
Vidyasagar, Robot Modeling and Control, 2006, ch. 7), generalized velocity
``[v_base (3), w_base (3), qd (12)]`` in the world frame at the base frame origin, base level.
Results are estimates from the model's rigid links; reducer compliance, contact compliance and
the controller are not in them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sim import JOINT_NAMES, LEGS
from sim.robot.inertia import MassProps
from sim.robot.model import RobotModel
from sim.robot.urdf import base_mass_props

DEFAULT_ACCEL_RAD_S2 = 1000.0  # reference output acceleration for the back-drive torque


@dataclass(frozen=True)
class JointBackdrive:
    """Back-drivability of one joint (SI)."""

    joint: str
    gear_ratio: float
    reflected_inertia_kg_m2: float
    breakaway_torque_nm: float
    backdrive_torque_nm: float
    accel_rad_s2: float
    speed_rad_s: float

    def to_json(self) -> dict[str, float | str]:
        return dict(self.__dict__)


def joint_metrics(model: RobotModel, accel_rad_s2: float = DEFAULT_ACCEL_RAD_S2,
                  speed_rad_s: float = 0.0) -> dict[str, JointBackdrive]:
    """Per-joint reflected inertia, breakaway and back-drive torque (module docstring)."""
    out = {}
    for j in JOINT_NAMES:
        a = model.actuators[j]
        refl = a.reflected_inertia_kg_m2
        bd = (a.friction_coulomb_nm + a.friction_viscous_nm_s_rad * abs(speed_rad_s)
              + refl * abs(accel_rad_s2) / a.efficiency_back)
        out[j] = JointBackdrive(j, a.gear_ratio, refl, a.friction_coulomb_nm, bd,
                                accel_rad_s2, speed_rad_s)
    return out


def operational_inertia(H: np.ndarray, J: np.ndarray) -> np.ndarray:
    """Operational-space inertia ``(J H^-1 J^T)^-1`` (Khatib 1987); H [n, n], J [m, n]."""
    return np.linalg.inv(J @ np.linalg.solve(H, J.T))


def impact_mitigation_factor(lam: np.ndarray, lam_locked: np.ndarray) -> float:
    """``det(I - Lambda Lambda_L^-1)`` (Wensing et al. 2017)."""
    lam = np.atleast_2d(lam)
    return float(np.linalg.det(np.eye(lam.shape[0]) - lam @ np.linalg.inv(
        np.atleast_2d(lam_locked))))


def _skew(v: np.ndarray) -> np.ndarray:
    return np.array([[0, -v[2], v[1]], [v[2], 0, -v[0]], [-v[1], v[0], 0]])


def _rx(t: float) -> np.ndarray:
    c, s = np.cos(t), np.sin(t)
    return np.array([[1, 0, 0], [0, c, -s], [0, s, c]])


def _ry(t: float) -> np.ndarray:
    c, s = np.cos(t), np.sin(t)
    return np.array([[c, 0, s], [0, 1, 0], [-s, 0, c]])


def mass_matrix(model: RobotModel, q: np.ndarray, armature: bool = True
                ) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Floating-base mass matrix ``H [18, 18]`` at joint angles ``q[4, 3]``, base level at 0.

    Also returns each leg's foot contact Jacobian ``[3, 18]`` (lowest point of the foot).
    ``armature``: add N^2 J_r of every joint on its diagonal entry.
    """
    q = np.asarray(q, float).reshape(4, 3)
    n = 18
    H = np.zeros((n, n))

    def add(mp: MassProps, R: np.ndarray, origin: np.ndarray, axes: list, idx: list) -> None:
        c = origin + R @ mp.com_m
        Jv = np.zeros((3, n))
        Jw = np.zeros((3, n))
        Jv[:, 0:3] = np.eye(3)
        Jv[:, 3:6] = -_skew(c)
        Jw[:, 3:6] = np.eye(3)
        for (a, o), k in zip(axes, idx, strict=True):
            Jv[:, k] = np.cross(a, c - o)
            Jw[:, k] = a
        Iw = R @ mp.inertia_kg_m2 @ R.T
        H[:, :] += mp.mass_kg * Jv.T @ Jv + Jw.T @ Iw @ Jw

    add(base_mass_props(model), np.eye(3), np.zeros(3), [], [])
    lg = model.leg
    contacts = {}
    for k, leg in enumerate(LEGS):
        side = model.side(leg)
        i0 = 6 + 3 * k
        R0 = _rx(q[k, 0])
        o0 = model.hip_position_m(leg)
        a0 = np.array([1.0, 0.0, 0.0])
        add(model.abad_link(leg), R0, o0, [(a0, o0)], [i0])
        o1 = o0 + R0 @ np.array([0.0, side * lg["abad_offset_m"], 0.0])
        a1 = R0[:, 1]
        R1 = R0 @ _ry(q[k, 1])
        add(model.thigh_link(leg), R1, o1, [(a0, o0), (a1, o1)], [i0, i0 + 1])
        o2 = o1 + R1 @ np.array([0.0, 0.0, -lg["thigh_length_m"]])
        R2 = R1 @ _ry(q[k, 2])
        chain = [(a0, o0), (a1, o1), (a1, o2)]
        add(model.shank_link(), R2, o2, chain, [i0, i0 + 1, i0 + 2])
        o3 = o2 + R2 @ np.array([0.0, 0.0, -lg["shank_length_m"]])
        add(model.foot_link(), R2, o3, chain, [i0, i0 + 1, i0 + 2])
        p = o3 - np.array([0.0, 0.0, lg["foot_radius_m"]])
        Jc = np.zeros((3, n))
        Jc[:, 0:3] = np.eye(3)
        Jc[:, 3:6] = -_skew(p)
        for (a, o), col in zip(chain, [i0, i0 + 1, i0 + 2], strict=True):
            Jc[:, col] = np.cross(a, p - o)
        contacts[leg] = Jc
    if armature:
        for i, j in enumerate(JOINT_NAMES):
            H[6 + i, 6 + i] += model.actuators[j].reflected_inertia_kg_m2
    return H, contacts


def leg_impact_mitigation(model: RobotModel, q: np.ndarray, armature: bool = True
                          ) -> dict[str, float]:
    """IMF of each leg for a touchdown of that foot alone, at joint angles ``q[4, 3]``."""
    H, contacts = mass_matrix(model, q, armature)
    out = {}
    for leg, Jc in contacts.items():
        lam = operational_inertia(H, Jc)
        lam_locked = operational_inertia(H[:6, :6], Jc[:, :6])
        out[leg] = impact_mitigation_factor(lam, lam_locked)
    return out


def report(model: RobotModel, q: np.ndarray, accel_rad_s2: float = DEFAULT_ACCEL_RAD_S2
           ) -> dict[str, object]:
    """JSON-ready metrics: per joint, and the per-leg IMF with and without rotor inertia."""
    return {
        "joints": {j: m.to_json() for j, m in joint_metrics(model, accel_rad_s2).items()},
        "impact_mitigation_factor": leg_impact_mitigation(model, q, True),
        "impact_mitigation_factor_without_rotors": leg_impact_mitigation(model, q, False),
        "pose": "nominal stance, body level, one foot touching down",
        "note": "estimates from rigid links and the reducer model; manufacturer ratings and "
                "licensed engineering practice take precedence",
    }
