"""The robot generator (sim/robot/scaling.py, ``gaitload model --scale-to-mass``)."""

from __future__ import annotations

import math
import tomllib

import pytest

from sim.commands.cli import main
from sim.robot.model import load_model
from sim.robot.scaling import scale_robot

from .conftest import MODELS

FENNEC = MODELS / "fennec.toml"


def _masses_by_hand(model_toml: dict) -> float:
    """Total mass summed by hand from a model file: body, 12 actuators (3 kinds x 4 legs),
    and 4 x (thigh + shank + foot)."""
    acts = model_toml["actuator"]
    leg = model_toml["leg"]
    return (model_toml["body"]["mass_kg"] + 4 * sum(acts[k]["mass_kg"] for k in acts)
            + 4 * (leg["thigh_mass_kg"] + leg["shank_mass_kg"] + leg["foot_mass_kg"]))


def test_demo_total_mass_by_hand():
    # fennec.toml: 6.5 + 12 x 0.5 + 4 x (0.55 + 0.15 + 0.04) = 15.46 kg, read off the file
    data = tomllib.loads(FENNEC.read_text())
    assert _masses_by_hand(data) == pytest.approx(15.46, abs=1e-12)
    assert load_model(FENNEC).total_mass_kg == pytest.approx(15.46, abs=1e-12)


@pytest.mark.parametrize("target", [6.0, 15.0, 35.0])
def test_scaled_robot_mass_lengths_and_inertia(tmp_path, target):
    out = tmp_path / "r.toml"
    assert main(["model", "--scale-to-mass", str(target), "-o", str(out)]) == 0
    data = tomllib.loads(out.read_text())
    k = target / 15.46
    s = k ** (1 / 3)
    # the masses summed by hand from the written file give the target
    assert _masses_by_hand(data) == pytest.approx(target, rel=1e-12)
    assert data["body"]["mass_kg"] == pytest.approx(6.5 * k, rel=1e-12)
    # lengths ~ m^(1/3) (geometric similarity at equal density)
    assert data["leg"]["thigh_length_m"] == pytest.approx(0.22 * s, rel=1e-12)
    assert data["stance"]["hip_height_m"] == pytest.approx(0.30 * s, rel=1e-12)
    assert data["body"]["size_m"][0] == pytest.approx(0.46 * s, rel=1e-12)
    m, m0 = load_model(out), load_model(FENNEC)
    assert m.total_mass_kg == pytest.approx(target, rel=1e-12)
    # inertias follow mass x length^2: the thigh link (cylinder plus the knee actuator,
    # parallel-axis theorem) scales by k^(5/3) about every axis
    i1 = m.thigh_link("fl").inertia_kg_m2
    i0 = m0.thigh_link("fl").inertia_kg_m2
    assert i1 == pytest.approx(i0 * k ** (5 / 3), rel=1e-9)
    # the thigh link by hand: solid cylinders (handbook table of mass moments of inertia:
    # I_transverse = m (3 r^2 + L^2) / 12) for the thigh (0.55 k kg, r 0.018 s, L 0.22 s,
    # along z, centre L/2 below the hip) and the knee actuator at the hip (0.5 k kg,
    # r = length = 0.045 s, along y), moved to the common centre by the parallel-axis theorem
    mt, r, L = 0.55 * k, 0.018 * s, 0.22 * s
    ma, ra = 0.5 * k, 0.045 * s
    zc = mt * (-L / 2) / (mt + ma)
    ixx = (mt * (3 * r * r + L * L) / 12 + mt * (-L / 2 - zc) ** 2
           + ma * (3 * ra * ra + ra * ra) / 12 + ma * zc ** 2)
    assert m.thigh_link("fl").mass_kg == pytest.approx(mt + ma, rel=1e-12)
    assert i1[0, 0] == pytest.approx(ixx, rel=1e-12)


