"""Segment controllers: joint targets and feed-forward torques for each kind of segment.

The runner calls :meth:`SegmentController.update` every control period with the measured
:class:`RobotState` and applies, every step, ``tau = tau_ff + kp (q* - q) + kd (qd* - qd)``
clamped to each actuator's envelope. Controllers are pure numpy; they never touch the engine.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from sim.config import Field, validate
from sim.errors import InputError
from sim.kinematics import LegKinematics
from sim.model import RobotModel
from sim.statics import StanceStatics


@dataclass
class RobotState:
    """Measured state at a control update (world frame = ground frame, z normal to ground)."""

    t_s: float
    q: np.ndarray  # [4, 3]
    qd: np.ndarray  # [4, 3]
    base_position_m: np.ndarray  # [3] base frame origin
    base_rotation: np.ndarray  # [3, 3] world from base
    base_velocity_m_s: np.ndarray  # [3]
    base_angular_velocity_rad_s: np.ndarray  # [3]
    gravity_w: np.ndarray  # [3]
    contact: np.ndarray  # [4] bool


def nominal_feet_b(model: RobotModel) -> np.ndarray:
    """Foot-centre positions ``[4, 3]`` in the base frame for the nominal stance (level body)."""
    kin = LegKinematics.from_model(model)
    st = model.data["stance"]
    side = kin.side
    feet = kin.hip_m.copy()
    feet[:, 0] += st["foot_x_m"]
    feet[:, 1] += side * (kin.offset_m + st["foot_y_m"])
    feet[:, 2] += -(st["hip_height_m"] - kin.foot_radius_m)
    return feet


def stance_angles(model: RobotModel) -> np.ndarray:
    """Joint angles ``[4, 3]`` of the nominal stance."""
    return LegKinematics.from_model(model).inverse(nominal_feet_b(model))


class SegmentController:
    """Base class. Subclasses set ``needs_standing`` and implement :meth:`update`."""

    needs_standing = True
    needs_contacts = False  # True: the runner measures foot contacts at every update
    min_update_period_s = 0.0  # a controller with slow targets may ask for fewer updates

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        self.seg = seg
        self.model = model
        self.statics = statics
        self.kin = statics.kin

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Return ``(q_des[4,3], qd_des[4,3], tau_ff[4,3])``."""
        raise NotImplementedError

    def planned_stance(self) -> np.ndarray:
        """Feet the plan expects on the ground now ``[4]`` (bool)."""
        return np.ones(4, bool)


class StandController(SegmentController):
    """Hold the nominal stance: fixed joint targets plus static feed-forward over four feet."""

    min_update_period_s = 0.02

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        super().__init__(seg, model, statics)
        self.q_des = stance_angles(model)
        self._tau = np.zeros((4, 3))
        self._t_ff = -np.inf

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        # the stance changes slowly: refresh the static feed-forward at 10 Hz
        if t_seg - self._t_ff >= 0.1 - 1e-12:
            g_b = state.base_rotation.T @ state.gravity_w
            self._tau, _ = self.statics.torques(state.q, g_b)
            self._t_ff = t_seg
        return self.q_des, np.zeros((4, 3)), self._tau


SEGMENT_SPECS: dict[str, dict[str, Any]] = {
    "stand": {},
}

CONTROLLERS: dict[str, type[SegmentController]] = {
    "stand": StandController,
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


__all__ = ["Field", "RobotState", "SegmentController", "make_controller", "validate_segment"]

# segment kinds defined in their own modules register themselves on import
import sim.jump  # noqa: E402,F401  (vertical jump, sim/jump.py)
