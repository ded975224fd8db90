"""Reducer backlash and elastic mesh in the dynamics (sim/drive/dynamics.py, docs/dynamics.md).

One knee of the demo robot turns on a fixed axis (fixed base, no gravity, abad and hip held by
a large Coulomb friction, as in tests/test_drive.py); its motor side (inertia J_m = N^2 J_r)
meets the shank (J_l) through the dead-zone mesh. Oracles:

- constant-acceleration kinematics, s = a t^2 / 2 (any mechanics text, e.g. Meriam & Kraige,
  Engineering Mechanics: Dynamics, rectilinear motion): across the gap the motor side alone
  carries the torque, so it crosses a gap b in t = sqrt(2 b J_m / tau);
- backlash as lost motion: the input turns through the backlash before the output is driven
  (ISO 1122-1, vocabulary of gear terms, and any gear text; from memory);
- the impulse-momentum theorem for the two inertias, J_m w_m + J_l w_l = sum of tau dt, the
  internal mesh torque cancelling, against the rigid model with N^2 J_r on the joint;
- Hooke's law for the engaged mesh, with the static knee torque from the closed-form stance
  statics;
- stability of symplectic Euler on a harmonic oscillator: bounded for omega dt < 2, growing
  beyond (Hairer, Lubich & Wanner, Geometric Numerical Integration, 2006; from memory).
"""

from __future__ import annotations

import math

import h5py
import numpy as np
import pytest

from sim import JOINT_NAMES
from sim.commands.cli import main
from sim.drive.dynamics import DriveOptions, Drivetrain, mesh_joints, mesh_step_number
from sim.engine.runner import JOINT_INDICES, pb, run
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf
from sim.scenario.scenario_file import load_scenario
from tests.helpers import drive_overrides, drive_set_args, load_test_robot

from .conftest import MODELS, SCENARIOS

DT = 1e-3
LOCK = {"abad.friction_coulomb_nm": 200.0, "hip.friction_coulomb_nm": 200.0}
KNEE = 2  # fl_knee in JOINT_NAMES
Q0 = [0.0, 0.8, -2.6] * 4  # knees near their lower end: room to turn under positive torque


def _connect(dt: float = DT) -> int:
    cid = pb.connect(pb.DIRECT)
    pb.setPhysicsEngineParameter(fixedTimeStep=dt, numSubSteps=0, physicsClientId=cid)
    pb.setGravity(0, 0, 0, physicsClientId=cid)
    return cid


@pytest.fixture
def world():
    cid = _connect()
    yield cid
    pb.disconnect(cid)


@pytest.fixture
def world2():
    cid = _connect()
    yield cid
    pb.disconnect(cid)


def _mesh(b: float, k: float, c: float, extra: dict | None = None) -> dict:
    return {**LOCK, "knee.backlash_rad": b, "knee.mesh_stiffness_nm_rad": k,
            "knee.mesh_damping_nm_s_rad": c, **(extra or {})}


def _robot(world, overrides: dict, mode: str = "approximate", dt: float = DT):
    """A fixed-base robot with the fl knee near its lower end (one robot per world)."""
    model = load_model(MODELS / "fennec.toml", drive_overrides(overrides))
    opt = DriveOptions(mode)
    urdf = build_urdf(model, rotors=mode, motor_side=mesh_joints(model))
    r = load_test_robot(pb, world, urdf)
    pb.setJointMotorControlArray(r, JOINT_INDICES, pb.VELOCITY_CONTROL, forces=[0.0] * 12,
                                 physicsClientId=world)
    for j, v in zip(JOINT_INDICES, Q0, strict=True):
        pb.resetJointState(r, j, v, 0.0, physicsClientId=world)
    return model, r, Drivetrain(pb, world, r, model, JOINT_INDICES, opt, dt)


def _state(world, r):
    st = pb.getJointStates(r, JOINT_INDICES, physicsClientId=world)
    return [s[0] for s in st], [s[1] for s in st]


def _step(world, r, drv, knee_torque_nm: float):
    """One step with ``knee_torque_nm`` from the motor on the fl knee; returns the state at
    the start of the step and the torque applied at the knee joint."""
    tau = [0.0] * 12
    tau[KNEE] = knee_torque_nm
    q, qd = _state(world, r)
    tj = drv.transmit(tau, q, qd) if drv.mesh else tau
    pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tj,
                                 physicsClientId=world)
    drv.before_step(tj, qd)
    pb.stepSimulation(physicsClientId=world)
    return q, qd, tj[KNEE]


