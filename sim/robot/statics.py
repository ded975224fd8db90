"""Static force distribution over the stance feet and the joint torques that hold it.

For stance feet at contact points c_i (relative to the whole-robot centre of mass) and a weight
W acting along the unit gravity direction, the ground forces f_i = lambda_i * u (u pointing up,
against gravity) must satisfy sum f_i = W u and sum c_i x f_i = 0. With four feet the problem is
statically indeterminate; the minimum-norm solution of the 3 equations (force along u, moments
about two axes normal to u) is used, as is usual for quasi-static quadruped stance (e.g. Hutter
et al. and many others; common practice).
"""

from __future__ import annotations

import numpy as np

from sim import LEGS
from sim.robot.kinematics import LegKinematics, cross
from sim.robot.model import RobotModel
from sim.robot.urdf import base_mass_props


def distribute_weight(contacts_m: np.ndarray, weight_n: float, up: np.ndarray) -> np.ndarray:
    """Forces ``[n, 3]`` on the feet at ``contacts_m[n, 3]`` (relative to the COM).

    Minimum-norm lambda with sum lambda = W and sum (c_i x u) lambda_i = 0; falls back to an
    even split when only one foot is given.
    """
    c = np.asarray(contacts_m, float)
    u = np.asarray(up, float) / np.linalg.norm(up)
    n = c.shape[0]
    if n == 0:
        return np.zeros((0, 3))
    mom = cross(c, np.broadcast_to(u, c.shape))  # [n, 3]: moment per unit lambda
    A = np.vstack([np.ones(n), mom.T])  # 4 x n (one row is redundant: moments are normal to u)
    b = np.array([weight_n, 0.0, 0.0, 0.0])
    lam = np.linalg.lstsq(A, b, rcond=None)[0]
    return lam[:, None] * u[None, :]


class StanceStatics:
    """Whole-robot centre of mass and static stance torques for one model (plus payload)."""

    def __init__(self, model: RobotModel, payload_kg: float = 0.0,
                 payload_position_m: np.ndarray | None = None):
        self.kin = LegKinematics.from_model(model)
        base = base_mass_props(model)
        m = base.mass_kg
        c = base.mass_kg * base.com_m
        if payload_kg > 0 and payload_position_m is not None:
            m += payload_kg
            c = c + payload_kg * np.asarray(payload_position_m, float)
        self.body_mass_kg = m
        self.body_moment = c  # mass x COM of base + payload, base frame
        _, masses = self.kin.link_coms(np.zeros((4, 3)))
        self.leg_mass_kg = float(masses.sum())
        self.total_mass_kg = m + 4 * self.leg_mass_kg
        self.legs = LEGS

    def com_b(self, q: np.ndarray) -> np.ndarray:
        """Whole-robot COM in the base frame for joint angles ``q[4, 3]``."""
        coms, masses = self.kin.link_coms(q)
        return (self.body_moment + np.einsum("l,nli->i", masses, coms)) / self.total_mass_kg

    def torques(self, q: np.ndarray, gravity_b: np.ndarray, stance: np.ndarray | None = None,
                extra_weight_n: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
        """Static joint torques ``[4, 3]`` and foot forces ``[4, 3]`` (base frame).

        ``stance[4]`` selects the feet that carry the robot (default all four); swing legs
        get their own gravity compensation only.
        """
        q = np.asarray(q, float)
        stance = np.ones(4, bool) if stance is None else np.asarray(stance, bool)
        g = np.asarray(gravity_b, float)
        gn = float(np.linalg.norm(g))
        up = -g / gn
        feet = self.kin.foot_positions(q) - self.kin.foot_radius_m * up
        com = self.com_b(q)
        forces = np.zeros((4, 3))
        if stance.any():
            w = self.total_mass_kg * gn + extra_weight_n
            forces[stance] = distribute_weight(feet[stance] - com, w, up)
        return self.kin.static_torques(q, g, forces), forces
