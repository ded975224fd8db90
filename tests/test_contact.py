"""Hertz contact against Johnson (Contact Mechanics, 1985, ch. 4) and Shigley sec. 3-19."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sim.checks import contact as c

E_STEEL, NU_STEEL = 207e9, 0.3


def test_line_contact_steel_cylinders():
    # Shigley sec. 3-19 eqs. 3-73/3-74 (from memory) for two steel cylinders, E = 207 GPa,
    # nu = 0.3, d1 = 40 mm, d2 = 80 mm, l = 20 mm, F = 10 kN: b = 0.27319 mm,
    # p_max = 2F/(pi b l) = 1165.17 MPa, mean pressure (pi/4) p_max = 915.12 MPa.
    r = c.line_contact(10e3, 0.020, 0.040, 0.080, E_STEEL, NU_STEEL, E_STEEL, NU_STEEL)
    assert r.half_width_m == pytest.approx(0.27319e-3, abs=0.000005e-3)
    assert r.max_pressure_pa == pytest.approx(1165.17e6, abs=0.005e6)
    assert r.mean_pressure_pa == pytest.approx(915.12e6, abs=0.005e6)
    # Shigley's own b formula: b = sqrt(2F/(pi l) * sum((1-nu^2)/E) / (1/d1 + 1/d2))
    b_shigley = math.sqrt(2 * 10e3 / (math.pi * 0.020) * 2 * (1 - 0.09) / E_STEEL
                          / (1 / 0.040 + 1 / 0.080))
    assert r.half_width_m == pytest.approx(b_shigley, rel=1e-12)
    assert r.max_pressure_pa == pytest.approx(2 * 10e3 / (math.pi * r.half_width_m * 0.020),
                                              rel=1e-12)


def test_line_contact_max_shear_and_depth():
    # Shigley sec. 3-19 (Fig. 3-37, from memory): tau_max ~ 0.30 p_max at z ~ 0.786 b.
    # The exact maximum solves (1+t^2)^(3/2) = 2t + t^3: t = 0.78615, tau = 0.30028 p_max.
    k, t = c.line_shear_factors()
    assert t == pytest.approx(0.78615, abs=5e-6)
    assert k == pytest.approx(0.30028, abs=5e-6)
    assert (1 + t * t) ** 1.5 == pytest.approx(2 * t + t**3, rel=1e-9)
    r = c.line_contact(10e3, 0.020, 0.040, 0.080, E_STEEL, NU_STEEL, E_STEEL, NU_STEEL)
    assert r.max_shear_depth_m == pytest.approx(0.786 * r.half_width_m, rel=1e-3)
    assert r.max_shear_pa == pytest.approx(349.9e6, abs=0.1e6)


def test_point_contact_two_steel_balls():
    # Johnson ch. 4 / Shigley eqs. 3-71, 3-72: d = 25 mm each, F = 1000 N, steel:
    # a = 0.34542 mm, p_max = 4001.7 MPa, approach a^2/R = 19.09 um;
    # tau_max ~ 0.31 p_max at ~0.48 a for nu = 0.3 (Shigley Fig. 3-36).
    r = c.point_contact(1000.0, 0.025, 0.025, E_STEEL, NU_STEEL, E_STEEL, NU_STEEL)
    assert r.radius_m == pytest.approx(0.34542e-3, abs=0.000005e-3)
    assert r.max_pressure_pa == pytest.approx(4001.7e6, abs=0.05e6)
    assert r.approach_m == pytest.approx(19.09e-6, abs=0.005e-6)
    assert r.max_shear_pa / r.max_pressure_pa == pytest.approx(0.31, abs=0.005)
    assert r.max_shear_depth_m / r.radius_m == pytest.approx(0.48, abs=0.005)
    # Shigley's a formula: a = (3F/8 * sum((1-nu^2)/E) / (1/d1 + 1/d2))^(1/3)
    a = (3 * 1000 / 8 * 2 * (1 - 0.09) / E_STEEL / (2 / 0.025)) ** (1 / 3)
    assert r.radius_m == pytest.approx(a, rel=1e-12)


def test_ball_on_flat():
    # Shigley eq. 3-71 with d2 = inf (flat): d = 6.35 mm, F = 1000 N, nu = 0.28
    a = (3 * 1000 / 8 * 2 * (1 - 0.28**2) / E_STEEL / (1 / 0.00635)) ** (1 / 3)
    r = c.point_contact(1000.0, 0.00635, math.inf, E_STEEL, 0.28, E_STEEL, 0.28)
    assert r.radius_m == pytest.approx(a, rel=1e-12)
    assert r.max_pressure_pa == pytest.approx(3 * 1000 / (2 * math.pi * a * a), rel=1e-12)


def test_concave_must_be_larger_than_convex():
    with pytest.raises(ValueError):
        c.effective_radius_m(0.010, -0.008)


@given(f=st.floats(1.0, 1e5), d1=st.floats(1e-3, 0.2), d2=st.floats(1e-3, 0.2))
def test_line_force_round_trip(f, d1, d2):
    # inverse pair: force -> p_max -> force
    p = c.line_contact(f, 0.01, d1, d2, E_STEEL, NU_STEEL, 3e9, 0.36).max_pressure_pa
    assert c.line_contact_force_n(p, 0.01, d1, d2, E_STEEL, NU_STEEL, 3e9, 0.36) == \
        pytest.approx(f, rel=1e-9)


@given(k=st.floats(0.1, 10.0))
def test_line_pressure_scales_with_root_of_force(k):
    # metamorphic: p_max ~ sqrt(F) (Johnson eq. 4.45)
    p1 = c.line_contact(100.0, 0.01, 0.01, 0.02, E_STEEL, NU_STEEL, E_STEEL, NU_STEEL)
    p2 = c.line_contact(100.0 * k, 0.01, 0.01, 0.02, E_STEEL, NU_STEEL, E_STEEL, NU_STEEL)
    assert p2.max_pressure_pa == pytest.approx(p1.max_pressure_pa * math.sqrt(k), rel=1e-9)
