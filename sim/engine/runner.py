"""The engine runner: the only module that imports pybullet.

One scenario becomes one HDF5 run record. The loop is explicit torque control at every fixed
step: ``tau = tau_ff + kp (q* - q) + kd (qd* - qd)``, clamped to each actuator's envelope
(:mod:`sim.drive.envelope`), with targets and feed-forward from the segment controllers
(:mod:`sim.scenario.segments`) refreshed every control period. Engine options follow the measured traps in
the developer notes: default velocity motors disabled, link damping zeroed, the joint-speed
clamp raised, inertia taken from the URDF, friction set as a product on both bodies, no
sub-steps (contact forces would be divided by their number).
"""

from __future__ import annotations

import math
import os
import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sim import JOINT_NAMES, LEGS, __version__
from sim.core.errors import SimulationFailure
from sim.drive.dynamics import DriveOptions, Drivetrain, mesh_joints
from sim.drive.envelope import Envelope
from sim.record import RecordWriter
from sim.robot.statics import StanceStatics
from sim.robot.urdf import build_urdf
from sim.scenario.scenario_file import Scenario
from sim.scenario.segments import RobotState, SegmentController, make_controller


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

JOINT_INDICES = [4 * k + i for k in range(4) for i in range(3)]
FOOT_LINKS = [4 * k + 3 for k in range(4)]
_BLOCK = 8000  # steps buffered before statistics and series are flushed
_CHECK_EVERY = 10  # steps between fall/divergence checks


@dataclass
class RunResult:
    """Outcome of one run: status, where the record is, and per-joint figures."""

    status: str
    detail: str
    record: Path
    joints: dict[str, dict[str, float]] = field(default_factory=dict)
    total_mass_kg: float = 0.0
    steps_per_s: float = 0.0
    # locomotion figures over the recorded span (see RunSummary); per segment in ``segments``
    summary: dict[str, float | None] = field(default_factory=dict)
    segments: list[dict[str, Any]] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {"status": self.status, "record": str(self.record), "joints": self.joints,
                "summary": self.summary, "segments": self.segments}


class RunSummary:
    """Locomotion figures accumulated over the recorded span of one segment (or a run).

    mean forward speed (along the body heading) achieved and commanded, body tilt RMS (angle
    between body z and ground normal), slip distance of the stance feet (horizontal speed of
    the material contact point, v_foot + omega x (-r n), integrated while in contact), positive
    joint work (sum of max(tau qd, 0) dt over the joints) and the mechanical cost of transport
    positive work / (m g d), d the net horizontal displacement of the base (the dimensionless
    specific resistance of Gabrielli and von Karman, 1950, from memory, here with mechanical
    joint work in place of the energy drawn).
    """

    def __init__(self) -> None:
        self.time_s = 0.0
        self.fwd = 0.0
        self.cmd = 0.0
        self.tilt2 = 0.0
        self.slip_m = 0.0
        self.work_j = 0.0
        self.p0: list[float] | None = None
        self.p1: list[float] | None = None

    def add(self, other: RunSummary) -> None:
        self.time_s += other.time_s
        self.fwd += other.fwd
        self.cmd += other.cmd
        self.tilt2 += other.tilt2
        self.slip_m += other.slip_m
        self.work_j += other.work_j
        if other.p0 is not None:
            self.p0 = self.p0 or other.p0
            self.p1 = other.p1

    def figures(self, weight_n: float) -> dict[str, float | None]:
        t = self.time_s
        d = 0.0
        if self.p0 is not None and self.p1 is not None:
            d = math.hypot(self.p1[0] - self.p0[0], self.p1[1] - self.p0[1])
        return {
            "mean_forward_speed_m_s": self.fwd / t if t > 0 else None,
            "commanded_forward_speed_m_s": self.cmd / t if t > 0 else None,
            "tilt_rms_rad": math.sqrt(self.tilt2 / t) if t > 0 else None,
            "slip_distance_m": self.slip_m,
            "positive_work_j": self.work_j,
            "distance_m": d,
            "cost_of_transport": self.work_j / (weight_n * d) if d > 0.05 else None,
        }


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


def _flat12(x: Any) -> list[float]:
    """A controller output (``[4, 3]`` array or flat list of 12) as a flat list."""
    return x if isinstance(x, list) else x.reshape(-1).tolist()


