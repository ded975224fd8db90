"""Joint gains from the robot, and robots of other sizes to try them on.

Outside references: the second-order loop ``J x'' + kd x' + kp x = 0`` has ``w = sqrt(kp/J)``
and ``zeta = kd / (2 sqrt(kp J))`` (Ogata, Modern Control Engineering; from memory); the
stability of the semi-implicit Euler step is checked by iterating the step itself (numpy), not
by the formula under test; the joint inertias against pinocchio's CRBA of the generated URDF.
"""

from __future__ import annotations

import json
import math

import h5py
import numpy as np
import pytest

from sim import JOINT_NAMES
from sim.commands.cli import main
from sim.drive.backdrive import mass_matrix
from sim.drive.gains import (
    STEP_NUMBER_MAX,
    joint_gains,
    largest_bandwidth_rad_s,
    step_is_alternation_free,
    step_is_stable,
    step_matrix,
    step_number,
    swing_inertias,
)
from sim.robot.model import load_model
from sim.scenario.scenario_file import load_scenario
from sim.scenario.segments import stance_angles

from .conftest import MODELS, SCENARIOS


def _euler_grows(kp: float, kd: float, J: float, dt: float, n: int = 300) -> bool:
    """Iterate the engine's step (v' = v + dt a(x, v), x' = x + dt v') and see if it grows."""
    x, v = 1.0, 0.0
    for _ in range(n):
        v = v + dt * (-kp * x - kd * v) / J
        x = x + dt * v
    return bool(abs(x) + abs(v) * dt > 1.0)


@pytest.mark.parametrize("factor", [0.9, 1.1])
def test_the_step_number_bound_is_where_the_explicit_loop_turns_unstable(factor):
    J, dt, kd = 0.004, 1e-3, 0.5
    # kp that puts (kp dt^2 + 2 kd dt) / J at factor x 4
    kp = (factor * 4.0 * J - 2.0 * kd * dt) / dt ** 2
    assert step_number(kp, kd, J, dt) == pytest.approx(4.0 * factor)
    assert _euler_grows(kp, kd, J, dt) == (factor > 1.0)


def test_the_largest_bandwidth_meets_the_step_limit():
    for zeta, dt in ((1.0, 1e-3), (0.7, 5e-4), (1.5, 2e-3)):
        w = largest_bandwidth_rad_s(zeta, dt)
        assert w * w * dt * dt + 4 * zeta * w * dt == pytest.approx(STEP_NUMBER_MAX, rel=1e-12)


def test_swing_inertias_match_pinocchio():
    # 1 / (H^-1)_jj of the floating-base CRBA mass matrix of the URDF (armature N^2 J_r)
    m = load_model(MODELS / "fennec.toml")
    q = stance_angles(m)
    from .test_backdrive import _pin_mass_matrix  # CRBA, base first, joints in name order

    got = swing_inertias(m, q, rotors=True)
    hinv = np.linalg.inv(_pin_mass_matrix(m, q))
    for i, j in enumerate(JOINT_NAMES):
        assert got[j] == pytest.approx(1.0 / hinv[6 + i, 6 + i], rel=1e-9), j


def test_derived_gains_give_the_asked_bandwidth_and_damping():
    m = load_model(MODELS / "fennec.toml")
    g = joint_gains(m, stance_angles(m), 1e-3, rotors=True, bandwidth_hz=12.0,
                    damping_ratio=1.0)
    for j, jg in g.items():
        w = math.sqrt(jg.kp_nm_rad / jg.inertia_kg_m2)  # Ogata's natural frequency
        assert w == pytest.approx(2 * math.pi * 12.0, rel=1e-12), j
        assert jg.kd_nm_s_rad / (2 * math.sqrt(jg.kp_nm_rad * jg.inertia_kg_m2)) == \
            pytest.approx(1.0, rel=1e-12)
        assert jg.source == "derived" and jg.step_number <= STEP_NUMBER_MAX
    # a bandwidth the step cannot hold is lowered to the limit
    fast = joint_gains(m, stance_angles(m), 5e-3, rotors=False, bandwidth_hz=60.0)
    for jg in fast.values():
        assert jg.source.startswith("derived, bandwidth lowered")
        assert jg.step_number == pytest.approx(STEP_NUMBER_MAX, rel=1e-9)
        assert not _euler_grows(jg.kp_nm_rad, jg.kd_nm_s_rad, jg.inertia_kg_m2, 5e-3)


