"""Joint gains from the robot (sim/drive/gains.py, docs/control.md)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim.drive.gains import (
    derive_gains,
    joint_inertias,
    largest_step_frequency_rad_s,
    step_is_alternation_free,
    step_is_stable,
    step_matrix,
)
from sim.robot.model import load_model
from sim.scenario.scenario_file import load_scenario
from sim.scenario.segments import stance_angles

from .conftest import MODELS, SCENARIOS


def test_continuous_design_has_the_asked_frequency_and_damping():
    """kp = J w^2, kd = 2 zeta J w: the roots of J s^2 + kd s + kp (numpy.roots) have modulus
    w and -Re/|s| = zeta (second-order system, any control textbook)."""
    m = load_model(MODELS / "fennec.toml")
    g = derive_gains(m, stance_angles(m), 0.001, 0.002, 15.0, 0.6, rotors=True)["hr_knee"]
    roots = np.roots([g.inertia_kg_m2, g.kd_nm_s_rad, g.kp_nm_rad])
    assert abs(roots[0]) == pytest.approx(2 * math.pi * 15.0, rel=1e-9)
    assert -roots[0].real / abs(roots[0]) == pytest.approx(0.6, rel=1e-9)
    assert g.limited_by == "bandwidth" and g.source == "derived"


def test_knee_inertia_by_hand():
    """The knee moves the shank and the foot about its axis: a solid cylinder, m (3 r^2 +
    L^2)/12 about its centre plus m (L/2)^2 (parallel axis), and a solid sphere 2/5 m r^2 plus
    m L^2 (handbook table of mass moments of inertia); with rotors N^2 J_r on top (reflected
    inertia, e.g. Wensing et al. 2017). Demo: shank 0.15 kg, r 0.010, L 0.22; foot 0.04 kg,
    r 0.02; N = 9, J_r = 6.5e-5 + 3e-6 + 2e-5/81 kg m^2 (motor, belt input, knee pulley)."""
    m = load_model(MODELS / "fennec.toml")
    shank = 0.15 * (3 * 0.01 ** 2 + 0.22 ** 2) / 12 + 0.15 * 0.11 ** 2
    foot = 0.4 * 0.04 * 0.02 ** 2 + 0.04 * 0.22 ** 2
    j_r = 6.5e-5 + 3e-6 + 2e-5 / 81
    J, J_app = joint_inertias(m, stance_angles(m), rotors=False)
    assert J["fl_knee"] == pytest.approx(shank + foot, rel=1e-9)
    J_rot, _ = joint_inertias(m, stance_angles(m), rotors=True)
    assert J_rot["fl_knee"] == pytest.approx(shank + foot + 81 * j_r, rel=1e-9)
    # with the hip free the knee feels less (Schur complement), never more
    assert J_app["fl_knee"] < J["fl_knee"]


@pytest.mark.parametrize("a", np.linspace(0.01, 4.5, 23))
@pytest.mark.parametrize("b", np.linspace(0.01, 2.5, 23))
def test_jury_bounds_match_the_eigenvalues_of_the_step(a, b):
    """The explicit step of J qdd = -kp q - kd qd (semi-implicit Euler, as the engine steps):
    stable iff b < 2 and a + 2b < 4 (Jury criterion, E. I. Jury 1964, from memory), and free
    of negative-real (step-to-step alternating) modes iff b <= 1 and a + b < 2: checked
    against the eigenvalues numpy.linalg.eigvals gives for the step matrix."""
    h, J = 0.001, 0.01
    kp, kd = a * J / h ** 2, b * J / h
    lam = np.linalg.eigvals(step_matrix(kp, kd, J, h))
    margin = 1e-9
    if abs(b - 2) > margin and abs(a + 2 * b - 4) > margin:
        assert step_is_stable(kp, kd, J, h) == bool(np.max(np.abs(lam)) < 1.0)
    if abs(b - 1) > margin and abs(a + b - 2) > margin:
        assert step_is_alternation_free(kp, kd, J, h) == bool(np.min(lam.real) > 0.0)


def test_step_matrix_is_the_engines_update():
    """v+ = v + h (-kp q - kd v)/J, q+ = q + h v+ (semi-implicit Euler, measured for this
    engine: ENGINE_NOTES section 2) written on (q, h v)."""
    h, J, kp, kd = 0.002, 0.02, 300.0, 4.0
    q, v = 0.1, -0.7
    v1 = v + h * (-kp * q - kd * v) / J
    q1 = q + h * v1
    assert step_matrix(kp, kd, J, h) @ np.array([q, h * v]) == pytest.approx([q1, h * v1])


@pytest.mark.parametrize("ratio", [1.0, 1.3, 2.0])
@pytest.mark.parametrize("zeta", [0.5, 1.0])
def test_largest_step_frequency_sits_on_the_margin(ratio, zeta):
    """At the returned frequency one of b <= m, a + b <= 2 m holds with equality (on J_app
    = J / ratio), so the frequency cannot be raised."""
    h, m = 0.001, 0.5
    w = largest_step_frequency_rad_s(h, ratio, zeta, m)
    a, b = ratio * (h * w) ** 2, 2 * zeta * ratio * h * w
    assert b <= m + 1e-12 and a + b <= 2 * m + 1e-12
    assert b == pytest.approx(m) or a + b == pytest.approx(2 * m)


def test_a_coarse_step_lowers_the_gains_and_keeps_them_alternation_free():
    m = load_model(MODELS / "fennec.toml")
    q = stance_angles(m)
    fine = derive_gains(m, q, 0.001, 0.002, 20.0, 1.0)
    coarse = derive_gains(m, q, 0.004, 0.004, 20.0, 1.0)
    for j, g in coarse.items():
        assert g.limited_by == "time step", j
        assert g.natural_frequency_hz < fine[j].natural_frequency_hz
        a, b = g.step_numbers(0.004)
        assert b <= 0.5 + 1e-12 and a + b <= 1.0 + 1e-12
        assert step_is_alternation_free(g.kp_nm_rad, g.kd_nm_s_rad, g.apparent_inertia_kg_m2,
                                        0.004)
        assert g.damping_ratio == 1.0


def test_a_slow_control_period_caps_the_frequency():
    """Ten target updates per period of the natural frequency (common practice)."""
    m = load_model(MODELS / "fennec.toml")
    g = derive_gains(m, stance_angles(m), 0.001, 0.01, 20.0, 1.0)["fl_hip"]
    assert g.limited_by == "control period"
    assert g.natural_frequency_hz == pytest.approx(1.0 / (10 * 0.01))


def test_gains_scale_with_the_robot_and_its_rotors():
    """The same bandwidth on a robot with other inertias gives other gains: kp / J is the
    same, kp follows J (with the reflected rotor inertia when rotors are simulated)."""
    off = load_scenario(SCENARIOS / "trot.toml", ['drive.rotor_inertia="off"']).gains
    ex = load_scenario(SCENARIOS / "trot.toml", ['drive.rotor_inertia="exact"']).gains
    for j in ("fl_knee", "hr_hip"):
        assert off[j].kp_nm_rad / off[j].inertia_kg_m2 == pytest.approx(
            ex[j].kp_nm_rad / ex[j].inertia_kg_m2)
        assert ex[j].kp_nm_rad > off[j].kp_nm_rad


def test_written_gains_win_per_kind_and_per_joint():
    scn = load_scenario(SCENARIOS / "trot.toml", ["control.kp_nm_rad.knee=150",
                                                  "control.kd_nm_s_rad.knee=3",
                                                  "control.kp_nm_rad.fl_knee=90",
                                                  "control.kd_nm_s_rad.hr_hip=2.5"])
    g = scn.gains
    assert (g["fl_knee"].kp_nm_rad, g["fl_knee"].kd_nm_s_rad) == (90.0, 3.0)
    assert (g["fr_knee"].kp_nm_rad, g["fr_knee"].kd_nm_s_rad) == (150.0, 3.0)
    assert g["fr_knee"].source == "scenario"
    assert g["hr_hip"].kd_nm_s_rad == 2.5 and g["hr_hip"].source == "derived kp, scenario kd"
    assert g["hl_hip"].source == "derived"
    # the written gains are what they give on the joint's inertia
    k = g["fr_knee"]
    assert k.natural_frequency_hz == pytest.approx(math.sqrt(150 / k.inertia_kg_m2)
                                                   / (2 * math.pi))
    # the record's scenario text keeps only what was written
    text = scn.to_toml()
    assert "fl_knee = 90.0" in text and "hl_hip" not in text


def test_the_record_says_which_gains_were_used(tmp_path):
    from sim.engine.runner import run
    from sim.record import open_record

    scn = load_scenario(SCENARIOS / "stand.toml", ["segment.0.duration_s=0.2",
                                                   "record.start_s=0", "control.kp_nm_rad.hip=99"])
    run(scn, tmp_path / "s.h5")
    with open_record(tmp_path / "s.h5") as rec:
        head = rec.group_attrs("control")
        knee = rec.group_attrs("control/fl_knee")
        hip = rec.group_attrs("control/fr_hip")
    assert head is not None and knee is not None and hip is not None
    assert head["bandwidth_hz"] == 20.0 and head["derived_joints"] == 8
    assert knee["source"] == "derived"
    assert knee["kp_nm_rad"] == pytest.approx(scn.gains["fl_knee"].kp_nm_rad)
    assert hip["source"] == "scenario kp, derived kd" and hip["kp_nm_rad"] == 99.0


@pytest.mark.parametrize("bad", ["control.kp_nm_rad.elbow=3", "control.bandwidth_hz=0",
                                 "control.kd_nm_s_rad.fl_knee=-1"])
def test_bad_gain_keys_exit_with_the_key(bad):
    from sim.core.errors import InputError

    with pytest.raises(InputError, match=bad.split("=")[0].replace(".", r"\.")):
        load_scenario(SCENARIOS / "trot.toml", [bad])


def _knee_pd_in_the_engine(b: float, steps: int = 400) -> tuple[float, float]:
    """The demo robot floating in zero gravity, every joint but fl_knee held softly, fl_knee
    under PD with kd = b J_app / h (J_app: the knee with its leg free): the share of steps at
    which the torque change reverses sign, and the largest |torque| over the last 50 steps."""
    from sim.engine.world import JOINT_INDICES, Engine, pb

    scn = load_scenario(SCENARIOS / "stand.toml", ["drive.losses=false"])
    m = scn.model
    q0 = stance_angles(m).reshape(-1)
    _, J_app = joint_inertias(m, stance_angles(m), rotors=False)
    h = scn.time_step_s
    kd = b * J_app["fl_knee"] / h
    kp = 0.05 * J_app["fl_knee"] / h ** 2  # a = 0.05: the damping term decides
    eng = Engine(scn)
    try:
        c, r = eng.cid, eng.robot
        pb.setGravity(0, 0, 0, physicsClientId=c)
        eng.place(stance_angles(m), 1.0)
        k = 2  # fl_knee
        taus = []
        for _ in range(steps):
            st = pb.getJointStates(r, JOINT_INDICES, physicsClientId=c)
            tau = [20.0 * (q0[i] - s[0]) - 0.2 * s[1] for i, s in enumerate(st)]
            tau[k] = kp * (q0[k] + 0.1 - st[k][0]) - kd * st[k][1]
            pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                         physicsClientId=c)
            pb.stepSimulation(physicsClientId=c)
            taus.append(tau[k])
            if not math.isfinite(tau[k]) or abs(tau[k]) > 1e6:
                break
    finally:
        eng.close()
    d = np.diff(taus)
    return float(np.mean(np.sign(d[1:]) != np.sign(d[:-1]))), float(np.max(np.abs(taus[-50:])))


def test_the_step_bounds_hold_in_the_engine():
    """The engine's explicit PD follows the derivation: alternation-free below b = 1, a
    period-two ringing that still decays between 1 and 2, divergence above 2 (kd h / J_app)."""
    rev_low, end_low = _knee_pd_in_the_engine(0.6)
    rev_mid, end_mid = _knee_pd_in_the_engine(1.6)
    _, end_high = _knee_pd_in_the_engine(2.4)
    assert rev_low < 0.1 and rev_mid > 0.5
    assert end_mid < 1.0 and end_high > 100.0
