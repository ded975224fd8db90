"""Timing-belt stages: open-drive geometry (Shigley ch. 17, from memory), effective pull
F_e = 2T/d, teeth in mesh against the common-practice minimum of 6."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sim.checks import belt as b
from sim.checks.reducer import CheckSettings, JointDuty, check_reducer
from sim.core.errors import InputError
from sim.loads.spectra import JointSpectrum


def test_open_drive_geometry_example():
    # 3 mm pitch, 20T/40T, C = 60 mm (Shigley ch. 17 open-belt relations):
    # d = 19.0986 / 38.1972 mm; wrap 161.684 deg; TIM 8.98; L = 211.5231 mm exact,
    # 211.5198 mm by the approximation; a 70T (210 mm) belt sits at C = 59.2285 mm
    d, big = b.pitch_diameter_m(20, 0.003), b.pitch_diameter_m(40, 0.003)
    assert d == pytest.approx(19.0986e-3, abs=5e-8)
    assert big == pytest.approx(38.1972e-3, abs=5e-8)
    wrap = b.wrap_angle_small_rad(d, big, 0.060)
    assert math.degrees(wrap) == pytest.approx(161.684, abs=5e-4)
    assert b.teeth_in_mesh(20, wrap) == pytest.approx(8.98, abs=0.005)
    assert b.pitch_length_m(d, big, 0.060) == pytest.approx(211.5231e-3, abs=5e-8)
    assert b.pitch_length_approx_m(d, big, 0.060) == pytest.approx(211.5198e-3, abs=5e-8)
    assert b.centre_distance_m(0.210, d, big) == pytest.approx(59.2285e-3, abs=5e-8)


def test_effective_pull_and_power():
    # F_e = 2T/d: 1.5 N m on the 20T pulley -> 157.08 N; P = F_e v = T w = 471.24 W at 3000 rpm
    d = b.pitch_diameter_m(20, 0.003)
    fe = b.effective_pull_n(1.5, d)
    assert fe == pytest.approx(157.08, abs=0.005)
    w = 3000 * 2 * math.pi / 60
    assert fe * w * d / 2 == pytest.approx(471.24, abs=0.005)


@given(c=st.floats(0.03, 0.5), z1=st.integers(10, 40), z2=st.integers(10, 90))
def test_length_and_centre_distance_round_trip(c, z1, z2):
    # inverse pair: C -> L -> C
    d, big = sorted([b.pitch_diameter_m(z1, 0.003), b.pitch_diameter_m(z2, 0.003)])
    if c <= 0.5 * (d + big):
        return
    assert b.centre_distance_m(b.pitch_length_m(d, big, c), d, big) == pytest.approx(c, rel=1e-9)


def test_equal_pulleys_span_is_centre_distance():
    # beta = 0: span = C, L = 2C + pi d
    d = b.pitch_diameter_m(30, 0.005)
    assert b.span_length_m(d, d, 0.1) == pytest.approx(0.1)
    assert b.pitch_length_m(d, d, 0.1) == pytest.approx(0.2 + math.pi * d)


def table(stages=None, **kw):
    s = dict(driver_teeth=15, driven_teeth=45, pitch_m=0.005, centre_distance_m=0.1,
             width_m=0.015, rated_pull_n=1500.0)
    s.update(kw)
    return {"kind": "belt", "efficiency_forward": 0.95, "efficiency_back": 0.9,
            "input_inertia_kg_m2": 1e-6, "belt": {"stage": stages or [s, dict(s)]}}


def test_two_stage_ratio_and_stage_pulls():
    drive = b.belt_from_table(table(), "knee.toml")
    assert drive.ratio == pytest.approx(9.0)
    big = b.pitch_diameter_m(45, 0.005)
    # output stage carries the joint torque, the first stage a third of it
    assert drive.pulls_n(30.0) == pytest.approx([2 * 10.0 / big, 2 * 30.0 / big])
    single = b.belt_from_table(table(stages=[dict(driver_teeth=20, driven_teeth=60,
                                                  pitch_m=0.003, centre_distance_m=0.08,
                                                  width_m=0.01, rated_pull_n=500.0)]), "a.toml")
    assert single.ratio == 3.0


def test_teeth_in_mesh_derating_and_verdict():
    # fewer than 6 whole teeth in mesh (common practice): capacity derated in proportion
    close = b.belt_from_table(table(centre_distance_m=0.055), "knee.toml")
    st0 = close.stages[0]
    assert st0.teeth_in_mesh < 6
    assert st0.capacity_n(1.0) == pytest.approx(1500.0 * math.floor(st0.teeth_in_mesh) / 6)
    assert any("derated" in n for n in close.notes())
    spec = JointSpectrum("fl_knee", np.array([29.0, 31.0]), np.array([-1.0, 1.0]),
                         np.array([[10.0]]), np.array([[1.0]]), 10.0, 30.0)
    sec = check_reducer(b.belt_from_table(table(), "k.toml"), JointDuty(spec), CheckSettings())
    assert sec.governing == "belt stage 2 pull"
    weak = check_reducer(b.belt_from_table(table(rated_pull_n=900.0), "k.toml"),
                         JointDuty(spec), CheckSettings())
    assert weak.verdict == "fail"


def test_pretension_slack_side_limit():
    drive = b.belt_from_table(table(pretension_n=200.0), "k.toml")
    spec = JointSpectrum("fl_knee", np.array([29.0, 31.0]), np.array([-1.0, 1.0]),
                         np.array([[10.0]]), np.array([[1.0]]), 10.0, 30.0)
    lims = drive.limits(JointDuty(spec), CheckSettings())
    slack = [lim for lim in lims if "slack" in lim.name]
    assert len(slack) == 2
    assert slack[1].utilisation == pytest.approx(drive.pulls_n(30.0)[1] / 400.0)


def test_bad_belt_input_names_the_key():
    with pytest.raises(InputError) as info:
        b.belt_from_table(table(centre_distance_m=0.03), "k.toml")  # pulleys overlap
    assert info.value.key == "belt.stage[0].centre_distance_m"
    with pytest.raises(InputError) as info:
        b.belt_from_table(table(pitch_mm=5.0), "k.toml")  # unknown key
    assert info.value.key == "belt.stage[0].pitch_mm"
    t = table()
    t["ratio"] = 8.0
    with pytest.raises(InputError) as info:
        b.belt_from_table(t, "k.toml")
    assert info.value.key == "ratio"
