"""Walk, trot, bound and pronk: one periodic-gait controller with four phase patterns.

Every control update:

1. The body state is read in the heading frame H (yaw-aligned, level with the ground, origin
   at the base frame origin): tilt (roll, pitch), yaw, velocity (low-pass filtered over
   ``velocity_filter_s``) and height above the ground.
2. The command (forward, lateral speed, yaw rate) ramps smoothly from the velocity found at
   the segment start to the set value over ``ramp_s``. Heading feedback adds
   ``yaw_gain_1_s (yaw* - yaw)`` to the yaw rate (the heading reference integrates the
   commanded yaw rate); speed feedback adds ``speed_gain (v* - v)`` and a bounded integral
   ``speed_integral_gain_1_s * integral (v* - v) dt`` to the stance sweep.
3. Stance feet move in H at minus the effective body velocity (a foot on the ground stays put
   in the world), at the stance height corrected by height feedback ``height_gain (h* - h)``.
   Swing feet follow :func:`sim.scenario.gaits.footpath.swing_curve` from their lift-off point to the
   Raibert-style touchdown point (:func:`sim.scenario.gaits.footpath.touchdown_offset`), landing at
   zero ground speed.
4. Attitude feedback: all foot targets are mapped from H to the base frame through a tilt
   ``a = tilt* - attitude_gain (tilt - tilt*) - attitude_rate_gain_s omega`` rather than the
   measured tilt (the *feedback map*). With zero gains the legs hold the body parallel to the
   plane of the feet; a positive gain lengthens the legs on the side that has sunk. The same
   map is used for stance and swing legs so the targets never jump at a phase change; trot,
   bound and pronk land their feet ``clear`` above the stance height and press them down over
   the load ramp.
5. The walk lands its feet on the *ground map* instead: through the measured tilt, with the
   stance height moved onto the measured ground (``press`` into it). A foot's target blends
   the two maps by its *feedback share*: 0 in swing, in stance the smaller of the load ramp and
   the foot's planned load over half an equal share, changing no faster than the load ramp.
   The feedback map lifts the feet on the high side of a tilted body and, for a body above
   its height, every foot (by up to twice the error at the default gains); a landing foot, or
   a foot the static distribution loads little (the front foot that has just landed when the
   hind foot on its diagonal lifts: the centre of mass then lies near the other diagonal),
   was held off the ground by it, and the walk's front feet landed 130-240 ms late
   (tests/test_gaits.py). The walk's body shift toward the centroid of the loaded feet
   (``body_shift_gain``, default 0) moves the body fore and aft at twice the step rate; at
   the walk's step period its zero-moment point then swings several times as far as the
   body (cart-table model, ``zmp = x - (h/g) x''``: a factor ``1 + h w^2 / g``, about 8 at
   2.5 Hz and 0.3 m) and rocks the body, so it is off by default.
6. The fused closed-form solver (:class:`sim.scenario.gaits.leg_solver.LegSolver`) gives the joint targets,
   the joint speeds and the feed-forward torques holding the weighted static force
   distribution over the stance feet (:func:`sim.scenario.gaits.stance_forces.distribute`).
"""

from __future__ import annotations

import math
from typing import Any

from sim.robot.model import RobotModel
from sim.robot.statics import StanceStatics
from sim.scenario.gaits.base import (
    RobotState,
    SegmentController,
    nominal_feet_b,
    roll_pitch_yaw,
    rot_rp,
    smoothstep,
)
from sim.scenario.gaits.footpath import (
    BOUND_LIFT,
    PRONK_LIFT,
    TROT_LIFT,
    WALK_LIFT,
    phases,
    swing_curve,
    touchdown_offset,
)
from sim.scenario.gaits.leg_solver import LegSolver
from sim.scenario.gaits.stance_forces import distribute, load_weights


def _wrap(a: float) -> float:
    return (a + math.pi) % (2 * math.pi) - math.pi


