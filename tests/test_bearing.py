"""Rolling-bearing life and loads against ISO 281 / ISO 76 and Shigley ch. 11."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sim.checks import bearing as b
from sim.core.errors import InputError

RPM = 2.0 * math.pi / 60.0


def test_l10_ball_and_roller_iso281():
    # ISO 281:2007 cl. 6 and 7: L10 = (C/P)^p, p = 3 ball, 10/3 roller; L10h = 1e6/(60 n) L10.
    # C = 14 kN, P = 2 kN, n = 1500 rpm: (C/P)^3 = 7^3 = 343 Mrev exactly, 3811.1 h.
    assert b.l10_mrev(14e3, 2e3, 3.0) == pytest.approx(343.0, rel=1e-12)
    assert b.l10_h(14e3, 2e3, 1500 * RPM, 3.0) == pytest.approx(3811.1, abs=0.05)
    assert b.l10_mrev(14e3, 2e3, 10 / 3) == pytest.approx(656.14, abs=0.005)
    assert b.l10_h(14e3, 2e3, 1500 * RPM, b.life_exponent("roller")) == pytest.approx(
        7290.4, abs=0.05)


def test_required_rating_shigley_example_11_1_pattern():
    # Shigley ch. 11 (Example 11-1 pattern, from memory): ball bearing, 2 kN, 5000 h at
    # 1725 rpm, catalogue rated at 1e6 rev: C10 = 2 (5000*1725*60/1e6)^(1/3) = 16.06 kN.
    assert b.required_dynamic_rating_n(2e3, 5000.0, 1725 * RPM, 3.0) == pytest.approx(
        16.06e3, abs=5.0)


@given(c=st.floats(1e3, 1e5), ratio=st.floats(1.2, 50.0), rpm=st.floats(1.0, 1e4),
       p=st.sampled_from([3.0, 10 / 3]))
def test_life_and_required_rating_round_trip(c, ratio, rpm, p):
    # inverse pair: l10_h(C) -> required_dynamic_rating_n(life) gives back C
    load = c / ratio
    life = b.l10_h(c, load, rpm * RPM, p)
    assert b.required_dynamic_rating_n(load, life, rpm * RPM, p) == pytest.approx(c, rel=1e-9)


@pytest.mark.parametrize(("r", "a1"), [(90, 1.0), (95, 0.64), (96, 0.55), (97, 0.47),
                                       (98, 0.37), (99, 0.25), (99.2, 0.22), (99.4, 0.19),
                                       (99.6, 0.16), (99.8, 0.12), (99.9, 0.093),
                                       (99.95, 0.077)])
def test_a1_matches_iso281_table_12(r, a1):
    # ISO 281:2007 Table 12 (from memory; two significant figures, so tolerance 0.005)
    assert b.reliability_factor_a1(r) == pytest.approx(a1, abs=0.0051)


def test_a1_rejects_reliability_outside_table():
    with pytest.raises(ValueError):
        b.reliability_factor_a1(85.0)


def test_equivalent_load_iso281_table_3():
    # ISO 281 Table 3, deep-groove ball bearing: f0 Fa/C0r = 0.345 -> e = 0.22, Y = 1.99,
    # X = 0.56 when Fa/Fr > e; P = Fr when Fa/Fr <= e.
    c0, f0 = 20290.0, 14.0  # f0 Fa / C0 = 0.345 at Fa = 500 N
    assert b.equivalent_radial_load_n(1000.0, 500.0, c0, f0) == pytest.approx(
        0.56 * 1000 + 1.99 * 500, rel=1e-3)
    # Fa/Fr = 0.15 is below the smallest e (0.19): P = Fr
    assert b.equivalent_radial_load_n(1000.0, 150.0, c0, f0) == 1000.0
    assert b.equivalent_radial_load_n(1234.0, 0.0, c0, f0) == 1234.0


# ISO 281:2007 Table 3, radial ball bearings, single row deep-groove, normal internal clearance
# (from memory; the same rows are printed in the bearing makers' catalogues): relative axial
# load f0 Fa/C0r -> e; for Fa/Fr > e X = 0.56 and Y as below; for Fa/Fr <= e X = 1, Y = 0.
# Intermediate values by linear interpolation (the table's own note).
ISO281_TABLE_3 = [(0.172, 0.19, 2.30), (0.345, 0.22, 1.99), (0.689, 0.26, 1.71),
                  (1.03, 0.28, 1.55), (1.38, 0.30, 1.45), (2.07, 0.34, 1.31),
                  (3.45, 0.38, 1.15), (5.17, 0.42, 1.04), (6.89, 0.44, 1.00)]


@pytest.mark.parametrize(("rel", "e", "y"), ISO281_TABLE_3)
def test_equivalent_load_every_row_of_iso281_table_3(rel, e, y):
    c0, f0 = 10000.0, 10.0
    fa = rel * c0 / f0  # puts f0 Fa / C0r on the row
    # Fa/Fr just above e: P = 0.56 Fr + Y Fa with the row's Y
    fr = fa / (e * 1.001)
    assert b.equivalent_radial_load_n(fr, fa, c0, f0) == pytest.approx(0.56 * fr + y * fa,
                                                                      rel=1e-12)
    # Fa/Fr just below e: P = Fr
    fr = fa / (e * 0.999)
    assert b.equivalent_radial_load_n(fr, fa, c0, f0) == fr


@pytest.mark.parametrize("k", range(len(ISO281_TABLE_3) - 1))
def test_equivalent_load_interpolates_table_3_between_rows(k):
    # a third of the way from row k to row k+1, e and Y interpolated by hand
    (r0, e0, y0), (r1, e1, y1) = ISO281_TABLE_3[k], ISO281_TABLE_3[k + 1]
    rel = r0 + (r1 - r0) / 3
    e, y = e0 + (e1 - e0) / 3, y0 + (y1 - y0) / 3
    c0, f0 = 10000.0, 10.0
    fa = rel * c0 / f0
    fr = fa / (e * 1.0005)  # Fa/Fr above the interpolated e, below the next row's
    assert b.equivalent_radial_load_n(fr, fa, c0, f0) == pytest.approx(0.56 * fr + y * fa,
                                                                      rel=1e-12)
    fr = fa / (e * 0.9995)  # below the interpolated e, above the previous row's
    assert b.equivalent_radial_load_n(fr, fa, c0, f0) == fr


def test_static_safety_iso76():
    # ISO 76, radial ball bearing: P0 = max(0.6 Fr + 0.5 Fa, Fr); s0 = C0/P0.
    # C0 = 6550 N, Fr = 3000 N, Fa = 1000 N -> P0 = 3000 N, s0 = 2.18.
    p0 = b.static_equivalent_load_n(3000.0, 1000.0)
    assert p0 == 3000.0
    assert b.static_safety(6550.0, p0) == pytest.approx(2.18, abs=0.005)
    assert b.static_equivalent_load_n(1000.0, 3000.0) == pytest.approx(2100.0)


def test_variable_load_palmgren_mean_and_miner_identity():
    # Palmgren p-th power mean load (Shigley ch. 11 variable loading; Harris & Kotzalas):
    # C = 20 kN, steps (3000 N, 200 rpm, 0.2), (1500 N, 600 rpm, 0.5), (800 N, 1200 rpm, 0.3)
    # -> L10h = 58 561.2 h (ball), and the Miner sum of the steps' lives gives the same.
    loads = np.array([3000.0, 1500.0, 800.0])
    rpm = np.array([200.0, 600.0, 1200.0])
    frac = np.array([0.2, 0.5, 0.3])
    hours = 1.0
    revs = rpm * 60.0 * frac * hours
    life = b.variable_load_life_h(loads, revs, 3600.0 * hours, 20e3, 3.0)
    assert life == pytest.approx(58561.2, abs=0.1)
    miner = 1.0 / sum(f / b.l10_h(20e3, p, n * RPM, 3.0) for p, n, f in zip(loads, rpm, frac,
                                                                              strict=True))
    assert life == pytest.approx(miner, rel=1e-12)
    assert b.variable_load_life_h(loads, revs, 3600.0, 20e3, 10 / 3) == pytest.approx(
        125329.8, abs=0.1)


def test_bearing_table_rejects_misspelt_key():
    with pytest.raises(InputError, match="dynamic_ratng_n"):
        b.bearing_from_table({"dynamic_ratng_n": 1.0, "static_rating_n": 1.0}, "p.toml", "brg")
