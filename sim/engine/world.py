"""The engine world: pybullet imported here and in the runner only, one DIRECT world holding
the ground and one robot built from a scenario.

Takes a :class:`~sim.scenario.scenario_file.Scenario`; gives an :class:`Engine` with the robot
loaded and every measured engine trap handled (default velocity motors disabled, link damping
zeroed, the joint-speed clamp raised, inertia from the URDF, friction and restitution set on
both bodies, no sub-steps), the drive dynamics set up (:mod:`sim.drive.dynamics`), and the
foot contact forces read back per leg.
"""

from __future__ import annotations

import math
import os
import sys
import tempfile
from typing import Any

import numpy as np

from sim import JOINT_NAMES
from sim.drive.dynamics import DriveOptions, Drivetrain, mesh_joints
from sim.robot.urdf import build_urdf
from sim.scenario.scenario_file import Scenario


def _import_engine():
    """Import pybullet with its start-up banner sent to stderr (stdout may carry JSON)."""
    sys.stdout.flush()
    saved = os.dup(1)
    try:
        os.dup2(2, 1)
        import pybullet

        return pybullet
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)


pb = _import_engine()

pb = _import_engine()

JOINT_INDICES = [4 * k + i for k in range(4) for i in range(3)]
FOOT_LINKS = [4 * k + 3 for k in range(4)]

class Engine:
    """A pybullet DIRECT world holding the ground and one robot built from a scenario."""

    def __init__(self, scenario: Scenario):
        self.scenario = scenario
        s = scenario.data
        self.dt = scenario.time_step_s
        self.cid = pb.connect(pb.DIRECT)
        c = self.cid
        pb.resetSimulation(physicsClientId=c)
        pb.setPhysicsEngineParameter(fixedTimeStep=self.dt, numSubSteps=0, physicsClientId=c)
        slope = s["ground"]["slope_rad"]
        g = 9.80665
        # a slope rising along +x is simulated as flat ground with gravity tilted backwards
        self.gravity_w = np.array([-g * math.sin(slope), 0.0, -g * math.cos(slope)])
        pb.setGravity(*self.gravity_w.tolist(), physicsClientId=c)
        plane_shape = pb.createCollisionShape(pb.GEOM_PLANE, physicsClientId=c)
        self.plane = pb.createMultiBody(0, plane_shape, physicsClientId=c)
        pay = s["payload"]
        drive_opt = DriveOptions.from_table(s.get("drive"))
        self.urdf = build_urdf(scenario.model, pay["mass_kg"], pay["position_m"], pay["size_m"],
                               rotors=drive_opt.rotor_inertia,
                               motor_side=mesh_joints(scenario.model))
        with tempfile.TemporaryDirectory(prefix="gaitload-") as tmp:
            fn = os.path.join(tmp, "robot.urdf")
            with open(fn, "w") as fh:
                fh.write(self.urdf)
            flags = pb.URDF_USE_INERTIA_FROM_FILE | pb.URDF_MAINTAIN_LINK_ORDER
            self.robot = pb.loadURDF(fn, [0, 0, 1], flags=flags, useFixedBase=False,
                                     physicsClientId=c)
        r = self.robot
        n_links = pb.getNumJoints(r, physicsClientId=c)
        names = [pb.getJointInfo(r, j, physicsClientId=c)[1].decode() for j in JOINT_INDICES]
        assert names == list(JOINT_NAMES), names
        for link in range(-1, n_links):
            pb.changeDynamics(r, link, linearDamping=0.0, angularDamping=0.0,
                              physicsClientId=c)
        pb.changeDynamics(r, -1, maxJointVelocity=1e4, physicsClientId=c)
        gr = s["ground"]
        pb.changeDynamics(self.plane, -1, lateralFriction=gr["friction"],
                          restitution=gr["restitution"], physicsClientId=c)
        for link in [*FOOT_LINKS, -1]:
            kw: dict[str, Any] = {"lateralFriction": 1.0, "restitution": 1.0 if link != -1 else 0.0}
            if gr["restitution"] == 0.0:
                kw["restitution"] = 0.0
            if link != -1 and gr["stiffness_n_m"] > 0:
                kw.update(contactStiffness=gr["stiffness_n_m"], contactDamping=gr["damping_n_s_m"])
            pb.changeDynamics(r, link, physicsClientId=c, **kw)
        # the default velocity motors would cancel every torque command below 1/dt (N m)
        pb.setJointMotorControlArray(r, JOINT_INDICES, pb.VELOCITY_CONTROL,
                                     forces=[0.0] * 12, physicsClientId=c)
        # drivetrain dynamics (sim/drive/dynamics.py): rotors, gear constraints, reducer friction
        self.drive = Drivetrain(pb, c, r, scenario.model, JOINT_INDICES, drive_opt, self.dt)
        self.base_local_com = np.array(pb.getDynamicsInfo(r, -1, physicsClientId=c)[3])
        self.total_mass_kg = sum(pb.getDynamicsInfo(r, j, physicsClientId=c)[0]
                                 for j in range(-1, n_links))

    def place(self, q: np.ndarray, base_z: float) -> None:
        """Set joint angles ``q[4,3]`` at rest and the base frame origin at height ``base_z``."""
        c, r = self.cid, self.robot
        for idx, val in zip(JOINT_INDICES, q.reshape(-1), strict=True):
            pb.resetJointState(r, idx, float(val), 0.0, physicsClientId=c)
        pb.resetBasePositionAndOrientation(r, np.array([0.0, 0.0, base_z]) + self.base_local_com,
                                           [0, 0, 0, 1], physicsClientId=c)
        pb.resetBaseVelocity(r, [0, 0, 0], [0, 0, 0], physicsClientId=c)

    def foot_forces(self) -> tuple[list[float], list[float]]:
        """Ground force on each foot (world frame, 12 numbers) and contact flags (4)."""
        f = [0.0] * 12
        contact = [0.0] * 4
        for cp in pb.getContactPoints(self.robot, self.plane, physicsClientId=self.cid):
            link = cp[3]
            if link < 0 or link % 4 != 3:
                continue
            k = link // 4
            n, fn, f1, d1, f2, d2 = cp[7], cp[9], cp[10], cp[11], cp[12], cp[13]
            o = 3 * k
            f[o] += fn * n[0] + f1 * d1[0] + f2 * d2[0]
            f[o + 1] += fn * n[1] + f1 * d1[1] + f2 * d2[1]
            f[o + 2] += fn * n[2] + f1 * d1[2] + f2 * d2[2]
            contact[k] = 1.0
        return f, contact

    def body_contact(self) -> bool:
        """True if anything but a foot touches the ground."""
        return any(cp[3] % 4 != 3 or cp[3] < 0
                   for cp in pb.getContactPoints(self.robot, self.plane, physicsClientId=self.cid))

    def close(self) -> None:
        if pb.isConnected(self.cid):
            pb.disconnect(self.cid)


def quat_rotate(q_xyzw: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Rotate vector ``v[3]`` by each unit quaternion ``q_xyzw[n, 4]``; returns ``[n, 3]``."""
    xyz = q_xyzw[:, :3]
    w = q_xyzw[:, 3:4]
    t = 2.0 * np.cross(xyz, v)
    return v + w * t + np.cross(xyz, t)