def _shank_inertia_about_knee(model) -> float:
    sh, ft = model.shank_link(), model.foot_link()
    l2 = model.leg["shank_length_m"]
    return (sh.inertia_kg_m2[1, 1] + sh.mass_kg * sh.com_m[2] ** 2 + ft.inertia_kg_m2[1, 1]
            + ft.mass_kg * l2 ** 2)


def _press_then_release(world, r, drv, torque_nm: float, b: float) -> None:
    """Motor side resting on the flank the torque pushes it to; torque ramped up, held and
    ramped back to zero slowly (no ringing), so the flank is closed with no preload left."""
    q, _ = _state(world, r)
    drv.reset_motor_side(q, None, [math.copysign(b / 2, torque_nm)] * len(drv.mesh))
    for i in range(100):
        _step(world, r, drv, torque_nm * (i + 1) / 100)
    for _ in range(100):
        _step(world, r, drv, torque_nm)
    for i in range(200):
        _step(world, r, drv, torque_nm * (1 - (i + 1) / 200))


# --- (1) a torque reversal: no output torque while the motor side crosses the gap ------------

@pytest.mark.parametrize(("b", "tau0"), [(0.02, 0.05), (0.01, 0.1)])
def test_torque_reversal_leaves_the_output_unloaded_for_the_gap_crossing_time(world, b, tau0):
    model, r, drv = _robot(world, _mesh(b, 1000.0, 0.2))
    assert drv.mesh_names == ["fl_knee", "fr_knee", "hl_knee", "hr_knee"]
    _press_then_release(world, r, drv, tau0, b)
    torques, speeds = [], []
    for _ in range(300):
        _, qd, t_knee = _step(world, r, drv, -tau0)
        torques.append(t_knee)
        speeds.append(qd[KNEE])
        if t_knee < 0:
            break
    n_gap = len(torques) - 1  # steps with the output unloaded before the other flank bites
    j_m = model.actuators["fl_knee"].reflected_inertia_kg_m2
    t_expected = math.sqrt(2 * b * j_m / tau0)  # s = a t^2 / 2 with a = tau / J_m
    # the crossing is seen at a step boundary and semi-implicit Euler runs a t dt / 2 ahead:
    # within one step of the closed form
    assert n_gap * DT == pytest.approx(t_expected, abs=DT)
    assert torques[-1] < 0
    assert all(t == 0.0 for t in torques[:-1])  # no torque at the output inside the gap
    # ... so the shank coasts: its speed does not change across the gap
    assert max(speeds[:-1]) - min(speeds[:-1]) < 1e-5 * max(abs(s) for s in speeds)


# --- (2) lost motion: the held load sees nothing until the motor has turned through b --------

def test_with_the_load_held_the_motor_turns_through_the_backlash_first(world):
    b, tau1 = 0.01, 0.05
    hold = {"knee.friction_coulomb_nm": 50.0}  # stiction holds the shank
    model, r, drv = _robot(world, _mesh(b, 1000.0, 0.2, hold))
    q_start, _ = _state(world, r)
    _press_then_release(world, r, drv, -tau1, b)  # resting on the negative flank
    assert drv.motor_angle is not None
    qm0 = drv.motor_angle[0]
    for _ in range(500):
        qm_before = drv.motor_angle[0]  # at the start of the step
        q, _, t_knee = _step(world, r, drv, tau1)
        if t_knee > 0:
            break
    assert t_knee > 0
    lost = qm_before - qm0  # motor travel when the output torque appears
    j_m = model.actuators["fl_knee"].reflected_inertia_kg_m2
    w_cross = math.sqrt(2 * tau1 / j_m * b)  # motor speed after crossing b from rest
    assert b <= lost <= b + w_cross * DT + 1e-9
    assert abs(q[KNEE] - q_start[KNEE]) < 1e-9  # the output never moved


# --- (3) b = 0: the compliant mesh tends to the rigid model with N^2 J_r on the joint ----------

