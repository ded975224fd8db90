"""Drivetrain dynamics inside the engine: motor rotors, reducer friction and efficiency.

This module is handed the engine module (``pb``) by the runner, so the runner stays the only
module that imports pybullet. What it adds to a rigid joint driven by a torque ``tau`` (the
motor torque referred to the output, ``N tau_m``; the runner's ``torque_nm``):

Rotor inertia (scenario key ``drive.rotor_inertia``)
    ``"exact"``: each joint gets a rotor link (see :mod:`sim.urdf`) coupled to it by a gear
    constraint ``qd_rotor - N qd_joint = 0`` (pybullet ``JOINT_GEAR`` with ``gearRatio = -N``).
    The joint then has the effective inertia ``J + N^2 J_r`` plus the exact rotor coupling
    with the parent's rotation (Featherstone, *Rigid Body Dynamics Algorithms*, 2008, on
    geared motors; from memory). The torque the gear passes to the output is
    ``tau - N lambda`` where ``lambda`` is the gear constraint's torque on the rotor (the
    rotor's inertial torque).
    ``"approximate"``: N^2 J_r is added to the child link's inertia about the joint axis (no
    extra links, no constraints; see :mod:`sim.urdf` for what this gets wrong).
    ``"off"``: the rigid joint model.

Reducer friction (actuator keys in the model file, all at the joint output)
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

Not modelled: backlash (a dead band between rotor and output: the engine's gear constraint is
bilateral, so a lash cannot be opened and closed by it; see docs/dynamics.md), gear mesh
stiffness, torque ripple, friction that depends on temperature or speed beyond ``c qd``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from sim import JOINT_NAMES
from sim.model import RobotModel
from sim.urdf import ROTORS, rotor_joint_name

_AXIS = {"abad": [1.0, 0.0, 0.0], "hip": [0.0, 1.0, 0.0], "knee": [0.0, 1.0, 0.0]}
GEAR_MAX_FORCE_NM = 1e6  # effectively rigid gear teeth (limit of the constraint impulse / dt)


@dataclass(frozen=True)
class DriveOptions:
    """Scenario ``[drive]`` table: which drivetrain effects the engine simulates."""

    rotor_inertia: str = "off"
    losses: bool = True
    efficiency_band_rad_s: float = 0.01

    def __post_init__(self) -> None:
        if self.rotor_inertia not in ROTORS:
            raise ValueError(f"rotor_inertia must be one of {ROTORS}")

    @classmethod
    def from_table(cls, table: dict[str, Any] | None) -> DriveOptions:
        t = table or {}
        return cls(t.get("rotor_inertia", "off"), bool(t.get("losses", True)),
                   float(t.get("efficiency_band_rad_s", 0.01)))


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
    Call :meth:`before_step` with the torques about to be applied (only needed when
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
        self.constraints: list[int] = []
        self.rotor_links: list[int] = []
        c = cid
        if options.rotor_inertia == "exact":
            index = {pb.getJointInfo(robot, j, physicsClientId=c)[1].decode(): j
                     for j in range(pb.getNumJoints(robot, physicsClientId=c))}
            for name, jl, n in zip(JOINT_NAMES, self.joints, self.ratio, strict=True):
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
            v > 0 for v in self.viscous)
        self._rows: list[list[float]] = []
        self._peak = [0.0] * 12

    # per step -----------------------------------------------------------------------------
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
                out[j] -= self.ratio[j] * pb.getConstraintState(cons, physicsClientId=c)[0]
        elif mode == "approximate":
            for j in range(12):
                out[j] -= self.armature[j] * (st[j][1] - qd_before[j]) / self.dt
        return out

    def sample(self, tau: Sequence[float], qd_before: Sequence[float]) -> None:
        """Keep the gearbox torques of the step just taken for the next :meth:`flush`."""
        self.keep(self.gearbox_torque(tau, qd_before))

    def keep(self, row: list[float]) -> None:
        """Keep already computed gearbox torques ``row`` (12) for the next :meth:`flush`."""
        self._rows.append(row)
        self._peak = [max(p, abs(x)) for p, x in zip(self._peak, row, strict=True)]

    def peaks(self) -> dict[str, float]:
        """Largest |gearbox torque| per joint over the samples so far (N m)."""
        return dict(zip(JOINT_NAMES, self._peak, strict=True))

    def flush(self, writer: Any) -> None:
        """Append the kept samples as ``joints/<joint>/gearbox_torque_nm`` to ``writer``."""
        if not self._rows:
            return
        arr = np.asarray(self._rows, float)
        for k, name in enumerate(JOINT_NAMES):
            writer.append(f"joints/{name}/gearbox_torque_nm", arr[:, k])
        self._rows = []