def test_written_gains_win_and_the_record_says_which_were_used(tmp_path):
    scn = load_scenario(SCENARIOS / "stand.toml", [
        "control.kp_nm_rad.knee=80.0", "control.kd_nm_s_rad.knee=2.0",
        "control.kp_nm_rad.hr_knee=60.0", "control.kd_nm_s_rad.fl_hip=1.5",
        "segment.0.duration_s=1.2", "record.start_s=1.0"])
    g = scn.gains
    assert (g["fl_knee"].kp_nm_rad, g["fl_knee"].kd_nm_s_rad) == (80.0, 2.0)
    assert g["fl_knee"].source == "scenario"
    assert g["hr_knee"].kp_nm_rad == 60.0  # a joint's value wins over its kind's
    assert g["fl_hip"].kd_nm_s_rad == 1.5 and g["fl_hip"].source == "derived kp, scenario kd"
    assert g["fr_hip"].source == "derived"  # derived is the default
    written = load_scenario(SCENARIOS / "stand.toml", ["control.gains=written"])
    assert written.gains["fl_hip"].kp_nm_rad == 150.0  # the written tables' default
    assert written.gains["fl_hip"].kd_nm_s_rad == 3.0
    # the record's scenario text keeps only what was written (derived gains are not written)
    text = scn.to_toml()
    assert "hr_knee = 60.0" in text and "fr_hip" not in text
    from sim.engine.runner import run

    res = run(scn, tmp_path / "s.h5")
    assert res.status == "completed", res.detail
    with h5py.File(tmp_path / "s.h5") as f:
        doc = json.loads(f.attrs["control_gains_json"])
    assert doc["fl_knee"]["kp_nm_rad"] == 80.0 and doc["fr_hip"]["source"] == "derived"
    assert doc["fl_hip"]["source"] == "derived kp, scenario kd"


# --- robots of other sizes ----------------------------------------------------------------------

@pytest.mark.parametrize("kg", [6.0, 35.0])
def test_a_scaled_robot_has_the_mass_and_torque_by_similarity(tmp_path, kg, capsys):
    out = tmp_path / f"r{kg:g}.toml"
    assert main(["model", str(MODELS / "fennec.toml"), "--scale-to-mass", str(kg), "-o",
                 str(out)]) == 0
    capsys.readouterr()
    demo, made = load_model(MODELS / "fennec.toml"), load_model(out)
    r = kg / demo.total_mass_kg
    assert made.total_mass_kg == pytest.approx(kg, rel=1e-5)  # every mass times r
    assert made.leg["thigh_length_m"] == pytest.approx(0.22 * r ** (1 / 3), rel=1e-5)
    # peak output torque I_max Kt N = (30 sqrt(t)) (Kt_ref sqrt(t)) 10, t = r^(4/3),
    # Kt_ref = 32.2289 / 300 N m/A (the demo knee's I_max Kt N over 10 and 30 A)
    t = r ** (4 / 3)
    assert made.actuators["fl_knee"].peak_torque_nm == pytest.approx(32.2289 * t, rel=1e-5)


@pytest.mark.parametrize("kg", ["6", "35"])
def test_scaled_robots_trot_and_stand_up_with_the_shipped_scenarios(tmp_path, kg, capsys):
    out = tmp_path / f"r{kg}.toml"
    assert main(["model", str(MODELS / "fennec.toml"), "--scale-to-mass", kg, "-o",
                 str(out)]) == 0
    from sim.engine.runner import run

    for name, extra in (("trot", ["segment.1.duration_s=3.5"]), ("stand_up", [])):
        scn = load_scenario(SCENARIOS / f"{name}.toml", [f"robot={out}", *extra])
        res = run(scn, tmp_path / f"{name}.h5")
        assert res.status == "completed", (name, res.detail)


