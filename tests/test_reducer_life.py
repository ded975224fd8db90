"""Rated-reducer life, peak torque and back-drivability.

The life formula is Palmgren's law in rating-point form (ISO 281:2007 cl. 6/7 for the
(C/P)^p law; Shigley ch. 11 variable loading for the p-th power mean load; Palmgren-Miner
for the damage sum). Hand cases follow directly from it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sim.checks import reducer as r
from sim.loads.spectra import JointSpectrum, spectrum_from_record
from tests.synthetic import write_synthetic_record

P = 10.0 / 3.0


def demo_rated(**kw) -> r.RatedReducer:
    base = dict(file="t.toml", kind="rated", name="t", ratio=10.0, efficiency_forward=0.9,
                efficiency_back=0.8, input_inertia_kg_m2=1e-5, rated_torque_nm=20.0,
                rated_speed_rad_s=2.0, rated_life_h=6000.0, momentary_peak_torque_nm=60.0)
    base.update(kw)
    return r.RatedReducer(**base)


def steps_spectrum(torque_nm, speed_rad_s, time_s) -> JointSpectrum:
    """One torque bin per step, centred on the step torque (no binning error)."""
    torque_nm, speed_rad_s, time_s = (np.asarray(x, float) for x in (torque_nm, speed_rad_s,
                                                                     time_s))
    order = np.argsort(torque_nm)
    t = torque_nm[order]
    # each bin centred on its torque (steps given with increasing spacing)
    edges = np.empty(len(t) + 1)
    edges[0] = t[0] - 1e-3
    for i, ti in enumerate(t):
        edges[i + 1] = 2 * ti - edges[i]
    time = np.asarray(time_s)[order][:, None]
    revs = (np.abs(speed_rad_s[order]) * time[:, 0] / (2 * np.pi))[:, None]
    return JointSpectrum("x", edges, np.array([-100.0, 100.0]), time, revs,
                         float(time.sum()), float(np.abs(t).max()))


def test_rated_point_gives_rated_life():
    # constant torque at the rated torque and speed: L_h = L_rated (formula identity)
    red = demo_rated()
    spec = steps_spectrum([20.0], [2.0], [3600.0])
    assert red.life_h(spec) == pytest.approx(6000.0, rel=1e-9)


def test_doubling_torque_divides_life_by_two_to_the_p():
    # Palmgren (C/P)^p law, ISO 281 cl. 7: doubling the load divides life by 2^p
    red = demo_rated()
    l1 = red.life_h(steps_spectrum([20.0], [2.0], [3600.0]))
    l2 = red.life_h(steps_spectrum([40.0], [2.0], [3600.0]))
    assert l1 / l2 == pytest.approx(2.0**P, rel=1e-9)
    red3 = demo_rated(life_exponent=3.0)
    assert red3.life_h(steps_spectrum([20.0], [2.0], [3600.0])) / red3.life_h(
        steps_spectrum([40.0], [2.0], [3600.0])) == pytest.approx(8.0, rel=1e-9)


def test_halving_mean_speed_doubles_life():
    # life in hours ~ 1/n for a life fixed in revolutions (ISO 281: L10h = 1e6 L10/(60 n))
    red = demo_rated()
    l1 = red.life_h(steps_spectrum([25.0], [2.0], [3600.0]))
    l2 = red.life_h(steps_spectrum([25.0], [1.0], [3600.0]))
    assert l2 / l1 == pytest.approx(2.0, rel=1e-9)


@pytest.mark.parametrize(("p", "life"), [(10 / 3, 15714.1), (3.0, 16051.4)])
def test_duty_cycle_life_and_miner_cross_check(p, life):
    # Rated point 100 N m, 15 rpm, 6000 h; duty (150 N m, 5 rpm, 0.2), (60 N m, 20 rpm, 0.5),
    # (20 N m, 30 rpm, 0.3). Palmgren mean (Shigley ch. 11) and Miner sum must agree.
    rpm = 2 * math.pi / 60
    red = demo_rated(rated_torque_nm=100.0, rated_speed_rad_s=15 * rpm, life_exponent=p,
                     momentary_peak_torque_nm=300.0)
    t, n, q = [150.0, 60.0, 20.0], [5 * rpm, 20 * rpm, 30 * rpm], [0.2, 0.5, 0.3]
    spec = steps_spectrum(t, n, [3600.0 * x for x in q])
    assert red.life_h(spec) == pytest.approx(life, abs=0.1)
    miner = 1.0 / sum(qi / r.rated_life_h(100.0, 15 * rpm, 6000.0, p, ti, ni)
                      for ti, ni, qi in zip(t, n, q, strict=True))
    assert red.life_h(spec) == pytest.approx(miner, rel=1e-9)


@given(life=st.floats(10.0, 1e6), speed=st.floats(0.01, 50.0), p=st.sampled_from([3.0, P]))
def test_life_and_allowable_torque_round_trip(life, speed, p):
    # inverse pair: allowable T_eq for a life, then the life at that T_eq
    red = demo_rated(life_exponent=p)
    t = red.allowable_torque_nm(life, speed)
    assert r.rated_life_h(20.0, 2.0, 6000.0, p, t, speed) == pytest.approx(life, rel=1e-9)


@given(k=st.floats(0.2, 5.0))
def test_scaling_torque_scales_damage_by_k_to_the_p(k):
    # metamorphic (Miner with a p-th power law): damage per hour ~ T^p
    red = demo_rated()
    base = steps_spectrum([5.0, 12.0, 30.0], [1.0, 3.0, 0.5], [100.0, 50.0, 10.0])
    scaled = JointSpectrum("x", base.torque_edges_nm * k, base.speed_edges_rad_s, base.time_s,
                           base.revolutions, base.duration_s, base.peak_torque_nm * k)
    assert red.life_h(base) / red.life_h(scaled) == pytest.approx(k**P, rel=1e-9)


def test_peak_ratio_and_governing_limit():
    red = demo_rated(momentary_peak_torque_nm=40.0)
    spec = steps_spectrum([10.0, 45.0], [2.0, 2.0], [3590.0, 10.0])
    sec = r.check_reducer(red, r.JointDuty(spec), r.CheckSettings(required_life_h=100.0))
    assert sec.values["peak_torque_ratio"] == pytest.approx(45.0 / 40.0)
    assert sec.governing == "momentary peak torque"
    assert sec.verdict == "fail"
    ok = r.check_reducer(demo_rated(), r.JointDuty(spec), r.CheckSettings(required_life_h=100.0))
    assert ok.verdict == "pass"
    # damage per hour of use by hand (Palmgren-Miner over the two steps, each step's life from
    # the rated point: L_i = 6000 h (20/T_i)^p (2/n_i)), and the life its inverse
    hand = (3590 / 3600) / (6000 * (20 / 10) ** P) + (10 / 3600) / (6000 * (20 / 45) ** P)
    assert ok.values["damage_per_h"] == pytest.approx(hand, rel=1e-9)
    assert ok.values["life_h"] == pytest.approx(1.0 / hand, rel=1e-9)


def test_life_governs_when_required_life_too_long():
    spec = steps_spectrum([20.0], [2.0], [3600.0])
    sec = r.check_reducer(demo_rated(), r.JointDuty(spec), r.CheckSettings(required_life_h=1e4))
    assert sec.governing == "rated life"
    assert sec.verdict == "fail"
    assert sec.values["life_h"] == pytest.approx(6000.0)


def test_peak_events_add_damage():
    # Miner: damage per hour = 1/L_fatigue + events_per_h / permitted_count
    red = demo_rated(peak_count=1000, repeated_peak_torque_nm=40.0)
    spec = steps_spectrum([20.0], [2.0], [3600.0])
    duty = r.JointDuty(spec, count_events=lambda thr: 3)
    life = red.limits(duty, r.CheckSettings())[0].life_h
    assert 1.0 / life == pytest.approx(1 / 6000.0 + 3 / 1000.0, rel=1e-12)


def test_count_excursions_across_chunks():
    x = np.array([0, 5, 6, 0, 7, 0, 0, 8, 9])
    n, last = r.count_excursions(x, 4.0)
    assert (n, last) == (3, True)
    a, s = r.count_excursions(x[:2], 4.0)
    b, _ = r.count_excursions(x[2:], 4.0, s)
    assert a + b == 3


def test_backdrive_and_reflected_inertia():
    # T_bd = ratio T_drag / eta_back; J_out = J_in ratio^2 + J_out_stage
    red = demo_rated(input_drag_torque_nm=0.02, output_inertia_kg_m2=1e-3)
    assert r.backdrive_torque_nm(red) == pytest.approx(10 * 0.02 / 0.8)
    assert r.backdrive_torque_nm(red, 0.01) == pytest.approx(10 * 0.03 / 0.8)
    assert r.reflected_inertia_kg_m2(red, 6.5e-5) == pytest.approx((6.5e-5 + 1e-5) * 100 + 1e-3)
    assert math.isinf(r.backdrive_torque_nm(demo_rated(efficiency_back=0.0)))


def test_spectrum_from_synthetic_record(tmp_path):
    # through a record: constant 20.5 N m (a bin centre) at 2 rad/s for 2 s
    path = write_synthetic_record(tmp_path / "r.h5", 2.0, 0.001, torque_nm={"fl_knee": 20.5},
                                  speed_rad_s={"fl_knee": 2.0})
    from sim.record import open_record
    with open_record(path) as rec:
        spec = spectrum_from_record(rec, "fl_knee")
    red = demo_rated()
    assert red.life_h(spec) == pytest.approx(6000.0 * (20.0 / 20.5) ** P, rel=1e-6)
