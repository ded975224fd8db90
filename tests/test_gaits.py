"""Gaits of the demo robot: trot over a speed range with payload, slope and low friction;
walk, stand-up, sit-down and a chained mission. Each long run is simulated once per module
and several properties are checked on the same record.

Speeds are given in m/s and as Froude numbers Fr = v^2 / (g h) with h = 0.30 m hip height
(the dimensionless speed of R. McN. Alexander & A. S. Jayes, "A dynamic similarity hypothesis
for the gaits of quadrupedal mammals", J. Zool. 201, 1983, from memory): slow 0.3 m/s
(Fr 0.031), medium 0.6 m/s (Fr 0.122), fast 1.0 m/s (Fr 0.340).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim.core.errors import InputError
from sim.engine.runner import run
from sim.record import open_record
from sim.scenario.scenario_file import load_scenario
from sim.scenario.segments import stance_angles

from .conftest import SCENARIOS

G = 9.80665
PERIOD_S = 0.3
TROT_S = 30.0
# the trot segment starts at 0.5 s; the record starts 10 cycles later and so covers a whole
# number (90) of gait cycles
START_S = 0.5 + 10 * PERIOD_S
TILT_RMS_BOUND_RAD = 0.1  # stated bound: about 6 degrees RMS
SPEED_TOL = 0.15  # mean forward speed within 15 % of the command (the requirement)

CASES = {
    "slow": ["segment.1.speed_m_s=0.3"],
    "medium": ["segment.1.speed_m_s=0.6"],
    "fast": ["segment.1.speed_m_s=1.0"],
    # +30 % of the robot's 15.46 kg as payload on the body
    "payload": ["segment.1.speed_m_s=0.6", "payload.mass_kg=4.638"],
    "slope": ["segment.1.speed_m_s=0.6", f"ground.slope_rad={math.radians(10.0)!r}"],
    "friction": ["segment.1.speed_m_s=0.6", "ground.friction=0.5"],
}


def _trot(tmp_path_factory, name: str):
    over = [f"segment.1.duration_s={TROT_S}", f"record.start_s={START_S}",
            # every step: the mean of a spiky contact force sampled every 5th step is off by
            # a few per cent (measured 3.3 % on the slope), more than the Newton check allows
            "record.decimation=1", *CASES[name]]
    scn = load_scenario(SCENARIOS / "trot.toml", over)
    out = tmp_path_factory.mktemp(f"trot_{name}") / "trot.h5"
    return scn, run(scn, out)


@pytest.fixture(scope="module", params=list(CASES))
def trot(request, tmp_path_factory):
    scn, res = _trot(tmp_path_factory, request.param)
    return request.param, scn, res


@pytest.mark.slow
def test_trot_stays_up_tracks_speed_balances_weight_and_keeps_duty(trot):
    name, scn, res = trot
    # no fall over 30 s
    assert res.status == "completed", f"{name}: {res.detail}"
    seg = res.segments[1]
    assert seg["kind"] == "trot"
    v_cmd = scn.segments[1]["speed_m_s"]
    # mean forward speed within 15 % of the command (the acceptance figure)
    assert seg["commanded_forward_speed_m_s"] == pytest.approx(v_cmd, rel=1e-6)
    assert seg["mean_forward_speed_m_s"] == pytest.approx(v_cmd, rel=SPEED_TOL), name
    # body tilt RMS under the stated bound
    assert seg["tilt_rms_rad"] < TILT_RMS_BOUND_RAD, name
    slope = scn.data["ground"]["slope_rad"]
    with open_record(res.record) as rec:
        t = rec.read("time_s")
        n_cycles = (t[-1] + scn.time_step_s * 5 - t[0]) / PERIOD_S
        assert abs(n_cycles - round(n_cycles)) < 0.02  # a whole number of gait cycles
        fz = sum(rec.read(f"feet/{leg}/force_n")[:, 2] for leg in ("fl", "fr", "hl", "hr"))
        # Newton's second law over a periodic motion: the mean ground force normal to the
        # ground equals the weight component m g cos(slope) (the body ends each cycle with the
        # vertical momentum it started with)
        weight_n = res.total_mass_kg * G * math.cos(slope)
        assert float(fz.mean()) == pytest.approx(weight_n, rel=0.03), name
        # the feet follow the plan's timing: each foot lands within 15 ms (a tenth of the stance)
        # and lifts off within 25 ms (a sixth of the 0.15 s stance) of the plan, on average over
        # the cycles (stated bounds). The bare contact share is not held to the plan's 0.5: on the
        # default foot pad the hind feet stay on the pad 10-15 ms past their planned lift-off
        # while the swing lifts them off it, and the share reads 0.52-0.58 (measured;
        # docs/control.md)
        t_all = rec.read("time_s")
        for leg in ("fl", "fr", "hl", "hr"):
            contact = rec.read(f"feet/{leg}/contact").astype(float)
            plan_leg = rec.read(f"feet/{leg}/phase_plan").astype(float)
            td = _touchdown_lags_s(t_all, plan_leg, contact)
            lo = _touchdown_lags_s(t_all, 1.0 - plan_leg, 1.0 - contact)
            assert len(td) >= 0.9 * n_cycles - 1 and len(lo) >= 0.9 * n_cycles - 1, (name, leg)
            assert abs(float(td.mean())) < 0.015, (name, leg, td.mean())
            assert -0.010 < float(lo.mean()) < 0.025, (name, leg, lo.mean())
            duty = float(contact.mean())
            assert 0.45 < duty < 0.60, (name, leg, duty)
            plan = rec.read(f"feet/{leg}/phase_plan")
            assert float(plan.mean()) == pytest.approx(0.5, abs=0.01)
            # about one touchdown per cycle (events are times in s within the record)
            td = rec.read(f"events/touchdown/{leg}")
            assert 0.9 * n_cycles <= len(td) <= 1.5 * n_cycles, (name, leg, len(td))
            assert np.all(np.diff(td) > 0) and td[0] >= t[0] - 1e-9
    # summary figures are physically sane: positive work, a finite cost of transport
    assert seg["positive_work_j"] > 0 and 0.0 < seg["cost_of_transport"] < 5.0
    assert seg["slip_distance_m"] >= 0.0
    doc = res.to_json()
    assert {"status", "record", "joints", "summary", "segments"} <= set(doc)


@pytest.fixture(scope="module")
def stand_up(tmp_path_factory):
    scn = load_scenario(SCENARIOS / "stand_up.toml", ["record.decimation=10"])
    out = tmp_path_factory.mktemp("up") / "up.h5"
    return scn, run(scn, out)


def test_stand_up_completes_in_the_stand_scenarios_stance(stand_up):
    _, res = stand_up
    assert res.status == "completed", res.detail
    stand = load_scenario(SCENARIOS / "stand.toml")
    target = stance_angles(stand.model).reshape(-1)
    with open_record(res.record) as rec:
        names = rec.joint_names
        q_end = np.array([rec.series(j, "angle_rad")[-1] for j in names])
        q_start = np.array([rec.series(j, "angle_rad")[0] for j in names])
        z = rec.read("base/position_m")[:, 2]
    # ends in the stance of stand.toml within 0.05 rad (the acceptance figure)
    np.testing.assert_allclose(q_end, target, atol=0.05)
    # and it really started from lying: body on the ground, knees folded
    assert z[0] < 0.06 and z[-1] > 0.25
    assert np.all(q_start[2::3] < -2.5)


def _touchdown_lags_s(t: np.ndarray, plan: np.ndarray, contact: np.ndarray) -> np.ndarray:
    """For each planned touchdown (plan 0 -> 1), the time to the nearest measured touchdown
    (contact 0 -> 1) within half a second, s (positive: the foot landed late)."""
    planned = t[1:][(plan[1:] > 0.5) & (plan[:-1] < 0.5)]
    measured = t[1:][(contact[1:] > 0.5) & (contact[:-1] < 0.5)]
    lags = []
    for tp in planned:
        near = measured[np.abs(measured - tp) < 0.5]
        if len(near):
            lags.append(near[np.argmin(np.abs(near - tp))] - tp)
    return np.array(lags)


WALK_DUTY_TOL = 0.05  # contact duty within 0.05 of the plan, as the trot's (stated bound)
WALK_LAG_S = 0.03  # mean touchdown within 30 ms of the plan (stated bound, 4 % of a cycle)


@pytest.mark.parametrize("extra", [[], ["payload.mass_kg=4.638"], ["ground.slope_rad=0.1"]],
                         ids=["flat", "payload", "slope"])
def test_walk_feet_do_what_the_walk_plans(tmp_path, extra):
    """Regression: the front feet used to land 130-240 ms late (contact duty 0.54-0.61
    against 0.8 planned): the attitude and height feedback lifted a landing foot, and the
    static body shift rocked the body. Every foot now keeps its planned contact duty and
    lands when planned, one touchdown per cycle."""
    scn = load_scenario(SCENARIOS / "walk.toml", ["segment.1.duration_s=6.5",
                                                  "record.decimation=5", "record.start_s=2.5",
                                                  *extra])
    res = run(scn, tmp_path / "walk.h5")
    assert res.status == "completed", res.detail
    seg = res.segments[1]
    assert seg["mean_forward_speed_m_s"] == pytest.approx(0.25, rel=SPEED_TOL)
    legs = ("fl", "fr", "hl", "hr")
    with open_record(res.record) as rec:
        t = rec.read("time_s")
        plan = np.stack([rec.read(f"feet/{leg}/phase_plan") for leg in legs])
        contact = np.stack([rec.read(f"feet/{leg}/contact") for leg in legs]).astype(float)
        touchdowns = [len(rec.read(f"events/touchdown/{leg}")) for leg in legs]
    n_cycles = (t[-1] - t[0]) / scn.segments[1]["step_period_s"]
    # at most one foot in the air by plan (duty 0.8 > 0.75), so three or four feet carry it
    assert plan.sum(axis=0).min() >= 3
    np.testing.assert_allclose(plan.mean(axis=1), 0.8, atol=0.03)  # 5 cycles recorded
    for k, leg in enumerate(legs):
        duty = float(contact[k].mean())
        assert duty == pytest.approx(float(plan[k].mean()), abs=WALK_DUTY_TOL), (leg, duty)
        lags = _touchdown_lags_s(t, plan[k], contact[k])
        assert len(lags) >= int(n_cycles) - 1, leg
        assert abs(float(lags.mean())) < WALK_LAG_S, (leg, lags)
        # no bouncing: about one touchdown per cycle
        assert touchdowns[k] <= 1.4 * n_cycles + 1, (leg, touchdowns[k])


def test_sit_down_ends_lying(tmp_path):
    scn = load_scenario(SCENARIOS / "sit_down.toml", ["record.decimation=10"])
    res = run(scn, tmp_path / "sit.h5")
    assert res.status == "completed", res.detail
    with open_record(res.record) as rec:
        z = rec.read("base/position_m")[:, 2]
    assert z[0] > 0.25 and z[-1] < 0.07  # body box (0.10 m high) back on the ground


def test_a_mission_chains_labelled_segments_into_one_record(tmp_path):
    scn = load_scenario(SCENARIOS / "mission.toml",
                        ["segment.1.duration_s=3", "segment.2.duration_s=3",
                         "record.series=false"])
    res = run(scn, tmp_path / "m.h5")
    assert res.status == "completed", res.detail
    assert [s["kind"] for s in res.segments] == ["stand_up", "walk", "trot", "stand",
                                                 "sit_down"]
    ends = [s["end_s"] for s in res.segments]
    starts = [s["start_s"] for s in res.segments]
    assert starts[1:] == pytest.approx(ends[:-1]) and ends[-1] == pytest.approx(scn.duration_s)
    with open_record(res.record) as rec:
        assert list(rec.read("segments/kind").astype(str)) == [s["kind"] for s in res.segments]
    trot_seg = res.segments[2]
    assert trot_seg["mean_forward_speed_m_s"] > 0.4  # ramping toward 0.8 m/s within 3 s


def test_misspelt_gait_key_is_rejected_with_file_and_key():
    with pytest.raises(InputError) as e:
        load_scenario(SCENARIOS / "trot.toml", ["segment.1.sped_m_s=0.5"])
    assert "segment.1.sped_m_s" in str(e.value) and "trot.toml" in str(e.value)
    with pytest.raises(InputError, match=r"segment\.1\.duty_factor"):
        load_scenario(SCENARIOS / "walk.toml", ["segment.1.duty_factor=0.5"])  # not static


def test_segment_gains_replace_the_scenario_gains_per_joint_kind():
    from sim.robot.statics import StanceStatics
    from sim.scenario.segments import make_controller

    scn = load_scenario(SCENARIOS / "trot.toml", ["segment.1.kp_nm_rad.knee=300"])
    ctrl = make_controller(scn.segments[1], scn.model, StanceStatics(scn.model))
    kp, kd = ctrl.gains([150.0] * 12, [3.0] * 12)
    assert kp[2::3] == [300.0] * 4 and kp[1::3] == [150.0] * 4 and kd == [3.0] * 12
