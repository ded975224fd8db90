"""Mass properties of the generated model against closed-form solid formulas.

Source of the formulas: the table of mass moments of inertia of homogeneous solids in
Meriam & Kraige, Engineering Mechanics: Dynamics, Appendix B (from memory):
  cuboid          Ixx = m (b^2 + c^2) / 12
  solid cylinder  I_axis = m r^2 / 2,  I_transverse = m (3 r^2 + L^2) / 12
  solid sphere    I = 2 m r^2 / 5
and the parallel-axis (Huygens-Steiner) theorem I_O = I_G + m d^2 for composition.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest

from sim.robot.inertia import box, combine, cylinder, sphere
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf

from .conftest import MODELS


def test_solids_against_handbook_formulas():
    b = box(3.0, (0.4, 0.2, 0.1))
    assert b.inertia_kg_m2[0, 0] == pytest.approx(3.0 * (0.2**2 + 0.1**2) / 12, rel=1e-12)
    assert b.inertia_kg_m2[2, 2] == pytest.approx(3.0 * (0.4**2 + 0.2**2) / 12, rel=1e-12)
    c = cylinder(2.0, 0.1, 0.5, "z")
    assert c.inertia_kg_m2[2, 2] == pytest.approx(2.0 * 0.01 / 2, rel=1e-12)
    assert c.inertia_kg_m2[0, 0] == pytest.approx(2.0 * (3 * 0.01 + 0.25) / 12, rel=1e-12)
    s = sphere(0.5, 0.03)
    assert s.inertia_kg_m2[1, 1] == pytest.approx(0.4 * 0.5 * 0.03**2, rel=1e-12)


def test_two_half_boxes_compose_to_the_whole_box():
    # parallel-axis theorem: two 0.2 m halves side by side are the 0.4 m box
    halves = [box(1.0, (0.2, 0.2, 0.1), (x, 0, 0)) for x in (-0.1, 0.1)]
    whole = box(2.0, (0.4, 0.2, 0.1))
    np.testing.assert_allclose(combine(halves).inertia_kg_m2, whole.inertia_kg_m2, rtol=1e-12)


def _links(urdf: str) -> dict[str, dict]:
    out = {}
    for link in ET.fromstring(urdf).iter("link"):
        inert = link.find("inertial")
        i = inert.find("inertia").attrib
        out[link.get("name")] = {
            "mass": float(inert.find("mass").get("value")),
            "com": np.array([float(v) for v in inert.find("origin").get("xyz").split()]),
            "I": np.array([[float(i["ixx"]), float(i["ixy"]), float(i["ixz"])],
                           [float(i["ixy"]), float(i["iyy"]), float(i["iyz"])],
                           [float(i["ixz"]), float(i["iyz"]), float(i["izz"])]]),
        }
    return out


def test_generated_thigh_shank_foot_inertias_equal_closed_form():
    m = load_model(MODELS / "fennec.toml")
    links = _links(build_urdf(m))
    lg = m.leg
    L1, r1, m1 = lg["thigh_length_m"], lg["thigh_radius_m"], lg["thigh_mass_kg"]
    act = m.actuators["fl_knee"]
    ma, ra, la = act.mass_kg, act.housing_radius_m, act.housing_length_m
    # thigh: cylinder along z with COM at -L1/2, knee actuator (cylinder along y) at the hip
    M = m1 + ma
    zc = (m1 * (-L1 / 2) + ma * 0.0) / M
    d1, d2 = -L1 / 2 - zc, 0.0 - zc
    Ixx = m1 * (3 * r1**2 + L1**2) / 12 + m1 * d1**2 + ma * (3 * ra**2 + la**2) / 12 + ma * d2**2
    Iyy = m1 * (3 * r1**2 + L1**2) / 12 + m1 * d1**2 + ma * ra**2 / 2 + ma * d2**2
    Izz = m1 * r1**2 / 2 + ma * (3 * ra**2 + la**2) / 12
    th = links["fl_thigh"]
    assert th["mass"] == pytest.approx(M, rel=1e-8)
    assert th["com"][2] == pytest.approx(zc, rel=1e-8)
    np.testing.assert_allclose(np.diag(th["I"]), [Ixx, Iyy, Izz], rtol=1e-7)
    L2, r2, m2 = lg["shank_length_m"], lg["shank_radius_m"], lg["shank_mass_kg"]
    sh = links["fl_shank"]
    np.testing.assert_allclose(np.diag(sh["I"]),
                               [m2 * (3 * r2**2 + L2**2) / 12] * 2 + [m2 * r2**2 / 2], rtol=1e-7)
    ft = links["fl_foot"]
    rf, mf = lg["foot_radius_m"], lg["foot_mass_kg"]
    np.testing.assert_allclose(np.diag(ft["I"]), [0.4 * mf * rf**2] * 3, rtol=1e-7)


def test_total_mass_agrees_with_pinocchio():
    # pinocchio (pin 2.7+ from PyPI) parses the URDF independently of our code
    pin = pytest.importorskip("pinocchio")
    m = load_model(MODELS / "fennec.toml")
    pm = pin.buildModelFromXML(build_urdf(m, 1.5, (0.0, 0.0, 0.08)), pin.JointModelFreeFlyer())
    assert sum(i.mass for i in pm.inertias) == pytest.approx(m.total_mass_kg + 1.5, rel=1e-9)
