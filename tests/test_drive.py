"""Drivetrain dynamics in the engine: geared rotors, reducer friction and efficiency.

Oracles: rigid-body dynamics of a body on a fixed axis, J alpha = tau (any mechanics text,
e.g. Meriam & Kraige, Engineering Mechanics: Dynamics, fixed-axis rotation), with a geared
rotor the effective inertia J + N^2 J_r (e.g. Featherstone, Rigid Body Dynamics Algorithms,
2008, on geared motors; from memory); pinocchio (PyPI ``pin``) forward dynamics with
``model.armature`` and inverse dynamics (RNEA) of a model holding the rotor joints.
"""

from __future__ import annotations

import numpy as np
import pinocchio as pin
import pytest

from sim import JOINT_NAMES
from sim.drive.dynamics import DriveOptions, Drivetrain, attach_rotor, loss_torque_nm
from sim.engine.runner import JOINT_INDICES, pb
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf, rotor_joint_name
from tests.helpers import drive_overrides, load_test_robot

from .conftest import MODELS

DT = 1e-3
STAND_Q = [0.0, 0.8, -1.6] * 4


@pytest.fixture
def world():
    cid = pb.connect(pb.DIRECT)
    pb.setPhysicsEngineParameter(fixedTimeStep=DT, numSubSteps=0, physicsClientId=cid)
    pb.setGravity(0, 0, 0, physicsClientId=cid)
    yield cid
    pb.disconnect(cid)


# --- a single-joint pendulum with a geared rotor ---------------------------------------------

M_LINK, L_COM, I_COM = 0.8, 0.12, 2.0e-3  # kg, m, kg m^2 about the COM (y axis)


def _pendulum_urdf(j_rotor: float | None) -> str:
    rotor = "" if j_rotor is None else (
        f'<link name="rotor"><inertial><origin xyz="0 0 0"/><mass value="1e-4"/>'
        f'<inertia ixx="{j_rotor / 2}" iyy="{j_rotor}" izz="{j_rotor / 2}" ixy="0" ixz="0" '
        'iyz="0"/></inertial></link><joint name="spin" type="continuous"><parent link="base"/>'
        '<child link="rotor"/><origin xyz="0 0 0"/><axis xyz="0 1 0"/></joint>')
    return (
        '<?xml version="1.0"?><robot name="p"><link name="base"><inertial><mass value="1"/>'
        '<inertia ixx="1" iyy="1" izz="1" ixy="0" ixz="0" iyz="0"/></inertial></link>'
        f'<link name="arm"><inertial><origin xyz="0 0 {-L_COM}"/><mass value="{M_LINK}"/>'
        f'<inertia ixx="{I_COM}" iyy="{I_COM}" izz="1e-4" ixy="0" ixz="0" iyz="0"/></inertial>'
        '</link><joint name="hinge" type="continuous"><parent link="base"/><child link="arm"/>'
        '<origin xyz="0 0 0"/><axis xyz="0 1 0"/></joint>' + rotor + '</robot>')


@pytest.mark.parametrize(("j_rotor", "ratio"), [(6.5e-5, 9.0), (6.5e-5, 15.0), (2e-4, 5.0)])
def test_pendulum_with_geared_rotor_has_inertia_j_plus_n2_jr(world, j_rotor, ratio):
    r = load_test_robot(pb, world, _pendulum_urdf(j_rotor))
    pb.setJointMotorControlArray(r, [0, 1], pb.VELOCITY_CONTROL, forces=[0, 0],
                                 physicsClientId=world)
    attach_rotor(pb, world, r, 1, 0, [0, 1, 0], ratio)
    tau = 0.7
    for _ in range(200):
        pb.setJointMotorControl2(r, 0, pb.TORQUE_CONTROL, force=tau, physicsClientId=world)
        pb.stepSimulation(physicsClientId=world)
    qd = pb.getJointState(r, 0, physicsClientId=world)[1]
    qd_rotor = pb.getJointState(r, 1, physicsClientId=world)[1]
    j_eff = tau * 200 * DT / qd
    # fixed-axis rotation with a geared rotor: J_eff = J_com + m d^2 + N^2 J_r
    expected = I_COM + M_LINK * L_COM ** 2 + ratio ** 2 * j_rotor
    assert j_eff == pytest.approx(expected, rel=1e-3)
    assert qd_rotor == pytest.approx(ratio * qd, rel=1e-6)
    # second reference: pinocchio forward dynamics with armature N^2 J_r on the hinge
    pm = pin.buildModelFromXML(_pendulum_urdf(None))
    pm.armature[0] = ratio ** 2 * j_rotor
    pm.gravity.linear[:] = 0.0
    pd = pm.createData()
    alpha = pin.aba(pm, pd, pin.neutral(pm), np.zeros(pm.nv), np.array([tau]))[0]
    assert tau / alpha == pytest.approx(j_eff, rel=1e-3)


