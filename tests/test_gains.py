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
import pinocchio as pin
import pytest

from sim import JOINT_NAMES
from sim.commands.cli import main
from sim.drive.gains import (
    STEP_NUMBER_MAX,
    joint_gains,
    largest_bandwidth_rad_s,
    step_number,
    swing_inertias,
)
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf
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
    got = swing_inertias(m, q, rotors=True)
    pm = pin.buildModelFromXML(build_urdf(m), pin.JointModelFreeFlyer())
    qf = pin.neutral(pm)
    cols = []
    for i, j in enumerate(JOINT_NAMES):
        jm = pm.joints[pm.getJointId(j)]
        qf[jm.idx_q] = q.reshape(-1)[i]
        pm.armature[jm.idx_v] = m.actuators[j].reflected_inertia_kg_m2
        cols.append(jm.idx_v)
    H = pin.crba(pm, pm.createData(), qf)
    H = np.triu(H) + np.triu(H, 1).T
    hinv = np.linalg.inv(H)
    for j, c in zip(JOINT_NAMES, cols, strict=True):
        assert got[j] == pytest.approx(1.0 / hinv[c, c], rel=1e-9), j


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
        "control.gains=derived", "control.kp_nm_rad.knee=80.0", "segment.0.duration_s=1.2",
        "record.start_s=1.0"])
    assert scn.gains["fl_knee"].kp_nm_rad == 80.0 and scn.gains["fl_knee"].source == "scenario"
    assert scn.gains["fl_hip"].source == "derived"
    written = load_scenario(SCENARIOS / "stand.toml")
    assert written.gains["fl_hip"].kp_nm_rad == 150.0  # the written default
    from sim.engine.runner import run

    res = run(scn, tmp_path / "s.h5")
    assert res.status == "completed", res.detail
    with h5py.File(tmp_path / "s.h5") as f:
        doc = json.loads(f.attrs["control_gains_json"])
    assert doc["fl_knee"]["kp_nm_rad"] == 80.0 and doc["fl_hip"]["source"] == "derived"


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


# complete dynamics: rotor inertia, derived gains, a derived foot pad, the command held to its
# last rate of change between updates (docs/gaits.md "Complete dynamics")
COMPLETE = ["drive.rotor_inertia=approximate", "control.gains=derived", "ground.pad=true",
            "control.hold=command"]


@pytest.fixture(scope="module")
def scaled_robots(tmp_path_factory):
    d = tmp_path_factory.mktemp("robots")
    out = {}
    for kg in ("6", "15", "35"):
        out[kg] = d / f"r{kg}.toml"
        assert main(["model", str(MODELS / "fennec.toml"), "--scale-to-mass", kg, "-o",
                     str(out[kg])]) == 0
    return out


@pytest.mark.parametrize("kg", [
    pytest.param("6", marks=pytest.mark.xfail(
        strict=True, reason="known gap, measured: the 6 kg robot's fr_knee peak is 4.05 N m "
        "at 1 ms and 4.58 N m at 0.5 ms (12 %); RMS and the other knees agree")),
    "15", "35"])
def test_complete_dynamics_trot_is_clean_and_converged_in_the_step(scaled_robots, kg,
                                                                   tmp_path, capsys):
    from sim.engine.runner import run

    peaks, rmss = {}, {}
    for dt in (0.001, 0.0005):
        scn = load_scenario(SCENARIOS / "trot.toml", [
            f"robot={scaled_robots[kg]}", "segment.1.duration_s=5.0", f"time_step_s={dt}",
            "control.update_period_s=0.002", *COMPLETE])
        res = run(scn, tmp_path / f"t{dt}.h5")
        assert res.status == "completed", res.detail
        if dt == 0.001:
            with h5py.File(tmp_path / f"t{dt}.h5") as f:
                for j in JOINT_NAMES:
                    if not j.endswith("abad"):
                        hf = float(f[f"quality/{j}"].attrs["torque_high_frequency_share"])
                        # at most 15 % of the torque RMS above 100 Hz (common practice)
                        assert hf <= 0.15, (kg, j, hf)
        peaks[dt] = {j: res.joints[j]["peak_torque_nm"] for j in JOINT_NAMES if "knee" in j}
        rmss[dt] = {j: res.joints[j]["rms_torque_nm"] for j in JOINT_NAMES if "knee" in j}
    # step-halving convergence within 10 % (common practice)
    for j in peaks[0.001]:
        assert peaks[0.001][j] == pytest.approx(peaks[0.0005][j], rel=0.10), (kg, j)
        assert rmss[0.001][j] == pytest.approx(rmss[0.0005][j], rel=0.10), (kg, j)


@pytest.mark.parametrize("kg", ["6", "35"])
def test_complete_dynamics_stand_up_completes(scaled_robots, kg, tmp_path):
    from sim.engine.runner import run

    scn = load_scenario(SCENARIOS / "stand_up.toml", [f"robot={scaled_robots[kg]}", *COMPLETE])
    res = run(scn, tmp_path / "s.h5")
    assert res.status == "completed", res.detail