@pytest.mark.parametrize("kg", ["2", "80"])
def test_a_mass_out_of_range_is_refused(tmp_path, kg, capsys):
    code = main(["model", str(MODELS / "fennec.toml"), "--scale-to-mass", kg, "-o",
                 str(tmp_path / "x.toml")])
    assert code == 2
    assert "3 to 60 kg" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


# the defaults simulate the complete dynamics: exact rotor inertia, derived gains and a foot pad
# derived from the weight (docs/control.md); the tests run the shipped scenario files unchanged,
# shortened with --set


@pytest.fixture(scope="module")
def scaled_robots(tmp_path_factory):
    d = tmp_path_factory.mktemp("robots")
    out = {}
    for kg in ("6", "15", "35"):
        out[kg] = d / f"r{kg}.toml"
        assert main(["model", "--scale-to-mass", kg, "-o", str(out[kg])]) == 0
    return out


def _step_halving(robot, name: str, extra: list[str], tmp_path) -> dict[float, dict]:
    from sim.engine.runner import run

    got: dict[float, dict] = {}
    for dt in (0.001, 0.0005):
        scn = load_scenario(SCENARIOS / f"{name}.toml",
                            [f"robot={robot}", f"time_step_s={dt}", *extra])
        res = run(scn, tmp_path / f"{name}{dt}.h5")
        assert res.status == "completed", (name, dt, res.detail)
        with h5py.File(tmp_path / f"{name}{dt}.h5") as f:
            hf = {j: float(f[f"quality/{j}"].attrs["torque_high_frequency_share"])
                  for j in JOINT_NAMES if not j.endswith("abad")}
        got[dt] = {"hf": hf, "peak": {j: res.joints[j]["peak_torque_nm"] for j in JOINT_NAMES
                                      if j.endswith("knee")},
                   "rms": {j: res.joints[j]["rms_torque_nm"] for j in JOINT_NAMES
                           if j.endswith("knee")}}
    return got


@pytest.mark.parametrize("kg", ["6", "15", "35"])
@pytest.mark.parametrize("name, extra", [
    ("trot", ["segment.1.duration_s=3", "record.start_s=1.5", "segment.1.speed_m_s=0.6"]),
    ("stand_up", [])], ids=["trot", "stand_up"])
def test_shipped_scenarios_are_clean_and_converged_on_robots_of_any_size(
        scaled_robots, kg, name, extra, tmp_path):
    """Generated robots of 6, 15 and 35 kg trot at 0.6 m/s and stand up with the shipped
    files: at most 15 % of any hip or knee torque's RMS above 100 Hz (the quality screen's
    chatter share, common practice), and every knee's peak and RMS torque within 10 % between
    1 ms and 0.5 ms steps (step-halving convergence, common practice)."""
    got = _step_halving(scaled_robots[kg], name, extra, tmp_path)
    for dt, g in got.items():
        for j, hf in g["hf"].items():
            assert hf <= 0.15, (kg, name, dt, j, hf)
    a, b = got[0.001], got[0.0005]
    for j in a["peak"]:
        assert a["peak"][j] == pytest.approx(b["peak"][j], rel=0.10), (kg, name, j)
        assert a["rms"][j] == pytest.approx(b["rms"][j], rel=0.10), (kg, name, j)


def test_continuous_design_has_the_asked_frequency_and_damping():
    """kp = J w^2, kd = 2 zeta J w: the roots of J s^2 + kd s + kp (numpy.roots) have modulus
    w and -Re/|s| = zeta (second-order system; Ogata, from memory)."""
    m = load_model(MODELS / "fennec.toml")
    g = joint_gains(m, stance_angles(m), 1e-3, True, 15.0, 0.6)["hr_knee"]
    roots = np.roots([g.inertia_kg_m2, g.kd_nm_s_rad, g.kp_nm_rad])
    assert abs(roots[0]) == pytest.approx(2 * math.pi * 15.0, rel=1e-9)
    assert -roots[0].real / abs(roots[0]) == pytest.approx(0.6, rel=1e-9)


