"""Closed-form leg kinematics and statics for the four 3-joint legs, vectorised over legs.

Conventions (base frame, x forward, y left, z up). Leg k has its abad axis (about x) through
``hip[k]``; the hip and knee axes are parallel to the abad link's y axis, at the lateral offset
``side[k] * d`` from the abad axis. With angles zero the thigh and shank hang straight down.
Arrays are ``[leg, ...]`` with legs in the order fl, fr, hl, hr.

Forward kinematics (abad angle a, hip h, knee k; Ry(t) (0,0,-1) = (-sin t, 0, -cos t)):

    x  = -l1 sin h - l2 sin(h + k)
    z' = -l1 cos h - l2 cos(h + k)                      (in the rotated leg plane)
    (y, z) = Rx(a) (side d, z')

The inverse is solved in closed form: the abad angle from the y-z projection, the knee from the
law of cosines with the knee sign of the model, the hip from the two-link triangle.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sim import LEGS
from sim.robot.model import RobotModel


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Row-wise cross product of ``[..., 3]`` arrays (faster than ``np.cross`` for small n)."""
    a0, a1, a2 = a[..., 0], a[..., 1], a[..., 2]
    b0, b1, b2 = b[..., 0], b[..., 1], b[..., 2]
    return np.stack([a1 * b2 - a2 * b1, a2 * b0 - a0 * b2, a0 * b1 - a1 * b0], axis=-1)


class UnreachableError(ValueError):
    """A foot target outside the workspace of its leg."""