# --- the full robot ---------------------------------------------------------------------------

def _robot(world, mode: str, overrides: dict | None = None, gravity: bool = False):
    # ideal reducers unless a test gives a loss (the demo parts have their own, tested elsewhere)
    model = load_model(MODELS / "fennec.toml", drive_overrides(overrides or {}))
    r = load_test_robot(pb, world, build_urdf(model, rotors=mode))
    if gravity:
        pb.setGravity(0, 0, -9.80665, physicsClientId=world)
    pb.setJointMotorControlArray(r, JOINT_INDICES, pb.VELOCITY_CONTROL, forces=[0.0] * 12,
                                 physicsClientId=world)
    for j, v in zip(JOINT_INDICES, STAND_Q, strict=True):
        pb.resetJointState(r, j, v, 0.0, physicsClientId=world)
    drv = Drivetrain(pb, world, r, model, JOINT_INDICES, DriveOptions(mode), DT)
    return model, r, drv


def _states(world, r, joints):
    st = pb.getJointStates(r, joints, physicsClientId=world)
    return [s[0] for s in st], [s[1] for s in st]


def _shank_inertia_about_knee(model) -> float:
    sh, ft = model.shank_link(), model.foot_link()
    l2 = model.leg["shank_length_m"]
    return (sh.inertia_kg_m2[1, 1] + sh.mass_kg * sh.com_m[2] ** 2 + ft.inertia_kg_m2[1, 1]
            + ft.mass_kg * l2 ** 2)


LOCK = {"abad.friction_coulomb_nm": 200.0, "hip.friction_coulomb_nm": 200.0}


@pytest.mark.parametrize("mode", ["exact", "approximate"])
def test_knee_on_a_locked_thigh_sees_reflected_inertia_and_gearbox_torque(world, mode):
    # abad and hip held by a large Coulomb friction (stiction), so the shank turns on a fixed
    # axis: alpha = tau / (J + N^2 J_r); the gearbox passes J alpha to the shank
    model, r, drv = _robot(world, mode, LOCK)
    tau = [0.0] * 12
    tau[2] = 1.5
    _, qd0 = _states(world, r, JOINT_INDICES)
    pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                 physicsClientId=world)
    pb.stepSimulation(physicsClientId=world)
    gb = drv.gearbox_torque(tau, qd0)
    _, qd = _states(world, r, JOINT_INDICES)
    j_sh = _shank_inertia_about_knee(model)
    alpha = qd[2] / DT
    assert abs(qd[1]) < 1e-3 * abs(qd[2]) and abs(qd[0]) < 1e-3 * abs(qd[2])  # stiction holds
    assert alpha == pytest.approx(1.5 / (j_sh + 81 * 6.5e-5), rel=1e-3)
    assert gb[2] == pytest.approx(j_sh * alpha, rel=1e-3)


