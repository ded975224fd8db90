"""Drivetrain dynamics inside the engine: motor rotors, reducer friction and efficiency.

This module is handed the engine module (``pb``) by the runner, so the runner stays the only
module that imports pybullet. What it adds to a rigid joint driven by a torque ``tau`` (the
motor torque referred to the output, ``N tau_m``; the runner's ``torque_nm``):

Rotor inertia (scenario key ``drive.rotor_inertia``)
    ``"exact"``: each joint gets a rotor link (see :mod:`sim.robot.urdf`) coupled to it by a gear
    constraint ``qd_rotor - N qd_joint = 0`` (pybullet ``JOINT_GEAR`` with ``gearRatio = -N``).
    The joint then has the effective inertia ``J + N^2 J_r`` plus the exact rotor coupling
    with the parent's rotation (Featherstone, *Rigid Body Dynamics Algorithms*, 2008, on
    geared motors; from memory). The torque the gear passes to the output is
    ``tau - N lambda`` where ``lambda`` is the gear constraint's torque on the rotor (the
    rotor's inertial torque).
    ``"approximate"``: N^2 J_r is added to the child link's inertia about the joint axis (no
    extra links, no constraints; see :mod:`sim.robot.urdf` for what this gets wrong).
    ``"off"``: the rigid joint model.

Reducer friction (from the reducer part files, :mod:`sim.parts.drivetrain`; at the output)
    Coulomb ``tau_c``: a velocity motor with target speed 0 and maximum torque ``tau_c``. It
    is solved implicitly with the contacts, so it gives true stiction: a joint loaded below
    ``tau_c`` stays at rest, above it slides with a friction torque of exactly ``tau_c``.
    Viscous ``c``: the engine's joint damping, ``-c qd`` applied explicitly each step.
    Efficiency: the power-flow model (e.g. Shigley's Mechanical Engineering Design, gear
    efficiency; from memory). Driving (``tau qd > 0``): the output gets ``eta_f tau``.
    Back-driven (``tau qd < 0``): the load must supply ``tau / eta_b``, so the output sees
    ``tau / eta_b``. Both are a friction opposing the motion of magnitude
    ``(1 - eta_f) |tau|`` respectively ``(1 / eta_b - 1) |tau|``, added to ``tau_c`` in the
    same velocity motor, refreshed every step from the torque about to be applied. Within
    ``efficiency_band_rad_s`` of rest the two magnitudes are blended linearly in speed so the
    bound does not jump when the joint reverses.

Gearbox output torque (recorded as ``/joints/<joint>/gearbox_torque_nm`` whenever rotors or
losses are simulated) is the torque the reducer output applies to the joint::

    tau_gb = tau - N lambda + tau_fric - c qd        (exact rotors)
    tau_gb = tau - N^2 J_r qdd + tau_fric - c qd     (approximate rotors; qdd over the step)
    tau_gb = tau + tau_fric - c qd                   (no rotors)

with ``tau_fric`` the friction motor's torque on the joint (negative when qd > 0).

Backlash and an elastic mesh (reducer part keys ``backlash_rad``, ``mesh_stiffness_nm_rad``,
``mesh_damping_nm_s_rad``; the backlash is simulated when the part gives a mesh stiffness)
    A joint whose mesh stiffness ``k_m`` is > 0 gets a motor side of its own: the rotor angle
    ``q_m`` and speed ``w_m`` referred to the output (rotor angle / N, relative to the parent
    link, the same zero as the joint angle), inertia ``J_m = N^2 J_r``, driven by the
    controller's torque ``tau`` and held back by the mesh torque ``T``::

        J_m dw_m/dt = tau - T           (integrated here, semi-implicit Euler like the engine)
        d = q_m - q,  dd = w_m - qd,  h = b / 2
        T = k_m (d - h) + c_m dd   if d >  h,  clipped to >= 0
        T = k_m (d + h) + c_m dd   if d < -h,  clipped to <= 0
        T = 0                      inside the gap |d| <= h

    the classic dead-zone backlash model (Nordin & Gutman, "Controlling mechanical systems
    with backlash - a survey", Automatica 38, 2002; from memory), with the clip a tooth pair
    that can push but never pull (without it the damping term pulls the flanks together while
    they separate). The joint receives ``T``, not ``tau``, through TORQUE_CONTROL
    (:meth:`Drivetrain.transmit`, called every step before the step); both sides use the
    state at the start of the step, so the pair is one symplectic Euler step of the two-mass
    system and the exchanged momentum balances exactly. ``b = 0`` with ``k_m > 0`` is a
    compliant mesh without lash. The motor side starts mid-gap, moving with the joint.

    Such a joint has no rotor in the engine (no rotor link, no added inertia): its rotor is
    the motor side, whatever ``drive.rotor_inertia`` gives the other joints; the scenario must
    still choose "approximate" or "exact" (not "off"), so that the recorded motor torque
    includes rotor inertia on every joint or on none (the motor check relies on that). Left
    out: the coupling of the rotor with the parent's rotation (order 1/N, the error of
    "approximate"), friction on the motor side. The reducer friction stays at the output;
    its efficiency loss follows ``T`` (the torque through the teeth), so inside the gap only
    the Coulomb friction remains.

    Stability of the explicit mesh: for the two-mass oscillator of reduced inertia ``J``
    (``1/J = 1/J_m + 1/J_out``), symplectic Euler with step ``dt`` is stable when
    ``(k_m dt^2 + 2 c_m dt) / J < 4`` (:func:`mesh_step_number`). :func:`check_mesh` asks
    for at most ``MESH_STEP_LIMIT`` = 2, half of that, with ``J_out`` the lightest joint side
    found over the joint ranges (:func:`lightest_output_inertia`; contacts, locked joints and
    rotor inertia only make it heavier). Stable is not accurate: check results in dt
    (docs/dynamics.md has measured cases).

    With the controller on the output angle (as here: it reads the joint), the loop through
    an elastic mesh is stable only with enough mesh damping. Routh-Hurwitz on the two-mass
    loop with ``tau = -kp q - kd qd`` gives, for ``c_m`` small against ``kd``, about
    ``c_m > kd J_m J_out / (J_m + J_out)^2`` (the exact bound is tested); below it the mesh
    rings up.

Gearbox output torque with a mesh: ``tau_gb = T + tau_fric - c qd`` (the reducer output on
the joint); the recorded ``torque_nm`` stays the motor torque ``tau``, and
``/joints/<joint>/motor_angle_rad`` holds ``q_m`` at the sample times.

Not modelled: the motor-side speed in the voltage limit (the envelope uses the joint speed),
torque ripple, friction that depends on temperature or speed beyond ``c qd``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from sim import JOINT_NAMES
from sim.core.errors import InputError
from sim.robot.model import RobotModel
from sim.robot.urdf import ROTORS, rotor_joint_name

_AXIS = {"abad": [1.0, 0.0, 0.0], "hip": [0.0, 1.0, 0.0], "knee": [0.0, 1.0, 0.0]}
GEAR_MAX_FORCE_NM = 1e6  # effectively rigid gear teeth (limit of the constraint impulse / dt)


@dataclass(frozen=True)
class DriveOptions:
    """Scenario ``[drive]`` table: which drivetrain effects the engine simulates."""

    rotor_inertia: str = "exact"
    losses: bool = True
    efficiency_band_rad_s: float = 0.01

    def __post_init__(self) -> None:
        if self.rotor_inertia not in ROTORS:
            raise ValueError(f"rotor_inertia must be one of {ROTORS}")

    @classmethod
    def from_table(cls, table: dict[str, Any] | None) -> DriveOptions:
        t = table or {}
        return cls(t.get("rotor_inertia", "exact"), bool(t.get("losses", True)),
                   float(t.get("efficiency_band_rad_s", 0.01)))


# ---- elastic reducer mesh with backlash (module docstring) ----------------------------------

MESH_STEP_LIMIT = 2.0  # (k dt^2 + 2 c dt) / J allowed; the explicit step is stable below 4


def mesh_joints(model: RobotModel) -> list[str]:
    """Joints whose reducer mesh is simulated as an elastic contact with backlash."""
    return [j for j in JOINT_NAMES if model.actuators[j].compliant_mesh]


def mesh_step_number(stiffness_nm_rad: float, damping_nm_s_rad: float, inertia_kg_m2: float,
                     dt: float) -> float:
    """``(k dt^2 + 2 c dt) / J``: symplectic Euler on ``J x'' = -k x - c x'`` is stable below 4.

    One step maps ``(x, v)`` to ``v' = v - dt (k x + c v) / J``, ``x' = x + dt v'``; its matrix
    has trace ``2 - (k dt^2 + c dt) / J`` and determinant ``1 - c dt / J``, and the Jury
    conditions |det| < 1, |trace| < 1 + det give ``(k dt^2 + 2 c dt) / J < 4``.
    """
    return (stiffness_nm_rad * dt * dt + 2.0 * damping_nm_s_rad * dt) / inertia_kg_m2


def lightest_output_inertia(model: RobotModel, joints: Sequence[str]) -> dict[str, float]:
    """Smallest joint-side inertia (kg m^2) of each of ``joints`` over a grid of poses.

    ``1 / (H^-1)_jj`` of the floating-base mass matrix without rotor inertia
    (:func:`sim.drive.backdrive.mass_matrix`; all other joints free, no contacts): the inertia a
    torque on joint j alone meets. The grid covers each joint's range (abad at both ends and
    the middle, hip and knee at five points), every leg in the same pose, base level.
    """
    from sim.drive.backdrive import mass_matrix

    fr_a = (0.0, 0.5, 1.0)
    fr_hk = (0.0, 0.25, 0.5, 0.75, 1.0)
    ranges = [model.joint_range(j) for j in JOINT_NAMES]
    idx = [JOINT_NAMES.index(j) for j in joints]
    low = {j: math.inf for j in joints}
    for fa in fr_a:
        for fh in fr_hk:
            for fk in fr_hk:
                fr = (fa, fh, fk) * 4
                q = np.array([lo + f * (hi - lo) for (lo, hi), f in zip(ranges, fr, strict=True)])
                H, _ = mass_matrix(model, q.reshape(4, 3), armature=False)
                hinv = np.linalg.inv(H)
                for j, i in zip(joints, idx, strict=True):
                    low[j] = min(low[j], 1.0 / float(hinv[6 + i, 6 + i]))
    return low


def check_mesh(model: RobotModel, options: DriveOptions, dt: float, scenario_file: str) -> None:
    """Refuse a mesh the explicit step cannot integrate, or one without rotor inertia.

    Raises :class:`~sim.core.errors.InputError` naming the model key to change (or the scenario's
    ``drive.rotor_inertia``).
    """
    joints = mesh_joints(model)
    if not joints:
        return
    if options.rotor_inertia == "off":
        raise InputError(scenario_file, "drive.rotor_inertia",
                         "'approximate' or 'exact' when the model's reducer mesh is elastic "
                         f"(mesh_stiffness_nm_rad > 0 on {', '.join(joints)}: its motor side "
                         "carries the rotor inertia)", "off")
    j_out = lightest_output_inertia(model, joints)
    for j in joints:
        a = model.actuators[j]
        j_m = a.reflected_inertia_kg_m2
        j_red = 1.0 / (1.0 / j_m + 1.0 / j_out[j])
        x = mesh_step_number(a.mesh_stiffness_nm_rad, a.mesh_damping_nm_s_rad, j_red, dt)
        if x <= MESH_STEP_LIMIT:
            continue
        k, c = a.mesh_stiffness_nm_rad, a.mesh_damping_nm_s_rad
        k_max = (MESH_STEP_LIMIT * j_red - 2.0 * c * dt) / (dt * dt)
        # largest dt with (k dt^2 + 2 c dt) / J <= limit
        dt_max = (-c + math.sqrt(c * c + k * MESH_STEP_LIMIT * j_red)) / k
        if k_max > 0:
            key, got, fix = "mesh_stiffness_nm_rad", k, f"mesh_stiffness_nm_rad <= {k_max:.4g} N m/rad"
        else:  # the damping alone is too much for this step
            c_max = MESH_STEP_LIMIT * j_red / (2.0 * dt)
            key, got, fix = "mesh_damping_nm_s_rad", c, f"mesh_damping_nm_s_rad < {c_max:.4g} N m s/rad"
        part = (model.drivetrain.part(j, "reducer").source if model.drivetrain is not None
                else model.file)
        raise InputError(
            part, key,
            f"a mesh the time step can integrate: for {j}, (k dt^2 + 2 c dt) / J = {x:.3g} at "
            f"time_step_s = {dt:g} s ({scenario_file}), allowed <= {MESH_STEP_LIMIT:g}, with J = "
            f"{j_red:.3g} kg m^2 from the motor side N^2 J_r = {j_m:.3g} and the lightest joint "
            f"side {j_out[j]:.3g}; use {fix} or time_step_s <= {dt_max:.3g} s "
            "(docs/dynamics.md)", got)


def loss_torque_nm(tau_nm: float, speed_rad_s: float, eta_forward: float, eta_back: float,
                   band_rad_s: float) -> float:
    """Magnitude (N m, >= 0) of the friction that models the reducer efficiency.

    Driving (tau and speed of one sign): (1 - eta_f) |tau|, so the output gets eta_f tau.
    Back-driven beyond ``band_rad_s``: (1/eta_b - 1) |tau|, so the output sees tau / eta_b.
    Linear blend in speed between the two inside the band.
    """
    a = abs(tau_nm)
    fwd = (1.0 - eta_forward) * a
    back = (1.0 / eta_back - 1.0) * a
    if tau_nm == 0.0:
        return 0.0
    x = -speed_rad_s if tau_nm > 0 else speed_rad_s  # > 0 when back-driven
    if x <= 0.0:
        return fwd
    if x >= band_rad_s:
        return back
    s = x / band_rad_s
    return (1.0 - s) * fwd + s * back


def attach_rotor(pb: Any, cid: int, robot: int, rotor_link: int, joint_link: int,
                 axis: Sequence[float], ratio: float) -> int:
    """Couple ``rotor_link``'s joint to ``joint_link``'s joint: qd_rotor = ratio qd_joint.

    pybullet's gear constraint enforces ``qd_A + g qd_B = 0`` (A = rotor, B = joint), so
    ``g = -ratio``. Returns the constraint id; also zeroes the rotor's default motor.
    """
    cons = pb.createConstraint(robot, rotor_link, robot, joint_link, pb.JOINT_GEAR, list(axis),
                               [0, 0, 0], [0, 0, 0], physicsClientId=cid)
    pb.changeConstraint(cons, gearRatio=-ratio, maxForce=GEAR_MAX_FORCE_NM, erp=0.0,
                        physicsClientId=cid)
    pb.setJointMotorControl2(robot, rotor_link, pb.VELOCITY_CONTROL, force=0.0,
                             physicsClientId=cid)
    return int(cons)


class Drivetrain:
    """Drivetrain effects attached to one robot in one engine world.

    ``joint_indices``: the engine joint index of each entry of :data:`sim.JOINT_NAMES`.
    When :attr:`mesh` is not empty, call :meth:`transmit` every step with the motor torques
    and the joint state; it returns the torques to apply at the joints. Call
    :meth:`before_step` with the torques about to be applied (only needed when
    :attr:`per_step`), :meth:`sample` after a step whose state is recorded and :meth:`flush`
    with the record writer whenever the runner flushes its series.
    """

    def __init__(self, pb: Any, cid: int, robot: int, model: RobotModel,
                 joint_indices: Sequence[int], options: DriveOptions, dt: float):
        self.pb, self.cid, self.robot = pb, cid, robot
        self.options = options
        self.dt = dt
        self.joints = list(joint_indices)
        acts = [model.actuators[j] for j in JOINT_NAMES]
        self.ratio = [a.gear_ratio for a in acts]
        self.armature = [a.reflected_inertia_kg_m2 for a in acts]
        losses = options.losses
        self.coulomb = [a.friction_coulomb_nm if losses else 0.0 for a in acts]
        self.viscous = [a.friction_viscous_nm_s_rad if losses else 0.0 for a in acts]
        self.eta_f = [a.efficiency_forward if losses else 1.0 for a in acts]
        self.eta_b = [a.efficiency_back if losses else 1.0 for a in acts]
        self.per_step = any(e < 1.0 for e in self.eta_f + self.eta_b)
        self.has_friction = self.per_step or any(c > 0 for c in self.coulomb)
        # elastic mesh with backlash: indices into JOINT_NAMES and the motor-side state
        meshed = mesh_joints(model)
        self.mesh = [JOINT_NAMES.index(j) for j in meshed]
        self.mesh_names = meshed
        self.half_gap = [acts[j].backlash_rad / 2.0 for j in self.mesh]
        self.k_mesh = [acts[j].mesh_stiffness_nm_rad for j in self.mesh]
        self.c_mesh = [acts[j].mesh_damping_nm_s_rad for j in self.mesh]
        self.j_motor = [acts[j].reflected_inertia_kg_m2 for j in self.mesh]
        self._rigid = [j for j in range(12) if j not in self.mesh]  # rotor in the engine
        self.motor_angle: list[float] | None = None  # q_m (rad, at the output), set lazily
        self.motor_speed: list[float] = [0.0] * len(self.mesh)
        self._qm_start: list[float] = []
        self._mrows: list[list[float]] = []
        self.constraints: list[int] = []  # per joint; -1 where the joint has no gear constraint
        self.rotor_links: list[int] = []  # per joint; -1 where the joint has no rotor link
        c = cid
        if options.rotor_inertia == "exact":
            index = {pb.getJointInfo(robot, j, physicsClientId=c)[1].decode(): j
                     for j in range(pb.getNumJoints(robot, physicsClientId=c))}
            for name, jl, n in zip(JOINT_NAMES, self.joints, self.ratio, strict=True):
                if name in meshed:  # its rotor is the motor side of the mesh
                    self.rotor_links.append(-1)
                    self.constraints.append(-1)
                    continue
                rl = index[rotor_joint_name(name)]
                self.rotor_links.append(rl)
                self.constraints.append(attach_rotor(pb, c, robot, rl, jl,
                                                     _AXIS[name.split("_")[1]], n))
        for jl, cv in zip(self.joints, self.viscous, strict=True):
            if cv > 0:
                pb.changeDynamics(robot, jl, jointDamping=cv, physicsClientId=c)
        if self.has_friction:
            pb.setJointMotorControlArray(robot, self.joints, pb.VELOCITY_CONTROL,
                                         targetVelocities=[0.0] * 12, forces=self.coulomb,
                                         physicsClientId=c)
        self.records = options.rotor_inertia != "off" or self.has_friction or any(
            v > 0 for v in self.viscous) or bool(self.mesh)
        self._rows: list[list[float]] = []
        self._peak = [0.0] * 12

    # per step -----------------------------------------------------------------------------
    def reset_motor_side(self, q: Sequence[float], qd: Sequence[float] | None = None,
                         offset_rad: Sequence[float] | None = None) -> None:
        """Put each meshed joint's motor side at ``q + offset`` (default: mid-gap, no
        deflection) moving with the joint (``qd``, default at rest); ``offset`` per entry of
        :attr:`mesh`."""
        off = offset_rad or [0.0] * len(self.mesh)
        self.motor_angle = [q[j] + o for j, o in zip(self.mesh, off, strict=True)]
        self.motor_speed = [0.0 if qd is None else qd[j] for j in self.mesh]

    def transmit(self, tau: Sequence[float], q: Sequence[float],
                 qd: Sequence[float]) -> list[float]:
        """Torques to apply at the joints this step (N m): ``tau``, with the mesh torque on
        every meshed joint; advances the motor sides over the step (module docstring).

        ``q``, ``qd``: joint state at the start of the step. The first call puts the motor
        sides mid-gap, moving with the joints (:meth:`reset_motor_side`), unless that was
        called.
        """
        if self.motor_angle is None:
            self.reset_motor_side(q, qd)
        qm = self.motor_angle
        assert qm is not None
        wm = self.motor_speed
        self._qm_start = qm[:]
        out = list(tau)
        dt = self.dt
        for i, j in enumerate(self.mesh):
            d = qm[i] - q[j]
            h = self.half_gap[i]
            if d > h:
                t = self.k_mesh[i] * (d - h) + self.c_mesh[i] * (wm[i] - qd[j])
                if t < 0.0:
                    t = 0.0
            elif d < -h:
                t = self.k_mesh[i] * (d + h) + self.c_mesh[i] * (wm[i] - qd[j])
                if t > 0.0:
                    t = 0.0
            else:
                t = 0.0
            out[j] = t
            wm[i] += dt * (tau[j] - t) / self.j_motor[i]
            qm[i] += dt * wm[i]
        return out

    def friction_bounds(self, tau: Sequence[float], qd: Sequence[float]) -> list[float]:
        """Friction torque bound per joint (N m): Coulomb plus the efficiency loss."""
        band = self.options.efficiency_band_rad_s
        return [self.coulomb[j] + loss_torque_nm(tau[j], qd[j], self.eta_f[j], self.eta_b[j],
                                                 band) for j in range(12)]

    def before_step(self, tau: Sequence[float], qd: Sequence[float]) -> None:
        """Refresh the friction motors for the torques ``tau`` about to be applied."""
        self.pb.setJointMotorControlArray(self.robot, self.joints, self.pb.VELOCITY_CONTROL,
                                          targetVelocities=[0.0] * 12,
                                          forces=self.friction_bounds(tau, qd),
                                          physicsClientId=self.cid)

    def gearbox_torque(self, tau: Sequence[float], qd_before: Sequence[float]) -> list[float]:
        """Reducer output torque on each joint (N m) over the step just taken (module doc)."""
        pb, c, r = self.pb, self.cid, self.robot
        st = pb.getJointStates(r, self.joints, physicsClientId=c)
        out = [tau[j] + st[j][3] - self.viscous[j] * qd_before[j] for j in range(12)]
        mode = self.options.rotor_inertia
        if mode == "exact":
            for j, cons in enumerate(self.constraints):
                if cons >= 0:
                    out[j] -= self.ratio[j] * pb.getConstraintState(cons, physicsClientId=c)[0]
        elif mode == "approximate":
            for j in self._rigid:
                out[j] -= self.armature[j] * (st[j][1] - qd_before[j]) / self.dt
        return out

    def sample(self, tau: Sequence[float], qd_before: Sequence[float]) -> None:
        """Keep the gearbox torques of the step just taken for the next :meth:`flush`."""
        self.keep(self.gearbox_torque(tau, qd_before))

    def keep(self, row: list[float]) -> None:
        """Keep already computed gearbox torques ``row`` (12) for the next :meth:`flush`,
        and the motor-side angles at the start of the step (meshed joints)."""
        self._rows.append(row)
        if self._qm_start:
            self._mrows.append(self._qm_start)
        self._peak = [max(p, abs(x)) for p, x in zip(self._peak, row, strict=True)]

    def peaks(self) -> dict[str, float]:
        """Largest |gearbox torque| per joint over the samples so far (N m)."""
        return dict(zip(JOINT_NAMES, self._peak, strict=True))

    def flush(self, writer: Any) -> None:
        """Append the kept samples as ``joints/<joint>/gearbox_torque_nm`` to ``writer``, and
        ``joints/<joint>/motor_angle_rad`` of the meshed joints."""
        if not self._rows:
            return
        arr = np.asarray(self._rows, float)
        for k, name in enumerate(JOINT_NAMES):
            writer.append(f"joints/{name}/gearbox_torque_nm", arr[:, k])
        self._rows = []
        if self._mrows:
            m = np.asarray(self._mrows, float)
            for k, name in enumerate(self.mesh_names):
                writer.append(f"joints/{name}/motor_angle_rad", m[:, k])
            self._mrows = []