def test_the_knee_diagonal_of_the_mass_matrix_by_hand():
    """The knee moves the shank and the foot about its axis: a solid cylinder m (3 r^2 +
    L^2)/12 about its centre plus m (L/2)^2 (parallel axis) and a solid sphere 2/5 m r^2 plus
    m L^2 (handbook table of mass moments of inertia); with rotors N^2 J_r on top (reflected
    inertia). Demo: shank 0.15 kg, r 0.010, L 0.22; foot 0.04 kg, r 0.02; N = 9, J_r = 6.5e-5
    + 3e-6 + 2e-5 / 81 kg m^2 (motor, belt input, knee pulley); the swing inertia the gains
    use (the knee with every other joint and the base free) is less."""
    m = load_model(MODELS / "fennec.toml")
    q = stance_angles(m)
    shank = 0.15 * (3 * 0.01 ** 2 + 0.22 ** 2) / 12 + 0.15 * 0.11 ** 2
    foot = 0.4 * 0.04 * 0.02 ** 2 + 0.04 * 0.22 ** 2
    j_r = 6.5e-5 + 3e-6 + 2e-5 / 81
    H, _ = mass_matrix(m, q, armature=False)
    assert H[8, 8] == pytest.approx(shank + foot, rel=1e-9)  # fl_knee is joint 2
    H, _ = mass_matrix(m, q, armature=True)
    assert H[8, 8] == pytest.approx(shank + foot + 81 * j_r, rel=1e-9)
    assert swing_inertias(m, q, rotors=True)["fl_knee"] < H[8, 8]


@pytest.mark.parametrize("a", np.linspace(0.05, 4.45, 12))
@pytest.mark.parametrize("b", np.linspace(0.05, 2.45, 12))
def test_jury_bounds_match_the_eigenvalues_of_the_step(a, b):
    """The explicit step is stable iff b < 2 and a + 2b < 4 (Jury criterion, E. I. Jury 1964,
    from memory) and free of negative-real, step-to-step alternating modes iff b <= 1 and
    a + b < 2 (derived in sim/drive/gains.py): both checked against the eigenvalues
    numpy.linalg.eigvals gives for the step matrix."""
    h, J = 0.001, 0.01
    kp, kd = a * J / h ** 2, b * J / h
    lam = np.linalg.eigvals(step_matrix(kp, kd, J, h))
    assert step_is_stable(kp, kd, J, h) == bool(np.max(np.abs(lam)) < 1.0)
    assert step_is_alternation_free(kp, kd, J, h) == bool(np.min(lam.real) > 0.0)
    # the derived gains' limit lies inside the alternation-free region
    if a + 2 * b <= STEP_NUMBER_MAX:
        assert step_is_alternation_free(kp, kd, J, h)


def test_step_matrix_is_the_engines_update():
    """v+ = v + h (-kp q - kd v)/J, q+ = q + h v+ (semi-implicit Euler, measured for this
    engine: ENGINE_NOTES section 2) written on (q, h v)."""
    h, J, kp, kd = 0.002, 0.02, 300.0, 4.0
    q, v = 0.1, -0.7
    v1 = v + h * (-kp * q - kd * v) / J
    q1 = q + h * v1
    assert step_matrix(kp, kd, J, h) @ np.array([q, h * v]) == pytest.approx([q1, h * v1])


def test_a_slow_control_period_lowers_the_bandwidth():
    """Ten control updates per period of the bandwidth (common practice)."""
    m = load_model(MODELS / "fennec.toml")
    g = joint_gains(m, stance_angles(m), 1e-3, True, 16.0, 1.0, control_period_s=0.01)
    assert g["fl_hip"].source == "derived, bandwidth lowered for the control period"
    assert g["fl_hip"].bandwidth_hz == pytest.approx(1.0 / (10 * 0.01))
    scn = load_scenario(SCENARIOS / "trot.toml", ["control.update_period_s=0.01"])
    assert scn.gains["fl_knee"].bandwidth_hz == pytest.approx(10.0)


