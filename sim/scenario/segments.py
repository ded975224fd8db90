"""Segment controllers: joint targets and feed-forward torques for each kind of segment.

The runner calls :meth:`SegmentController.start` when a segment begins and
:meth:`SegmentController.update` every control period with the measured :class:`RobotState`,
and applies, every step, ``tau = tau_ff + kp (q* - q) + kd (qd* - qd)`` clamped to each
actuator's envelope. Controllers are pure numpy; they never touch the engine. The building
blocks live in :mod:`sim.scenario.gaits`; this module holds the registry of segment kinds and the
validated parameters of each (SI units in the names).
"""

from __future__ import annotations

from typing import Any

from sim import JOINT_KINDS
from sim.core.config import Field, validate
from sim.core.errors import InputError
from sim.robot.model import RobotModel
from sim.robot.statics import StanceStatics
from sim.scenario.gaits.base import (
    RobotState,
    SegmentController,
    StandController,
    nominal_feet_b,
    stance_angles,
)
from sim.scenario.gaits.jump import JUMP_SPEC, JumpController
from sim.scenario.gaits.locomotion import (
    BoundController,
    PronkController,
    TrotController,
    WalkController,
)
from sim.scenario.gaits.posture import LieController, SitDownController, StandUpController


def _gain_tables() -> dict[str, Any]:
    return {
        "kp_nm_rad": {k: Field(float, "joint stiffness for this segment; 0 = the scenario's "
                               "[control] value", default=0.0, min=0.0) for k in JOINT_KINDS},
        "kd_nm_s_rad": {k: Field(float, "joint damping for this segment; 0 = the scenario's "
                                 "[control] value", default=0.0, min=0.0) for k in JOINT_KINDS},
    }


def _gait_spec(period_s: float, duty: float, step_h: float, speed: float,
               walk: bool) -> dict[str, Any]:
    spec: dict[str, Any] = {
        "speed_m_s": Field(float, "commanded forward speed (body x, along the ground)",
                           default=speed, min=-2.0, max=2.0),
        "lateral_speed_m_s": Field(float, "commanded lateral speed (body y, left positive)",
                                   default=0.0, min=-1.0, max=1.0),
        "yaw_rate_rad_s": Field(float, "commanded yaw rate (counter-clockwise positive)",
                                default=0.0, min=-2.0, max=2.0),
        "step_period_s": Field(float, "duration of one gait cycle", default=period_s,
                               min=0.1, max=3.0),
        "duty_factor": Field(float, "share of the cycle each foot is on the ground",
                             default=duty, min=0.75 if walk else 0.3, max=0.95),
        "step_height_m": Field(float, "foot lift at mid-swing", default=step_h, min=0.0,
                               max=0.2),
        "stance_height_m": Field(float, "hip height above the ground; 0 = the model's "
                                 "stance.hip_height_m", default=0.0, min=0.0),
        "body_pitch_rad": Field(float, "body pitch relative to the ground, nose down positive",
                                default=0.0, min=-0.3, max=0.3),
        "ramp_s": Field(float, "time to reach the commanded velocity from the start velocity",
                        default=1.0, min=0.0),
        "placement_gain_s": Field(float, "foot placement per unit velocity error (Raibert "
                                  "correction gain)", default=0.03, min=0.0, max=0.5),
        "speed_gain": Field(float, "stance sweep correction per unit velocity error",
                            default=0.5, min=0.0, max=5.0),
        "speed_integral_gain_1_s": Field(float, "integral action on the velocity error "
                                         "(bounded to 0.3 m/s)", default=1.0, min=0.0,
                                         max=20.0),
        "attitude_gain": Field(float, "extra leg-length correction per unit tilt error",
                               default=1.0, min=0.0, max=5.0),
        "attitude_rate_gain_s": Field(float, "tilt-rate damping of the attitude feedback",
                                      default=0.02, min=0.0, max=1.0),
        "yaw_gain_1_s": Field(float, "heading error to yaw-rate correction", default=2.0,
                              min=0.0, max=20.0),
        "height_gain": Field(float, "body height error to leg-length correction",
                             default=1.0, min=0.0, max=5.0),
        "velocity_filter_s": Field(float, "time constant of the body velocity filter",
                                   default=0.1, min=0.0, min_inclusive=False),
        **_gain_tables(),
    }
    if walk:
        spec["body_shift_gain"] = Field(float, "share of the shift of the body toward the "
                                        "centroid of the loaded feet (0: none; see "
                                        "docs/gaits.md before raising it)", default=0.0,
                                        min=0.0, max=2.0)
    return spec


def _posture_spec(move_s: float) -> dict[str, Any]:
    return {
        "move_time_s": Field(float, "time to move between lying and the stance", default=move_s,
                             min=0.0, min_inclusive=False),
        "fold_knee_rad": Field(float, "knee angle of the lying pose (backward-knee sign)",
                               default=-2.7, min=-3.1, max=-0.3),
        "stance_height_m": Field(float, "hip height of the stance; 0 = the model's "
                                 "stance.hip_height_m", default=0.0, min=0.0),
        **_gain_tables(),
    }


SEGMENT_SPECS: dict[str, dict[str, Any]] = {
    "stand": {},
    "stand_up": _posture_spec(1.5),
    "sit_down": _posture_spec(1.5),
    "lie": {"fold_knee_rad": _posture_spec(1.0)["fold_knee_rad"], **_gain_tables()},
    "walk": _gait_spec(0.8, 0.8, 0.05, 0.25, walk=True),
    "trot": _gait_spec(0.3, 0.5, 0.06, 0.6, walk=False),
    "bound": _gait_spec(0.2, 0.6, 0.05, 0.5, walk=False),
    "pronk": _gait_spec(0.2, 0.8, 0.04, 0.3, walk=False),
    "jump": JUMP_SPEC,
}

CONTROLLERS: dict[str, type[SegmentController]] = {
    "stand": StandController,
    "stand_up": StandUpController,
    "sit_down": SitDownController,
    "lie": LieController,
    "walk": WalkController,
    "trot": TrotController,
    "bound": BoundController,
    "pronk": PronkController,
    "jump": JumpController,
}


def validate_segment(kind: str, table: dict[str, Any], file: str, prefix: str) -> dict[str, Any]:
    """Validate the kind-specific keys of one ``[[segment]]``."""
    if kind not in SEGMENT_SPECS:
        raise InputError(file, prefix + "kind",
                         "a segment kind this version can simulate: " + ", ".join(SEGMENT_SPECS),
                         kind)
    return validate(table, SEGMENT_SPECS[kind], file, prefix)


def make_controller(seg: dict[str, Any], model: RobotModel,
                    statics: StanceStatics) -> SegmentController:
    return CONTROLLERS[seg["kind"]](seg, model, statics)


__all__ = ["CONTROLLERS", "SEGMENT_SPECS", "Field", "RobotState", "SegmentController",
           "make_controller", "nominal_feet_b", "stance_angles", "validate_segment"]

