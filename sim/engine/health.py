"""Failure detection of the simulation loop: falls (body tilt, body height) and divergence
(non-finite state, runaway joint speed), tested every ``CHECK_EVERY`` steps.

Takes the scenario's ``[limits]`` table and the model's nominal hip height; gives
``check(i_step, qd, needs_standing, segment_name) -> (status, detail)``, with status
``"completed"`` while the run is healthy and ``"fell"`` or ``"diverged"`` with the reason.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from sim.engine.world import Engine, pb

CHECK_EVERY = 10  # steps between fall/divergence checks


def make_health_check(eng: Engine, limits: dict[str, Any], hip_height_m: float, dt: float
                      ) -> Callable[[int, list[float], bool, str], tuple[str, str]]:
    cos_tilt = math.cos(limits["max_tilt_rad"])
    min_h = limits["min_height_fraction"] * hip_height_m
    w_max = limits["max_joint_speed_rad_s"]
    max_tilt_deg = math.degrees(limits["max_tilt_rad"])
    r, c = eng.robot, eng.cid
    getBase = pb.getBasePositionAndOrientation

    def check(i_g: int, qd: list[float], needs_standing: bool, seg_name: str
              ) -> tuple[str, str]:
        pos, orn = getBase(r, physicsClientId=c)
        xq, yq = orn[0], orn[1]
        cz = 1.0 - 2.0 * (xq * xq + yq * yq)
        wabs = max(abs(x) for x in qd)
        if not math.isfinite(sum(qd) + sum(pos)) or wabs > w_max:
            return "diverged", (f"joint speed {wabs:.3g} rad/s beyond {w_max:g} rad/s "
                                f"or non-finite state at t = {i_g * dt:.3f} s")
        if cz < cos_tilt:
            return "fell", (f"body tilt {math.degrees(math.acos(max(-1, cz))):.1f} deg "
                            f"beyond {max_tilt_deg:.1f} deg at "
                            f"t = {i_g * dt:.3f} s in segment '{seg_name}'")
        if needs_standing and pos[2] < min_h:
            return "fell", (f"body height {pos[2]:.3f} m below {min_h:.3f} m at "
                            f"t = {i_g * dt:.3f} s in segment '{seg_name}'")
        return "completed", ""

    return check