def test_gains_follow_the_rotors():
    """The same bandwidth on a larger inertia: kp / J is the same, kp follows J."""
    off = load_scenario(SCENARIOS / "trot.toml", ['drive.rotor_inertia="off"']).gains
    ex = load_scenario(SCENARIOS / "trot.toml").gains
    for j in ("fl_knee", "hr_hip"):
        assert off[j].kp_nm_rad / off[j].inertia_kg_m2 == pytest.approx(
            ex[j].kp_nm_rad / ex[j].inertia_kg_m2)
        assert ex[j].kp_nm_rad > off[j].kp_nm_rad


def _knee_pd_in_the_engine(b: float, steps: int = 400) -> tuple[float, float]:
    """The demo robot floating in zero gravity, rigid joints, every joint but fl_knee held
    softly, fl_knee under PD with kd = b J / h (J: its swing inertia, everything else free):
    the share of the first 20 steps at which the torque change reverses sign (the start
    excites every mode), and the largest |torque| over the last 50 steps."""
    from sim.engine.world import JOINT_INDICES, Engine, pb

    scn = load_scenario(SCENARIOS / "stand.toml", ["drive.losses=false",
                                                   'drive.rotor_inertia="off"'])
    m = scn.model
    q0 = stance_angles(m).reshape(-1)
    J = swing_inertias(m, stance_angles(m), rotors=False)["fl_knee"]
    h = scn.time_step_s
    kd = b * J / h
    kp = 0.05 * J / h ** 2  # a = 0.05: the damping term decides
    eng = Engine(scn)
    try:
        c, r = eng.cid, eng.robot
        pb.setGravity(0, 0, 0, physicsClientId=c)
        eng.place(stance_angles(m), 1.0)
        k = 2  # fl_knee
        taus = []
        for _ in range(steps):
            st = pb.getJointStates(r, JOINT_INDICES, physicsClientId=c)
            tau = [2.0 * (q0[i] - s[0]) - 0.02 * s[1] for i, s in enumerate(st)]
            tau[k] = kp * (q0[k] + 0.1 - st[k][0]) - kd * st[k][1]
            pb.setJointMotorControlArray(r, JOINT_INDICES, pb.TORQUE_CONTROL, forces=tau,
                                         physicsClientId=c)
            pb.stepSimulation(physicsClientId=c)
            taus.append(tau[k])
            if not math.isfinite(tau[k]) or abs(tau[k]) > 1e6:
                break
    finally:
        eng.close()
    d = np.diff(taus[:21])
    return float(np.mean(np.sign(d[1:]) != np.sign(d[:-1]))), float(np.max(np.abs(taus[-50:])))


def test_the_step_bounds_hold_in_the_engine():
    """The engine's explicit PD follows the derivation: no alternation below b = 1, a
    period-two ringing that still decays between 1 and 2, divergence above 2 (b = kd h / J)."""
    rev_low, end_low = _knee_pd_in_the_engine(0.6)
    rev_mid, end_mid = _knee_pd_in_the_engine(1.8)
    _, end_high = _knee_pd_in_the_engine(2.2)
    assert rev_low < 0.2 and rev_mid > 0.8
    assert end_low < 1.0 and end_mid < 1.0 and end_high > 100.0


@pytest.mark.parametrize("bad", ["control.kp_nm_rad.elbow=3", "control.bandwidth_hz=0",
                                 "control.kd_nm_s_rad.fl_knee=-1"])
def test_bad_gain_keys_exit_with_the_key(bad):
    from sim.core.errors import InputError

    with pytest.raises(InputError, match=bad.split("=")[0].replace(".", r"\.")):
        load_scenario(SCENARIOS / "trot.toml", [bad])