@dataclass(frozen=True)
class LegKinematics:
    hip_m: np.ndarray  # [4, 3] abad axis points
    side: np.ndarray  # [4] +1 left, -1 right
    knee_sign: np.ndarray  # [4] -1 backward knee, +1 forward
    offset_m: float
    l1_m: float
    l2_m: float
    foot_radius_m: float
    # masses and COMs (local link frames) for gravity torques
    m_abad: float
    c_abad: np.ndarray  # [4, 3] in abad frame
    m_thigh: float
    c_thigh: np.ndarray  # [3] in thigh frame
    m_shank: float
    c_shank: np.ndarray  # [3]
    m_foot: float

    @classmethod
    def from_model(cls, m: RobotModel) -> LegKinematics:
        lg = m.leg
        th = [m.thigh_link(leg) for leg in LEGS]
        return cls(
            hip_m=np.array([m.hip_position_m(leg) for leg in LEGS]),
            side=np.array([m.side(leg) for leg in LEGS]),
            knee_sign=np.array([m.knee_sign(leg) for leg in LEGS]),
            offset_m=float(lg["abad_offset_m"]),
            l1_m=float(lg["thigh_length_m"]),
            l2_m=float(lg["shank_length_m"]),
            foot_radius_m=float(lg["foot_radius_m"]),
            m_abad=float(m.abad_link("fl").mass_kg),
            c_abad=np.array([m.abad_link(leg).com_m for leg in LEGS]),
            m_thigh=float(th[0].mass_kg),
            c_thigh=np.asarray(th[0].com_m, float),
            m_shank=float(m.shank_link().mass_kg),
            c_shank=np.asarray(m.shank_link().com_m, float),
            m_foot=float(m.foot_link().mass_kg),
        )

    # -- frames ------------------------------------------------------------------------------
    def _frames(self, q: np.ndarray):
        """Joint points and rotation matrices, all [4, ...]."""
        a, h, k = q[:, 0], q[:, 1], q[:, 2]
        n = q.shape[0]
        ca, sa = np.cos(a), np.sin(a)
        Rx = np.zeros((n, 3, 3))
        Rx[:, 0, 0] = 1
        Rx[:, 1, 1], Rx[:, 1, 2], Rx[:, 2, 1], Rx[:, 2, 2] = ca, -sa, sa, ca

        def ry(t):
            c, s = np.cos(t), np.sin(t)
            R = np.zeros((n, 3, 3))
            R[:, 1, 1] = 1
            R[:, 0, 0], R[:, 0, 2], R[:, 2, 0], R[:, 2, 2] = c, s, -s, c
            return R

        R_th = Rx @ ry(h)
        R_sh = Rx @ ry(h + k)
        lateral = np.stack([np.zeros(n), self.side[:n] * self.offset_m, np.zeros(n)], 1)
        p_hip = self.hip_m[:n] + np.einsum("nij,nj->ni", Rx, lateral)
        p_knee = p_hip + R_th[:, :, 2] * (-self.l1_m)
        p_foot = p_knee + R_sh[:, :, 2] * (-self.l2_m)
        return Rx, R_th, R_sh, p_hip, p_knee, p_foot

    def foot_positions(self, q: np.ndarray) -> np.ndarray:
        """Foot-centre positions ``[4, 3]`` in the base frame for joint angles ``q[4, 3]``."""
        return self._frames(np.asarray(q, float))[5]

    def jacobians(self, q: np.ndarray) -> np.ndarray:
        """Foot-centre Jacobians ``[4, 3, 3]`` (d p_foot / d q) in the base frame."""
        Rx, _, _, p_hip, p_knee, p_foot = self._frames(np.asarray(q, float))
        ex = np.array([1.0, 0.0, 0.0])
        ey = Rx[:, :, 1]  # hip/knee axis in base frame
        J = np.empty((q.shape[0], 3, 3))
        J[:, :, 0] = cross(np.broadcast_to(ex, p_foot.shape), p_foot - self.hip_m[: q.shape[0]])
        J[:, :, 1] = cross(ey, p_foot - p_hip)
        J[:, :, 2] = cross(ey, p_foot - p_knee)
        return J

    def inverse(self, feet_m: np.ndarray) -> np.ndarray:
        """Joint angles ``[4, 3]`` placing the foot centres at ``feet_m[4, 3]`` (base frame).

        Raises :class:`UnreachableError` naming the leg if a target is out of reach.
        """
        p = np.asarray(feet_m, float) - self.hip_m
        d = self.offset_m
        py, pz = p[:, 1], p[:, 2]
        r2 = py * py + pz * pz - d * d
        L_max, L_min = self.l1_m + self.l2_m, abs(self.l1_m - self.l2_m)
        zp = -np.sqrt(np.maximum(r2, 0.0))
        a = np.arctan2(pz, py) - np.arctan2(zp, self.side * d)
        a = (a + np.pi) % (2 * np.pi) - np.pi
        x = p[:, 0]
        L2 = x * x + zp * zp
        bad = (r2 < 0) | (L2 > L_max**2 * (1 + 1e-12)) | (L2 < L_min**2 * (1 - 1e-12))
        if bad.any():
            k = int(np.argmax(bad))
            raise UnreachableError(
                f"foot target for leg {LEGS[k]} is out of reach: {np.sqrt(max(L2[k], 0)):.4f} m "
                f"from the hip, the leg reaches {L_min:.4f} to {L_max:.4f} m")
        c2 = np.clip((L2 - self.l1_m**2 - self.l2_m**2) / (2 * self.l1_m * self.l2_m), -1.0, 1.0)
        k2 = self.knee_sign * np.arccos(c2)
        alpha = np.arctan2(-x, -zp)
        h = alpha - np.arctan2(self.l2_m * np.sin(k2), self.l1_m + self.l2_m * np.cos(k2))
        return np.stack([a, h, k2], axis=1)

    # -- statics -----------------------------------------------------------------------------
    def link_coms(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """COM positions ``[4, 4, 3]`` (abad link, thigh, shank, foot) and masses ``[4]``."""
        Rx, R_th, R_sh, p_hip, p_knee, p_foot = self._frames(np.asarray(q, float))
        c_ab = self.hip_m + np.einsum("nij,nj->ni", Rx, self.c_abad)
        c_th = p_hip + np.einsum("nij,j->ni", R_th, self.c_thigh)
        c_sh = p_knee + np.einsum("nij,j->ni", R_sh, self.c_shank)
        coms = np.stack([c_ab, c_th, c_sh, p_foot], axis=1)
        masses = np.array([self.m_abad, self.m_thigh, self.m_shank, self.m_foot])
        return coms, masses

    def static_torques(self, q: np.ndarray, gravity_b: np.ndarray,
                       foot_forces_b: np.ndarray) -> np.ndarray:
        """Joint torques ``[4, 3]`` holding the legs still: tau = g(q) - J_c^T f.

        ``gravity_b``: gravity acceleration in the base frame [3]; ``foot_forces_b``: force of
        the ground on each foot [4, 3], applied at the foot's lowest point along -gravity.
        """
        q = np.asarray(q, float)
        Rx, _, _, p_hip, p_knee, p_foot = self._frames(q)
        coms, masses = self.link_coms(q)
        g = np.asarray(gravity_b, float)
        n_up = -g / np.linalg.norm(g)
        p_contact = p_foot - self.foot_radius_m * n_up
        F = np.asarray(foot_forces_b, float)
        ex = np.broadcast_to(np.array([1.0, 0.0, 0.0]), p_hip.shape)
        ey = Rx[:, :, 1]
        tau = np.empty((q.shape[0], 3))
        pivots = (self.hip_m, p_hip, p_knee)
        axes = (ex, ey, ey)
        for j in range(3):
            # moments about joint j of gravity on distal links and of the ground force
            # sum_l m_l (c_l - p) x g = (sum_l m_l c_l - M p) x g over the distal links
            mc = np.einsum("l,nli->ni", masses[j:], coms[:, j:])
            mom = cross(mc - masses[j:].sum() * pivots[j], np.broadcast_to(g, mc.shape))
            mom += cross(p_contact - pivots[j], F)
            tau[:, j] = -np.einsum("ni,ni->n", axes[j], mom)
        return tau
