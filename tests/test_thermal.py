"""Copper resistance, the two-node thermal network and heating over records."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from sim.checks import thermal as th
from sim.checks.motor import check_motors
from sim.checks.motor_part import MotorPart, back_emf_constant
from sim.checks.supply import Supply
from tests.synthetic import write_synthetic_record

# C_w, C_h, R_wh, R_ha of the worked two-node example (closed-form solution of the linear
# ODE pair; eigenvalues of the 2 x 2 system matrix -- any linear-systems text)
NET = th.ThermalNetwork(30.0, 300.0, 0.5, 1.5)


# -- copper (IEC 60028) -----------------------------------------------------------------------
def test_iec60028_resistance_ratio():
    # IEC 60028 annealed copper: alpha20 = 0.00393 /K; R/R20 at 80, 100, 155 C to 4 decimals
    assert th.COPPER_ALPHA_20C_PER_K == 0.00393
    assert th.copper_resistance_ratio(20.0) == 1.0
    assert th.copper_resistance_ratio(80.0) == pytest.approx(1.2358, abs=5e-5)
    assert th.copper_resistance_ratio(100.0) == pytest.approx(1.3144, abs=5e-5)
    assert th.copper_resistance_ratio(155.0) == pytest.approx(1.5306, abs=5e-5)
    # equivalent "inferred zero" form R20 (234.45 + T)/254.45, 1/alpha - 20 = 234.45
    t = np.linspace(-20.0, 200.0, 23)
    np.testing.assert_allclose(th.copper_resistance_ratio(t),
                               (1 / 0.00393 - 20 + t) / (1 / 0.00393), rtol=1e-12)


def test_iec60028_resistivity_of_a_wire():
    # IEC 60028: rho20 = 1/58 ohm mm^2/m; 10 m of 0.5 mm^2 is 344.83 mOhm at 20 C and
    # 453.24 mOhm at 100 C (x 1.3144)
    assert th.copper_resistance_ohm(10.0, 0.5e-6, 20.0) == pytest.approx(0.34483, abs=5e-6)
    assert th.copper_resistance_ohm(10.0, 0.5e-6, 100.0) == pytest.approx(0.45324, abs=5e-6)


def test_iec60085_classes():
    # IEC 60085 thermal classes (class temperature in C)
    assert th.insulation_limit_c("F") == 155.0 == th.insulation_limit_c("155")
    assert th.insulation_limit_c("b") == 130.0
    assert th.insulation_limit_c("H") == 180.0
    with pytest.raises(ValueError):
        th.insulation_limit_c("K")


# -- the network ------------------------------------------------------------------------------
def _closed_form(t: np.ndarray, p: float) -> tuple[np.ndarray, np.ndarray]:
    """Step response of the two-node network from theta = 0 (eigenvalue closed form)."""
    cw, ch, rwh, rha = 30.0, 300.0, 0.5, 1.5
    a11, a12 = -1 / (rwh * cw), 1 / (rwh * cw)
    a21, a22 = 1 / (rwh * ch), -(1 / rwh + 1 / rha) / ch
    tr, det = a11 + a22, a11 * a22 - a12 * a21
    s1 = tr / 2 + math.sqrt(tr * tr / 4 - det)
    s2 = tr / 2 - math.sqrt(tr * tr / 4 - det)
    tw_ss, th_ss = p * (rwh + rha), p * rha
    a1 = (p / cw + s2 * tw_ss) / (s1 - s2)
    b1 = s2 * th_ss / (s1 - s2)
    return (tw_ss + a1 * np.exp(s1 * t) + (-tw_ss - a1) * np.exp(s2 * t),
            th_ss + b1 * np.exp(s1 * t) + (-th_ss - b1) * np.exp(s2 * t))


def test_step_response_against_closed_form_and_worked_values():
    n = 3000
    tw, thh = th.simulate_rise(NET, 1.0, np.zeros(n), np.full(n, 40.0), np.zeros(n))
    t = np.arange(1, n + 1, dtype=float)
    cw, ch = _closed_form(t, 40.0)
    np.testing.assert_allclose(tw, cw, rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(thh, ch, rtol=1e-9, atol=1e-9)
    # worked values (closed form checked against an ODE solve at rtol 1e-10), T_a = 25 C
    table = {10: (34.80170, 25.35041), 60: (48.43151, 30.35406), 300: (70.24045, 51.29080),
             1000: (96.51494, 76.77133), 3000: (104.84903, 84.85359)}
    for ti, (w_c, h_c) in table.items():
        assert tw[ti - 1] + 25 == pytest.approx(w_c, abs=1e-5)
        assert thh[ti - 1] + 25 == pytest.approx(h_c, abs=1e-5)
    slow, fast = NET.time_constants_s()
    assert slow == pytest.approx(496.402, abs=1e-3) and fast == pytest.approx(13.598, abs=1e-3)
    assert NET.steady_rise_k(40.0) == pytest.approx((80.0, 60.0))


def test_step_maps_against_scipy_expm_with_feedback():
    # scipy.linalg.expm of the augmented system [[A, b], [0, 0]] is the exact one-step map
    beta, pw, ph, h = 0.25, 12.0, 3.0, 0.7
    m = th.step_maps(NET, h, np.array([beta]), np.array([pw]), np.array([ph]))
    a = np.array([[(beta - 2.0) / 30.0, 2.0 / 30.0, pw / 30.0],
                  [2.0 / 300.0, -(2.0 + 1 / 1.5) / 300.0, ph / 300.0],
                  [0.0, 0.0, 0.0]])
    e = scipy.linalg.expm(a * h)
    got = np.array([[m[0][0], m[1][0], m[4][0]], [m[2][0], m[3][0], m[5][0]]])
    np.testing.assert_allclose(got, e[:2], rtol=1e-11, atol=1e-15)


def test_prefix_scan_equals_sequential_loop():
    # metamorphic: the parallel scan and a plain loop over the same maps agree
    rng = np.random.default_rng(1)
    n = 1000
    beta = rng.uniform(0, 0.05, n)
    pw, ph = rng.uniform(0, 50, n), rng.uniform(0, 5, n)
    maps = th.step_maps(NET, 0.01, beta, pw, ph)
    tw, thh = th.apply_map(th.prefix_maps(maps), np.asarray(1.0), np.asarray(2.0))
    x = np.array([1.0, 2.0])
    for k in range(n):
        m = [v[k] for v in maps]
        x = np.array([m[0] * x[0] + m[1] * x[1] + m[4], m[2] * x[0] + m[3] * x[1] + m[5]])
    assert tw[-1] == pytest.approx(x[0], rel=1e-12)
    assert thh[-1] == pytest.approx(x[1], rel=1e-12)


def test_periodic_steady_state_mean_power_bound_and_ode():
    # square wave 120 W for 2 s, 0 W for 6 s (mean 30 W); linear network without feedback
    dt, n = 0.01, 800
    p = np.where(np.arange(n) < 200, 120.0, 0.0)
    cycle = th.total_map(th.step_maps(NET, dt, np.zeros(n), p, np.zeros(n)))
    sw, sh, ok = th.periodic_state(cycle)
    assert ok
    tw, thh = th.apply_map(th.prefix_maps(th.step_maps(NET, dt, np.zeros(n), p, np.zeros(n))),
                           sw, sh)
    # the cycle returns to its start (periodic)
    assert tw[-1] == pytest.approx(float(sw), rel=1e-10)
    # mean-power bound: averaging the periodic solution of a linear network gives exactly
    # the steady state of the mean power, theta_mean = P_mean (R_wh + R_ha); the peak lies
    # between that and the steady state of the largest power
    mean_rise = 30.0 * 2.0
    assert tw.max() > mean_rise
    assert tw.max() < 120.0 * 2.0
    # housing mean, sample-average of end states, converges to 30 W x 1.5 K/W
    assert np.mean(thh) == pytest.approx(30.0 * 1.5, rel=2e-3)
    assert np.mean(tw) == pytest.approx(mean_rise, rel=2e-3)
    # scipy solve_ivp from the periodic state over one cycle returns to it (reference solver)

    def rhs(t: float, x: np.ndarray) -> np.ndarray:
        pw = 120.0 if (t % 8.0) < 2.0 else 0.0
        return np.array([(pw - (x[0] - x[1]) / 0.5) / 30.0,
                         ((x[0] - x[1]) / 0.5 - x[1] / 1.5) / 300.0])

    sol1 = solve_ivp(rhs, (0.0, 2.0), [float(sw), float(sh)], rtol=1e-11, atol=1e-11)
    sol2 = solve_ivp(rhs, (2.0, 8.0), sol1.y[:, -1], rtol=1e-11, atol=1e-11)
    assert sol1.y[0, -1] == pytest.approx(tw.max(), rel=1e-7)
    assert sol2.y[0, -1] == pytest.approx(float(sw), rel=1e-7)


def test_feedback_steady_state_closed_form():
    # single-node copper feedback: dT = I^2 R20 R_th (1 + alpha (T_a - 20)) /
    # (1 - I^2 R20 alpha R_th); I = 10 A, R20 = 0.1 ohm, R_th = 2 K/W, T_a = 25 C: 22.133 K
    i2r = 100 * 0.1
    tw, _ = NET.steady_rise_k(i2r * th.copper_resistance_ratio(25.0),
                              feedback_w_per_k=i2r * th.COPPER_ALPHA_20C_PER_K)
    assert tw == pytest.approx(22.133, abs=1e-3)
    assert th.runaway_current_a(0.1, 2.0) == pytest.approx(35.67, abs=0.01)
    with pytest.raises(ValueError, match="runaway"):
        NET.steady_rise_k(1.0, feedback_w_per_k=0.6)


# -- heating over records ---------------------------------------------------------------------
def _motor(ta: float = 25.0, tmax: float = 155.0) -> MotorPart:
    return MotorPart(name="t", back_emf_v_s_per_rad=back_emf_constant(100.0),
                     phase_resistance_ohm_20c=0.05, rotor_inertia_kg_m2=0.0, thermal=NET,
                     max_winding_temp_c=tmax, ambient_temp_c=ta)


def _supply() -> Supply:
    return Supply(bus_voltage_v=24.0, current_limit_a=100.0, inverter_efficiency=1.0,
                  regeneration_absorbed=True)


def test_constant_torque_record_settles_at_ambient_plus_loss_times_resistance(tmp_path: Path):
    # constant motor torque 1 N m at standstill: I = T/k, R_LL = 0.1 ohm at 20 C
    p = write_synthetic_record(tmp_path / "r.h5", 0.5, 0.001, joints=["fl_knee"],
                               torque_nm={"fl_knee": 1.0})
    rep = check_motors(p, {"fl_knee": (_motor(), 1.0, 1.0, 1.0)}, _supply())
    s = rep.to_json()["joints"]["fl_knee"]
    i = 1.0 / back_emf_constant(100.0)
    loss = s["mean_copper_loss_w"]
    # settles at ambient + loss x total resistance (the loss taken at the settled temperature)
    assert s["winding_peak_c"] == pytest.approx(25.0 + loss * 2.0, rel=1e-9)
    # and at the closed-form feedback solution (single node, R_th = R_wh + R_ha = 2 K/W)
    r20 = 0.1
    rise = i * i * r20 * 2.0 * (1 + 0.00393 * 5.0) / (1 - i * i * r20 * 0.00393 * 2.0)
    assert s["winding_peak_c"] == pytest.approx(25.0 + rise, rel=1e-9)
    assert s["minutes_to_limit"] is None and s["verdict"] == "pass"


def test_minutes_from_cold_and_mission_peak(tmp_path: Path):
    # 2.4 N m constant: the steady state lies above a 100 C limit, so the limit is reached;
    # oracle: the exact solution expm(A t) of the network with feedback (scipy) and brentq
    torque = 2.4
    p = write_synthetic_record(tmp_path / "r.h5", 1.0, 0.001, joints=["fl_knee"],
                               torque_nm={"fl_knee": torque})
    motor = _motor(tmax=100.0)
    i2r = (torque / back_emf_constant(100.0)) ** 2 * 0.1
    beta, pw = i2r * 0.00393, i2r * (1 + 0.00393 * 5.0)
    a = np.array([[(beta - 2.0) / 30.0, 2.0 / 30.0, pw / 30.0],
                  [2.0 / 300.0, -(2.0 + 1 / 1.5) / 300.0, 0.0], [0.0, 0.0, 0.0]])

    def rise(t: float) -> float:
        return float(scipy.linalg.expm(a * t)[0, 2])

    t_cross = brentq(lambda t: rise(t) - 75.0, 1.0, 1e5, xtol=1e-9)
    rep = check_motors(p, {"fl_knee": (motor, 1.0, 1.0, 1.0)}, _supply(), mission_s=600.5)
    s = rep.to_json()["joints"]["fl_knee"]
    assert s["minutes_to_limit"] == pytest.approx(t_cross / 60.0, abs=0.0015 / 60.0)
    assert s["winding_peak_mission_c"] == pytest.approx(25.0 + rise(600.5), abs=1e-6)
    assert s["winding_peak_c"] > 100.0 and s["verdict"] == "fail"
    # a mission shorter than the crossing passes on temperature
    rep2 = check_motors(p, {"fl_knee": (motor, 1.0, 1.0, 1.0)}, _supply(),
                        mission_s=0.5 * t_cross)
    s2 = rep2.to_json()["joints"]["fl_knee"]
    # the mission is rounded to whole samples (1 ms here)
    t_half = round(0.5 * t_cross, 3)
    assert s2["winding_peak_mission_c"] == pytest.approx(25.0 + rise(t_half), abs=1e-6)
    assert "winding temperature" not in s2["fail_reasons"]


def test_doubling_sample_rate_keeps_temperatures(tmp_path: Path):
    # metamorphic: the same piecewise-smooth load sampled twice as finely heats the same
    def tau(t: np.ndarray) -> np.ndarray:
        return 2.0 * np.abs(np.sin(2 * np.pi * t))

    a = write_synthetic_record(tmp_path / "a.h5", 2.0, 0.002, joints=["fl_knee"],
                               torque_nm={"fl_knee": tau})
    b = write_synthetic_record(tmp_path / "b.h5", 2.0, 0.001, joints=["fl_knee"],
                               torque_nm={"fl_knee": tau})
    d = {"fl_knee": (_motor(), 1.0, 1.0, 1.0)}
    pa = check_motors(a, d, _supply()).to_json()["joints"]["fl_knee"]["winding_peak_c"]
    pb = check_motors(b, d, _supply()).to_json()["joints"]["fl_knee"]["winding_peak_c"]
    assert pa == pytest.approx(pb, abs=0.05)


# -- step weight (written to kill surviving mutants, docs/mutation.md) -----------------------

@pytest.mark.parametrize("x", [0.0, 5e-9, -5e-9, 2e-8, 0.3, -4.0, 12.0])
def test_exact_step_weight_is_expm1_over_rate(x):
    # weight of a constant input over a step h in x' = s x + u: (e^{s h} - 1)/s, tending to h
    # as s -> 0 (integral of e^{s t} from 0 to h); reference numpy.expm1
    h = 0.02
    s = np.array([x / h])
    got = th._phi(s, np.expm1(s * h), h)[0]
    want = h if x == 0.0 else float(np.expm1(x) / s[0])
    assert got == pytest.approx(want, rel=1e-13)


def test_steady_rise_with_housing_heat_and_copper_feedback_solves_the_node_balance():
    # steady state of the two-node network: at the winding P_w = (theta_w - theta_h)/R_wh, at
    # the housing P_w + P_h = theta_h/R_ha, with P_w = P_cu + beta theta_w (copper resistance
    # rising with temperature); solved here as a linear system with scipy.linalg.solve
    r_wh, r_ha = 0.5, 1.5
    for p_cu, p_h, beta in ((20.0, 7.0, 0.0), (20.0, 7.0, 0.3), (0.0, 11.0, 0.2)):
        a = np.array([[1.0 / r_wh - beta, -1.0 / r_wh], [-beta, 1.0 / r_ha]])
        rhs = np.array([p_cu, p_cu + p_h])
        want = scipy.linalg.solve(a, rhs)
        got = NET.steady_rise_k(p_cu, p_h, beta)
        assert got == (pytest.approx(want[0], rel=1e-12), pytest.approx(want[1], rel=1e-12))
    # runaway exactly at beta (R_wh + R_ha) = 1: no steady state
    with pytest.raises(ValueError, match="thermal runaway"):
        NET.steady_rise_k(10.0, 0.0, 1.0 / (r_wh + r_ha))


def test_copper_resistance_refuses_a_negative_length_or_empty_area_only():
    # R = rho L / A (IEC 60028): zero length is zero resistance, not an error
    assert th.copper_resistance_ohm(0.0, 1e-6, 20.0) == 0.0
    assert th.copper_resistance_ohm(1.0, 1e-6, 20.0) > 0.0
    for length, area in ((-1.0, 1e-6), (1.0, 0.0), (1.0, -1e-6)):
        with pytest.raises(ValueError, match="length_m must be >= 0 and area_m2 > 0"):
            th.copper_resistance_ohm(length, area, 20.0)
