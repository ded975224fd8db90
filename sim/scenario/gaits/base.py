"""Measured robot state, the segment-controller base class and the nominal stance."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from sim.robot.kinematics import LegKinematics
from sim.robot.model import RobotModel
from sim.robot.statics import StanceStatics


class RobotState:
    """Measured state at a control update (world frame = ground frame, z normal to ground).

    Built from the plain numbers the engine returns: ``q``/``qd`` flat (12, leg-major),
    ``base_position_m`` (3, base frame origin), ``base_rotation`` (3 rows of 3, world from
    base), velocities (3 each), ``gravity_w`` (3) and ``contact`` (4 flags). Those lists are
    kept as ``*_list`` attributes for controllers that work on floats; the array attributes
    (``q[4, 3]``, ``base_rotation[3, 3]``, ...) are made on first use, so a control update
    pays for numpy only where a controller uses it.
    """

    __slots__ = (
        "_arrays",
        "base_angular_velocity_list",
        "base_position_list",
        "base_rotation_list",
        "base_velocity_list",
        "contact_list",
        "gravity_list",
        "q_list",
        "qd_list",
        "t_s",
    )

    def __init__(self, t_s: float, q: Any, qd: Any, base_position_m: Any, base_rotation: Any,
                 base_velocity_m_s: Any, base_angular_velocity_rad_s: Any, gravity_w: Any,
                 contact: Any):
        self.t_s = float(t_s)
        self.q_list = _floats(q)
        self.qd_list = _floats(qd)
        self.base_position_list = _floats(base_position_m)
        self.base_rotation_list = [_floats(row) for row in base_rotation]
        self.base_velocity_list = _floats(base_velocity_m_s)
        self.base_angular_velocity_list = _floats(base_angular_velocity_rad_s)
        self.gravity_list = _floats(gravity_w)
        self.contact_list = [bool(c) for c in (contact.tolist() if isinstance(contact, np.ndarray)
                                               else contact)]
        self._arrays: dict[str, np.ndarray] = {}

    def _array(self, key: str, make: Any) -> np.ndarray:
        a = self._arrays.get(key)
        if a is None:
            a = self._arrays[key] = make()
        return a

    @property
    def q(self) -> np.ndarray:  # [4, 3]
        return self._array("q", lambda: np.array(self.q_list).reshape(4, 3))

    @property
    def qd(self) -> np.ndarray:  # [4, 3]
        return self._array("qd", lambda: np.array(self.qd_list).reshape(4, 3))

    @property
    def base_position_m(self) -> np.ndarray:  # [3] base frame origin
        return self._array("p", lambda: np.array(self.base_position_list))

    @property
    def base_rotation(self) -> np.ndarray:  # [3, 3] world from base
        return self._array("R", lambda: np.array(self.base_rotation_list))

    @property
    def base_velocity_m_s(self) -> np.ndarray:  # [3]
        return self._array("v", lambda: np.array(self.base_velocity_list))

    @property
    def base_angular_velocity_rad_s(self) -> np.ndarray:  # [3]
        return self._array("w", lambda: np.array(self.base_angular_velocity_list))

    @property
    def gravity_w(self) -> np.ndarray:  # [3]
        return self._array("g", lambda: np.array(self.gravity_list))

    @property
    def contact(self) -> np.ndarray:  # [4] bool
        return self._array("c", lambda: np.array(self.contact_list, bool))


def _floats(x: Any) -> list[float]:
    """Flat list of floats from a list, tuple or array of any shape."""
    if type(x) is list and x and type(x[0]) is float:
        return x  # already flat floats (the runner's case): no copy
    if isinstance(x, np.ndarray):
        return [float(v) for v in x.reshape(-1).tolist()]
    if x and isinstance(x[0], list | tuple | np.ndarray):
        return [float(v) for row in x for v in row]
    return [float(v) for v in x]


def nominal_feet_b(model: RobotModel, hip_height_m: float | None = None) -> np.ndarray:
    """Foot-centre positions ``[4, 3]`` in the base frame for the nominal stance (level body).

    ``hip_height_m`` replaces the model's stance height (hip axes above flat ground).
    """
    kin = LegKinematics.from_model(model)
    st = model.data["stance"]
    h = st["hip_height_m"] if hip_height_m is None else hip_height_m
    feet = kin.hip_m.copy()
    feet[:, 0] += st["foot_x_m"]
    feet[:, 1] += kin.side * (kin.offset_m + st["foot_y_m"])
    feet[:, 2] += -(h - kin.foot_radius_m)
    return feet


def stance_angles(model: RobotModel) -> np.ndarray:
    """Joint angles ``[4, 3]`` of the nominal stance."""
    return LegKinematics.from_model(model).inverse(nominal_feet_b(model))


def roll_pitch_yaw(R: np.ndarray) -> tuple[float, float, float]:
    """Z-Y-X Euler angles (yaw, then pitch, then roll) of the rotation ``R[3, 3]`` (rad)."""
    pitch = math.asin(max(-1.0, min(1.0, -float(R[2, 0]))))
    roll = math.atan2(float(R[2, 1]), float(R[2, 2]))
    yaw = math.atan2(float(R[1, 0]), float(R[0, 0]))
    return roll, pitch, yaw


def rot_rp(roll: float, pitch: float) -> np.ndarray:
    """``Ry(pitch) Rx(roll)``: the tilt part of a Z-Y-X rotation, ``[3, 3]``."""
    cr, sr, cp, sp = math.cos(roll), math.sin(roll), math.cos(pitch), math.sin(pitch)
    return np.array([[cp, sp * sr, sp * cr], [0.0, cr, -sr], [-sp, cp * sr, cp * cr]])


def smoothstep(s: float) -> float:
    """``3 s^2 - 2 s^3`` clipped to [0, 1]: zero slope at both ends."""
    s = min(1.0, max(0.0, s))
    return s * s * (3.0 - 2.0 * s)


class SegmentController:
    """Base class. Subclasses set ``needs_standing`` and implement :meth:`update`.

    The runner calls :meth:`start` once with the measured state when the segment begins (so
    chained segments continue from where the last one left the robot), then :meth:`update`
    every control period. :meth:`gains` gives the joint gains of the segment.
    """

    needs_standing = True
    needs_contacts = False  # True: the runner measures foot contacts at every update
    min_update_period_s = 0.0  # a controller with slow targets may ask for fewer updates

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        self.seg = seg
        self.model = model
        self.statics = statics
        self.kin = statics.kin

    def start(self, state: RobotState) -> None:
        """Called once at the start of the segment with the measured state."""

    def update(self, t_seg: float, state: RobotState) -> tuple[Any, Any, Any]:
        """Return ``(q_des, qd_des, tau_ff)``: each a ``[4, 3]`` array or a flat list of 12
        floats (leg-major, the joint-name order)."""
        raise NotImplementedError

    def planned_stance(self) -> Any:
        """Feet the plan expects on the ground now: 4 flags (array or list of bools)."""
        return [True, True, True, True]

    def commanded_velocity(self) -> tuple[float, float, float]:
        """Commanded forward speed (m/s), lateral speed (m/s) and yaw rate (rad/s) now."""
        return 0.0, 0.0, 0.0

    def gains(self, kp: list[float], kd: list[float]) -> tuple[list[float], list[float]]:
        """Per-joint gains ``(kp[12], kd[12])`` for this segment, in joint-name order.

        ``kp``/``kd`` are the scenario's ``[control]`` gains; a segment's ``kp_nm_rad`` /
        ``kd_nm_s_rad`` tables replace them per joint kind where they are above zero.
        """
        from sim import JOINT_NAMES

        out_p, out_d = list(kp), list(kd)
        tp = self.seg.get("kp_nm_rad", {})
        td = self.seg.get("kd_nm_s_rad", {})
        for j, name in enumerate(JOINT_NAMES):
            kind = name.split("_")[1]
            if tp.get(kind, 0.0) > 0:
                out_p[j] = float(tp[kind])
            if td.get(kind, 0.0) > 0:
                out_d[j] = float(td[kind])
        return out_p, out_d


class StandController(SegmentController):
    """Hold the nominal stance: fixed joint targets plus static feed-forward over four feet."""

    min_update_period_s = 0.02

    def __init__(self, seg: dict[str, Any], model: RobotModel, statics: StanceStatics):
        super().__init__(seg, model, statics)
        self.q_des = stance_angles(model)
        self._tau = np.zeros((4, 3))
        self._t_ff = -np.inf
        self._basis: list[float] | None = None  # joint angles and body gravity of self._tau
        self._zero = np.zeros((4, 3))

    # the feed-forward is recomputed when an angle moved more than this (rad) or the gravity
    # direction in the body turned more than this (rad) since it was last computed. Below
    # that it changes by at most 0.6 % of the largest holding torque of the demo robot
    # (0.04 N m; 200 random perturbations, measured), which the joint PD takes up.
    refresh_tolerance = 1e-3

    def update(self, t_seg: float, state: RobotState) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        # the stance changes slowly: refresh the static feed-forward at most at 10 Hz, and
        # only when the posture or the gravity direction has changed
        if t_seg - self._t_ff >= 0.1 - 1e-12:
            R, gw = state.base_rotation_list, state.gravity_list
            gn = math.sqrt(gw[0] ** 2 + gw[1] ** 2 + gw[2] ** 2)
            g_dir = [(R[0][i] * gw[0] + R[1][i] * gw[1] + R[2][i] * gw[2]) / gn for i in range(3)]
            basis = state.q_list + g_dir
            old = self._basis
            if old is None or max(abs(a - b) for a, b in zip(basis, old, strict=True)) > (
                    self.refresh_tolerance):
                g_b = state.base_rotation.T @ state.gravity_w
                self._tau, _ = self.statics.torques(state.q, g_b)
                self._basis = basis
            self._t_ff = t_seg
        return self.q_des, self._zero, self._tau