def test_zero_backlash_matches_the_rigid_model_with_reflected_inertia(world, world2):
    k = 1000.0
    model, r, drv = _robot(world, _mesh(0.0, k, 0.1))
    j_m = model.actuators["fl_knee"].reflected_inertia_kg_m2
    j_l = _shank_inertia_about_knee(model)
    _, r2, drv2 = _robot(world2, LOCK, "approximate")  # no mesh: N^2 J_r added to the shank
    assert not drv2.mesh
    n, amp, f = 400, 0.3, 3.0
    dq, dw, w2, mom = [], [], [], []
    for i in range(n):
        tau = amp * math.sin(2 * math.pi * f * i * DT)
        _step(world, r, drv, tau)
        _step(world2, r2, drv2, tau)
        q, qd = _state(world, r)
        q2, qd2 = _state(world2, r2)
        dq.append(q[KNEE] - q2[KNEE])
        dw.append(qd[KNEE] - qd2[KNEE])
        w2.append(qd2[KNEE])
        # impulse-momentum: the mesh torque is internal to (motor side + shank)
        if abs(qd2[KNEE]) > 0.05:
            mom.append((j_m * drv.motor_speed[0] + j_l * qd[KNEE]) / ((j_m + j_l) * qd2[KNEE]))
    assert len(mom) > n / 2 and max(abs(m - 1.0) for m in mom) < 2e-3
    # the output lags the rigid model by its share of the mesh deflection, about
    # J_m J_l / (J_m + J_l)^2 x tau / k: 7.4e-5 rad here, against 0.09 rad of motion
    bound = 2 * j_m * j_l / (j_m + j_l) ** 2 * amp / k
    assert 0.1 * bound < max(abs(x) for x in dq) < bound  # it does deflect, that little
    assert max(abs(x) for x in dw) < 0.02 * max(abs(x) for x in w2)


# --- stability of the explicit mesh step (the documented bound) -------------------------------

@pytest.mark.parametrize(("omega_dt", "bounded"), [(1.9, True), (2.1, False)])
def test_the_explicit_mesh_is_stable_below_omega_dt_2(world, omega_dt, bounded):
    model0 = load_model(MODELS / "fennec.toml", drive_overrides(LOCK))
    j_m = model0.actuators["fl_knee"].reflected_inertia_kg_m2
    j_l = _shank_inertia_about_knee(model0)
    j_red = j_m * j_l / (j_m + j_l)
    k = (omega_dt / DT) ** 2 * j_red
    assert mesh_step_number(k, 0.0, j_red, DT) == pytest.approx(omega_dt ** 2)
    _, r, drv = _robot(world, _mesh(0.0, k, 0.0))
    q, _ = _state(world, r)
    drv.reset_motor_side(q, None, [1e-4] * 4)  # a small initial deflection, then let go
    peak = 0.0
    for _ in range(400):
        _step(world, r, drv, 0.0)
        q, _ = _state(world, r)
        assert drv.motor_angle is not None
        peak = max(peak, abs(drv.motor_angle[0] - q[KNEE]))
    if bounded:
        assert peak < 1e-4 / math.sqrt(1 - omega_dt ** 2 / 4) * 1.01
    else:
        assert peak > 1.0


# --- closing the loop on the output angle through the elastic mesh ----------------------------

def _routh_hurwitz_damping(j_m, j_l, k, kp, kd) -> float:
    """Smallest mesh damping for which the two-mass loop tau = -kp q_l - kd qd_l is stable.

    Characteristic polynomial of J_m q_m'' = tau - T, J_l q_l'' = T, T = k (q_m - q_l) +
    c (q_m' - q_l'): a4 s^4 + a3 s^3 + a2 s^2 + a1 s + a0 with the coefficients below; by the
    Routh-Hurwitz criterion (e.g. Ogata, Modern Control Engineering, Routh's stability
    criterion) a quartic with positive coefficients is stable iff a3 a2 a1 > a4 a1^2 + a3^2 a0.
    """
    def margin(c):
        a4, a3 = j_m * j_l, c * (j_m + j_l)
        a2, a1, a0 = k * (j_m + j_l) + kd * c, kd * k + kp * c, kp * k
        return a3 * a2 * a1 - a4 * a1 ** 2 - a3 ** 2 * a0

    lo, hi = 1e-6, 100.0  # margin < 0 at lo, > 0 at hi
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if margin(mid) < 0 else (lo, mid)
    return hi


