"""Drops onto four feet: the landing obeys the impulse-momentum theorem and loads rise as
expected with drop height and reducer ratio.

Oracles: Newton's second law for the whole robot, integrated over the landing (impulse-
momentum theorem, any mechanics text, e.g. Meriam & Kraige, Engineering Mechanics: Dynamics,
"linear impulse and momentum"); for the trends, the reflected inertia N^2 J_r of a geared
rotor (e.g. Wensing et al., IEEE Trans. Robotics 33(3), 2017, on how it stiffens a leg at
impact) and free fall of the centre of mass.
"""

from __future__ import annotations

import numpy as np
import pytest

from sim import LEGS
from sim.engine.runner import run
from sim.record import open_record
from sim.robot.statics import StanceStatics
from sim.scenario.scenario_file import load_scenario

from .conftest import SCENARIOS
from .helpers import drive_set_args

G = 9.80665


def _drop(tmp_path, name, extra):
    scn = load_scenario(SCENARIOS / "drop.toml", ["segment.0.duration_s=0.45", *extra])
    res = run(scn, tmp_path / f"{name}.h5")
    assert res.status == "completed", res.detail
    return scn, res.record


def _rotation(quat_xyzw):
    x, y, z, w = quat_xyzw
    return np.array([[1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
                     [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
                     [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)]])


def _com_and_feet(rec, statics):
    """Whole-robot COM [n, 3] and foot bottom heights [n, 4] at the start of each step, from
    the recorded base pose and joint angles through the model's kinematics."""
    base = rec.read("base/position_m")
    quat = rec.read("base/orientation_xyzw")
    q = np.stack([rec.read(f"joints/{j}/angle_rad") for j in rec.joint_names], 1)
    com = np.empty((len(base), 3))
    feet = np.empty((len(base), 4))
    for i in range(len(base)):
        R = _rotation(quat[i])
        qi = q[i].reshape(4, 3)
        com[i] = base[i] + R @ statics.com_b(qi)
        feet[i] = (base[i] + statics.kin.foot_positions(qi) @ R.T)[:, 2]
    return com, feet - statics.kin.foot_radius_m


def _peak_gearbox_knee(path) -> float:
    with open_record(path) as rec:
        return max(float(np.abs(rec.read(f"joints/{leg}_knee/gearbox_torque_nm")).max())
                   for leg in LEGS)


@pytest.mark.parametrize("mode", ["off", "exact"])
def test_landing_impulse_equals_momentum_change(tmp_path, mode):
    scn, path = _drop(tmp_path, mode, [f"drive.rotor_inertia={mode}"])
    statics = StanceStatics(scn.model)
    with open_record(path) as rec:
        m = float(rec.attrs["total_mass_kg"])
        dt = float(rec.attrs["sample_period_s"])
        assert int(rec.attrs["decimation"]) == 1
        fz = sum(rec.read(f"feet/{leg}/force_n")[:, 2] for leg in LEGS)
        per_foot = np.stack([rec.read(f"feet/{leg}/contact") for leg in LEGS], 1)
        contact = per_foot.sum(axis=1)
        # sample i: state at the start of step i; foot forces and contacts over step i
        com, bottom = _com_and_feet(rec, statics)
    v = np.diff(com[1:, 2]) / dt  # v[i]: COM vertical speed after step i + 1
    first = int(np.argmax(contact > 0))
    s, e = first - 10, first + 120  # from just before touchdown to after the impact
    dp = m * (v[e - 1] - v[s - 1])  # momentum after step e minus after step s
    impulse = float(np.sum(fz[s + 1:e + 1]) * dt)
    gravity = -m * G * (e - s) * dt
    assert dp > 0.5 * m  # the landing stops a ~1.4 m/s fall
    assert impulse > 10.0
    # impulse-momentum theorem: sum of foot impulses + gravity impulse = momentum change
    assert impulse + gravity == pytest.approx(dp, rel=0.03, abs=0.03 * impulse)
    # before touchdown the COM falls freely whatever the legs do: speed g t after step s
    assert -v[s - 1] == pytest.approx(G * (s + 1) * dt, rel=1e-3)
    # the lowest foot starts the set 0.10 m above the ground (to the pad's 1 mm)
    assert bottom[0].min() == pytest.approx(0.10, abs=1e-3)
    # each foot's first contact is the step at whose end its bottom (from the recorded base
    # pose and angles through the kinematics) has reached the ground, or the next one: the
    # engine makes contact points from the positions at the start of a step, so a foot still
    # more than its contact margin above the ground then touches one step later (measured:
    # 0.23 mm above at the step's start touched in that step, 0.74 mm above in the next)
    for k, leg in enumerate(LEGS):
        reached = int(np.argmax(bottom[1:, k] <= 0.0))
        assert bottom[reached, k] > 0.0
        assert int(np.argmax(per_foot[:, k] > 0)) - reached in (0, 1), leg


def test_peak_knee_torque_rises_with_drop_height(tmp_path):
    peaks = [_peak_gearbox_knee(_drop(tmp_path, f"h{h}", [f"start.drop_height_m={h}"])[1])
             for h in (0.04, 0.10, 0.18)]
    assert peaks[0] < peaks[1] < peaks[2], peaks


def _peak_foot_force(path) -> float:
    with open_record(path) as rec:
        return float(sum(rec.read(f"feet/{leg}/force_n")[:, 2] for leg in LEGS).max())


def test_peak_knee_gearbox_torque_rises_with_ratio_at_equal_output_limit(tmp_path):
    # stiff floor (the engine's rigid contact): the reflected inertia N^2 J_r is stopped by
    # the gear; on the compliant default pad the knee peak is set by the PD and the torque
    # limit instead (docs/dynamics.md), but the total foot force still rises with N
    peaks, forces = [], []
    for n in (5.0, 9.0, 15.0):
        amps = 30.0 * 9.0 / n  # same output torque limit N k I_max as the demo knee
        # the knee reducer: the generic rated part at ratio n, ideal (no losses or inertia)
        # the same written gains for every ratio: the derived ones follow N^2 J_r, which
        # would change the legs' stiffness along with the reflected inertia
        ratio = [*drive_set_args({"knee.gear_ratio": n, "knee.current_limit_a": amps}),
                 "control.gains=written"]
        peaks.append(_peak_gearbox_knee(_drop(tmp_path, f"n{n}", [
            *ratio, "ground.stiffness_n_m=0", "ground.damping_n_s_m=0"])[1]))
        forces.append(_peak_foot_force(_drop(tmp_path, f"soft{n}", ratio)[1]))
    assert peaks[0] < peaks[1] < peaks[2], peaks
    assert forces[0] < forces[1] < forces[2], forces


def test_jump_leaves_the_ground_and_lands_on_its_feet(tmp_path):
    # ballistic flight of the whole robot's centre of mass, whatever the legs do in the air:
    # it falls at g, and the airtime follows from the take-off speed v and the COM height
    # lost between take-off and touchdown dz: t = (v + sqrt(v^2 + 2 g dz)) / g
    scn = load_scenario(SCENARIOS / "jump.toml", ["segment.0.duration_s=2.0"])
    res = run(scn, tmp_path / "jump.h5")
    assert res.status == "completed", res.detail
    with open_record(res.record) as rec:
        dt = float(rec.attrs["sample_period_s"])
        assert int(rec.attrs["decimation"]) == 1
        contact = sum(rec.read(f"feet/{leg}/contact") for leg in LEGS)
        com, _ = _com_and_feet(rec, StanceStatics(scn.model))
    airborne = np.flatnonzero(contact == 0)
    a, b = int(airborne[0]), int(airborne[-1])
    assert airborne.size == b - a + 1  # one flight
    assert airborne.size * dt > 0.1
    z = com[a:b + 2, 2]  # COM at the start of each flight step and after the last
    acc = np.diff(z, 2) / dt**2
    assert float(acc.mean()) == pytest.approx(-G, rel=2e-3)
    v = (z[1] - z[0]) / dt
    assert v > 0.5  # it took off
    t_flight = (v + np.sqrt(v * v + 2 * G * (z[0] - z[-1]))) / G
    assert airborne.size * dt == pytest.approx(t_flight, abs=2 * dt)
    assert contact[-1] == 4  # back on four feet
    # the rotors take their inertial torque N^2 J_r qdd out of the motor's (reflected inertia,
    # Wensing et al. 2017): motor side minus gearbox torque against N^2 J_r qdd over the
    # jump, least-squares slope 1 (to 10 %: reducer friction and efficiency, and the rotor's
    # coupling with the thigh, make the rest). On the jump's pad the landing is soft and the
    # knee peaks come in the push, where the rotors take torque (gearbox below motor side)
    a = scn.model.actuators["fl_knee"]
    with open_record(res.record) as rec:
        w = rec.read("joints/fl_knee/speed_rad_s")
        diff = rec.read("joints/fl_knee/torque_nm") - rec.read("joints/fl_knee/gearbox_torque_nm")
    acc = np.append(np.diff(w) / dt, 0.0)
    pred = a.reflected_inertia_kg_m2 * acc
    assert float(np.dot(diff, pred) / np.dot(pred, pred)) == pytest.approx(1.0, abs=0.1)
    # the record's every-step statistics follow the load at the reducer output
    assert res.joints["fl_knee"]["peak_torque_nm"] == res.joints["fl_knee"][
        "peak_gearbox_torque_nm"]


def test_spectra_of_a_rotor_run_follow_the_reducer_output_torque(tmp_path):
    # regression: with rotors the histograms (and so reducer life) must see the gearbox
    # output torque, not the motor torque x ratio; checked against the recorded series
    from sim.loads.spectra import spectrum_from_record

    _, path = _drop(tmp_path, "rot", ["drive.rotor_inertia=exact", "record.decimation=1",
                                      "ground.stiffness_n_m=0", "ground.damping_n_s_m=0"])
    with open_record(path) as rec:
        assert rec.attrs["load_torque"] == "gearbox_torque_nm"
        gb = np.abs(rec.read("joints/fl_knee/gearbox_torque_nm")).max()
        ms = np.abs(rec.read("joints/fl_knee/torque_nm")).max()
        spec = spectrum_from_record(rec, "fl_knee")
        s = rec.summary("fl_knee")
    assert gb > 1.05 * ms  # the rotor makes a difference in this landing
    assert spec.peak_torque_nm == pytest.approx(gb, rel=1e-9)
    assert s.peak_motor_side_torque_nm == pytest.approx(ms, rel=1e-9)
    # time at level: every step counted once
    assert spec.time_s.sum() == pytest.approx(s.duration_s, rel=1e-9)


def test_motor_check_does_not_count_simulated_rotors_twice(tmp_path):
    # with rotors in the simulation, torque_nm is already motor torque x ratio including the
    # rotor's inertia: the motor check must then take it as is (T_m = torque_nm / N, the
    # ideal-gear relation), not add J_r alpha again
    from sim.checks.drivetrain_file import load_drivetrain
    from sim.checks.motor import check_motors
    from sim.checks.motor_duty import simulated_drive_effects
    from sim.checks.supply import load_supply

    from .conftest import MODELS

    _, path = _drop(tmp_path, "rot", ["drive.rotor_inertia=exact", "record.decimation=1",
                                      "ground.stiffness_n_m=0", "ground.damping_n_s_m=0",
                                      "drive.losses=false"])
    with open_record(path) as rec:
        # rotors simulated, losses not, and the rotor carried the reducer's inertia too
        assert simulated_drive_effects(rec) == (True, False, True)
        tau = rec.read("joints/fl_knee/torque_nm")
        w = rec.read("joints/fl_knee/speed_rad_s")
    dt = load_drivetrain(MODELS / "drivetrain_demo.toml")
    motor = dt.joints["fl_knee"].motor
    assert motor is not None
    supply = load_supply(dict(dt.supply), dt.file)
    rep = check_motors(str(path), {"fl_knee": (motor, 9.0, 1.0, 1.0, 0.0)}, supply)
    peak_motor = rep.joint_summary("fl_knee")["peak_torque_nm"]
    # bound on the motor's own drag (Coulomb, hysteresis, viscous and eddy at top speed)
    drag = (motor.friction_torque_nm + motor.hysteresis_loss_w_s_per_rad
            + (motor.viscous_friction_nm_s_per_rad + motor.eddy_loss_w_s2_per_rad2)
            * 9.0 * np.abs(w).max())
    assert abs(peak_motor - np.abs(tau).max() / 9.0) <= drag + 1e-9
