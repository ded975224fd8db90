"""Gait building blocks without the engine: leg solver, swing curve, placement, load split."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.robot.kinematics import LegKinematics, UnreachableError
from sim.robot.model import load_model
from sim.robot.statics import distribute_weight
from sim.scenario.gaits.footpath import TROT_LIFT, WALK_LIFT, phases, swing_curve, touchdown_offset
from sim.scenario.gaits.leg_solver import LegSolver
from sim.scenario.gaits.stance_forces import distribute, load_weights

from .conftest import MODELS


@pytest.fixture(scope="module")
def kin():
    return LegKinematics.from_model(load_model(MODELS / "fennec.toml"))


angles = st.tuples(st.floats(-0.6, 0.6), st.floats(-0.9, 1.9), st.floats(-2.6, -0.35))


@settings(max_examples=60, deadline=None)
@given(st.lists(angles, min_size=4, max_size=4),
       st.lists(st.floats(-2, 2), min_size=12, max_size=12))
def test_solver_ik_fk_round_trip_and_jacobian_speeds(kin, qs, vs):
    # inverse pair: FK (LegKinematics) then the solver's closed-form IK returns the angles;
    # joint speeds equal J^-1 v with the Jacobian checked against finite differences and
    # pinocchio in test_kinematics.py
    q = np.array(qs)
    zp = -kin.l1_m * np.cos(q[:, 1]) - kin.l2_m * np.cos(q[:, 1] + q[:, 2])
    if (zp > -0.03).any():  # the walking branch: foot below the hip in the leg plane
        return
    p = kin.foot_positions(q)
    v = np.reshape(vs, (4, 3))
    qs_, qd, _ = LegSolver(kin, reach_margin=0.0).solve(p.tolist(), v.tolist(), [0, 0, -9.8],
                                                         np.zeros((4, 3)).tolist())
    np.testing.assert_allclose(np.reshape(qs_, (4, 3)), q, atol=1e-9)
    qd_ref = np.linalg.solve(kin.jacobians(q), v[:, :, None])[:, :, 0]
    np.testing.assert_allclose(np.reshape(qd, (4, 3)), qd_ref, rtol=1e-7, atol=1e-7)


def test_solver_static_torques_match_the_checked_statics(kin):
    # the solver's fused statics equal LegKinematics.static_torques; that one is checked
    # against pinocchio (generalized gravity and contact Jacobians) at given angles, gravity
    # and foot forces in test_stand_statics.py::test_stance_feed_forward_matches_pinocchio
    rng = np.random.default_rng(3)
    q = np.column_stack([rng.uniform(-.4, .4, 4), rng.uniform(0.2, 1.2, 4),
                         -rng.uniform(0.8, 2.2, 4)])
    g = np.array([-1.7, 0.4, -9.6])
    up = -g / np.linalg.norm(g)
    f = up[None, :] * rng.uniform(10, 60, (4, 1))  # forces along the up direction
    _, _, tau = LegSolver(kin).solve(kin.foot_positions(q).tolist(), np.zeros((4, 3)).tolist(),
                                     g.tolist(), f.tolist())
    np.testing.assert_allclose(np.reshape(tau, (4, 3)), kin.static_torques(q, g, f), atol=1e-9)


def test_unreachable_target_is_an_error_for_the_checking_ik_and_clipped_for_control(kin):
    feet = kin.foot_positions(np.tile([0.0, 0.8, -1.6], (4, 1)))
    feet[1, 2] -= 0.4  # front-right foot 0.4 m lower: beyond thigh + shank
    with pytest.raises(UnreachableError, match="leg fr is out of reach"):
        kin.inverse(feet)
    q, _, _ = LegSolver(kin).solve(feet.tolist(), np.zeros((4, 3)).tolist(), [0, 0, -9.8],
                                   np.zeros((4, 3)).tolist())
    reach = np.linalg.norm(kin.foot_positions(np.reshape(q, (4, 3)))[1] - kin.hip_m[1]
                           - [0, 0, 0])
    assert reach <= kin.l1_m + kin.l2_m + kin.offset_m  # pulled back inside the workspace


@given(st.floats(0.0, 1.0), st.floats(-0.3, 0.3), st.floats(0.0, 0.1))
def test_swing_curve_lands_at_zero_ground_speed(s, v, h):
    # Hermite end conditions (common practice): position and velocity match at both ends
    p0, p1 = [-0.05, 0.1, -0.28], [0.06, 0.12, -0.27]
    v_end = [-v, 0.01, 0.0]
    p, _ = swing_curve(0.0, p0, p1, v_end, v_end, h)
    np.testing.assert_allclose(p, p0, atol=1e-12)
    p, dp = swing_curve(1.0, p0, p1, v_end, v_end, h)
    np.testing.assert_allclose(p, p1, atol=1e-12)
    np.testing.assert_allclose(dp[:2], v_end[:2], atol=1e-12)  # = stance-foot velocity
    assert abs(dp[2]) < 1e-12
    pm, _ = swing_curve(0.5, p0, p1, v_end, v_end, h)
    assert pm[2] == pytest.approx((p0[2] + p1[2]) / 2 + h)
    # derivative by s agrees with a central difference
    e = 1e-6
    if e < s < 1 - e:
        a, _ = swing_curve(s - e, p0, p1, v_end, v_end, h)
        b, _ = swing_curve(s + e, p0, p1, v_end, v_end, h)
        _, d = swing_curve(s, p0, p1, v_end, v_end, h)
        np.testing.assert_allclose((np.array(b) - a) / (2 * e), d, atol=1e-5)


def test_raibert_touchdown_offset():
    # Raibert, Legged Robots That Balance (1986): x_f = v T_s / 2 + k (v - v*)
    assert touchdown_offset((0.8, 0.0), (0.1, -0.05), 0.15, 0.03) == pytest.approx(
        (0.8 * 0.15 / 2 + 0.003, -0.0015))


def test_phase_patterns():
    # trot: diagonal pairs in phase, the pairs half a cycle apart (common practice)
    ph = phases(0.1, 0.3, 0.5, TROT_LIFT)
    assert ph[0] == ph[3] and ph[1] == ph[2] and abs(ph[0] - ph[1]) == pytest.approx(0.5)
    # walk: at most one foot in the air at any time for duty >= 0.75
    for t in np.linspace(0, 1.6, 401):
        ph = phases(float(t), 0.8, 0.8, WALK_LIFT)
        assert sum(p >= 0.8 for p in ph) <= 1


def test_equal_weights_give_the_minimum_norm_split_with_force_and_moment_balance():
    # statics of a rigid body: sum f = W, sum c x f = 0 (Newton-Euler); equal weights give
    # the minimum-norm distribution of sim.robot.statics.distribute_weight
    c = np.array([[0.2, 0.13, -0.3], [0.2, -0.13, -0.3], [-0.18, 0.13, -0.3],
                  [-0.18, -0.13, -0.3]])
    up = np.array([0.1, -0.05, 0.99])
    up /= np.linalg.norm(up)
    f = np.array(distribute(c.tolist(), 150.0, up.tolist(), [1.0] * 4, eps=1e-12))
    np.testing.assert_allclose(f, distribute_weight(c, 150.0, up), rtol=1e-6, atol=1e-6)
    np.testing.assert_allclose(f.sum(axis=0), 150.0 * up, rtol=1e-9)
    np.testing.assert_allclose(np.cross(c, f).sum(axis=0), 0.0, atol=1e-6)
    # a foot with zero weight carries nothing; three feet around the COM still balance
    c3 = c - [0.05, -0.04, 0.0]  # COM inside the triangle fl, fr, hr
    f3 = np.array(distribute(c3.tolist(), 150.0, up.tolist(), [1.0, 1.0, 0.0, 1.0]))
    assert np.allclose(f3[2], 0.0) and (f3[:, 2] >= 0).all()
    np.testing.assert_allclose(f3.sum(axis=0), 150.0 * up, rtol=1e-9)
    np.testing.assert_allclose(np.cross(c3, f3).sum(axis=0), 0.0, atol=1e-3)


def test_load_weights_are_smooth_and_zero_in_swing():
    w = [load_weights([p], 0.5, 0.15)[0] for p in np.linspace(0, 0.999, 1000)]
    assert w[0] == 0.0 and max(w) == 1.0 and all(x == 0.0 for x in w[500:])
    assert max(abs(np.diff(w))) < 0.05  # no jumps at touchdown or lift-off
    assert math.isclose(load_weights([0.25], 0.5, 0.15)[0], 1.0)
