"""A vertical jump segment (``kind = "jump"``): hold, crouch, push off, fly, land and hold.

Feet stay under the hips (nominal stance in x and y); only the hip height changes. Phases,
in segment time:

1. hold the stance for ``hold_s``;
2. crouch to ``crouch_height_m`` over ``crouch_s`` (smoothstep in height);
3. push: extend to ``push_height_m`` over ``push_s`` with a smoothstep in height
   h(t) = h_c + (h_e - h_c) (3 s^2 - 2 s^3), s = t / T; the feed-forward is the static stance
   torque scaled by (g + h'') / g, the ground force that gives the planned body acceleration
   (Newton's second law for a body on massless legs; common practice for a first controller);
4. flight (no foot in contact after the push has begun, or the push is over): joint targets
   return to the nominal stance, no feed-forward;
5. after touchdown (any foot in contact again): hold the stance with the static feed-forward.

The controller is pure numpy and never touches the engine. It asks for contact flags.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from sim.core.config import Field
from sim.robot.model import RobotModel
from sim.robot.statics import StanceStatics
from sim.scenario.gaits.base import RobotState, SegmentController, nominal_feet_b, stance_angles

G = 9.80665

JUMP_SPEC: dict[str, Any] = {
    "hold_s": Field(float, "stance held before the crouch", default=0.3, min=0.0),
    "crouch_height_m": Field(float, "hip height at the bottom of the crouch", default=0.20,
                             min=0.05),
    "crouch_s": Field(float, "duration of the crouch", default=0.5, min=0.01),
    "push_height_m": Field(float, "hip height at the end of the push", default=0.40, min=0.05),
    "push_s": Field(float, "duration of the push", default=0.16, min=0.01),
}


def _smooth(s: float) -> tuple[float, float, float]:
    """Smoothstep 3 s^2 - 2 s^3 and its first two derivatives in s, s clipped to [0, 1]."""
    s = min(max(s, 0.0), 1.0)
    return 3 * s * s - 2 * s ** 3, 6 * s - 6 * s * s, 6 - 12 * s


class JumpController(SegmentController):
    """Crouch-extend vertical jump (module docstring)."""

    needs_contacts = True

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        super().__init__(seg, model, statics)
        self.q_stance = stance_angles(model)
        self.feet0 = nominal_feet_b(model)
        self.h0 = float(model.data["stance"]["hip_height_m"])
        self.phase = "hold"
        self._left_ground = False

    def _pose(self, h: float, hd: float) -> tuple[np.ndarray, np.ndarray]:
        """Joint angles and speeds for hip height ``h`` rising at ``hd`` (feet under hips)."""
        feet = self.feet0.copy()
        feet[:, 2] += self.h0 - h  # feet lower relative to the body as the body rises
        q = self.kin.inverse(feet)
        J = self.kin.jacobians(q)  # d p_foot / d q, [4, 3, 3]
        v = np.zeros((4, 3))
        v[:, 2] = -hd
        qd = np.linalg.solve(J, v[:, :, None])[:, :, 0]
        return q, qd

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        s = self.seg
        t1 = s["hold_s"]
        t2 = t1 + s["crouch_s"]
        t3 = t2 + s["push_s"]
        g_b = state.base_rotation.T @ state.gravity_w
        if self.phase == "hold" and t_seg >= t1:
            self.phase = "crouch"
        if self.phase == "crouch" and t_seg >= t2:
            self.phase = "push"
        if self.phase == "push" and (t_seg >= t3 or not state.contact.any()):
            self.phase = "flight"
        if self.phase == "flight":
            if not state.contact.any():
                self._left_ground = True
            elif self._left_ground:
                self.phase = "landed"
        if self.phase == "hold" or self.phase == "landed":
            tau, _ = self.statics.torques(state.q, g_b)
            return self.q_stance, np.zeros((4, 3)), tau
        if self.phase == "crouch":
            f, df, _ = _smooth((t_seg - t1) / s["crouch_s"])
            dh = s["crouch_height_m"] - self.h0
            q, qd = self._pose(self.h0 + dh * f, dh * df / s["crouch_s"])
            tau, _ = self.statics.torques(state.q, g_b)
            return q, qd, tau
        if self.phase == "push":
            T = s["push_s"]
            f, df, ddf = _smooth((t_seg - t2) / T)
            dh = s["push_height_m"] - s["crouch_height_m"]
            q, qd = self._pose(s["crouch_height_m"] + dh * f, dh * df / T)
            acc = dh * ddf / T ** 2
            tau, _ = self.statics.torques(state.q, g_b)
            return q, qd, tau * max(0.0, (G + acc) / G)
        return self.q_stance, np.zeros((4, 3)), np.zeros((4, 3))  # flight