def test_full_robot_torques_match_pinocchio_model_with_rotor_joints(world):
    """Fixed base in the air, gravity on, random torques with a PD hold, exact rotors.

    Reference: pinocchio RNEA of the URDF *with* the rotor joints, reduced by the gear map
    G (q_rotor = N q_joint): tau = G^T rnea(q, G qd, G qdd) (Featherstone 2008 on constrained
    multibody systems; the same projection as for any holonomic constraint).
    """
    model, r, drv = _robot(world, "exact", gravity=True)
    urdf = build_urdf(model, rotors="exact")
    pm = pin.buildModelFromXML(urdf)
    pd = pm.createData()
    rotors = drv.rotor_links
    ratios = np.array(drv.ratio)
    # column maps: joint name -> (idx_q, nq, idx_v)
    jid = {pm.names[i]: pm.joints[i] for i in range(1, pm.njoints)}
    rng = np.random.default_rng(7)
    amp = rng.uniform(-3, 3, (12, 3))
    freq = rng.uniform(2, 9, (12, 3))
    errs, mags, arm_errs = [], [], []
    pm_arm = pin.buildModelFromXML(build_urdf(model))
    for name in JOINT_NAMES:
        pm_arm.armature[pm_arm.joints[pm_arm.getJointId(name)].idx_v] = \
            model.actuators[name].reflected_inertia_kg_m2
    pd_arm = pm_arm.createData()
    for k in range(300):
        t = k * DT
        q, qd = _states(world, r, JOINT_INDICES)
        qr, _ = _states(world, r, rotors)
        tau = [float(np.sum(amp[j] * np.sin(freq[j] * t * 6.283))
                     + 30 * (STAND_Q[j] - q[j]) - 0.5 * qd[j]) for j in range(12)]
        pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                     physicsClientId=world)
        pb.stepSimulation(physicsClientId=world)
        _, qd1 = _states(world, r, JOINT_INDICES)
        qdd = (np.array(qd1) - qd) / DT  # semi-implicit Euler: v+ = v + dt a(q, v)
        qf = np.zeros(pm.nq)
        vf = np.zeros(pm.nv)
        af = np.zeros(pm.nv)
        for j, name in enumerate(JOINT_NAMES):
            jm, jr = jid[name], jid[rotor_joint_name(name)]
            qf[jm.idx_q] = q[j]
            vf[jm.idx_v], af[jm.idx_v] = qd[j], qdd[j]
            qf[jr.idx_q:jr.idx_q + 2] = np.cos(qr[j]), np.sin(qr[j])  # continuous joint
            vf[jr.idx_v], af[jr.idx_v] = ratios[j] * qd[j], ratios[j] * qdd[j]
        full = pin.rnea(pm, pd, qf, vf, af)
        red = np.array([full[jid[n].idx_v] + ratios[j] * full[jid[rotor_joint_name(n)].idx_v]
                        for j, n in enumerate(JOINT_NAMES)])
        errs.append(red - tau)
        mags.append(tau)
        qa = np.array([qf[jid[n].idx_q] for n in JOINT_NAMES])
        va = np.array([vf[jid[n].idx_v] for n in JOINT_NAMES])
        arm_errs.append(pin.rnea(pm_arm, pd_arm, qa, va, qdd) - tau)
    err = np.linalg.norm(errs) / np.linalg.norm(mags)
    assert err < 0.01, err
    # the diagonal armature model explains most, not all, of the rotor effect
    arm = np.linalg.norm(arm_errs) / np.linalg.norm(mags)
    # measured: 1.1e-4 with the rotor joints, 2.2e-2 with the armature alone
    assert err < arm


# --- friction and efficiency -------------------------------------------------------------------

KNEE_C = {"knee.friction_coulomb_nm": 0.5, **LOCK}


def test_knee_below_coulomb_friction_stays_at_rest(world):
    _, r, _ = _robot(world, "off", KNEE_C)
    tau = [0.0] * 12
    tau[2] = 0.45  # below tau_c = 0.5 N m
    for _ in range(200):
        pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                     physicsClientId=world)
        pb.stepSimulation(physicsClientId=world)
    q, qd = _states(world, r, JOINT_INDICES)
    assert abs(qd[2]) < 1e-9 and abs(q[2] - STAND_Q[2]) < 1e-9


