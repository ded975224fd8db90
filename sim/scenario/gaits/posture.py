"""Posture changes: stand up from lying, sit down, lie still.

The folded (lying) pose puts the body on the ground with each foot just above the ground
behind its hip, the knee folded to ``fold_knee_rad``. Standing up moves each foot target along
a straight line in the base frame from where the segment found it to the nominal stance,
timed by a smoothstep ``3 s^2 - 2 s^3`` (zero speed at both ends); sitting down runs the same
line back to the folded pose. The joint targets come from the closed-form inverse
kinematics, the joint-speed feed-forward from the leg Jacobians, and the stance feed-forward
from the static force distribution over the four feet, scaled by the share of the weight the
feet are expected to carry (it grows with the progress of the rise).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from sim.robot.model import RobotModel
from sim.robot.statics import StanceStatics
from sim.scenario.gaits.base import RobotState, SegmentController, nominal_feet_b, smoothstep
from sim.scenario.gaits.leg_solver import LegSolver
from sim.scenario.gaits.stance_forces import distribute


def folded_feet_b(model: RobotModel, knee_rad: float, clearance_m: float = 0.003) -> np.ndarray:
    """Foot-centre targets ``[4, 3]`` (base frame) of the lying pose.

    The foot sits ``clearance_m`` above flat ground when the body box rests on it, behind the
    hip at the hip-foot distance ``l^2 = l1^2 + l2^2 + 2 l1 l2 cos(knee)`` (law of cosines).
    """
    from sim.robot.kinematics import LegKinematics

    kin = LegKinematics.from_model(model)
    lg = model.leg
    l1, l2 = lg["thigh_length_m"], lg["shank_length_m"]
    reach = math.sqrt(max(l1 * l1 + l2 * l2 + 2 * l1 * l2 * math.cos(knee_rad), 0.0))
    body_h = model.data["body"]["size_m"][2]
    feet = nominal_feet_b(model)
    z = -(body_h / 2 - kin.foot_radius_m) + clearance_m  # base frame, body on the ground
    dz = kin.hip_m[:, 2] - z  # hip above the foot
    dx = np.sqrt(np.maximum(reach**2 - dz**2, 0.0))
    feet[:, 0] = kin.hip_m[:, 0] - dx
    feet[:, 2] = np.where(dx > 0, z, kin.hip_m[:, 2] - reach)
    return feet


class _Move(SegmentController):
    """Straight-line foot move in the base frame from the start pose to ``target``."""

    min_update_period_s = 0.002
    needs_standing = False
    rising = True

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        super().__init__(seg, model, statics)
        self.move_s = float(seg["move_time_s"])
        self.fold = folded_feet_b(model, seg["fold_knee_rad"])
        h = seg.get("stance_height_m", 0.0) or model.data["stance"]["hip_height_m"]
        self.stand = nominal_feet_b(model, h)
        self.p0 = self.fold if self.rising else self.stand
        self.p1 = self.stand if self.rising else self.fold
        self.solver = LegSolver(self.kin)

    def initial_angles(self) -> np.ndarray:
        return self.kin.inverse(self.p0)

    def start(self, state: RobotState) -> None:
        self.p0 = self.kin.foot_positions(state.q)

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        s = min(1.0, t_seg / self.move_s)
        a = smoothstep(s)
        da = 6.0 * s * (1.0 - s) / self.move_s if s < 1.0 else 0.0
        p = self.p0 + (self.p1 - self.p0) * a
        v = (self.p1 - self.p0) * da
        share = a if self.rising else 1.0 - a
        g_b = state.base_rotation.T @ state.gravity_w
        gn = float(np.linalg.norm(g_b))
        up = -g_b / gn
        contacts = p - self.kin.foot_radius_m * up - self.statics.com_b(state.q)
        forces = distribute(contacts.tolist(), share * self.statics.total_mass_kg * gn,
                            up.tolist(), [1.0] * 4)
        q, qd, tau = self.solver.solve(p.tolist(), v.tolist(), g_b.tolist(), forces)
        return (np.array(q).reshape(4, 3), np.array(qd).reshape(4, 3),
                np.array(tau).reshape(4, 3))


class StandUpController(_Move):
    """Rise from lying to the nominal stance in ``move_time_s``, then hold it."""

    rising = True


class SitDownController(_Move):
    """Lower the body from the present pose to lying in ``move_time_s``, then stay down."""

    rising = False


class LieController(_Move):
    """Stay folded on the ground (the targets are the folded pose from the start)."""

    rising = False

    def initial_angles(self) -> np.ndarray:
        return self.kin.inverse(self.fold)

    def start(self, state: RobotState) -> None:
        self.p0 = self.fold

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        q = self.kin.inverse(self.fold)
        return q, np.zeros((4, 3)), self.kin.static_torques(q, state.base_rotation.T
                                                            @ state.gravity_w, np.zeros((4, 3)))
