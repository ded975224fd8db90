"""Motor constants, operating points, envelope, ratings and the motor check."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from sim import JOINT_NAMES
from sim.checks import thermal as th
from sim.checks.motor import check_motors
from sim.checks.motor_part import (
    CURRENT_CONVENTIONS,
    MotorPart,
    back_emf_constant,
    corner_speed_rad_s,
    envelope_nm,
    joint_torque_from_motor,
    load_motor_part,
    motor_operating_points,
    no_load_speed_rad_s,
    rms,
    speed_to_torque_constant,
    torque_constant,
    torque_to_speed_constant,
)
from sim.checks.supply import Supply
from sim.core.errors import InputError, RecordError
from tests.synthetic import write_synthetic_record

DEMO = Path(__file__).resolve().parents[1] / "models" / "parts" / "motor_demo.toml"


def make_motor(kv: float = 100.0, r_ph: float = 0.1, **kw: float) -> MotorPart:
    net = th.ThermalNetwork(kw.pop("cw", 30.0), kw.pop("ch", 300.0), kw.pop("rwh", 0.5),
                            kw.pop("rha", 1.5))
    return MotorPart(name="test", back_emf_v_s_per_rad=back_emf_constant(kv),
                     phase_resistance_ohm_20c=r_ph, rotor_inertia_kg_m2=kw.pop("j", 0.0),
                     thermal=net, max_winding_temp_c=kw.pop("tmax", 155.0),
                     ambient_temp_c=kw.pop("ta", 25.0), **kw)  # type: ignore[arg-type]


def supply(**kw: object) -> Supply:
    base: dict = {"bus_voltage_v": 24.0, "current_limit_a": 20.0, "inverter_efficiency": 1.0,
                  "regeneration_absorbed": True}
    base.update(kw)
    return Supply(**base)


# -- constants --------------------------------------------------------------------------------
def test_torque_constants_by_convention_kv100():
    # Derivation: power balance of a sinusoidal 3-phase PMSM, T w = sum e_k i_k (Krishnan,
    # "Permanent Magnet Synchronous and Brushless DC Motor Drives", CRC 2010, dq model; from
    # memory). Values to the 5-6 digits given there: 8.2699/kV peak, 11.695/kV rms, k/sqrt 2.
    assert speed_to_torque_constant(100.0, "dc_equivalent") == pytest.approx(0.095493, abs=1e-6)
    assert speed_to_torque_constant(100.0, "phase_peak") == pytest.approx(0.082699, abs=1e-6)
    assert speed_to_torque_constant(100.0, "phase_rms") == pytest.approx(0.116955, abs=1e-6)
    assert speed_to_torque_constant(100.0, "power_invariant") == pytest.approx(0.067524,
                                                                               abs=1e-6)


def test_phase_peak_torque_constant_from_simulated_machine():
    # Independent oracle: simulate three sinusoidal phases whose line-to-line peak back-EMF per
    # rad/s is k, currents in phase with the EMF, torque from the power balance T w = sum e i.
    k = back_emf_constant(100.0)
    w = 50.0
    theta = np.linspace(0.0, 2 * np.pi, 721)
    e_amp = k * w / math.sqrt(3.0)  # phase amplitude = line-line peak / sqrt(3)
    i_amp = 10.0
    shifts = (0.0, -2 * np.pi / 3, 2 * np.pi / 3)
    e = [e_amp * np.cos(theta + s) for s in shifts]
    i = [i_amp * np.cos(theta + s) for s in shifts]
    line_peak = np.max(np.abs(e[0] - e[1]))
    assert line_peak == pytest.approx(k * w, rel=1e-4)
    torque = sum(ek * ik for ek, ik in zip(e, i, strict=True)) / w
    assert np.ptp(torque) < 1e-12
    assert torque[0] == pytest.approx(torque_constant(k, "phase_peak") * i_amp, rel=1e-12)
    i_rms = i_amp / math.sqrt(2.0)
    assert torque[0] == pytest.approx(torque_constant(k, "phase_rms") * i_rms, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(kv=st.floats(1.0, 5000.0), conv=st.sampled_from(CURRENT_CONVENTIONS),
       volt=st.sampled_from(("line_to_line_peak", "line_to_line_rms")))
def test_speed_and_torque_constant_round_trip(kv: float, conv: str, volt: str):
    # inverse pair: kV -> Kt -> kV
    kt = speed_to_torque_constant(kv, conv, volt)
    assert torque_to_speed_constant(kt, conv, volt) == pytest.approx(kv, rel=1e-12)


def test_trade_facts_90_rpm_per_volt():
    # common practice: a 90 rpm/V motor on 24 V turns about 90 x 24 = 2160 rpm unloaded
    m = make_motor(kv=90.0)
    assert no_load_speed_rad_s(m, 24.0) * 60 / (2 * np.pi) == pytest.approx(2160.0, rel=1e-12)
    # common practice: 20 A through it and a 10:1 reducer gives about 18 N m ideal at the output
    # (Kt = 8.27/kV for phase-peak current), about twice the 4 kg x g x 0.25 m = 9.8 N m a mass
    # on a lever needs
    out_nm = torque_constant(m.back_emf_v_s_per_rad, "phase_peak") * 20.0 * 10.0
    assert out_nm == pytest.approx(18.0, rel=0.03)
    lever_nm = 4.0 * 9.80665 * 0.25
    assert lever_nm == pytest.approx(9.8, abs=0.01)
    assert 1.8 < out_nm / lever_nm < 2.0


def test_copper_loss_forms_agree():
    # P_cu = 3 R_ph I_rms^2 = (T/k)^2 R_LL (star: R_LL = 2 R_ph); T = 1 N m, R_ph = 0.1,
    # kV = 100 gives 21.932 W (power balance and Ohm's law, derivation as above)
    m = make_motor(kv=100.0, r_ph=0.1)
    k = m.back_emf_v_s_per_rad
    p_ll = (1.0 / k) ** 2 * float(m.line_resistance_ohm(20.0))
    i_rms = 1.0 / torque_constant(k, "phase_rms")
    assert p_ll == pytest.approx(3 * 0.1 * i_rms ** 2, rel=1e-12)
    assert p_ll == pytest.approx(21.932, abs=5e-4)
    assert m.motor_constant_nm_per_sqrt_w == pytest.approx(0.21353, abs=1e-5)


# -- envelope ---------------------------------------------------------------------------------
def test_envelope_matches_dq_form_and_stall():
    # dq form T = (3/2) p lam (V/sqrt3 - p lam w)/R_ph for a surface PMSM with i_d = 0 and
    # SVPWM (phase amplitude limit V/sqrt 3) -- derivation from the dq voltage equation,
    # inductance neglected. kV 100, 24 V, R_ph 0.1: stall 11.4592 N m, no-load 2400 rpm.
    m = make_motor(kv=100.0, r_ph=0.1)
    p_lam = m.back_emf_v_s_per_rad / math.sqrt(3.0)
    w = np.array([0.0, 41.888, 83.776, 125.664, 167.552, 209.440, 251.327])
    dq = 1.5 * p_lam * (24.0 / math.sqrt(3.0) - p_lam * w) / 0.1
    _, upper = envelope_nm(m, w, 24.0, current_limit_torque=1e9)
    np.testing.assert_allclose(upper, dq, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(upper, [11.4592, 9.5493, 7.6394, 5.7296, 3.8197, 1.9099, 0.0],
                               atol=2e-4)
    assert no_load_speed_rad_s(m, 24.0) == pytest.approx(251.327, abs=1e-3)


def test_corner_speed_hand_calculation():
    # hand calculation: k = 60/(2 pi 100) = 0.0954930 V s/rad, R_LL = 0.2 ohm, I = 20 A:
    # voltage needed at the corner V = k w + I R -> w_c = (24 - 4)/0.0954930 = 209.440 rad/s
    m = make_motor(kv=100.0, r_ph=0.1)
    t_i = 20.0 * m.back_emf_v_s_per_rad
    wc = corner_speed_rad_s(m, 24.0, t_i)
    assert wc == pytest.approx(20.0 / 0.0954930, rel=1e-6)
    assert wc == pytest.approx(209.440, abs=1e-3)
    _lo, hi = envelope_nm(m, np.array([0.5 * wc, wc, 1.1 * wc]), 24.0, t_i)
    assert hi[0] == pytest.approx(t_i) and hi[1] == pytest.approx(t_i)
    assert hi[2] < t_i
    # four quadrants: braking at negative speed keeps the full current limit
    _lo2, hi2 = envelope_nm(m, np.array([-wc * 1.1]), 24.0, t_i)
    assert hi2[0] == pytest.approx(t_i)
    # point symmetry of the envelope: lower(w) = -upper(-w)
    ws = np.linspace(-300, 300, 61)
    lo3, _hi3 = envelope_nm(m, ws, 24.0, t_i)
    np.testing.assert_allclose(lo3, -envelope_nm(m, -ws, 24.0, t_i)[1], rtol=1e-12)


def test_envelope_hot_winding_is_lower_at_speed():
    # metamorphic: hotter copper (IEC 60028 alpha) means more resistance, less torque at speed
    m = make_motor()
    _, cold = envelope_nm(m, np.array([150.0]), 24.0, 1e9, 20.0)
    _, hot = envelope_nm(m, np.array([150.0]), 24.0, 1e9, 120.0)
    assert hot[0] == pytest.approx(cold[0] / 1.393, rel=1e-9)


# -- operating points -------------------------------------------------------------------------
def test_operating_points_direction_of_power():
    # motor drives the joint (tau w > 0): tau/(N eta_f); joint drives the motor: tau eta_b / N
    tm, wm = motor_operating_points(np.array([9.0, 9.0, -9.0]), np.array([2.0, -2.0, 2.0]),
                                    9.0, 0.9, 0.8)
    np.testing.assert_allclose(tm, [9.0 / (9 * 0.9), 9.0 * 0.8 / 9, -9.0 * 0.8 / 9])
    np.testing.assert_allclose(wm, [18.0, -18.0, 18.0])


@settings(max_examples=50, deadline=None)
@given(tau=st.floats(-100, 100), w=st.floats(-30, 30), n=st.floats(1.0, 100.0),
       ef=st.floats(0.3, 1.0), eb=st.floats(0.3, 1.0))
@example(tau=1.0, w=-5e-324, n=1.0, ef=1.0, eb=0.5)  # tau w underflows to -0.0
def test_operating_point_round_trip(tau: float, w: float, n: float, ef: float, eb: float):
    tm, _ = motor_operating_points(np.array([tau]), np.array([w]), n, ef, eb)
    back = joint_torque_from_motor(tm, np.array([w]), n, ef, eb)
    assert back[0] == pytest.approx(tau, rel=1e-12, abs=1e-12)
    # the reducer never creates energy: motor power >= joint power
    assert tm[0] * w * n >= tau * w - 1e-9


def test_rms_of_segments():
    # common practice RMS sizing example: (8, 2, -4, 0) N m for (0.1, 0.4, 0.2, 0.3) s
    t = np.repeat([8.0, 2.0, -4.0, 0.0], [100, 400, 200, 300])
    assert rms(t) == pytest.approx(3.3466, abs=1e-4)


# -- part files -------------------------------------------------------------------------------
def test_demo_part_is_invented_and_matches_demo_facts():
    text = DEMO.read_text()
    assert "invented for the demo" in text.lower()
    m = load_motor_part(DEMO)
    # demo facts: kV 80 rpm/V line-line peak -> k = 9.5493/80 = 0.11937 N m/A DC-equivalent
    assert m.back_emf_v_s_per_rad == pytest.approx(0.11937, abs=1e-5)
    assert m.phase_resistance_ohm_20c == 0.16 and m.rotor_inertia_kg_m2 == 6.5e-5
    assert m.max_winding_temp_c == 155.0  # IEC 60085 class F
    assert "invented" in m.note


def _write(tmp_path: Path, body: str) -> Path:
    p = tmp_path / "m.toml"
    p.write_text(body)
    return p


BASE = """
name = "x"
phase_resistance_ohm_20c = 0.1
rotor_inertia_kg_m2 = 1e-5
thermal_resistance_winding_housing_k_per_w = 1.0
thermal_resistance_housing_ambient_k_per_w = 1.0
thermal_capacity_winding_j_per_k = 10.0
thermal_capacity_housing_j_per_k = 100.0
insulation_class = "B"
"""


def test_part_file_errors(tmp_path: Path):
    with pytest.raises(InputError) as e:
        load_motor_part(_write(tmp_path, BASE + "speed_constant_rpm_per_v = 100.0\n"
                               "phase_resistence_ohm_20c = 0.1\n"))
    assert "phase_resistence_ohm_20c" in str(e.value) and e.value.file == str(tmp_path / "m.toml")
    with pytest.raises(InputError, match="exactly one"):
        load_motor_part(_write(tmp_path, BASE + "speed_constant_rpm_per_v = 100.0\n"
                               "torque_constant_nm_per_a = 0.1\ntorque_constant_current = "
                               "\"phase_peak\"\n"))
    with pytest.raises(InputError, match="torque_constant_current"):
        load_motor_part(_write(tmp_path, BASE + "torque_constant_nm_per_a = 0.1\n"))
    with pytest.raises(InputError, match="insulation_class"):
        load_motor_part(_write(tmp_path, BASE.replace('"B"', '"Q"')
                               + "speed_constant_rpm_per_v = 100.0\n"))
    m = load_motor_part(_write(tmp_path, BASE + "torque_constant_nm_per_a = 0.082699\n"
                               "torque_constant_current = \"phase_peak\"\n"
                               "max_winding_temp_c = 120.0\n"))
    assert m.speed_constant_rpm_per_v == pytest.approx(100.0, rel=1e-5)
    assert m.max_winding_temp_c == 120.0  # the lower of class B (130 C) and the stated limit


# -- the check over records -------------------------------------------------------------------
def test_rms_and_peak_ratings_through_a_record(tmp_path: Path):
    # common practice RMS example as motor torque (ratio 1, ideal reducer, standing still)
    seg = np.array([8.0, 2.0, -4.0, 0.0])
    ends = np.cumsum([0.1, 0.4, 0.2, 0.3])

    def tau(t: np.ndarray) -> np.ndarray:
        return seg[np.searchsorted(ends, t + 1e-9, side="right").clip(0, 3)]

    p = write_synthetic_record(tmp_path / "r.h5", 1.0, 0.001, torque_nm={"fl_knee": tau},
                               joints=["fl_knee"])
    m = make_motor(kv=100.0, continuous_torque_nm=4.0, peak_torque_nm=10.0)
    rep = check_motors(p, {"fl_knee": (m, 1.0, 1.0, 1.0)}, supply(current_limit_a=200.0))
    s = rep.to_json()["joints"]["fl_knee"]
    assert s["rms_torque_nm"] == pytest.approx(3.3466, abs=1e-4)
    assert s["rms_torque_ratio"] == pytest.approx(3.3466 / 4.0, abs=1e-4)
    assert s["peak_torque_ratio"] == pytest.approx(0.8)
    assert s["continuous_torque_source"] == "part"
    json.dumps(rep.to_json())  # JSON-ready


def test_outside_envelope_time_and_verdict(tmp_path: Path):
    # joint speed 30 rad/s x ratio 10 = 300 rad/s, above the no-load speed 251.3 rad/s of a
    # 100 rpm/V motor on 24 V, for the second half of the record only
    p = write_synthetic_record(tmp_path / "r.h5", 1.0, 0.001, joints=["fl_hip"],
                               torque_nm={"fl_hip": 1.0},
                               speed_rad_s={"fl_hip": lambda t: np.where(t >= 0.5, 30.0, 5.0)})
    m = make_motor()
    rep = check_motors(p, {"fl_hip": (m, 10.0, 1.0, 1.0)}, supply())
    s = rep.to_json()["joints"]["fl_hip"]
    assert s["outside_envelope_s"] == pytest.approx(0.5, abs=1.5e-3)
    assert s["outside_envelope_share"] == pytest.approx(0.5, abs=2e-3)
    assert s["over_speed_s"] == pytest.approx(0.5, abs=1.5e-3)
    assert s["verdict"] == "fail" and "outside envelope" in s["fail_reasons"]
    assert "fl_hip" in rep.to_text() and "fail" in rep.to_text()


def test_failed_record_is_refused(tmp_path: Path):
    p = write_synthetic_record(tmp_path / "r.h5", 0.2, 0.001, joints=["fl_knee"], status="fell")
    with pytest.raises(RecordError, match="completed"):
        check_motors(p, {"fl_knee": (make_motor(), 9.0, 0.9, 0.9)}, supply())


def test_usage_mix_of_pairs_weights_rms(tmp_path: Path):
    a = write_synthetic_record(tmp_path / "a.h5", 0.5, 0.001, joints=["fl_knee"],
                               torque_nm={"fl_knee": 2.0})
    b = write_synthetic_record(tmp_path / "b.h5", 0.5, 0.001, joints=["fl_knee"],
                               torque_nm={"fl_knee": 4.0})
    m = make_motor(continuous_torque_nm=10.0)
    rep = check_motors([(a, 3.0), (b, 1.0)], {"fl_knee": (m, 1.0, 1.0, 1.0)}, supply())
    # time-weighted RMS over the day: sqrt((3 x 4 + 1 x 16)/4)
    assert rep.to_json()["joints"]["fl_knee"]["rms_torque_nm"] == pytest.approx(
        math.sqrt(7.0), rel=1e-9)
    with pytest.raises(InputError):
        check_motors([(a, 0.0)], {"fl_knee": (m, 1.0, 1.0, 1.0)}, supply())


def _capture_figures(monkeypatch) -> list:
    """Keep every figure the figure modules save (they still write their PNG files)."""
    from sim.figures import common

    figs: list = []
    real = common.save_figure_atomic

    def keep(fig, path, **kw):
        figs.append(fig)
        return real(fig, path, **kw)

    monkeypatch.setattr(common, "save_figure_atomic", keep)
    return figs


def test_plots_written_and_show_the_checked_numbers(tmp_path: Path, monkeypatch):
    from matplotlib.image import imread

    from sim.figures.motor import plot_all

    p = write_synthetic_record(tmp_path / "r.h5", 0.5, 0.001, joints=list(JOINT_NAMES[:3]),
                               torque_nm={j: (lambda t: 3 * np.sin(8 * t)) for j in JOINT_NAMES},
                               speed_rad_s={j: (lambda t: 5 * np.cos(8 * t)) for j in JOINT_NAMES})
    m = load_motor_part(DEMO)
    drives = {j: (m, 9.0, 0.9, 0.85) for j in JOINT_NAMES[:3]}
    sup = supply(current_limit_a=30.0)
    rep = check_motors(p, drives, sup)
    figs = _capture_figures(monkeypatch)
    out = plot_all(rep, tmp_path / "fig")
    assert [f.name for f in out] == [*(f"motor_envelope_{j}.png" for j in JOINT_NAMES[:3]),
                                     "winding_temperature.png", "bus_current.png"]
    assert not list((tmp_path / "fig").glob(".*tmp*"))
    for f in out:  # real images with something drawn on them
        img = imread(f)
        assert img.shape[0] > 300 and img.shape[1] > 400
        assert img[..., :3].std() > 0.05
    summ = rep.to_json()["joints"]
    j0 = JOINT_NAMES[0]
    # envelope figure: the 20 C envelope is the hand formula at the bus voltage and the
    # current limit (see _hand_envelope), and the density holds the record's 0.5 s once
    ax = figs[0].axes[0]
    lines = [ln for ln in ax.get_lines() if ln.get_linestyle() == "-"]
    w, hi = lines[0].get_xdata(), lines[0].get_ydata()
    k = m.back_emf_v_s_per_rad
    _, hi_h = _hand_envelope(k, float(m.line_resistance_ohm(20.0)), 24.0, k * 30.0, w)
    np.testing.assert_allclose(hi, hi_h, rtol=1e-12)
    assert float(np.nansum(ax.collections[0].get_array())) == pytest.approx(0.5, rel=1e-9)
    # winding figure: one line per joint peaking at the reported winding peak
    lines = figs[3].axes[0].get_lines()
    peaks = {ln.get_label(): float(np.max(ln.get_ydata())) for ln in lines
             if not ln.get_label().startswith("_")}
    assert set(peaks) == set(JOINT_NAMES[:3])
    for j in JOINT_NAMES[:3]:
        assert peaks[j] == pytest.approx(summ[j]["winding_peak_c"], rel=1e-9)
    # bus figure: block means over the record give the mean battery current
    step = next(ln for ln in figs[4].axes[0].get_lines() if ln.get_label() == "mean")
    t_b, i_b = step.get_xdata(), step.get_ydata()
    widths = np.diff(np.append(t_b, 0.5))
    assert float((i_b * widths).sum() / 0.5) == pytest.approx(
        rep.to_json()["supply"]["mean_current_a"], rel=1e-6)
    assert j0 in figs[0].axes[0].get_title()


# -- the check's envelope against the hand formula and the simulator's clamp ------------------
# Steady-state limits of a DC-equivalent PM motor, written out here (Hughes & Drury, Electric
# Motors and Drives, brushless DC drive equations; from memory): V = R_LL I + k w, |V| <= V_max,
# |I| <= I_max, T = k I, so T_hi = min(k I_max, k (V - k w)/R_LL) and
# T_lo = max(-k I_max, k (-V - k w)/R_LL); k = 60/(2 pi kV) for kV per volt of line-to-line
# peak (trade definition).


def _hand_envelope(k, r_ll, v, t_i, w):
    w = np.asarray(w, float)
    return (np.maximum(-t_i, k * (-v - k * w) / r_ll), np.minimum(t_i, k * (v - k * w) / r_ll))


def test_check_envelope_equals_hand_and_simulator_envelope_on_a_grid():
    # the motor check's envelope (motor_duty.envelope_nm_bank, fed per sample with the sagging
    # line voltage and the hot resistance), the part's envelope_nm and the simulator's clamp
    # (sim.drive.envelope, joint side) are one envelope: compared on a speed grid over +-1.3x
    # the no-load speed, through the voltage-limited band between corner and no-load speed
    from sim.checks.motor_duty import Drive, MotorBank, envelope_nm_bank
    from sim.drive.envelope import Envelope
    from sim.robot.model import Actuator

    kv, r_ph, v, i_max, n = 100.0, 0.1, 24.0, 20.0, 10.0
    k = 60.0 / (2.0 * math.pi * kv)
    m = make_motor(kv=kv, r_ph=r_ph)
    act = Actuator(gear_ratio=n, rotor_inertia_kg_m2=0.0, torque_constant_nm_a=k,
                   current_limit_a=i_max, phase_resistance_ohm=r_ph, bus_voltage_v=v,
                   mass_kg=0.5, housing_radius_m=0.04, housing_length_m=0.04)
    w0 = v / k
    corner = (v - i_max * 2 * r_ph) / k
    w_m = np.linspace(-1.3 * w0, 1.3 * w0, 521)
    assert np.sum((np.abs(w_m) > corner) & (np.abs(w_m) < w0)) > 50  # voltage-limited points
    lo_h, hi_h = _hand_envelope(k, 2 * r_ph, v, k * i_max, w_m)
    band = hi_h >= lo_h  # empty far beyond the no-load speed (back-EMF beats the current limit)
    assert band.sum() > 300 and (~band).sum() > 50
    bank = MotorBank({"fl_knee": Drive(m, n, 1.0, 1.0)}, ambient_c=20.0)
    lo_b, hi_b = envelope_nm_bank(bank, w_m[None, :], np.full((1, w_m.size), v),
                                  np.array([[k * i_max]]), bank.r20)
    np.testing.assert_allclose(hi_b[0], hi_h, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(lo_b[0], lo_h, rtol=1e-12, atol=1e-12)
    lo_p, hi_p = envelope_nm(m, w_m, v, k * i_max)
    np.testing.assert_allclose(hi_p, hi_h, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(lo_p, lo_h, rtol=1e-12, atol=1e-12)
    lo_s, hi_s = Envelope.of(act).limits(w_m / n)  # joint side: tau = N T at w = w_m / N
    np.testing.assert_allclose(hi_s[band] / n, hi_h[band], rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(lo_s / n, lo_h, rtol=1e-12, atol=1e-12)
    # where the band is empty the clamp gives the braking limit, the check counts any torque
    # as outside (and as over speed)
    np.testing.assert_allclose(hi_s[~band], lo_s[~band], rtol=1e-12)
    # a sagging bus and a hot winding enter the check's envelope as the hand formula has them
    v_sag, r_hot = 22.5, 2 * r_ph * (1 + 0.00393 * 80.0)
    lo_b, hi_b = envelope_nm_bank(bank, w_m[None, :], np.full((1, w_m.size), v_sag),
                                  np.array([[k * i_max]]), np.array([[r_hot]]))
    lo_h, hi_h = _hand_envelope(k, r_hot, v_sag, k * i_max, w_m)
    np.testing.assert_allclose(hi_b[0], hi_h, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(lo_b[0], lo_h, rtol=1e-12, atol=1e-12)


def test_outside_envelope_time_in_the_voltage_limited_band_by_hand(tmp_path: Path):
    # a knee held at 23 rad/s (motor 230 rad/s, between the corner 209 rad/s and the no-load
    # speed 251 rad/s of a kV 100 motor on 24 V, R_LL 0.2 ohm, 20 A): where the voltage, not the
    # current, limits the torque. Four quarters of a second: driving at 0.97 and 1.03 x the
    # open-circuit voltage limit, the mirror image at -23 rad/s, and braking at 0.9 x the
    # current limit. The pack's 0.01 ohm sags the bus by about 0.1 V, which pushes the first
    # quarter outside too: the pack current I = 2P/(V + sqrt(V^2 - 4 R P)) of the terminal
    # power P (copper loss included; ideal inverter) and the terminal voltage V - I R.
    kv, r_ll, v, i_max, n, r_pack = 100.0, 0.2, 24.0, 20.0, 10.0, 0.01
    k = 60.0 / (2.0 * math.pi * kv)
    w_j = 23.0
    u_nom = k * (v - k * n * w_j) / r_ll  # motor torque at the voltage limit, no sag
    t_i = k * i_max
    assert u_nom < 0.6 * t_i  # far inside the current limit: only the voltage limit bites
    quarters = [(w_j, 0.97 * u_nom), (w_j, 1.03 * u_nom), (-w_j, -1.03 * u_nom),
                (w_j, -0.9 * t_i)]
    dt, dur = 0.001, 1.0
    t = np.arange(round(dur / dt)) * dt
    q = np.minimum((t / 0.25 + 1e-9).astype(int), 3)
    speed = np.array([quarters[i][0] for i in q])
    t_m = np.array([quarters[i][1] for i in q])
    p = t_m * speed * n + (t_m / k) ** 2 * r_ll
    i_b = 2 * p / (v + np.sqrt(v * v - 4 * r_pack * p))
    lo, hi = _hand_envelope(k, r_ll, v - i_b * r_pack, t_i, speed * n)
    outside = (t_m > hi) | (t_m < lo)
    per_quarter = [bool(outside[q == i].all()) for i in range(4)]
    assert per_quarter == [True, True, True, False]
    _, hi_nom = _hand_envelope(k, r_ll, v, t_i, speed * n)
    assert np.all(t_m[q == 0] < hi_nom[q == 0])  # inside without the sag

    rec = write_synthetic_record(
        tmp_path / "r.h5", dur, dt, joints=["fl_knee"],
        torque_nm={"fl_knee": lambda tt: np.array([quarters[i][1] for i in np.minimum(
            (tt / 0.25 + 1e-9).astype(int), 3)]) * n},
        speed_rad_s={"fl_knee": lambda tt: np.array([quarters[i][0] for i in np.minimum(
            (tt / 0.25 + 1e-9).astype(int), 3)])})
    # thermal resistances so small that the winding stays at the 20 C ambient
    m = make_motor(kv=kv, r_ph=r_ll / 2, rwh=1e-6, rha=1e-6, ta=20.0)
    sup = supply(current_limit_a=i_max, cell_internal_resistance_ohm=r_pack)
    rep = check_motors(rec, {"fl_knee": (m, n, 1.0, 1.0)}, sup)
    s = rep.to_json()["joints"]["fl_knee"]
    assert s["outside_envelope_s"] == pytest.approx(float(outside.sum()) * dt, abs=0.5 * dt)
    assert s["over_speed_s"] == 0.0
    assert rep.to_json()["supply"]["min_bus_voltage_v"] == pytest.approx(
        float((v - i_b * r_pack).min()), rel=1e-9)
