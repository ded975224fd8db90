"""Back-drivability metrics: reflected inertia, back-drive torque, impact mitigation factor.

Oracles: the 1-D impact mitigation example (body 10 kg, foot 1 kg, reflected rotor as a
series mass) worked from the definition xi = det(I - Lambda Lambda_L^-1) of Wensing et al.,
IEEE Trans. Robotics 33(3), 2017, DOI 10.1109/TRO.2016.2640183; pinocchio (PyPI ``pin``)
CRBA mass matrix with ``model.armature`` for the floating-base robot; N^2 J_r for the
reflected inertia (Wensing et al. 2017; 6e-5 kg m^2 at 9:1 is 4.86e-3 kg m^2).
"""

from __future__ import annotations

import json

import numpy as np
import pinocchio as pin
import pytest

from sim import JOINT_NAMES, LEGS
from sim.commands.cli import main
from sim.drive.backdrive import (
    impact_mitigation_factor,
    joint_metrics,
    leg_impact_mitigation,
    mass_matrix,
    operational_inertia,
)
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf
from sim.scenario.segments import stance_angles

from .conftest import MODELS
from .helpers import drive_overrides


def _one_d(m_b: float, m_f: float, m_r: float) -> float:
    # coordinates (x_body, s = foot - body); the rotor is an armature m_r on s
    H = np.array([[m_b + m_f, m_f], [m_f, m_f + m_r]])
    J = np.array([[1.0, 1.0]])
    lam = operational_inertia(H, J)
    lam_locked = operational_inertia(H[:1, :1], J[:, :1])
    return impact_mitigation_factor(lam, lam_locked)


@pytest.mark.parametrize(("m_r", "xi"), [(0.0, 10 / 11), (10.0, 0.4545), (1e9, 0.0)])
def test_one_d_impact_mitigation_example(m_r, xi):
    # body 10 kg, foot 1 kg: Lambda = m_f + m_b m_r / (m_b + m_r), Lambda_L = 11 kg
    assert _one_d(10.0, 1.0, m_r) == pytest.approx(xi, abs=1e-4)


def test_reflected_inertia_and_backdrive_torque():
    # ideal knee reducer (no inertia or losses of its own) on a 6e-5 kg m^2 rotor
    m = load_model(MODELS / "fennec.toml", drive_overrides({
        "knee.rotor_inertia_kg_m2": 6e-5, "knee.friction_coulomb_nm": 0.4,
        "knee.efficiency_back": 0.8}))
    k = joint_metrics(m, accel_rad_s2=100.0)["fl_knee"]
    assert k.reflected_inertia_kg_m2 == pytest.approx(4.86e-3)  # N^2 J_r, N = 9
    assert k.breakaway_torque_nm == 0.4
    assert k.backdrive_torque_nm == pytest.approx(0.4 + 4.86e-3 * 100 / 0.8)


def _pin_mass_matrix(model, q):
    pm = pin.buildModelFromXML(build_urdf(model), pin.JointModelFreeFlyer())
    qf = pin.neutral(pm)
    cols = []
    for i, j in enumerate(JOINT_NAMES):
        jm = pm.joints[pm.getJointId(j)]
        qf[jm.idx_q] = q.reshape(-1)[i]
        pm.armature[jm.idx_v] = model.actuators[j].reflected_inertia_kg_m2
        cols.append(jm.idx_v)
    H = pin.crba(pm, pm.createData(), qf)
    H = np.triu(H) + np.triu(H, 1).T
    order = list(range(6)) + cols
    return H[np.ix_(order, order)]


def test_floating_base_mass_matrix_matches_pinocchio_crba():
    m = load_model(MODELS / "fennec.toml")
    rng = np.random.default_rng(3)
    q = stance_angles(m) + rng.uniform(-0.3, 0.3, (4, 3))
    H, _ = mass_matrix(m, q)
    np.testing.assert_allclose(H, _pin_mass_matrix(m, q), atol=1e-9)


def test_leg_imf_is_between_locked_and_free_and_falls_with_ratio():
    m = load_model(MODELS / "fennec.toml")
    q = stance_angles(m)
    with_rotors = leg_impact_mitigation(m, q)
    without = leg_impact_mitigation(m, q, armature=False)
    for leg in LEGS:
        assert 0.0 < with_rotors[leg] < without[leg] < 1.0
    xs = [leg_impact_mitigation(load_model(MODELS / "fennec.toml", drive_overrides({
        "knee.gear_ratio": n, "hip.gear_ratio": n})), q)["fl"]
        for n in (5.0, 10.0, 15.0)]
    assert xs[0] > xs[1] > xs[2]


def test_model_command_reports_backdrive_metrics(capsys):
    assert main(["model", str(MODELS / "fennec.toml"), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    bd = doc["backdrive"]
    # by hand from the demo parts: N^2 (J_rotor + J_in) + J_out = 81 (6.5e-5 + 3e-6) + 2e-5
    assert bd["joints"]["fl_knee"]["reflected_inertia_kg_m2"] == pytest.approx(
        81 * (6.5e-5 + 3.0e-6) + 2.0e-5, rel=1e-12)
    assert set(bd["impact_mitigation_factor"]) == set(LEGS)
