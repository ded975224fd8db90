"""What the loop measures for the controllers and for the run summary.

Takes the engine world; gives ``measure(i_step, q, qd, base, contact) -> RobotState`` (the
state the segment controllers see, plain floats; anything not given is read from the engine)
and ``observe(state, ctrl, summary, dt_update)`` (touchdown and lift-off events and the
locomotion figures of :class:`sim.engine.summary.RunSummary`, at each control update,
with the screen's parts: base travel under the stance feet, touchdown bounces and the base
height against the segment's plan).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from sim import JOINT_NAMES
from sim.engine.summary import BOUNCE_WINDOW_S, RunSummary
from sim.engine.world import FOOT_LINKS, JOINT_INDICES, Engine, pb
from sim.scenario.segments import RobotState, SegmentController

assert len(JOINT_INDICES) == len(JOINT_NAMES)


def make_measure(eng: Engine, dt: float) -> Callable[..., RobotState]:
    r, c, J = eng.robot, eng.cid, JOINT_INDICES
    getJS = pb.getJointStates
    getBase = pb.getBasePositionAndOrientation
    getVel = pb.getBaseVelocity
    com_l = eng.base_local_com.tolist()
    grav_l = eng.gravity_w.tolist()

    def measure(i_g: int, q: list[float] | None = None, qd: list[float] | None = None,
                base: tuple[Any, Any, Any, Any] | None = None,
                contact: list[float] | None = None) -> RobotState:
        """The measured state the controllers see (plain floats; see RobotState).

        ``q``, ``qd``, ``base`` (COM position, orientation, velocity, angular velocity)
        and ``contact`` (flags of the last step) are read from the engine unless given.
        """
        if q is None or qd is None:
            st = getJS(r, J, physicsClientId=c)
            q = [s[0] for s in st]
            qd = [s[1] for s in st]
        if base is None:
            base = (*getBase(r, physicsClientId=c), *getVel(r, physicsClientId=c))
        pos, (x, y, z, w_), v, om = base
        # rotation matrix of the unit quaternion (x, y, z, w), world from base
        R = [[1.0 - 2.0 * (y * y + z * z), 2.0 * (x * y - z * w_), 2.0 * (x * z + y * w_)],
             [2.0 * (x * y + z * w_), 1.0 - 2.0 * (x * x + z * z), 2.0 * (y * z - x * w_)],
             [2.0 * (x * z - y * w_), 2.0 * (y * z + x * w_), 1.0 - 2.0 * (x * x + y * y)]]
        cx, cy, cz = com_l  # base frame origin = COM - R c
        origin = [pos[i] - (R[i][0] * cx + R[i][1] * cy + R[i][2] * cz) for i in range(3)]
        if contact is None:
            contact = eng.foot_forces()[1]
        return RobotState(i_g * dt, q, qd, origin, R, list(v), list(om), grav_l, contact)

    return measure


def make_observer(eng: Engine, foot_radius_m: float, events: dict[str, list[list[float]]]
                  ) -> Callable[[RobotState, SegmentController, RunSummary, float], None]:
    r, c = eng.robot, eng.cid
    prev_contact = [True] * 4
    r_foot = foot_radius_m
    last_td = [-math.inf] * 4  # time of each foot's last touchdown
    window = BOUNCE_WINDOW_S

    def observe(state: RobotState, ctrl: SegmentController, acc: RunSummary,
                dtu: float) -> None:
        """Touchdown/lift-off events and the summary figures at a control update."""
        nonlocal prev_contact
        cont = state.contact_list
        t_now = state.t_s
        for k in range(4):
            if cont[k] != prev_contact[k]:
                if cont[k]:
                    events["touchdown"][k].append(t_now)
                    acc.touchdowns += 1
                    last_td[k] = t_now
                else:
                    events["liftoff"][k].append(t_now)
                    if t_now - last_td[k] <= window:
                        acc.bounces += 1
        prev_contact = cont
        Rl = state.base_rotation_list
        yaw = math.atan2(Rl[1][0], Rl[0][0])
        v = state.base_velocity_list
        acc.time_s += dtu
        acc.fwd += (math.cos(yaw) * v[0] + math.sin(yaw) * v[1]) * dtu
        acc.cmd += ctrl.commanded_velocity()[0] * dtu if hasattr(
            ctrl, "commanded_velocity") else 0.0
        acc.tilt2 += math.acos(max(-1.0, min(1.0, Rl[2][2]))) ** 2 * dtu
        pos = state.base_position_list
        if acc.p0 is None:
            acc.p0 = [float(pos[0]), float(pos[1])]
        acc.p1 = [float(pos[0]), float(pos[1])]
        plan_z = acc.plan_base_z_m
        if plan_z is not None:
            e = pos[2] - plan_z
            acc.h_time_s += dtu
            acc.h_err_m_s += e * dtu
            acc.h_err2_m2_s += e * e * dtu
            acc.h_plan_m_s += plan_z * dtu
            if abs(e) > acc.h_err_max_m:
                acc.h_err_max_m = abs(e)
        if any(cont):
            acc.stance_travel_m += math.hypot(v[0], v[1]) * dtu * sum(cont)
            ls = pb.getLinkStates(r, FOOT_LINKS, computeLinkVelocity=1, physicsClientId=c)
            for k in range(4):
                if cont[k]:
                    lv, av = ls[k][6], ls[k][7]
                    acc.slip_m += math.hypot(lv[0] - r_foot * av[1],
                                             lv[1] + r_foot * av[0]) * dtu

    return observe