@pytest.mark.parametrize("mode", ["off", "exact"])
def test_sliding_knee_decelerates_at_tau_c_over_j(world, mode):
    model, r, drv = _robot(world, mode, KNEE_C)
    pb.resetJointState(r, 2, STAND_Q[2], 5.0, physicsClientId=world)
    if mode == "exact":
        pb.resetJointState(r, drv.rotor_links[2], 0.0, 45.0, physicsClientId=world)
    n = 30
    for _ in range(n):
        pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=[0.0] * 12,
                                     physicsClientId=world)
        pb.stepSimulation(physicsClientId=world)
    _, qd = _states(world, r, JOINT_INDICES)
    j = _shank_inertia_about_knee(model) + (81 * 6.5e-5 if mode == "exact" else 0.0)
    # Coulomb friction on a fixed axis: constant deceleration tau_c / J
    assert (5.0 - qd[2]) / (n * DT) == pytest.approx(0.5 / j, rel=1e-3)



def _knee_step(world, r, drv, speed_rad_s, torque_nm):
    """One step with the fl knee at ``speed_rad_s`` and ``torque_nm`` commanded on it."""
    pb.resetJointState(r, 2, STAND_Q[2], speed_rad_s, physicsClientId=world)
    tau = [0.0] * 12
    tau[2] = torque_nm
    _, qd0 = _states(world, r, JOINT_INDICES)
    pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                 physicsClientId=world)
    drv.before_step(tau, qd0)
    pb.stepSimulation(physicsClientId=world)
    _, qd = _states(world, r, JOINT_INDICES)
    return tau, qd0, qd

def test_forward_efficiency_scales_the_delivered_torque(world):
    model, r, drv = _robot(world, "off", {**LOCK, "knee.efficiency_forward": 0.8})
    tau, qd0, qd = _knee_step(world, r, drv, 1.0, 1.2)  # driving: torque and speed agree
    j = _shank_inertia_about_knee(model)
    # power-flow efficiency model: output torque = eta_f tau when the motor drives
    assert (qd[2] - 1.0) / DT == pytest.approx(0.8 * 1.2 / j, rel=1e-3)
    assert drv.gearbox_torque(tau, qd0)[2] == pytest.approx(0.8 * 1.2, rel=1e-6)


def test_back_driving_needs_torque_over_back_efficiency(world):
    model, r, drv = _robot(world, "off", {**LOCK, "knee.efficiency_back": 0.5})
    _, _, qd = _knee_step(world, r, drv, -1.0, 0.6)  # the load drives against the motor
    j = _shank_inertia_about_knee(model)
    # back-driven: the output sees tau / eta_b (it must supply that to turn the motor)
    assert (qd[2] + 1.0) / DT == pytest.approx(0.6 / 0.5 / j, rel=1e-3)


def test_loss_torque_is_continuous_and_matches_both_limits():
    f = [loss_torque_nm(2.0, w, 0.9, 0.6, 0.01) for w in np.linspace(-0.02, 0.02, 401)]
    assert max(np.abs(np.diff(f))) < 0.02
    assert loss_torque_nm(2.0, 1.0, 0.9, 0.6, 0.01) == pytest.approx(0.2)  # (1 - 0.9) 2
    assert loss_torque_nm(2.0, -1.0, 0.9, 0.6, 0.01) == pytest.approx(2 / 0.6 - 2)
    assert loss_torque_nm(-2.0, 1.0, 0.9, 0.6, 0.01) == pytest.approx(2 / 0.6 - 2)
    assert loss_torque_nm(0.0, 1.0, 0.9, 0.6, 0.01) == 0.0


@pytest.mark.parametrize("setting", ["drive.rotor_inertai=exact", "drive.rotor_inertia=full",
                                     "start.drop_height=0.1"])
def test_bad_drive_or_start_keys_are_rejected(setting):
    from sim.core.errors import InputError
    from sim.scenario.scenario_file import load_scenario

    from .conftest import SCENARIOS

    with pytest.raises(InputError) as err:
        load_scenario(SCENARIOS / "drop.toml", [setting])
    assert setting.split("=")[0].split(".")[0] in str(err.value)


def test_misspelt_actuator_loss_key_is_rejected():
    from sim.core.errors import InputError

    with pytest.raises(InputError, match="efficency_back"):
        load_model(MODELS / "fennec.toml", {"parts.knee.reducer.efficency_back": 0.8})