@pytest.mark.parametrize(("factor", "grows"), [(0.5, True), (2.0, False)])
def test_output_feedback_through_the_mesh_needs_the_routh_hurwitz_damping(factor, grows):
    dt, k, kp, kd = 2.5e-4, 1000.0, 150.0, 3.0
    model0 = load_model(MODELS / "fennec.toml", drive_overrides(LOCK))
    j_m = model0.actuators["fl_knee"].reflected_inertia_kg_m2
    j_l = _shank_inertia_about_knee(model0)
    c_min = _routh_hurwitz_damping(j_m, j_l, k, kp, kd)
    # the rule of thumb of sim/drive/dynamics.py, from a3 a2 > a4 a1 with c small
    assert c_min == pytest.approx(kd * j_m * j_l / (j_m + j_l) ** 2, rel=0.2)
    cid = _connect(dt)
    try:
        _, r, drv = _robot(cid, _mesh(0.0, k, factor * c_min), dt=dt)
        q, _ = _state(cid, r)
        q_hold = q[KNEE]
        drv.reset_motor_side(q, None, [1e-3] * 4)  # let go from a small mesh deflection
        dev = []
        for _ in range(int(0.25 / dt)):
            q, qd = _state(cid, r)
            _step(cid, r, drv, kp * (q_hold - q[KNEE]) - kd * qd[KNEE])
            q, _ = _state(cid, r)
            assert drv.motor_angle is not None
            dev.append(abs(drv.motor_angle[0] - q[KNEE]))
    finally:
        pb.disconnect(cid)
    early, late = max(dev[:200]), max(dev[-200:])
    assert (late > 10 * early) if grows else (late < 0.01 * early)


# --- the whole robot: a stand with knee backlash ------------------------------------------------

B_KNEE, K_KNEE, C_KNEE = 0.005, 1000.0, 0.3  # at dt = 0.5 ms: (k dt^2 + 2 c dt) / J = 0.46


def _stand_backlash(tmp_path):
    scn = load_scenario(SCENARIOS / "stand.toml", [
        "segment.0.duration_s=2.0", "record.start_s=1.5", "drive.rotor_inertia=approximate",
        "time_step_s=0.0005",
        *drive_set_args({"knee.backlash_rad": B_KNEE, "knee.mesh_stiffness_nm_rad": K_KNEE,
                         "knee.mesh_damping_nm_s_rad": C_KNEE})])
    res = run(scn, tmp_path / "lash.h5")
    assert res.status == "completed", res.detail
    return scn, tmp_path / "lash.h5"


def test_standing_knee_mesh_deflects_by_the_static_torque_over_k(tmp_path):
    from .test_stand_statics import _state as stand_state
    from .test_stand_statics import planar_two_link

    _, path = _stand_backlash(tmp_path)
    mdl, q, _, F, _, _, _ = stand_state(path)
    lg = mdl.leg
    th = mdl.thigh_link("fl")
    with h5py.File(path) as f:
        assert f.attrs["load_torque"] == "gearbox_torque_nm"
        for j in JOINT_NAMES:
            assert (f"joints/{j}/motor_angle_rad" in f) == j.endswith("_knee")
        for k, leg in enumerate(("fl", "fr", "hl", "hr")):
            j = f"{leg}_knee"
            d = f[f"joints/{j}/motor_angle_rad"][-200:] - f[f"joints/{j}/angle_rad"][-200:]
            gb = f[f"joints/{j}/gearbox_torque_nm"][-200:]
            # engaged on one flank, at rest: deflection beyond the half gap = T / k (Hooke)
            assert np.all(np.abs(d) > B_KNEE / 2)
            t_spring = np.sign(d) * K_KNEE * (np.abs(d) - B_KNEE / 2)
            assert np.allclose(gb, t_spring, atol=0.01 * np.abs(gb).max())
            # ... and the mesh carries the static knee torque (planar two-link statics with
            # the recorded foot force, as in tests/test_stand_statics.py)
            a, qh, qk = q[3 * k:3 * k + 3]
            fz = F[k, 2] * math.cos(a) + F[k, 1] * math.sin(a)
            _, knee = planar_two_link(
                lg["thigh_length_m"], lg["shank_length_m"], qh, qk, fz, F[k, 0],
                lg["shank_mass_kg"], lg["shank_length_m"] / 2, lg["foot_mass_kg"],
                [(th.mass_kg * math.cos(a), (0.0, 0.0))])
            assert gb.mean() == pytest.approx(knee, rel=0.02), j


# --- bad input: one message naming the file and the key, nothing written ----------------------

SCEN_TEXT = (SCENARIOS / "stand.toml").read_text().replace(
    'robot = "../models/fennec.toml"', f'robot = "{MODELS / "fennec.toml"}"')