class GaitController(SegmentController):
    """Periodic gait (walk or trot) following a commanded body velocity."""

    needs_contacts = True
    min_update_period_s = 0.002
    lift: tuple[float, ...] = TROT_LIFT
    clear = 0.0015  # m, touchdown clearance of the gaits that do not land on the ground map
    # True: feet land, and carry little load, on the ground map (step 5 of the module
    # docstring), aimed `press` (m) into the measured ground so they meet it despite the
    # tracking lag of the joints
    ground_landing = False
    press = 0.001
    load_ramp = 0.15  # share of the stance over which a foot takes up / gives off its load
    shift_ramp = 0.2  # the same for the body shift of a walk

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        super().__init__(seg, model, statics)
        g = seg
        self.T = g["step_period_s"]
        self.beta = g["duty_factor"]
        self.h_step = g["step_height_m"]
        self.h_stance = g["stance_height_m"] or model.data["stance"]["hip_height_m"]
        self.pitch_cmd = g["body_pitch_rad"]
        self.v_set = (g["speed_m_s"], g["lateral_speed_m_s"])
        self.w_set = g["yaw_rate_rad_s"]
        self.ramp_s = g["ramp_s"]
        self.k_place = g["placement_gain_s"]
        self.k_speed = g["speed_gain"]
        self.k_speed_i = g["speed_integral_gain_1_s"]
        self.i_err = [0.0, 0.0]
        self.i_lim = 0.3  # m/s, bound of the integral correction
        self.k_att = g["attitude_gain"]
        self.k_att_rate = g["attitude_rate_gain_s"]
        self.k_yaw = g["yaw_gain_1_s"]
        self.k_height = g["height_gain"]
        self.tau_v = g["velocity_filter_s"]
        self.shift_gain = g.get("body_shift_gain", 0.0)
        self.solver = LegSolver(self.kin)
        nominal = nominal_feet_b(model, self.h_stance)
        self.nominal = nominal.tolist()  # base frame, level body
        self.hip_z = float(self.kin.hip_m[:, 2].mean())
        self.z_stance = nominal[:, 2].tolist()
        self.com = statics.com_b(self.kin.inverse(nominal)).tolist()
        self.weight_n = statics.total_mass_kg * 9.80665
        self.r_foot = self.kin.foot_radius_m
        self.p = [list(r) for r in self.nominal]  # foot targets in H
        self.p_lo = [list(r) for r in self.nominal]
        self.swing = [False] * 4
        self.stance_now = [True] * 4
        self.f_prev = [self.weight_n / 4.0] * 4  # N, planned foot forces of the last update
        self.fb_prev = [1.0] * 4  # the feedback shares of the last update
        self.v_f = [0.0, 0.0]
        self.v0 = (0.0, 0.0)
        self.w0 = 0.0
        self.yaw_ref = 0.0
        self.t_prev = 0.0
        self.cmd = (0.0, 0.0, 0.0)
        self.shift = (0.0, 0.0)
        self.v_shift = (0.0, 0.0)

    def start(self, state: RobotState) -> None:
        R = state.base_rotation
        roll, pitch, yaw = roll_pitch_yaw(R)
        feet = self.kin.foot_positions(state.q)
        self.p = (feet @ rot_rp(roll, pitch).T).tolist()
        self.p_lo = [list(r) for r in self.p]
        cy, sy = math.cos(yaw), math.sin(yaw)
        vx, vy = float(state.base_velocity_m_s[0]), float(state.base_velocity_m_s[1])
        self.v_f = [cy * vx + sy * vy, -sy * vx + cy * vy]
        self.v0 = (self.v_f[0], self.v_f[1])
        self.w0 = float(state.base_angular_velocity_rad_s[2])
        self.yaw_ref = yaw
        self.t_prev = 0.0
        self.i_err = [0.0, 0.0]
        self.shift = (0.0, 0.0)
        self.v_shift = (0.0, 0.0)
        self.swing = [False] * 4
        self.f_prev = [self.weight_n / 4.0] * 4
        self.fb_prev = [1.0] * 4

    def planned_stance(self) -> list[bool]:
        return self.stance_now

    def commanded_velocity(self) -> tuple[float, float, float]:
        return self.cmd

    def update(self, t_seg: float, state: RobotState) -> tuple[list[float], list[float],
                                                               list[float]]:
        dt = t_seg - self.t_prev
        self.t_prev = t_seg
        R = state.base_rotation_list
        roll = math.atan2(R[2][1], R[2][2])
        pitch = math.asin(max(-1.0, min(1.0, -R[2][0])))
        yaw = math.atan2(R[1][0], R[0][0])
        cy, sy = math.cos(yaw), math.sin(yaw)
        vw = state.base_velocity_list
        ww = state.base_angular_velocity_list
        gw = state.gravity_list
        # body-frame angular velocity and gravity: R^T x
        wbx = R[0][0] * ww[0] + R[1][0] * ww[1] + R[2][0] * ww[2]
        wby = R[0][1] * ww[0] + R[1][1] * ww[1] + R[2][1] * ww[2]
        g_b = [R[0][i] * gw[0] + R[1][i] * gw[1] + R[2][i] * gw[2] for i in range(3)]
        vhx, vhy = cy * vw[0] + sy * vw[1], -sy * vw[0] + cy * vw[1]
        vf = self.v_f
        if dt > 0:
            # the body's own shift (walk) is not a velocity error: filter v - d(shift)/dt
            a = min(1.0, dt / self.tau_v)
            vf[0] += a * (vhx - self.v_shift[0] - vf[0])
            vf[1] += a * (vhy - self.v_shift[1] - vf[1])
        r = smoothstep(t_seg / self.ramp_s) if self.ramp_s > 0 else 1.0
        vcx = self.v0[0] + (self.v_set[0] - self.v0[0]) * r
        vcy = self.v0[1] + (self.v_set[1] - self.v0[1]) * r
        wc = self.w0 + (self.w_set - self.w0) * r
        self.cmd = (vcx, vcy, wc)
        self.yaw_ref += wc * dt
        w_eff = wc + self.k_yaw * _wrap(self.yaw_ref - yaw)
        ex, ey = vf[0] - vcx, vf[1] - vcy
        # speed feedback: proportional plus a bounded integral of the velocity error
        ie = self.i_err
        lim = self.i_lim
        ie[0] = max(-lim, min(lim, ie[0] + self.k_speed_i * ex * dt))
        ie[1] = max(-lim, min(lim, ie[1] + self.k_speed_i * ey * dt))
        vex = vcx - self.k_speed * ex - ie[0]
        vey = vcy - self.k_speed * ey - ie[1]

        T, beta = self.T, self.beta
        phi = phases(t_seg, T, beta, self.lift)
        h_err = (self.h_stance - self.hip_z) - state.base_position_list[2]
        dz = -self.k_height * h_err
        t_sw = (1.0 - beta) * T
        t_st = beta * T
        p, vel = self.p, [[0.0, 0.0, 0.0] for _ in range(4)]
        stance = [ph < beta for ph in phi]
        ground = self.ground_landing
        n_st = sum(stance)
        f_half = 0.5 * self.weight_n / n_st if n_st else 1.0
        # share of the feedback map in each foot's target (step 5 of the module docstring):
        # in stance the smaller of the load ramp and the foot's planned load over half an
        # equal share; 0 in swing (1 throughout without ground landing)
        fb = load_weights(phi, beta, self.load_ramp) if ground else [1.0] * 4
        clear = 0.0 if ground else self.clear
        for k in range(4):
            pk = p[k]
            if stance[k]:
                vx = -(vex - w_eff * pk[1])
                vy = -(vey + w_eff * pk[0])
                pk[0] += vx * dt
                pk[1] += vy * dt
                # without ground landing the foot lands `clear` above the stance height and
                # is pressed down over the load ramp, so a sagging body does not make it land
                # early
                ss = phi[k] / (beta * self.load_ramp)
                pk[2] = self.z_stance[k] + dz + (clear * (1.0 - smoothstep(ss))
                                                 if ss < 1.0 else 0.0)
                vel[k][0], vel[k][1] = vx, vy
                self.swing[k] = False
                fk = self.f_prev[k]
                if ground and fk < f_half * fb[k]:
                    fb[k] = fk / f_half
                continue
            if not self.swing[k]:
                self.p_lo[k] = list(pk)
                self.swing[k] = True
            nom = self.nominal[k]
            hvx = vcx - wc * nom[1]
            hvy = vcy + wc * nom[0]
            ox, oy = touchdown_offset((hvx, hvy), (ex, ey), t_st, self.k_place)
            p_td = (nom[0] + ox, nom[1] + oy, self.z_stance[k] + dz + clear)
            v_end = (-hvx * t_sw, -hvy * t_sw)
            ps, dps = swing_curve((phi[k] - beta) / (1.0 - beta), self.p_lo[k], p_td, v_end,
                                  v_end, self.h_step)
            p[k] = ps
            vel[k] = [dps[0] / t_sw, dps[1] / t_sw, dps[2] / t_sw]
        if ground:
            # the share changes at most at the rate of the load ramp, so a change of the
            # support (another foot landing) does not make the target jump
            step = dt / (self.load_ramp * beta * T) if dt > 0 else 1.0
            fb = [min(o + step, max(o - step, f)) for f, o in zip(fb, self.fb_prev,
                                                                   strict=True)]
            self.fb_prev = fb
        self.stance_now = stance
        sx = sy_ = 0.0
        if self.shift_gain > 0:
            w = load_weights(phi, beta, self.shift_ramp)
            ws = sum(w)
            if ws > 1e-9:
                sx = r * self.shift_gain * (sum(w[k] * p[k][0] for k in range(4)) / ws
                                        - sum(pk[0] for pk in p) / 4)
                sy_ = r * self.shift_gain * (sum(w[k] * p[k][1] for k in range(4)) / ws
                                         - sum(pk[1] for pk in p) / 4)
        if dt > 0:
            self.v_shift = ((sx - self.shift[0]) / dt, (sy_ - self.shift[1]) / dt)
        self.shift = (sx, sy_)
        # attitude feedback: H -> base through the feedback tilt a (rows: Ra^T p)
        a_r = -self.k_att * roll - self.k_att_rate * wbx
        a_p = self.pitch_cmd - self.k_att * (pitch - self.pitch_cmd) - self.k_att_rate * wby
        # Ra = Ry(a_p) Rx(a_r) (sim.scenario.gaits.base.rot_rp) in floats
        cr, sr, cp, sp = math.cos(a_r), math.sin(a_r), math.cos(a_p), math.sin(a_p)
        Ra = [[cp, sp * sr, sp * cr], [0.0, cr, -sr], [-sp, cp * sr, cp * cr]]
        # the ground map: through the measured tilt Rm = Ry(pitch) Rx(roll), with the
        # stance height moved onto the measured ground (a foot centre on the ground lies
        # base height less foot radius below the base origin in H): where a foot without its
        # load goes, so that a landing foot meets the ground when the plan says and a foot
        # the plan loads little stays on it
        cr, sr, cp, sp = math.cos(roll), math.sin(roll), math.cos(pitch), math.sin(pitch)
        Rm = [[cp, sp * sr, sp * cr], [0.0, cr, -sr], [-sp, cp * sr, cp * cr]]
        z_ground = self.r_foot - state.base_position_list[2] - dz - self.press
        # static load over the stance feet (contacts relative to the COM, base frame)
        gn = math.sqrt(g_b[0] ** 2 + g_b[1] ** 2 + g_b[2] ** 2)
        up = [-g_b[0] / gn, -g_b[1] / gn, -g_b[2] / gn]
        rf, com = self.r_foot, self.com
        # contact point = foot centre - r_foot up, relative to the COM
        o0, o1, o2 = rf * up[0] + com[0], rf * up[1] + com[1], rf * up[2] + com[2]
        (r00, r01, r02), (r10, r11, r12), (r20, r21, r22) = Ra
        (m00, m01, m02), (m10, m11, m12), (m20, m21, m22) = Rm
        p_b, v_b, cont = [], [], []
        for k in range(4):
            X, Y, Z = p[k][0] - sx, p[k][1] - sy_, p[k][2]
            vX, vY, vZ = vel[k]
            wf = fb[k]  # share of the feedback map
            u = 1.0 - wf
            bx = by = bz = vbx = vby = vbz = 0.0
            if wf > 0.0:  # the feedback map
                bx = wf * (r00 * X + r10 * Y + r20 * Z)
                by = wf * (r01 * X + r11 * Y + r21 * Z)
                bz = wf * (r02 * X + r12 * Y + r22 * Z)
                vbx = wf * (r00 * vX + r10 * vY + r20 * vZ)
                vby = wf * (r01 * vX + r11 * vY + r21 * vZ)
                vbz = wf * (r02 * vX + r12 * vY + r22 * vZ)
            if u > 0.0:  # the ground map
                Zg = Z - self.z_stance[k] + z_ground
                bx += u * (m00 * X + m10 * Y + m20 * Zg)
                by += u * (m01 * X + m11 * Y + m21 * Zg)
                bz += u * (m02 * X + m12 * Y + m22 * Zg)
                vbx += u * (m00 * vX + m10 * vY + m20 * vZ)
                vby += u * (m01 * vX + m11 * vY + m21 * vZ)
                vbz += u * (m02 * vX + m12 * vY + m22 * vZ)
            p_b.append((bx, by, bz))
            cont.append((bx - o0, by - o1, bz - o2))
            v_b.append((vbx, vby, vbz))
        forces = distribute(cont, self.weight_n * gn / 9.80665, up,
                            load_weights(phi, beta, self.load_ramp))
        self.f_prev = [f[0] * up[0] + f[1] * up[1] + f[2] * up[2] for f in forces]
        return self.solver.solve(p_b, v_b, g_b, forces)  # three flat lists of 12


class TrotController(GaitController):
    """Diagonal pairs (fl + hr, fr + hl) half a period apart."""

    lift = TROT_LIFT


class WalkController(GaitController):
    """Lateral-sequence walk (hl, fl, hr, fr), one foot at a time; feet land on the ground
    map."""

    lift = WALK_LIFT
    ground_landing = True


class BoundController(GaitController):
    """Front pair (fl + fr) together, hind pair (hl + hr) half a period later."""

    lift = BOUND_LIFT


class PronkController(GaitController):
    """All four legs lift off and touch down together."""

    lift = PRONK_LIFT