@pytest.mark.parametrize("target", [6.0, 35.0])
def test_scaled_actuators_dynamically_similar(tmp_path, target):
    """Equal Froude number v^2/(g L) (Alexander & Jayes, J. Zool. 201, 1983): joint speeds
    scale as s^(-1/2), the torques that hold and swing a leg (m g L) as s^4, so the peak
    torque over weight x leg length and the no-load speed over sqrt(g/L) are kept."""
    out = tmp_path / "r.toml"
    assert main(["model", "--scale-to-mass", str(target), "-o", str(out)]) == 0
    m, m0 = load_model(out), load_model(FENNEC)
    s = (target / 15.46) ** (1 / 3)
    for j in ("fl_abad", "hr_hip", "fr_knee"):
        a, a0 = m.actuators[j], m0.actuators[j]
        assert a.gear_ratio == a0.gear_ratio
        assert a.peak_torque_nm == pytest.approx(a0.peak_torque_nm * s ** 4, rel=1e-12)
        assert a.no_load_speed_rad_s == pytest.approx(a0.no_load_speed_rad_s / math.sqrt(s),
                                                      rel=1e-12)
        # the rotor inertia (reducer input inertia included) goes as mass x radius^2
        assert a.rotor_inertia_kg_m2 == pytest.approx(a0.rotor_inertia_kg_m2 * s ** 5,
                                                      rel=1e-12)
        # stall current at the bus voltage stays the same multiple of the current limit
        assert a.bus_voltage_v / a.phase_resistance_ohm / a.current_limit_a == pytest.approx(
            a0.bus_voltage_v / a0.phase_resistance_ohm / a0.current_limit_a, rel=1e-12)
        assert a.efficiency_forward == a0.efficiency_forward
        assert a.friction_coulomb_nm == pytest.approx(a0.friction_coulomb_nm * s ** 4,
                                                      rel=1e-12)


def test_scaling_round_trips_to_the_source():
    """Metamorphic: scaling to the source's own mass gives the source robot back."""
    m0 = load_model(FENNEC)
    robot = scale_robot(m0, m0.total_mass_kg, "same")
    from sim.robot.scaling import load_scaled

    m = load_scaled(robot)
    for j, a0 in m0.actuators.items():
        for key in ("gear_ratio", "rotor_inertia_kg_m2", "torque_constant_nm_a",
                    "current_limit_a", "phase_resistance_ohm", "bus_voltage_v", "mass_kg",
                    "friction_coulomb_nm", "efficiency_back"):
            assert getattr(m.actuators[j], key) == pytest.approx(getattr(a0, key), rel=1e-12)
    assert m.thigh_link("hl").inertia_kg_m2 == pytest.approx(m0.thigh_link("hl").inertia_kg_m2,
                                                             rel=1e-12)


@pytest.mark.parametrize("bad", ["2.0", "61", "nan", "-5"])
def test_mass_out_of_range_exits_2_without_output(tmp_path, capsys, bad):
    out = tmp_path / "r.toml"
    assert main(["model", "--scale-to-mass", bad, "-o", str(out)]) == 2
    assert "--scale-to-mass" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_scale_needs_an_output(tmp_path, capsys):
    assert main(["model", "--scale-to-mass", "10"]) == 2
    assert "-o" in capsys.readouterr().err


def test_exact_rotor_links_keep_their_inertia_in_the_engine(tmp_path):
    """Regression: a rotor link's transverse inertia J_r/2, written to 9 digits, could break
    the triangle inequality Ixx + Iyy >= Izz of a rigid body's principal inertias (any
    dynamics text), and pybullet then set the link's inertia to zero ("Bad inertia tensor
    properties"), silently dropping rotors of scaled robots. The engine must report every
    rotor's axial inertia as written."""
    from sim.engine.world import Engine, pb
    from sim.robot.urdf import rotor_link_name
    from sim.scenario.scenario_file import load_scenario

    out = tmp_path / "r6.toml"
    assert main(["model", "--scale-to-mass", "6", "-o", str(out)]) == 0
    scn = load_scenario(MODELS.parent / "scenarios" / "stand.toml",
                        [f"robot={out}", 'drive.rotor_inertia="exact"'])
    eng = Engine(scn)
    try:
        names = {pb.getJointInfo(eng.robot, i, physicsClientId=eng.cid)[12].decode(): i
                 for i in range(pb.getNumJoints(eng.robot, physicsClientId=eng.cid))}
        for j, a in scn.model.actuators.items():
            info = pb.getDynamicsInfo(eng.robot, names[rotor_link_name(j)],
                                      physicsClientId=eng.cid)
            assert max(info[2]) == pytest.approx(a.rotor_inertia_kg_m2, rel=1e-6), j
    finally:
        eng.close()