KNEE_PART = "reducer_knee_belt.toml"


def _knee(**values: float) -> list[str]:
    return [a for k, v in values.items()
            for a in ("--set", f"robot.parts.knee.reducer.{k}={v}")]


BAD = [
    ("negative backlash", _knee(backlash_rad=-0.001), [],
     [KNEE_PART, "backlash_rad", ">= 0"]),
    ("negative mesh damping", _knee(mesh_stiffness_nm_rad=500.0, mesh_damping_nm_s_rad=-1.0),
     [], [KNEE_PART, "mesh_damping_nm_s_rad", ">= 0"]),
    ("mesh damping without a mesh stiffness", _knee(mesh_damping_nm_s_rad=0.9), [],
     [KNEE_PART, "mesh_stiffness_nm_rad", "damping acts only"]),
    ("mesh too stiff for the time step", _knee(mesh_stiffness_nm_rad=1e5),
     ["--set", "drive.rotor_inertia=approximate"],
     [KNEE_PART, "mesh_stiffness_nm_rad", "time step", "time_step_s <="]),
    ("one joint's mesh too stiff", [*_knee(mesh_stiffness_nm_rad=500.0), "--set",
                                    "robot.parts.hl_knee.reducer.mesh_stiffness_nm_rad=1e5"],
     ["--set", "drive.rotor_inertia=approximate"],
     [KNEE_PART, "mesh_stiffness_nm_rad", "for hl_knee"]),
    ("mesh damping too high for the time step",
     _knee(mesh_stiffness_nm_rad=100.0, mesh_damping_nm_s_rad=5.0),
     ["--set", "drive.rotor_inertia=exact"],
     [KNEE_PART, "mesh_damping_nm_s_rad", "time step", "N m s/rad"]),
    ("mesh with rotor inertia off", _knee(mesh_stiffness_nm_rad=500.0),
     ["--set", "drive.rotor_inertia=off"], ["s.toml", "drive.rotor_inertia", "'approximate' or 'exact'"]),
]


@pytest.mark.parametrize("name,model,extra,fragments", BAD, ids=[c[0] for c in BAD])
def test_bad_backlash_input_is_refused_clearly(tmp_path, capsys, name, model, extra, fragments):
    (tmp_path / "s.toml").write_text(SCEN_TEXT)
    out = tmp_path / "out.h5"
    code = main(["run", str(tmp_path / "s.toml"), "-o", str(out), *model, *extra])
    err = capsys.readouterr().err
    assert code == 2, err
    for frag in fragments:
        assert frag in err, (frag, err)
    assert len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.toml"]


def test_backlash_of_a_rigid_mesh_is_said_to_be_left_out():
    # the demo parts state a backlash but no mesh stiffness: the simulation leaves the lash
    # out and says so (the record stores the same notes), it is not silently dropped
    scn = load_scenario(SCENARIOS / "stand.toml")
    notes = " ".join(scn.model.drivetrain.notes)
    assert "backlash of reducer_knee_belt.toml not simulated" in notes
    assert all(a.backlash_rad == 0.0 for a in scn.model.actuators.values())
    lash = load_scenario(SCENARIOS / "stand.toml", [
        "drive.rotor_inertia=approximate", "time_step_s=0.0005",
        "robot.parts.knee.reducer.mesh_stiffness_nm_rad=1000.0",
        "robot.parts.knee.reducer.mesh_damping_nm_s_rad=0.3"])
    assert lash.model.actuators["fl_knee"].backlash_rad == 0.005  # the part's backlash_rad


def test_the_backlash_sweep_resolves_to_four_valid_cases():
    # every case passes the input checks (mesh stability at its time step) before anything runs
    from sim.sweeps.cases import resolve_cases
    from sim.sweeps.spec import load_sweep

    cases = resolve_cases(load_sweep(SCENARIOS / "sweep_backlash.toml"))
    assert [c.spec is not None for c in cases] == [True] * 4, [c.error for c in cases]
    meshed = [len(mesh_joints(load_model_text(c.spec["model_toml"], c.spec["drivetrain_toml"])))
              for c in cases]
    assert meshed == [0, 4, 4, 4]


def load_model_text(text: str, drivetrain_toml: str):
    from sim.robot.model import model_from_texts

    return model_from_texts(text, drivetrain_toml, "resolved model")
