"""Supply: the [supply] table, battery current and sag, summed bus current, energy."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad

from sim import JOINT_NAMES, LEGS
from sim.checks import thermal as th
from sim.checks.motor import check_motors
from sim.checks.motor_part import MotorPart, back_emf_constant
from sim.checks.supply import Supply, battery_current_a, bus_power_w, load_supply, pack_energy_wh
from sim.core.errors import InputError
from sim.record import RecordWriter
from tests.synthetic import write_synthetic_record

TABLE = {"bus_voltage_v": 24.0, "current_limit_a": 30.0, "inverter_efficiency": 0.95,
         "regeneration_absorbed": True, "cell_count": 6, "cell_internal_resistance_ohm": 0.004}


def test_load_supply_and_unknown_key():
    s = load_supply(TABLE, "drivetrain.toml")
    assert s.pack_resistance_ohm == pytest.approx(0.024)
    assert s.current_limit_convention == "dc_equivalent" and s.modulation == "svpwm"
    bad = dict(TABLE, cel_count=6)
    with pytest.raises(InputError) as e:
        load_supply(bad, "drivetrain.toml")
    assert e.value.file == "drivetrain.toml" and e.value.key == "supply.cel_count"
    with pytest.raises(InputError, match=r"supply\.inverter_efficiency"):
        load_supply(dict(TABLE, inverter_efficiency=1.5), "drivetrain.toml")
    missing = {k: v for k, v in TABLE.items() if k != "bus_voltage_v"}
    with pytest.raises(InputError, match="bus_voltage_v"):
        load_supply(missing, "drivetrain.toml")
    assert load_supply(dict(TABLE, modulation="sinusoidal"), "f").line_voltage_factor == (
        pytest.approx(math.sqrt(3) / 2))


def test_pack_energy_common_practice():
    # common practice (LiPo): 6S 5 Ah at 3.7 V nominal per cell is 111 Wh; 20C is 100 A
    assert pack_energy_wh(6, 5.0) == pytest.approx(111.0)


def test_battery_current_hand_case():
    # hand calculation: P = 240 W from V_oc = 24 V behind R = 0.1 ohm solves
    # R I^2 - V I + P = 0 -> I = (24 - sqrt(576 - 96)) / 0.2 = 10.4555 A, V = 22.9545 V
    i, col = battery_current_a(np.array([240.0, 0.0, -100.0, 2000.0]), 24.0, 0.1)
    assert i[0] == pytest.approx((24 - math.sqrt(480.0)) / 0.2, rel=1e-12)
    assert i[0] * (24 - 0.1 * i[0]) == pytest.approx(240.0, rel=1e-12)
    assert i[1] == 0.0 and i[2] < 0 and i[2] * (24 - 0.1 * i[2]) == pytest.approx(-100.0)
    assert list(col) == [False, False, False, True]  # 4 R P > V^2: the pack collapses
    assert i[3] == pytest.approx(24 / 0.2)
    # ideal pack: I = P / V
    assert battery_current_a(np.array([240.0]), 24.0, 0.0)[0][0] == pytest.approx(10.0)
    np.testing.assert_allclose(bus_power_w(np.array([95.0, -100.0]), 0.95), [100.0, -95.0])


def _cool_motor(kv: float = 80.0, r_ph: float = 0.16, **kw: float) -> MotorPart:
    # tiny thermal resistances: the winding stays at ambient 20 C, so R = R20 exactly enough
    net = th.ThermalNetwork(1.0, 1.0, 1e-5, 1e-5)
    return MotorPart(name="cool", back_emf_v_s_per_rad=back_emf_constant(kv),
                     phase_resistance_ohm_20c=r_ph, rotor_inertia_kg_m2=0.0, thermal=net,
                     max_winding_temp_c=155.0, ambient_temp_c=20.0, **kw)  # type: ignore[arg-type]


def test_twelve_motors_summed_current_hand_case(tmp_path: Path):
    # hand case: twelve demo-like motors (k = 9.5493/80 = 0.119366 N m/A, R_LL = 0.32 ohm),
    # ideal reducers and inverter, 24 V ideal pack. Per leg, constant for the whole record:
    #   knee  9:1, 9 N m at +2 rad/s -> T_m = 1 N m, w_m = 18 rad/s
    #   hip  11:1, 5.5 N m at -1 rad/s -> T_m = 0.5 N m, w_m = -11 rad/s (back-driven)
    #   abad  7:1, 3.5 N m at 0 rad/s  -> T_m = 0.5 N m, standing
    # P_elec = T_m w_m + (T_m/k)^2 R_LL; battery current = sum P_elec / 24 V
    k = 60 / (2 * math.pi * 80)
    r = 0.32
    knee = 1.0 * 18 + (1.0 / k) ** 2 * r    # 18 W + 22.459 W
    hip = 0.5 * -11 + (0.5 / k) ** 2 * r    # -5.5 W + 5.615 W
    abad = 0.0 + (0.5 / k) ** 2 * r          # 5.615 W
    expected_a = 4 * (knee + hip + abad) / 24.0
    assert expected_a == pytest.approx(4 * (40.4592 + 0.1148 + 5.6148) / 24, rel=1e-4)
    torque = {f"{leg}_knee": 9.0 for leg in LEGS} | {f"{leg}_hip": 5.5 for leg in LEGS} | {
        f"{leg}_abad": 3.5 for leg in LEGS}
    speed = {f"{leg}_knee": 2.0 for leg in LEGS} | {f"{leg}_hip": -1.0 for leg in LEGS}
    p = write_synthetic_record(tmp_path / "r.h5", 0.2, 0.001, torque_nm=torque,
                               speed_rad_s=speed)
    ratio = {"abad": 7.0, "hip": 11.0, "knee": 9.0}
    drives = {j: (_cool_motor(), ratio[j.split("_")[1]], 1.0, 1.0) for j in JOINT_NAMES}
    sup = Supply(bus_voltage_v=24.0, current_limit_a=30.0, inverter_efficiency=1.0,
                 regeneration_absorbed=True)
    s = check_motors(p, drives, sup).to_json()["supply"]
    assert s["peak_current_a"] == pytest.approx(expected_a, rel=1e-4)
    assert s["rms_current_a"] == pytest.approx(expected_a, rel=1e-4)
    assert s["sag_v"] == pytest.approx(0.0, abs=1e-12)


def _record_with_velocity(path: Path, duration_s: float, dt: float, velocity_m_s: float,
                          mass_kg: float, torque=None, speed=None) -> Path:
    """Like tests.synthetic but with a base velocity along x (for energy per metre)."""
    joints = list(JOINT_NAMES)
    te = {j: np.linspace(-50, 50, 11) for j in joints}
    se = {j: np.linspace(-40, 40, 9) for j in joints}
    attrs = {"tool_version": "synthetic", "sample_period_s": dt, "time_step_s": dt,
             "total_mass_kg": mass_kg, "leg_names": list(LEGS)}
    n = round(duration_s / dt)
    t = np.arange(n) * dt
    torque = torque or {}
    speed = speed or {}
    with RecordWriter(path, joints, te, se, attrs) as w:
        w.append("time_s", t)
        tau = np.stack([np.broadcast_to(torque.get(j, lambda t: 0 * t)(t), t.shape)
                        for j in joints], axis=1)
        om = np.stack([np.broadcast_to(speed.get(j, lambda t: 0 * t)(t), t.shape)
                       for j in joints], axis=1)
        for i, j in enumerate(joints):
            w.append(f"joints/{j}/torque_nm", tau[:, i])
            w.append(f"joints/{j}/speed_rad_s", om[:, i])
        w.append("base/velocity_m_s", np.tile([velocity_m_s, 0.0, 0.0], (n, 1)))
        w.accumulate(tau, om, np.zeros_like(tau), dt)
        return w.finish("completed", "synthetic")


def test_cost_of_transport_published_value(tmp_path: Path):
    # Seok et al., IEEE/ASME Trans. Mechatronics 2015: 33 kg at 6 m/s drawing 973 W gives a
    # total cost of transport P/(m g v) = 973/(33 x 9.81 x 6) = 0.5009 (g = 9.81 there)
    p = _record_with_velocity(tmp_path / "r.h5", 0.2, 0.001, 6.0, 33.0)
    sup = Supply(bus_voltage_v=48.0, current_limit_a=30.0, inverter_efficiency=1.0,
                 regeneration_absorbed=True, auxiliary_power_w=973.0)
    drives = {j: (_cool_motor(), 9.0, 1.0, 1.0) for j in JOINT_NAMES}
    s = check_motors(p, drives, sup).to_json()["supply"]
    assert s["energy_wh_per_h"] == pytest.approx(973.0, rel=1e-12)
    assert s["cost_of_transport"] == pytest.approx(0.5009, rel=1e-3)
    assert s["energy_j_per_m"] == pytest.approx(973.0 / 6.0, rel=1e-9)
    assert s["mean_current_a"] == pytest.approx(973.0 / 48.0, rel=1e-12)


def test_energy_conservation_over_a_run(tmp_path: Path):
    # battery energy = mechanical work + losses, each loss from its own closed form.
    # Knees drive (tau = A sin, w = B sin), hips are back-driven (w = -B sin); all signals
    # share sin^2 so every motor's power keeps its sign; whole periods: mean sin^2 = 1/2.
    dt, dur, f = 0.001, 2.0, 2.0
    om = 2 * np.pi * f
    a_k, b_k, a_h, b_h = 12.0, 6.0, 15.0, 12.0
    torque = {f"{leg}_knee": (lambda t: a_k * np.sin(om * t)) for leg in LEGS} | {
        f"{leg}_hip": (lambda t: a_h * np.sin(om * t)) for leg in LEGS}
    speed = {f"{leg}_knee": (lambda t: b_k * np.sin(om * t)) for leg in LEGS} | {
        f"{leg}_hip": (lambda t: -b_h * np.sin(om * t)) for leg in LEGS}
    p = _record_with_velocity(tmp_path / "r.h5", dur, dt, 0.4, 15.0, torque, speed)
    n_red, ef, eb, visc, eta_i, r_pack = 9.0, 0.9, 0.8, 2e-4, 0.95, 0.05
    motor = _cool_motor(viscous_friction_nm_s_per_rad=visc)
    k, r_ll = motor.back_emf_v_s_per_rad, 0.32
    drives = {j: (motor, n_red, ef, eb) for j in JOINT_NAMES}
    sup = Supply(bus_voltage_v=24.0, current_limit_a=60.0, inverter_efficiency=eta_i,
                 regeneration_absorbed=True, cell_count=6, cell_internal_resistance_ohm=0.05 / 6)
    rep = check_motors(p, drives, sup)
    s = rep.to_json()["supply"]
    # closed forms per motor, as amplitudes of sin^2 (mean 1/2)
    work_k, work_h = a_k * b_k, -a_h * b_h
    tk = a_k / (n_red * ef) + visc * n_red * b_k      # knee electromagnetic torque amplitude
    th_ = a_h * eb / n_red - visc * n_red * b_h       # hip: back-driven, drag opposes motion
    pk = tk * n_red * b_k + (tk / k) ** 2 * r_ll      # electrical power amplitude, > 0
    ph = th_ * -n_red * b_h + (th_ / k) ** 2 * r_ll   # < 0: regenerating
    assert pk > 0 > ph
    p_net = 4 * (pk / eta_i + ph * eta_i)             # bus power amplitude

    def pack_loss(t: float) -> float:
        pw = p_net * math.sin(om * t) ** 2
        i = (24 - math.sqrt(24 * 24 - 4 * r_pack * pw)) / (2 * r_pack)
        return i * i * r_pack

    loss_pack, _ = quad(pack_loss, 0.0, dur, limit=200)
    work = 4 * (work_k + work_h) * dur / 2
    reducer = 4 * (work_k * (1 / ef - 1) + -work_h * (1 - eb)) * dur / 2
    copper = 4 * ((tk / k) ** 2 + (th_ / k) ** 2) * r_ll * dur / 2
    drag = 4 * visc * n_red ** 2 * (b_k ** 2 + b_h ** 2) * dur / 2
    inverter = 4 * (pk * (1 / eta_i - 1) + -ph * (1 - eta_i)) * dur / 2
    expected_j = work + reducer + copper + drag + inverter + loss_pack
    got_j = s["energy_wh_per_h"] * dur  # Wh/h = W; x duration = J
    assert got_j == pytest.approx(expected_j, rel=0.01)
    parts = s["breakdown_wh_per_h"]
    assert parts["joint_work"] * dur == pytest.approx(work, rel=0.01)
    assert parts["copper_loss"] * dur == pytest.approx(copper, rel=0.01)
    # the breakdown closes: terminal energy is the sum of the parts
    total = sum(v for key, v in parts.items() if key not in ("battery_terminal",
                                                              "pack_internal_loss"))
    assert parts["battery_terminal"] == pytest.approx(total, rel=1e-9)
    assert s["energy_j_per_m"] == pytest.approx(s["energy_wh_per_h"] / 0.4, rel=1e-9)
    assert s["motor_regeneration_wh_per_h"] > 0


def test_regeneration_not_absorbed_is_dumped(tmp_path: Path):
    # hips regenerate more than the knees draw half of the time: with a pack that cannot take
    # charge the battery current never goes negative and the excess is reported as dumped
    torque = {"fl_hip": lambda t: 10.0 * np.ones_like(t)}
    speed = {"fl_hip": lambda t: np.where(t < 0.1, 2.0, -2.0)}
    p = write_synthetic_record(tmp_path / "r.h5", 0.2, 0.001, torque_nm=torque,
                               speed_rad_s=speed, joints=["fl_hip"])
    drives = {"fl_hip": (_cool_motor(), 11.0, 0.9, 0.8)}
    kw = {"bus_voltage_v": 24.0, "current_limit_a": 30.0, "inverter_efficiency": 0.95}
    absorbed = check_motors(p, drives, Supply(regeneration_absorbed=True, **kw)).to_json()
    dumped = check_motors(p, drives, Supply(regeneration_absorbed=False, **kw)).to_json()
    assert absorbed["supply"]["peak_regen_current_a"] < 0
    assert dumped["supply"]["peak_regen_current_a"] >= 0
    d = dumped["supply"]["breakdown_wh_per_h"]["regen_dumped"]
    assert d == pytest.approx(absorbed["supply"]["regenerated_wh_per_h"], rel=1e-9)
    assert dumped["supply"]["energy_wh_per_h"] == pytest.approx(
        absorbed["supply"]["energy_wh_per_h"] + d, rel=1e-9)
