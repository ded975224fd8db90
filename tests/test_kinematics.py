"""Closed-form leg kinematics: round trips, Jacobian, reach errors, and pinocchio agreement."""

from __future__ import annotations

import numpy as np
import pytest

from sim.robot.kinematics import LegKinematics, UnreachableError
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf

from .conftest import MODELS


@pytest.fixture(scope="module")
def kin():
    return LegKinematics.from_model(load_model(MODELS / "fennec.toml"))


def test_ik_fk_round_trip_across_workspace(kin):
    # the inverse picks the branch with the foot below the hip in the leg plane (z' < 0),
    # the only one a standing or walking leg uses; sample the joint ranges on that branch
    rng = np.random.default_rng(1)
    n = 0
    while n < 200:
        q = np.column_stack([rng.uniform(-0.6, 0.6, 4), rng.uniform(-1.0, 2.0, 4),
                             -rng.uniform(0.3, 2.7, 4)])
        zp = -kin.l1_m * np.cos(q[:, 1]) - kin.l2_m * np.cos(q[:, 1] + q[:, 2])
        if (zp > -0.02).any():
            continue
        np.testing.assert_allclose(kin.inverse(kin.foot_positions(q)), q, atol=1e-9)
        n += 1


def test_jacobian_matches_finite_differences(kin):
    q = np.array([[0.1, 0.7, -1.4], [-0.2, 0.9, -1.8], [0.3, 0.5, -1.1], [0.0, 1.2, -2.2]])
    J = kin.jacobians(q)
    eps = 1e-6
    for i in range(3):
        dq = np.zeros_like(q)
        dq[:, i] = eps
        num = (kin.foot_positions(q + dq) - kin.foot_positions(q - dq)) / (2 * eps)
        np.testing.assert_allclose(J[:, :, i], num, atol=1e-8)


def test_unreachable_target_is_a_clear_error(kin):
    feet = kin.foot_positions(np.tile([0.0, 0.8, -1.6], (4, 1)))
    feet[2, 2] -= 0.5  # hind-left foot 0.5 m lower: beyond thigh + shank
    with pytest.raises(UnreachableError, match="leg hl is out of reach"):
        kin.inverse(feet)


def test_foot_positions_agree_with_pinocchio(kin):
    # pinocchio forward kinematics on the generated URDF (fixed base) is the outside reference
    pin = pytest.importorskip("pinocchio")
    model = load_model(MODELS / "fennec.toml")
    pm = pin.buildModelFromXML(build_urdf(model))
    pd = pm.createData()
    q = np.array([[0.2, 0.6, -1.3], [-0.1, 1.0, -2.0], [0.3, 0.3, -0.9], [-0.4, 1.4, -2.4]])
    pin.framesForwardKinematics(pm, pd, q.reshape(-1))
    ours = kin.foot_positions(q)
    for k, leg in enumerate(("fl", "fr", "hl", "hr")):
        fid = pm.getFrameId(f"{leg}_foot")
        np.testing.assert_allclose(pd.oMf[fid].translation, ours[k], atol=1e-12)
