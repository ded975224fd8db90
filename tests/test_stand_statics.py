"""Standing statics of the simulated demo robot against outside references.

- Newton's first law: vertical foot forces sum to the total weight.
- pinocchio (``pin`` from PyPI): joint torques tau = g(q) - sum J_c^T f on the exported URDF
  with a free-flyer root, at the recorded angles and foot forces.
- Closed-form statics of a planar two-link leg (textbook statics; the massless form is checked
  on the worked case of the equal-link leg, l = 0.20 m, h = 0.28 m, F = 29.43 N, which gives
  tau_knee = F sqrt(l^2 - h^2/4) = 4.20344 N m and tau_hip = 0).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim import JOINT_NAMES, LEGS
from sim.loads.series import load_series_name
from sim.record import open_record
from sim.robot.model import model_from_texts
from sim.robot.urdf import build_urdf

G = 9.80665


def _last(rec, name, n=200):
    a = rec.read(name)
    return a[-n:].mean(axis=0)


def _state(path):
    with open_record(path) as rec:
        mdl = model_from_texts(rec.attrs["model_toml"], rec.attrs["drivetrain_toml"], "record")
        q = np.array([_last(rec, f"joints/{j}/angle_rad") for j in JOINT_NAMES])
        # the torque the reducer output applies to the joint (the motor torque less the
        # simulated reducer losses)
        tau = np.array([_last(rec, load_series_name(rec, j)) for j in JOINT_NAMES])
        F = np.array([_last(rec, f"feet/{leg}/force_n") for leg in LEGS])
        pos = _last(rec, "base/position_m")
        quat = _last(rec, "base/orientation_xyzw")
        mass = rec.attrs["total_mass_kg"]
    return mdl, q, tau, F, pos, quat / np.linalg.norm(quat), mass


def test_vertical_foot_forces_sum_to_weight(stand_record):
    _, _, _, F, _, _, mass = _state(stand_record)
    assert F[:, 2].sum() == pytest.approx(mass * G, rel=0.01)


def test_joint_torques_match_pinocchio(stand_record):
    pin = pytest.importorskip("pinocchio")
    mdl, q, tau, F, pos, quat, _ = _state(stand_record)
    pm = pin.buildModelFromXML(build_urdf(mdl), pin.JointModelFreeFlyer())
    pm.gravity.linear = np.array([0.0, 0.0, -G])
    pd = pm.createData()
    qq = np.concatenate([pos, quat, q])
    g = pin.computeGeneralizedGravity(pm, pd, qq)
    pin.computeJointJacobians(pm, pd, qq)
    pin.updateFramePlacements(pm, pd)
    rf = mdl.leg["foot_radius_m"]
    tau_pin = g.copy()
    for k, leg in enumerate(LEGS):
        fid = pm.getFrameId(f"{leg}_foot")
        J = pin.getFrameJacobian(pm, pd, fid, pin.ReferenceFrame.LOCAL_WORLD_ALIGNED)
        o = pd.oMf[fid].translation
        pc = o - np.array([0.0, 0.0, rf])  # contact at the bottom of the sphere
        r = pc - o
        skew = np.array([[0, -r[2], r[1]], [r[2], 0, -r[0]], [-r[1], r[0], 0]])
        Jp = J[:3] - skew @ J[3:]
        tau_pin -= Jp.T @ F[k]
    for i, j in enumerate(JOINT_NAMES):
        if j.endswith(("hip", "knee")):
            assert tau[i] == pytest.approx(tau_pin[6 + i], rel=0.02), j


def planar_two_link(l1, l2, q_hip, q_knee, fz, fx, m_shank, c_shank, m_foot, m_thigh_links=()):
    """Knee and hip torques of a planar leg (x forward, z up) holding ground force (fx, fz).

    Angles from the downward vertical; link COMs at distances along each link.
    Returns the torques the actuators supply (positive about +y).
    """
    # joint and COM positions relative to the hip axis
    kx, kz = -l1 * math.sin(q_hip), -l1 * math.cos(q_hip)
    a2 = q_hip + q_knee
    fxp, fzp = kx - l2 * math.sin(a2), kz - l2 * math.cos(a2)
    sx, sz = kx - c_shank * math.sin(a2), kz - c_shank * math.cos(a2)

    def moment_y(rx, rz, Fx, Fz):  # (r x F)_y = rz Fx - rx Fz
        return rz * Fx - rx * Fz

    def knee():
        m = moment_y(sx - kx, sz - kz, 0.0, -m_shank * G)
        m += moment_y(fxp - kx, fzp - kz, 0.0, -m_foot * G)
        m += moment_y(fxp - kx, fzp - kz, fx, fz)
        return -m

    def hip():
        m = moment_y(sx, sz, 0.0, -m_shank * G) + moment_y(fxp, fzp, 0.0, -m_foot * G)
        m += moment_y(fxp, fzp, fx, fz)
        for mass, (cx, cz) in m_thigh_links:
            m += moment_y(cx, cz, 0.0, -mass * G)
        return -m

    return hip(), knee()


def test_planar_formula_on_the_worked_equal_link_case():
    # massless equal links l = 0.20 m at hip-foot height h = 0.28 m, F = 12 kg g / 4 = 29.43 N
    link, h, F = 0.20, 0.28, 29.43
    q_knee = -2 * math.acos(h / (2 * link))
    q_hip = -q_knee / 2
    hip, knee = planar_two_link(link, link, q_hip, q_knee, F, 0.0, 0.0, 0.0, 0.0)
    assert abs(knee) == pytest.approx(4.20344, abs=5e-5)
    assert hip == pytest.approx(0.0, abs=1e-12)
    assert abs(knee) == pytest.approx(F * math.sqrt(link * link - h * h / 4), rel=1e-12)


def test_sagittal_torques_match_closed_form_two_link_statics(stand_record):
    mdl, q, tau, F, _, _, _ = _state(stand_record)
    lg = mdl.leg
    th = mdl.thigh_link("fl")
    c_th = -th.com_m[2]  # thigh COM distance below the hip along the thigh
    for k, leg in enumerate(LEGS):
        a, qh, qk = q[3 * k:3 * k + 3]
        # the leg plane is tilted by the small abad angle: project the ground force into it
        fz = F[k, 2] * math.cos(a) + F[k, 1] * math.sin(a)
        hip, knee = planar_two_link(
            lg["thigh_length_m"], lg["shank_length_m"], qh, qk, fz, F[k, 0],
            lg["shank_mass_kg"], lg["shank_length_m"] / 2, lg["foot_mass_kg"],
            [(th.mass_kg * math.cos(a), (-c_th * math.sin(qh), -c_th * math.cos(qh)))])
        assert tau[3 * k + 2] == pytest.approx(knee, rel=0.02), f"{leg}_knee"
        assert tau[3 * k + 1] == pytest.approx(hip, rel=0.02), f"{leg}_hip"


# --- the stance feed-forward against pinocchio, no engine -------------------------------------
# pinocchio (``pin`` from PyPI) on the exported URDF with a free-flyer root held at the base
# frame: the generalized gravity g(q) and the contact-point Jacobians give the joint torques
# that hold the legs still under given foot forces, tau = g(q) - sum J_c^T f; the total mass and
# centre of mass of the whole tree give the forces a standing robot needs (Newton: sum f = -M g;
# no moment about the COM).


def _pinocchio_statics(mdl, q, gravity_b, forces_b, contacts_b):
    pin = pytest.importorskip("pinocchio")
    pm = pin.buildModelFromXML(build_urdf(mdl), pin.JointModelFreeFlyer())
    pm.gravity.linear = np.asarray(gravity_b, float)
    pd = pm.createData()
    qq = np.concatenate([[0, 0, 0, 0, 0, 0, 1.0], np.reshape(q, -1)])
    g = pin.computeGeneralizedGravity(pm, pd, qq)
    pin.computeJointJacobians(pm, pd, qq)
    pin.updateFramePlacements(pm, pd)
    tau = g.copy()
    for k, leg in enumerate(LEGS):
        fid = pm.getFrameId(f"{leg}_foot")
        J = pin.getFrameJacobian(pm, pd, fid, pin.ReferenceFrame.LOCAL_WORLD_ALIGNED)
        r = contacts_b[k] - pd.oMf[fid].translation  # foot centre to contact point
        skew = np.array([[0, -r[2], r[1]], [r[2], 0, -r[0]], [-r[1], r[0], 0]])
        tau -= (J[:3] - skew @ J[3:]).T @ forces_b[k]
    com = pin.centerOfMass(pm, pd, qq)
    return tau[6:].reshape(4, 3), pin.computeTotalMass(pm), com


@pytest.mark.parametrize("variant", ["demo", "long heavy legs"])
@pytest.mark.parametrize("stance", [(1, 1, 1, 1), (1, 0, 0, 1), (1, 1, 1, 0)])
def test_stance_feed_forward_matches_pinocchio(variant, stance):
    from sim.robot.model import load_model
    from sim.robot.statics import StanceStatics

    from .conftest import MODELS

    over = {} if variant == "demo" else {"leg.thigh_length_m": 0.26, "leg.shank_length_m": 0.25,
                                          "leg.thigh_mass_kg": 1.1, "leg.shank_mass_kg": 0.45,
                                          "leg.foot_mass_kg": 0.12}
    mdl = load_model(MODELS / "fennec.toml", over)
    st_ = StanceStatics(mdl)
    q = np.array([[0.08, 0.7, -1.4], [-0.05, 0.9, -1.7], [0.11, 0.6, -1.2], [-0.02, 0.8, -1.5]])
    g = np.array([1.3, -0.6, -9.6])  # base tilted against gravity
    g = g / np.linalg.norm(g) * G
    mask = np.array(stance, bool)
    tau, forces = st_.torques(q, g, mask)
    up = -g / G
    contacts = st_.kin.foot_positions(q) - st_.kin.foot_radius_m * up
    tau_pin, mass_pin, com_pin = _pinocchio_statics(mdl, q, g, forces, contacts)
    # the robot's weight, legs included, rests on the stance feet, with no moment about the COM
    # (a diagonal pair cannot hold the COM off its line statically: there the split is a
    # least-squares compromise and only the torques for it are compared)
    assert st_.total_mass_kg == pytest.approx(mass_pin, rel=1e-9)
    np.testing.assert_allclose(forces[~mask], 0.0, atol=0)
    if mask.sum() >= 3:
        np.testing.assert_allclose(forces.sum(axis=0), -mass_pin * g, rtol=1e-9, atol=1e-9)
        mom = np.cross(contacts[mask] - com_pin, forces[mask]).sum(axis=0)
        assert np.abs(mom).max() < 1e-9 * mass_pin * G
    # and the joint torques are pinocchio's for those forces, swing legs holding themselves
    np.testing.assert_allclose(tau, tau_pin, rtol=1e-9, atol=1e-9)
    # the same torques from the kinematics' statics (used by the leg solver)
    np.testing.assert_allclose(st_.kin.static_torques(q, g, forces), tau_pin, rtol=1e-9,
                               atol=1e-9)
