"""Fused leg solver for the control loop: inverse kinematics, joint speeds and static torques
of the four legs in one pass.

It computes what :class:`sim.robot.kinematics.LegKinematics` computes (``inverse``, ``jacobians``
then a solve, ``static_torques``) with the same conventions, in each leg's abad-rotated frame
where the Jacobian has a closed form. The tests compare it with ``LegKinematics`` (and
through that with pinocchio).

Leg frame of a leg (rotated by the abad angle ``a`` about x, origin at the abad axis point):
foot ``(x, y', z') = (-l1 s1 - l2 s12, side d, -l1 c1 - l2 c12)`` with ``s1 = sin h``,
``s12 = sin(h + k)`` etc. There the foot-velocity equations are

    v'y = -z' da,  v'x = z' dh - l2 c12 dk,  v'z = y' da - x dh + l2 s12 dk

with determinant ``-l1 l2 sin k`` of the hip-knee block (singular with the knee straight).

Why scalar code: the four legs are handled by a loop over plain floats. For arrays of four
numbers each numpy call costs about 1 us of overhead against some 0.03 us for a float
operation, so a numpy version of the same closed form (vectorised over the legs) measured
136 us per update against about 20 us for this one; the control update runs every few
milliseconds of simulated time and must stay well below the cost of an engine step.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from sim.robot.kinematics import LegKinematics

Vec = Sequence[float]


class LegSolver:
    """Closed-form kinematics and statics of four legs, for targets inside the workspace.

    Targets beyond reach are pulled back radially into the workspace (with a margin
    ``reach_margin`` of the leg length) instead of raising: a controller must not crash a
    run; :meth:`sim.robot.kinematics.LegKinematics.inverse` is the checking variant.
    """

    def __init__(self, kin: LegKinematics, reach_margin: float = 0.01):
        self.kin = kin
        self.hip = kin.hip_m.tolist()
        self.yl = (kin.side * kin.offset_m).tolist()  # y' of each thigh plane
        self.l1, self.l2 = float(kin.l1_m), float(kin.l2_m)
        self.sign = kin.knee_sign.tolist()
        lmax, lmin = self.l1 + self.l2, abs(self.l1 - self.l2)
        self.r_max = lmax * (1.0 - reach_margin)
        self.r_min = lmin + lmax * reach_margin
        self.m_ab = float(kin.m_abad)
        self.c_ab = kin.c_abad.tolist()  # per leg, abad frame = leg frame
        self.m_th, self.m_sh, self.m_ft = float(kin.m_thigh), float(kin.m_shank), float(kin.m_foot)
        self.c_th = kin.c_thigh.tolist()
        self.c_sh = kin.c_shank.tolist()

    def solve(self, p_b: Sequence[Vec], v_b: Sequence[Vec], g_b: Vec, f_b: Sequence[Vec]
              ) -> tuple[list[float], list[float], list[float]]:
        """Joint angles, speeds and holding torques, each a flat list of 12 (leg-major).

        ``p_b`` foot-centre targets (m), ``v_b`` their velocities (m/s), 4 triples in the base
        frame; ``g_b`` gravity in the base frame (m/s^2); ``f_b`` ground force on each foot
        (N, base frame, 4 triples). Torques: ``tau = g(q) - J^T f``.
        """
        l1, l2 = self.l1, self.l2
        r_min, r_max = self.r_min, self.r_max
        m_ab, m_th, m_sh, m_ft = self.m_ab, self.m_th, self.m_sh, self.m_ft
        m_h = m_th + m_sh + m_ft
        cth0, cth2 = self.c_th[0], self.c_th[2]
        csh0, csh2 = self.c_sh[0], self.c_sh[2]
        gx, gyb, gzb = g_b
        sqrt, atan2, sin, cos, acos = math.sqrt, math.atan2, math.sin, math.cos, math.acos
        q: list[float] = []
        qd: list[float] = []
        tau: list[float] = []
        for i in range(4):
            hip = self.hip[i]
            yl = self.yl[i]
            px, py, pz = p_b[i]
            x, py, pz = px - hip[0], py - hip[1], pz - hip[2]
            r2 = py * py + pz * pz - yl * yl
            if r2 < 1e-12:
                r2 = 1e-12
            zp = -sqrt(r2)
            a = atan2(pz, py) - atan2(zp, yl)
            a = (a + math.pi) % (2 * math.pi) - math.pi
            L = sqrt(x * x + r2)
            if L > r_max or L < r_min:
                s = (r_max if L > r_max else r_min) / L
                x *= s
                zp *= s
            c2 = (x * x + zp * zp - l1 * l1 - l2 * l2) / (2 * l1 * l2)
            c2 = 1.0 if c2 > 1.0 else (-1.0 if c2 < -1.0 else c2)
            k = self.sign[i] * acos(c2)
            sk, ck = sin(k), cos(k)
            h = atan2(-x, -zp) - atan2(l2 * sk, l1 + l2 * ck)
            s1, c1 = sin(h), cos(h)
            s12, c12 = sin(h + k), cos(h + k)
            ca, sa = cos(a), sin(a)
            # joint speeds from the foot velocity in the leg frame, v' = Rx(a)^T v
            vx, vyb, vzb = v_b[i]
            vy = ca * vyb + sa * vzb
            vz = -sa * vyb + ca * vzb
            da = -vy / zp
            det = -l1 * l2 * sk
            if -1e-6 < det < 1e-6:
                det = -1e-6 if det <= 0 else 1e-6
            rz = vz - yl * da
            dh = (vx * l2 * s12 + rz * l2 * c12) / det
            dk = (zp * rz + x * vx) / det
            # gravity and foot force in the leg frame
            gy = ca * gyb + sa * gzb
            gz = -sa * gyb + ca * gzb
            fx, fyb, fzb = f_b[i]
            fy = ca * fyb + sa * fzb
            fz = -sa * fyb + ca * fzb
            th_x = c1 * cth0 + s1 * cth2
            th_z = -s1 * cth0 + c1 * cth2
            kx, kz = -l1 * s1, -l1 * c1
            sh_x = kx + c12 * csh0 + s12 * csh2
            sh_z = kz - s12 * csh0 + c12 * csh2
            # knee: shank and foot about the knee axis
            mxk = m_sh * (sh_x - kx) + m_ft * (x - kx)
            mzk = m_sh * (sh_z - kz) + m_ft * (zp - kz)
            t_k = -(mzk * gx - mxk * gz) - (-l2 * c12 * fx + l2 * s12 * fz)
            # hip: thigh, shank and foot about the hip axis
            mxh = m_th * th_x + m_sh * sh_x + m_ft * x
            mzh = m_th * th_z + m_sh * sh_z + m_ft * zp
            t_h = -(mzh * gx - mxh * gz) - (zp * fx - x * fz)
            # abad: all links about the x axis through the abad point (distal links at y')
            cab = self.c_ab[i]
            my = m_ab * cab[1] + m_h * yl
            mz = m_ab * cab[2] + mzh
            t_a = -(my * gz - mz * gy) - (-zp * fy + yl * fz)
            q += (a, h, k)
            qd += (da, dh, dk)
            tau += (t_a, t_h, t_k)
        return q, qd, tau
