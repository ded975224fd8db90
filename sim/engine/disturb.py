"""Disturbances of the simulation loop: the scenario's ``[[push]]`` and ``[[trip]]`` tables
(validated by :mod:`sim.scenario.disturbance`) turned into one function called before each step.

Takes the engine world, the scenario data and the event lists; gives ``apply(i_step, plan) ->
force`` or ``None`` when the scenario has no disturbance (the loop then pays one boolean test
per step). Pushes: ``applyExternalForce`` on the base, world frame, at the COM plus an offset,
every step of the window. Trips: once a foot has been in planned swing for ``after_liftoff_s``
(after ``start_s``), a point-to-point constraint from the foot to the world holds it for
``duration_s`` with at most ``max_force_n``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from sim import LEGS
from sim.engine.world import FOOT_LINKS, Engine, pb


def push_windows(data: dict[str, Any], dt: float) -> list[tuple[int, int, list[float],
                                                               list[float]]]:
    """Pushes as ``(first step, end step, force, point offset)``."""
    return [(round(p_["start_s"] / dt), round((p_["start_s"] + p_["duration_s"]) / dt),
             [float(x) for x in p_["force_n"]], [float(x) for x in p_["point_m"]])
            for p_ in data.get("push", [])]


def make_disturbances(eng: Engine, data: dict[str, Any], dt: float,
                      events: dict[str, list[list[float]]]
                      ) -> Callable[[int, list[float]], list[float]] | None:
    """The per-step disturbance function, or None; trip events are appended to ``events``."""
    pushes = push_windows(data, dt)
    trips = [{"k": LEGS.index(t_["leg"]), "arm": round(t_["start_s"] / dt),
              "after": round(t_["after_liftoff_s"] / dt), "hold": round(t_["duration_s"] / dt),
              "max_f": float(t_["max_force_n"]), "swing_since": -1, "cid": -1, "until": -1,
              "done": False} for t_ in data.get("trip", [])]
    if not (pushes or trips):
        return None
    if trips:
        events["trip_start"] = [[], [], [], []]
        events["trip_end"] = [[], [], [], []]
    r, c = eng.robot, eng.cid
    getBase = pb.getBasePositionAndOrientation

    def disturbances(i_g: int, plan: list[float]) -> list[float]:
        """Apply the pushes and trips of step ``i_g``; return the total push (N, world)."""
        f = [0.0, 0.0, 0.0]
        for a, b, fw, off in pushes:
            if a <= i_g < b:
                com = getBase(r, physicsClientId=c)[0]
                pb.applyExternalForce(r, -1, fw, [com[0] + off[0], com[1] + off[1],
                                                  com[2] + off[2]], pb.WORLD_FRAME,
                                      physicsClientId=c)
                f = [f[0] + fw[0], f[1] + fw[1], f[2] + fw[2]]
        for tr in trips:
            if tr["done"]:
                continue
            k = tr["k"]
            if tr["cid"] >= 0:
                if i_g >= tr["until"]:
                    pb.removeConstraint(tr["cid"], physicsClientId=c)
                    tr["cid"], tr["done"] = -1, True
                    events["trip_end"][k].append(i_g * dt)
                continue
            if plan[k] > 0.5:
                tr["swing_since"] = -1
                continue
            if tr["swing_since"] < 0:
                tr["swing_since"] = i_g
            if i_g >= tr["arm"] and i_g - tr["swing_since"] >= tr["after"]:
                foot = pb.getLinkState(r, FOOT_LINKS[k], physicsClientId=c)[0]
                cid = pb.createConstraint(r, FOOT_LINKS[k], -1, -1, pb.JOINT_POINT2POINT,
                                          [0, 0, 0], [0, 0, 0], foot, physicsClientId=c)
                pb.changeConstraint(cid, maxForce=tr["max_f"], physicsClientId=c)
                tr["cid"], tr["until"] = cid, i_g + tr["hold"]
                events["trip_start"][k].append(i_g * dt)
        return f

    return disturbances