def _edges(scn: Scenario) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    rec = scn.data["record"]
    te, se = {}, {}
    for j in JOINT_NAMES:
        act = scn.model.actuators[j]
        tp = act.peak_torque_nm * 1.0001
        w0 = act.no_load_speed_rad_s * 1.5
        te[j] = np.linspace(-tp, tp, rec["torque_bins"] + 1)
        se[j] = np.linspace(-w0, w0, rec["speed_bins"] + 1)
    return te, se


def run(scn: Scenario, out_path: str | Path, progress: bool = False) -> RunResult:
    """Simulate ``scn`` into the record ``out_path``; return the outcome.

    A fall or divergence ends the run and is recorded with that status (the caller decides
    how to report it); Ctrl-C finishes the record marked ``interrupted`` and re-raises.
    """
    import time

    out_path = Path(out_path)
    eng = Engine(scn)
    try:
        return _run(scn, eng, out_path, progress, time.perf_counter)
    finally:
        eng.close()


def _run(scn: Scenario, eng: Engine, out_path: Path, progress: bool, clock) -> RunResult:
    d = scn.data
    dt = eng.dt
    statics = StanceStatics(scn.model, d["payload"]["mass_kg"], d["payload"]["position_m"])
    envs = [Envelope.of(scn.model.actuators[j]) for j in JOINT_NAMES]
    A = [e.a for e in envs]
    B = [e.b for e in envs]
    C = [e.c for e in envs]
    CORNER = [e.corner_speed_rad_s for e in envs]
    # inside this box for every joint at once, no joint can be clamped (fast path below)
    A_MIN, CORNER_MIN = min(A), min(CORNER)

    def clamp(tc: list[float], qd: list[float]) -> tuple[list[float], list[float]]:
        """Each command clamped to its envelope at the joint speed; saturation flags."""
        tau = [0.0] * 12
        sat = [0.0] * 12
        for j in range(12):
            x = tc[j]
            wj = qd[j]
            aj = A[j]
            cj = CORNER[j]
            if -aj <= x <= aj and -cj <= wj <= cj:
                tau[j] = x
                continue
            hi = B[j] - C[j] * wj
            if hi > aj:
                hi = aj
            lo = -B[j] - C[j] * wj
            if lo < -aj:
                lo = -aj
            if hi < lo:
                hi = lo
            if x > hi:
                tau[j] = hi
                sat[j] = 1.0
            elif x < lo:
                tau[j] = lo
                sat[j] = 1.0
            else:
                tau[j] = x
        return tau, sat
    kinds = [j.split("_")[1] for j in JOINT_NAMES]
    KP = [d["control"]["kp_nm_rad"][k] for k in kinds]
    KD = [d["control"]["kd_nm_s_rad"][k] for k in kinds]
    rec_opt = d["record"]
    dec = rec_opt["decimation"]
    series = rec_opt["series"]
    start_step = round(rec_opt["start_s"] / dt)
    lim = d["limits"]
    cos_tilt = math.cos(lim["max_tilt_rad"])
    hip_h = scn.model.data["stance"]["hip_height_m"]
    min_h = lim["min_height_fraction"] * hip_h
    w_max = lim["max_joint_speed_rad_s"]

    segs = list(scn.segments)
    seg_steps = [round(s["duration_s"] / dt) for s in segs]
    n_total = sum(seg_steps)
    ctrls: list[SegmentController] = [make_controller(s, scn.model, statics) for s in segs]
    q0 = ctrls[0].initial_angles() if hasattr(ctrls[0], "initial_angles") else None
    from sim.scenario.segments import stance_angles

    q_init = stance_angles(scn.model) if q0 is None else q0
    feet_b = statics.kin.foot_positions(q_init)
    body_h = scn.model.data["body"]["size_m"][2]
    base_z = max(body_h / 2, float(-(feet_b[:, 2].min())) + statics.kin.foot_radius_m) + 5e-4
    base_z += d.get("start", {}).get("drop_height_m", 0.0)  # a drop starts in the air
    eng.place(q_init, base_z)

    te, se = _edges(scn)
    attrs = {
        "tool_version": __version__, "scenario_toml": scn.to_toml(),
        "model_toml": scn.model.to_toml(), "time_step_s": dt, "sample_period_s": dt * dec,
        "decimation": dec, "seed": d["seed"], "engine_version": f"pybullet {pb.getAPIVersion()}",
        "total_mass_kg": eng.total_mass_kg, "leg_names": list(LEGS),
        "series_written": series, "record_start_s": start_step * dt,
        "load_torque": "gearbox_torque_nm" if eng.drive.records else "torque_nm",
        "scenario_file": os.path.basename(scn.file),
        "world_frame": "ground frame: z normal to the ground, x up the slope",
    }
    r, c = eng.robot, eng.cid
    drv = eng.drive
    drv_step, drv_rec, drv_mesh = drv.per_step, drv.records, bool(drv.mesh)
    getJS = pb.getJointStates
    setJ = pb.setJointMotorControlArray
    step = pb.stepSimulation
    getBase = pb.getBasePositionAndOrientation
    getVel = pb.getBaseVelocity
    TQ = pb.TORQUE_CONTROL
    J = JOINT_INDICES
    # disturbances (sim/scenario/disturbance.py): pushes [first step, end step, force, offset], trips
    pushes = [(round(p_["start_s"] / dt), round((p_["start_s"] + p_["duration_s"]) / dt),
               [float(x) for x in p_["force_n"]], [float(x) for x in p_["point_m"]])
              for p_ in d.get("push", [])]
    trips = [{"k": LEGS.index(t_["leg"]), "arm": round(t_["start_s"] / dt),
              "after": round(t_["after_liftoff_s"] / dt), "hold": round(t_["duration_s"] / dt),
              "max_f": float(t_["max_force_n"]), "swing_since": -1, "cid": -1, "until": -1,
              "done": False} for t_ in d.get("trip", [])]
    disturb = bool(pushes or trips)
    f_ext = [0.0, 0.0, 0.0]
    hb = np.empty((_BLOCK, 48))  # load torque, speed, saturated, motor-side torque
    ns_cols = 1 + 12 * 5 + 13 + 12 + 4 + 4  # ... contact, planned stance
    sb = np.empty((_BLOCK // dec + 2, ns_cols))
    eb = np.zeros((_BLOCK // dec + 2, 3)) if pushes else sb[:0, :3]  # external force
    n_hb = 0
    n_sb = 0
    seg_table = []
    status, detail = "completed", ""
    bar = None
    if progress and sys.stderr.isatty():
        from tqdm import tqdm
        bar = tqdm(total=n_total, unit="step", unit_scale=True, desc="simulating",
                   file=sys.stderr, leave=False)

    with RecordWriter(out_path, JOINT_NAMES, te, se, attrs) as w:

        def flush() -> None:
            nonlocal n_hb, n_sb
            if n_hb:
                blk = hb[:n_hb]
                w.accumulate(blk[:, 0:12], blk[:, 12:24], blk[:, 24:36], dt,
                             blk[:, 36:48] if drv_rec else None)
                seg_sum.work_j += float(np.maximum(blk[:, 0:12] * blk[:, 12:24], 0.0).sum()) * dt
                n_hb = 0
            if n_sb and series:
                s_ = sb[:n_sb]
                w.append("time_s", s_[:, 0])
                for k, jn in enumerate(JOINT_NAMES):
                    w.append(f"joints/{jn}/angle_rad", s_[:, 1 + k])
                    w.append(f"joints/{jn}/speed_rad_s", s_[:, 13 + k])
                    w.append(f"joints/{jn}/torque_nm", s_[:, 25 + k])
                    w.append(f"joints/{jn}/torque_command_nm", s_[:, 37 + k])
                    w.append(f"joints/{jn}/saturated", s_[:, 49 + k], dtype="i1")
                o = 61
                w.append("base/position_m",
                         s_[:, o:o + 3] - quat_rotate(s_[:, o + 3:o + 7], eng.base_local_com))
                w.append("base/orientation_xyzw", s_[:, o + 3:o + 7])
                w.append("base/velocity_m_s", s_[:, o + 7:o + 10])
                w.append("base/angular_velocity_rad_s", s_[:, o + 10:o + 13])
                o += 13
                for k, leg in enumerate(LEGS):
                    w.append(f"feet/{leg}/force_n", s_[:, o + 3 * k:o + 3 * k + 3])
                o += 12
                for k, leg in enumerate(LEGS):
                    w.append(f"feet/{leg}/contact", s_[:, o + k], dtype="i1")
                drv.flush(w)  # joints/<joint>/gearbox_torque_nm (sim/drive/dynamics.py)
                o += 4
                for k, leg in enumerate(LEGS):  # planned phase: 1 = stance, 0 = swing
                    w.append(f"feet/{leg}/phase_plan", s_[:, o + k], dtype="i1")
                if pushes:
                    w.append("base/external_force_n", eb[:n_sb])
            n_sb = 0

        com_l = eng.base_local_com.tolist()
        grav_l = eng.gravity_w.tolist()

        def measure(i_g: int, q: list[float] | None = None, qd: list[float] | None = None,
                    base: tuple[Any, Any, Any, Any] | None = None,
                    contact: list[float] | None = None) -> RobotState:
            """The measured state the controllers see (plain floats; see RobotState).

            ``q``, ``qd``, ``base`` (COM position, orientation, velocity, angular velocity)
            and ``contact`` (flags of the last step) are read from the engine unless given.
            """
            if q is None or qd is None:
                st = getJS(r, J, physicsClientId=c)
                q = [s[0] for s in st]
                qd = [s[1] for s in st]
            if base is None:
                base = (*getBase(r, physicsClientId=c), *getVel(r, physicsClientId=c))
            pos, (x, y, z, w_), v, om = base
            # rotation matrix of the unit quaternion (x, y, z, w), world from base
            R = [[1.0 - 2.0 * (y * y + z * z), 2.0 * (x * y - z * w_), 2.0 * (x * z + y * w_)],
                 [2.0 * (x * y + z * w_), 1.0 - 2.0 * (x * x + z * z), 2.0 * (y * z - x * w_)],
                 [2.0 * (x * z - y * w_), 2.0 * (y * z + x * w_), 1.0 - 2.0 * (x * x + y * y)]]
            cx, cy, cz = com_l  # base frame origin = COM - R c
            origin = [pos[i] - (R[i][0] * cx + R[i][1] * cy + R[i][2] * cz) for i in range(3)]
            if contact is None:
                contact = eng.foot_forces()[1]
            return RobotState(i_g * dt, q, qd, origin, R, list(v), list(om), grav_l, contact)

        seg_sums: list[RunSummary] = []
        last_contact: list[float] = []
        contact_at = -1  # step index at which last_contact describes the contacts
        seg_sum = RunSummary()
        events: dict[str, list[list[float]]] = {"touchdown": [[], [], [], []],
                                                "liftoff": [[], [], [], []]}
        if trips:
            events["trip_start"] = [[], [], [], []]
            events["trip_end"] = [[], [], [], []]

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

        prev_contact = [True] * 4
        r_foot = statics.kin.foot_radius_m

        def observe(state: RobotState, ctrl: SegmentController, acc: RunSummary,
                    dtu: float) -> None:
            """Touchdown/lift-off events and the summary figures at a control update."""
            nonlocal prev_contact
            cont = state.contact_list
            t_now = state.t_s
            for k in range(4):
                if cont[k] != prev_contact[k]:
                    events["touchdown" if cont[k] else "liftoff"][k].append(t_now)
            prev_contact = cont
            Rl = state.base_rotation_list
            yaw = math.atan2(Rl[1][0], Rl[0][0])
            v = state.base_velocity_list
            acc.time_s += dtu
            acc.fwd += (math.cos(yaw) * v[0] + math.sin(yaw) * v[1]) * dtu
            acc.cmd += ctrl.commanded_velocity()[0] * dtu if hasattr(
                ctrl, "commanded_velocity") else 0.0
            acc.tilt2 += math.acos(max(-1.0, min(1.0, Rl[2][2]))) ** 2 * dtu
            pos = state.base_position_list
            if acc.p0 is None:
                acc.p0 = [float(pos[0]), float(pos[1])]
            acc.p1 = [float(pos[0]), float(pos[1])]
            if any(cont):
                ls = pb.getLinkStates(r, FOOT_LINKS, computeLinkVelocity=1, physicsClientId=c)
                for k in range(4):
                    if cont[k]:
                        lv, av = ls[k][6], ls[k][7]
                        acc.slip_m += math.hypot(lv[0] - r_foot * av[1],
                                                 lv[1] + r_foot * av[0]) * dtu

        i_global = 0
        t0 = clock()
        try:
            for seg, ctrl, nsteps in zip(segs, ctrls, seg_steps, strict=True):
                seg_start = i_global
                upd_every = max(round(d["control"]["update_period_s"] / dt),
                                round(ctrl.min_update_period_s / dt), 1)
                # segment start: gains of the segment, then the controller's start hook
                KPs, KDs = ctrl.gains(KP, KD) if hasattr(ctrl, "gains") else (KP, KD)
                if hasattr(ctrl, "start"):
                    ctrl.start(measure(i_global))
                seg_sum = RunSummary()
                seg_sums.append(seg_sum)
                plan = [1.0] * 4
                upd_i = 0
                dtu = upd_every * dt
                # tc_j = pd0_j + pd1_j lag - kp_j q_j - kd_j qd_j with pd0 = ff + kp q* + kd qd*,
                # pd1 = kp qd* (fixed between control updates)
                pd0 = [0.0] * 12
                pd1 = [0.0] * 12
                ZERO12 = [0.0] * 12  # read only
                for i in range(nsteps):
                    st = getJS(r, J, physicsClientId=c)
                    q = [s[0] for s in st]
                    qd = [s[1] for s in st]
                    sample = (series and i_global >= start_step
                              and (i_global - start_step) % dec == 0)
                    upd = i % upd_every == 0
                    if sample or upd:  # the base state at the start of this step
                        pos, orn = getBase(r, physicsClientId=c)
                        v, om = getVel(r, physicsClientId=c)
                    if upd:
                        # contact flags of the last step, kept if that step was sampled
                        state = measure(i_global, q, qd, (pos, orn, v, om),
                                        last_contact if contact_at == i_global else None)
                        a_, b_, c_ = ctrl.update(i * dt, state)
                        qdes, qddes, ff = _flat12(a_), _flat12(b_), _flat12(c_)
                        pd0 = [f + kp * x + kd * v for f, kp, x, kd, v
                               in zip(ff, KPs, qdes, KDs, qddes, strict=True)]
                        pd1 = [kp * v for kp, v in zip(KPs, qddes, strict=True)]
                        plan = [1.0 if f else 0.0 for f in ctrl.planned_stance()]
                        upd_i = i
                        if i_global >= start_step:
                            observe(state, ctrl, seg_sum, dtu)
                    # targets between updates follow the planned joint speed (first-order hold)
                    lag = (i - upd_i) * dt
                    tc = [a + b * lag - kp * x - kd * v for a, b, kp, kd, x, v
                          in zip(pd0, pd1, KPs, KDs, q, qd, strict=True)]
                    if (max(tc) <= A_MIN and min(tc) >= -A_MIN and max(qd) <= CORNER_MIN
                            and min(qd) >= -CORNER_MIN):
                        tau = tc
                        sat = ZERO12
                    else:
                        tau, sat = clamp(tc, qd)
                    # at the joints: tau, or the mesh torque where backlash is simulated
                    tj = drv.transmit(tau, q, qd) if drv_mesh else tau
                    setJ(r, J, TQ, forces=tj, physicsClientId=c)
                    if disturb:
                        f_ext = disturbances(i_global, plan)
                    if drv_step:
                        drv.before_step(tj, qd)  # efficiency losses follow the torque
                    step(physicsClientId=c)
                    if i_global >= start_step:
                        if drv_rec:  # load at the reducer output differs from N tau_m
                            gb = drv.gearbox_torque(tj, qd)
                            hb[n_hb] = gb + qd + sat + tau
                        else:
                            hb[n_hb] = tau + qd + sat + tau
                        n_hb += 1
                        if sample:
                            # joint and base state at the start of the step (base COM; the
                            # frame origin is computed at flush), torques and contact forces
                            # over the step
                            fv, contact = eng.foot_forces()
                            last_contact, contact_at = contact, i_global + 1
                            sb[n_sb] = [i_global * dt, *q, *qd, *tau, *tc, *sat, *pos, *orn,
                                        *v, *om, *fv, *contact, *plan]
                            if pushes:
                                eb[n_sb] = f_ext
                            n_sb += 1
                            if drv_rec:
                                drv.keep(gb)
                        if n_hb == _BLOCK:
                            flush()
                    i_global += 1
                    if i_global % _CHECK_EVERY == 0:
                        pos, orn = pb.getBasePositionAndOrientation(r, physicsClientId=c)
                        xq, yq = orn[0], orn[1]
                        cz = 1.0 - 2.0 * (xq * xq + yq * yq)
                        wabs = max(abs(x) for x in qd)
                        if not math.isfinite(sum(qd) + sum(pos)) or wabs > w_max:
                            status = "diverged"
                            detail = (f"joint speed {wabs:.3g} rad/s beyond {w_max:g} rad/s "
                                      f"or non-finite state at t = {i_global * dt:.3f} s")
                            break
                        if cz < cos_tilt:
                            status = "fell"
                            detail = (f"body tilt {math.degrees(math.acos(max(-1, cz))):.1f} deg "
                                      f"beyond {math.degrees(lim['max_tilt_rad']):.1f} deg at "
                                      f"t = {i_global * dt:.3f} s in segment '{seg['name']}'")
                            break
                        if ctrl.needs_standing and pos[2] < min_h:
                            status = "fell"
                            detail = (f"body height {pos[2]:.3f} m below {min_h:.3f} m at "
                                      f"t = {i_global * dt:.3f} s in segment '{seg['name']}'")
                            break
                        if bar is not None and i_global % 1000 == 0:
                            bar.update(1000)
                seg_table.append((seg["name"], seg["kind"], seg_start * dt, i_global * dt))
                flush()  # so the positive work is booked to this segment
                if status != "completed":
                    break
        except KeyboardInterrupt:
            status, detail = "interrupted", f"interrupted at t = {i_global * dt:.3f} s"
            flush()
            w.put("segments/name", [s[0] for s in seg_table] or [""])
            w.finish(status, detail)
            raise
        finally:
            if bar is not None:
                bar.close()
        elapsed = clock() - t0
        flush()
        w.put("segments/name", np.array([s[0] for s in seg_table]))
        w.put("segments/kind", np.array([s[1] for s in seg_table]))
        w.put("segments/start_s", np.array([s[2] for s in seg_table]), unit="s")
        w.put("segments/end_s", np.array([s[3] for s in seg_table]), unit="s")
        weight_n = eng.total_mass_kg * 9.80665
        seg_figs = [ss.figures(weight_n) for ss in seg_sums[:len(seg_table)]]
        for key in ("mean_forward_speed_m_s", "commanded_forward_speed_m_s", "tilt_rms_rad",
                    "slip_distance_m", "positive_work_j"):
            w.put(f"segments/{key}", np.array([np.nan if f[key] is None else f[key]
                                               for f in seg_figs], float))
        for kind, per_leg in events.items():
            for k, leg in enumerate(LEGS):
                w.put(f"events/{kind}/{leg}", np.array(per_leg[k], float), unit="s")
        total = RunSummary()
        for ss in seg_sums:
            total.add(ss)
        run_figs = total.figures(weight_n)
        path = w.finish(status, detail, simulated_s=i_global * dt,
                        **{f"summary_{k}": np.nan if v is None else v
                           for k, v in run_figs.items()})
    from sim.record import open_record

    joints: dict[str, dict[str, float]] = {}
    with open_record(path) as rec:
        for jn in JOINT_NAMES:
            sm = rec.summary(jn)
            joints[jn] = {"peak_torque_nm": sm.peak_torque_nm, "rms_torque_nm": sm.rms_torque_nm,
                          "peak_speed_rad_s": sm.peak_speed_rad_s, "saturated_s": sm.saturated_s}
            # the summary follows the load at the reducer output (every step); the motor side
            # (motor torque x ratio) differs when rotors or reducer losses are simulated
            joints[jn]["peak_gearbox_torque_nm"] = sm.peak_torque_nm
            joints[jn]["peak_motor_side_torque_nm"] = sm.peak_motor_side_torque_nm
    segs_out = [{"name": n, "kind": k, "start_s": a, "end_s": b, **f}
                for (n, k, a, b), f in zip(seg_table, seg_figs, strict=True)]
    return RunResult(status, detail, path, joints, eng.total_mass_kg,
                     i_global / elapsed if elapsed > 0 else 0.0, run_figs, segs_out)


def raise_for_status(result: RunResult) -> RunResult:
    """Turn a fall or divergence into :class:`SimulationFailure` (exit code 3)."""
    if result.status in ("fell", "diverged"):
        raise SimulationFailure(result.status, result.detail, str(result.record))
    return result
