"""Lewis bending against Shigley, Mechanical Engineering Design, ch. 14."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sim.checks import gear as g

IN = 0.0254
LBF = 4.4482216152605
PSI = 6894.757293168


# Shigley, Mechanical Engineering Design, Table 14-2 "Values of the Lewis Form Factor Y (These
# Values Are for a Normal Pressure Angle of 20 deg, Full-Depth Teeth, and a Diametral Pitch of
# Unity in the Plane of Rotation)": every row as printed (from memory, checked row by row
# against several independent public reproductions of the table), and the rack.
SHIGLEY_TABLE_14_2 = {12: 0.245, 13: 0.261, 14: 0.277, 15: 0.290, 16: 0.296, 17: 0.303,
                      18: 0.309, 19: 0.314, 20: 0.322, 21: 0.328, 22: 0.331, 24: 0.337,
                      26: 0.346, 28: 0.353, 30: 0.359, 34: 0.371, 38: 0.384, 43: 0.397,
                      50: 0.409, 60: 0.422, 75: 0.435, 100: 0.447, 150: 0.460, 300: 0.472,
                      400: 0.480}
SHIGLEY_RACK_Y = 0.485


@pytest.mark.parametrize(("z", "y"), sorted(SHIGLEY_TABLE_14_2.items()))
def test_form_factor_every_row_of_table_14_2(z, y):
    assert g.lewis_form_factor(z) == pytest.approx(y, abs=1e-12)


def test_form_factor_rack_beyond_the_table():
    assert g.lewis_form_factor(401) == SHIGLEY_RACK_Y
    assert g.lewis_form_factor(10000) == SHIGLEY_RACK_Y


@pytest.mark.parametrize("z", [23, 25, 27, 29, 32, 36, 40, 45, 55, 70, 90, 120, 200, 350])
def test_form_factor_interpolates_linearly_between_printed_rows(z):
    # linear interpolation in the tooth count between the neighbouring printed rows, as
    # Shigley recommends for counts the table does not list (hand interpolation here)
    rows = sorted(SHIGLEY_TABLE_14_2)
    lo = max(r for r in rows if r < z)
    hi = min(r for r in rows if r > z)
    ylo, yhi = SHIGLEY_TABLE_14_2[lo], SHIGLEY_TABLE_14_2[hi]
    want = ylo + (yhi - ylo) * (z - lo) / (hi - lo)
    assert g.lewis_form_factor(z) == pytest.approx(want, abs=1e-12)


def test_form_factor_interpolates_between_rows():
    # linear interpolation between 24 (0.337) and 26 (0.346), as Shigley recommends
    assert g.lewis_form_factor(25) == pytest.approx(0.3415, abs=1e-9)
    with pytest.raises(ValueError):
        g.lewis_form_factor(11)


def test_shigley_example_14_1_transmitted_load():
    # Shigley Example 14-1 (from memory): P_d = 8 teeth/in, F = 1.5 in, 16 teeth (Y = 0.296),
    # 1200 rpm, S_y = 30 kpsi (AISI 1020 as-rolled), design factor 3, cut teeth ->
    # V = 628 ft/min, K_v = 1.52, W_t = 365 lbf, H = 6.95 hp (book digits).
    m = IN / 8.0
    d = 16 * m
    v = 1200 * 2 * math.pi / 60 * d / 2  # m/s
    assert v / 0.00508 == pytest.approx(628.3, abs=0.05)  # ft/min
    kv = g.dynamic_factor(v, "cut")
    assert kv == pytest.approx(1.52, abs=0.005)
    wt = g.lewis_allowable_load_n(30e3 * PSI / 3.0, 1.5 * IN, m, 16, kv)
    assert wt / LBF == pytest.approx(365.0, abs=1.0)
    assert wt * v / 745.699872 == pytest.approx(6.95, abs=0.02)  # hp


def test_si_lewis_bending():
    # Shigley eq. 14-4b (SI form, from memory): m = 1 mm, 20 teeth (Y = 0.322), b = 10 mm,
    # T = 2 N m -> W_t = 200 N; 3000 rpm -> V = 3.1416 m/s, K_v = (6.1+V)/6.1 = 1.5150;
    # sigma = 94.10 MPa (62.11 MPa without K_v).
    wt = 2.0 / 0.010
    kv = g.dynamic_factor(3000 * 2 * math.pi / 60 * 0.010, "cut")
    assert kv == pytest.approx(1.5150, abs=5e-5)
    assert g.lewis_bending_stress_pa(wt, 0.010, 0.001, 20, kv) == pytest.approx(94.10e6,
                                                                               abs=0.005e6)
    assert g.lewis_bending_stress_pa(wt, 0.010, 0.001, 20) == pytest.approx(62.11e6, abs=0.005e6)


@pytest.mark.parametrize(("profile", "expected"), [
    # Shigley eqs. 14-4a..d (SI) at V = 4 m/s (from memory)
    ("cast", (3.05 + 4) / 3.05), ("cut", (6.1 + 4) / 6.1), ("hobbed", (3.56 + 2) / 3.56),
    ("ground", math.sqrt((5.56 + 2) / 5.56))])
def test_dynamic_factors(profile, expected):
    assert g.dynamic_factor(4.0, profile) == pytest.approx(expected, rel=1e-12)


@given(w=st.floats(1.0, 1e4), z=st.integers(12, 500), kv=st.floats(1.0, 3.0))
def test_stress_and_allowable_load_round_trip(w, z, kv):
    s = g.lewis_bending_stress_pa(w, 0.008, 0.0008, z, kv)
    assert g.lewis_allowable_load_n(s, 0.008, 0.0008, z, kv) == pytest.approx(w, rel=1e-12)
