"""Cycloidal stage: kinematics, profile, undercut, ideal forces, bad geometry.

Sources: Malhotra & Parameswaran, "Analysis of a cycloid speed reducer", Mech. Mach. Theory
18(6) 1983 (ideal force analysis, from memory); Sensinger, ASME J. Mech. Des. 132(2) 2010
(profile with pin offset, undercut); Uicker, Pennock & Shigley, Theory of Machines and
Mechanisms (rotating unbalance m e w^2).
"""

from __future__ import annotations

import copy
import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from sim.checks import cycloid as c
from sim.checks import cycloid_geometry as g
from sim.core.errors import InputError

N, R, E = 20, 0.040, 0.0015  # literature-style example: K1 = 0.75


def part_table(**geom) -> dict:
    g = {"ring_pins": 12, "lobes": 11, "eccentricity_m": 0.0012, "pin_circle_radius_m": 0.032,
         "pin_diameter_m": 0.005, "disc_thickness_m": 0.008, "discs": 2, "output_pins": 6,
         "output_pin_circle_radius_m": 0.016, "output_pin_diameter_m": 0.005,
         "bore_diameter_m": 0.016, "disc_material": "petg", "pin_material": "steel_52100",
         "eccentric_bearing": {"dynamic_rating_n": 2000.0, "static_rating_n": 1000.0}}
    g.update(geom)
    return {"kind": "cycloidal", "efficiency_forward": 0.8, "efficiency_back": 0.6,
            "input_inertia_kg_m2": 1e-6, "cycloid": g}


def test_ratio_from_pins_and_lobes():
    # common practice: 11 ring pins, 10 lobes, ring fixed -> 10:1 (i = z_c/(N - z_c))
    assert g.ratio_fixed_ring(11, 10) == 10.0
    assert g.ratio_fixed_ring(20, 19) == 19.0
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    assert stage.ratio == 11.0


def test_output_hole_is_pin_plus_twice_eccentricity():
    # common practice: a 12 mm roller at 4.5 mm eccentricity needs a 21 mm output hole
    assert g.output_hole_diameter_m(0.012, 0.0045) == pytest.approx(0.021, abs=1e-12)
    assert g.output_hole_diameter_m(0.008, 0.0015) == pytest.approx(0.011, abs=1e-12)


def test_profile_radius_range_and_pin_tangency():
    # Sensinger 2010 profile: radius runs from R - e - r_r to R + e - r_r (35.5..38.5 mm)
    xy = g.disc_profile_xy(N, R, E, 0.003, 20000)
    rad = np.hypot(xy[:, 0], xy[:, 1])
    assert rad.min() == pytest.approx(0.0355, abs=1e-7)
    assert rad.max() == pytest.approx(0.0385, abs=1e-7)
    # every profile point lies exactly r_r from the pitch curve (an offset curve)
    u = np.linspace(0, 2 * np.pi, 20000, endpoint=False)
    pc = g.pitch_curve_xy(N, R, E, u)
    assert np.allclose(np.hypot(*(pc - xy).T), 0.003, atol=1e-12)


def test_min_curvature_radius_literature_cases():
    # closed form of the pitch-curve curvature (Hwang & Hsieh, ASME JMD 129, 2007 type
    # non-undercutting condition, from memory); N = 20, K1 = 0.75, R = 40 mm -> 6.2270 mm
    rho, phi = g.min_curvature_radius_m(N, R, E)
    assert rho == pytest.approx(6.2270e-3, abs=5e-8)
    assert math.cos(phi) == pytest.approx(0.25, abs=1e-12)
    for n, k1, expected in [(12, 0.6, 0.294139), (40, 0.9, 0.053878), (10, 0.3, 0.4225),
                            (30, 0.5, 0.140401)]:
        assert g.min_curvature_radius_m(n, 1.0, k1 / n)[0] == pytest.approx(expected, abs=5e-7)


def test_min_curvature_matches_dense_numerical_curvature():
    # independent: curvature from numerical derivatives of the pitch curve
    for n, k1 in [(12, 0.4), (20, 0.75), (11, 0.2), (30, 0.5)]:
        e = k1 * R / n
        u = np.linspace(0, 2 * np.pi / (n - 1), 200001)
        p = g.pitch_curve_xy(n, R, e, u)
        d1 = np.gradient(p, u, axis=0)
        d2 = np.gradient(d1, u, axis=0)
        kappa = (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]) / np.hypot(*d1.T) ** 3
        rho = 1.0 / kappa[kappa > 0]
        assert g.min_curvature_radius_m(n, R, e)[0] == pytest.approx(rho[2:-2].min(), rel=1e-5)


@pytest.mark.parametrize(("factor", "undercut"), [(0.9, False), (1.1, True)])
def test_undercut_when_pin_radius_exceeds_rho_min(factor, undercut):
    # offset curve of radius r_r > rho_min loops: its tangent reverses (Sensinger 2010)
    rho, _ = g.min_curvature_radius_m(N, R, E)
    xy = g.disc_profile_xy(N, R, E, factor * rho, 40000)
    seg = np.diff(np.vstack([xy, xy[:1]]), axis=0)
    turn = (seg * np.roll(seg, -1, axis=0)).sum(axis=1)
    assert bool((turn < 0).any()) == undercut


def _contact_normals_moment(n, r, e, tc, theta):
    """Moment of the ideal pin forces about the disc centre using the contact normals of the
    actual disc profile, located by a nearest-point search (independent of the lever-arm
    formula)."""
    alpha = -theta / (n - 1)  # disc rotation for crank angle theta (ring fixed)
    rot = np.array([[math.cos(alpha), -math.sin(alpha)], [math.sin(alpha), math.cos(alpha)]])
    centre = e * np.array([math.cos(theta), math.sin(theta)])
    forces = g.ring_pin_forces_n(n, r, e, tc, theta)
    total = 0.0
    for k in range(n):
        if forces[k] == 0:
            continue
        a = 2 * math.pi * k / n
        pin = r * np.array([math.cos(a), math.sin(a)])
        local = rot.T @ (pin - centre)
        u0 = math.atan2(local[1], local[0])
        res = minimize_scalar(lambda u, q=local: float(np.sum(
                                  (g.pitch_curve_xy(n, r, e, np.array([u]))[0] - q) ** 2)),
                              bounds=(u0 - 0.3, u0 + 0.3), method="bounded",
                              options={"xatol": 1e-13})
        u = res.x
        tangent = np.array([-r * math.sin(u) + e * n * math.sin(n * u),
                            r * math.cos(u) - e * n * math.cos(n * u)])
        normal = rot @ np.array([tangent[1], -tangent[0]]) / np.linalg.norm(tangent)
        f = forces[k] * normal
        d = pin - centre
        total += d[0] * f[1] - d[1] * f[0]
    return abs(total)


@pytest.mark.parametrize("theta", [0.0, 0.13, 0.37])
def test_pin_force_moments_sum_to_applied_torque(theta):
    # Malhotra & Parameswaran 1983: ideal distribution; moments of the pin forces about the
    # disc centre, along the true profile normals, balance the disc torque T_c = 10 N m
    assert _contact_normals_moment(N, R, E, 10.0, theta) == pytest.approx(10.0, rel=1e-6)


def test_closed_form_max_pin_force_agrees_with_discrete_sum():
    # Malhotra & Parameswaran 1983: F_max = 4 T_c/(N (N-1) e) = 70.175 N for T_c = 10 N m;
    # the discrete sum over the pins varies with crank angle around it (discreteness)
    closed = g.max_pin_force_closed_form_n(N, E, 10.0)
    assert closed == pytest.approx(70.175, abs=5e-4)
    thetas = np.linspace(0, 2 * np.pi / N, 64, endpoint=False)
    disc = np.array([g.ring_pin_forces_n(N, R, E, 10.0, t).max() for t in thetas])
    assert np.all(np.abs(disc / closed - 1) < 0.025)
    # with many pins the discrete sum converges to the closed form
    n = 200
    e = 0.75 * R / n
    disc200 = max(g.ring_pin_forces_n(n, R, e, 10.0, t).max() for t in thetas[:8])
    assert disc200 == pytest.approx(g.max_pin_force_closed_form_n(n, e, 10.0), rel=2e-3)


def test_input_torque_from_force_balance():
    # power balance T_in = T_c/(N-1), here from the disc's force balance through the crank
    for theta in (0.0, 0.2, 0.37):
        f = g.disc_forces(N, R, E, 6, 0.020, 10.0, theta)
        o, fb = f["disc_centre"], f["bearing_force"]
        assert o[0] * fb[1] - o[1] * fb[0] == pytest.approx(10.0 / 19.0, rel=1e-9)


def test_output_pin_forces_and_bearing_load_band():
    # output pins: Q_0 = 4 T_c/(N_w R_w) for even N_w (333.33 N for N_w = 6, R_w = 20 mm);
    # crank bearing: continuum estimate |F_b| ~ sqrt((4T/(pi R_w) - 2T I/(pi r_c))^2 + (T/r_c)^2)
    # (Malhotra & Parameswaran 1983 type analysis): the discrete load averages to it over a
    # turn and stays within +-3 % near theta = 0.37 rad; six output pins make it ripple
    theta = -math.pi / 2  # puts output pin 0 at 90 deg from the eccentric direction
    q = g.output_pin_forces_n(6, 0.020, 10.0, theta)
    psi = 2 * np.pi * np.arange(6) / 6 - theta
    assert (q * 0.020 * np.sin(psi)).sum() == pytest.approx(10.0, rel=1e-12)  # moments = T_c
    assert q.max() == pytest.approx(333.33, abs=0.01)
    k = 0.75
    ix = 1 / k - (1 - k * k) / (2 * k * k) * math.log((1 + k) / (1 - k))
    rc = E * (N - 1)
    est = math.hypot(4 * 10 / (math.pi * 0.020) - 2 * 10 / (math.pi * rc) * ix, 10 / rc)
    turn = [np.linalg.norm(g.disc_forces(N, R, E, 6, 0.020, 10.0, t)["bearing_force"])
            for t in np.linspace(0, 2 * np.pi, 360, endpoint=False)]
    assert np.mean(turn) == pytest.approx(est, rel=0.005)
    fb = np.linalg.norm(g.disc_forces(N, R, E, 6, 0.020, 10.0, 0.37)["bearing_force"])
    assert fb == pytest.approx(est, rel=0.03)


def test_imbalance_force_and_two_disc_couple():
    # rotating unbalance F = m e w^2 (Uicker, Pennock & Shigley): 0.15 kg, 1.5 mm, 3000 rpm
    w = 3000 * 2 * math.pi / 60
    assert g.imbalance_force_n(0.15, 0.0015, w) == pytest.approx(22.21, abs=0.005)
    assert g.two_disc_couple_nm(0.15, 0.0015, w, 0.010) == pytest.approx(0.2221, abs=5e-5)


@pytest.mark.parametrize(("key", "value", "named"), [
    ("lobes", 12, "cycloid.lobes"),                       # lobes >= pins
    ("lobes", 13, "cycloid.lobes"),
    ("lobes", 10, "cycloid.lobes"),                       # not pins - 1
    ("eccentricity_m", 0.003, "cycloid.eccentricity_m"),  # K1 >= 1: e too large for R/N
    ("pin_diameter_m", 0.0168, "cycloid.pin_diameter_m"),   # neighbouring pins overlap
    ("output_pin_diameter_m", 0.016, "cycloid.output_pin_circle_radius_m"),  # holes overlap
    ("output_pin_circle_radius_m", 0.025, "cycloid.output_pin_circle_radius_m"),
    ("pin_material", "unobtainium", "cycloid.pin_material"),
    ("dics_thickness_m", 0.01, "cycloid.dics_thickness_m"),  # misspelt key
])
def test_bad_geometry_names_the_parameter(key, value, named):
    t = part_table(**{key: value})
    with pytest.raises(InputError) as info:
        c.cycloid_from_table(t, "hip.toml")
    assert info.value.key == named
    assert info.value.file == "hip.toml"


def test_undercut_profile_is_rejected():
    # K1 = 0.95 with 12 pins: rho_min = 3.67 mm, an 8 mm pin (r_r = 4 mm) undercuts
    t = part_table(eccentricity_m=0.95 * 0.032 / 12, pin_diameter_m=0.008)
    with pytest.raises(InputError, match="undercut") as info:
        c.cycloid_from_table(t, "hip.toml")
    assert info.value.key == "cycloid.pin_diameter_m"


def test_stated_ratio_must_match():
    t = part_table()
    t["ratio"] = 10.0
    with pytest.raises(InputError) as info:
        c.cycloid_from_table(t, "hip.toml")
    assert info.value.key == "ratio"


def test_profile_exports(tmp_path):
    stage = c.cycloid_from_table(copy.deepcopy(part_table()), "hip.toml")
    csv = c.write_profile_csv(stage, tmp_path / "disc.csv", points=360)
    rows = [line for line in csv.read_text().splitlines() if not line.startswith("#")]
    assert rows[0] == "x_m,y_m"
    xy = np.array([[float(v) for v in r.split(",")] for r in rows[1:]])
    assert xy.shape == (361, 2) and np.allclose(xy[0], xy[-1])
    svg = c.write_profile_svg(stage, tmp_path / "disc.svg", points=360).read_text()
    assert svg.startswith("<svg") and svg.count("<circle") == 12 + 6 + 1
    # same inputs, same bytes
    again = c.write_profile_svg(stage, tmp_path / "disc2.svg", points=360).read_text()
    assert again == svg


def test_disc_mass_from_profile_area():
    # shoelace area of a fine polygon of a circle -> pi r^2
    t = np.linspace(0, 2 * np.pi, 20000, endpoint=False)
    assert g.polygon_area_m2(np.stack([np.cos(t), np.sin(t)], -1)) == pytest.approx(math.pi,
                                                                                     rel=1e-7)
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    assert 0.005 < stage.disc_mass_kg < 0.05


def test_check_reports_forces_under_the_spectrum_peak():
    # the spectrum's peak torque drives the reported forces; closed form (Malhotra &
    # Parameswaran 1983) and discrete pin sum agree within the discreteness of 12 pins
    from sim.checks.reducer import CheckSettings, JointDuty, check_reducer
    from sim.loads.spectra import JointSpectrum
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    spec = JointSpectrum("fl_hip", np.array([9.0, 11.0]), np.array([-10.0, 10.0]),
                         np.array([[3600.0]]), np.array([[3600 * 2.0 / (2 * np.pi)]]), 3600.0,
                         10.0)
    sec = check_reducer(stage, JointDuty(spec), CheckSettings())
    v = sec.values
    assert v["peak_disc_torque_nm"] == pytest.approx(0.55 * 10.0)  # two discs, common practice
    assert v["peak_pin_force_n"] == pytest.approx(v["peak_pin_force_closed_form_n"], rel=0.05)
    # and exactly the largest hand pin force over the check's 720 crank angles of a turn
    # (geometry from first principles in _hand_ring_pin_pressures below)
    hand = max(f for t in np.linspace(0, 2 * np.pi, 720, endpoint=False)
               for f, _, _ in _hand_ring_pin_pressures(stage, 5.5, t))
    assert v["peak_pin_force_n"] == pytest.approx(hand, rel=1e-9)
    assert v["peak_output_pin_force_n"] == pytest.approx(5.5 / (1.5 * 0.016), rel=1e-9)
    assert v["peak_input_torque_per_disc_nm"] == pytest.approx(5.5 / 11)
    w_in = 10.0 * 11  # largest speed-bin edge times the ratio
    assert v["imbalance_force_n"] == pytest.approx(stage.disc_mass_kg * 0.0012 * w_in**2)
    assert v["two_disc_couple_nm"] == pytest.approx(v["imbalance_force_n"] * 0.008)
    names = [lim.name for lim in sec.limits]
    assert names == ["eccentric bearing L10", "eccentric bearing static (ISO 76)",
                     "ring pin / lobe contact (Hertz)", "output pin / hole contact (Hertz)"]


# --- contact pressures: hand Hertz at a fixed crank angle -------------------------------------
# Hertz line contact of two parallel cylinders in Shigley's form (Shigley, Mechanical
# Engineering Design, sec. 3-19, eqs. 3-73/3-74, from memory): half-width
# b = sqrt(2F/(pi l) [(1-nu1^2)/E1 + (1-nu2^2)/E2] / (1/d1 + 1/d2)), p_max = 2F/(pi b l); an
# internal (concave) surface takes a negative diameter. Written out here, not taken from
# sim.checks.contact.


def _shigley_p_max(force_n, length_m, d1_m, d2_m, m1, m2):
    comp = (1 - m1.poisson_ratio**2) / m1.youngs_modulus_pa \
        + (1 - m2.poisson_ratio**2) / m2.youngs_modulus_pa
    b = math.sqrt(2 * force_n / (math.pi * length_m) * comp / (1 / d1_m + 1 / d2_m))
    return 2 * force_n / (math.pi * b * length_m)


def _hand_ring_pin_pressures(stage, disc_torque_nm, theta):
    """Per ring pin at crank angle theta: (force N, disc contact curvature radius m, p_max Pa).

    Geometry done here from first principles: with the ring fixed the disc turns by
    -theta/(N-1) about its centre e(cos theta, sin theta), so ring pin k (angle beta_k) sits on
    the pitch curve x = R cos u - e cos Nu, y = R sin u - e sin Nu at u = beta_k + theta/(N-1).
    The curvature of that curve, kappa = (x'y'' - y'x'')/|r'|^3 (> 0 convex), gives the disc
    profile's radius rho - r_pin (the profile is the inward parallel curve at the pin radius).
    Ideal load sharing (rigid disc, equal contact stiffness, no clearance; Malhotra &
    Parameswaran 1983): pin k deflects by its lever arm l_k about the disc centre along its
    contact normal, so F_k = T_c l_k / sum l^2 over the pins pressed (l_k > 0).
    """
    n, r, e, rr = (stage.ring_pins, stage.pin_circle_radius_m, stage.eccentricity_m,
                   0.5 * stage.pin_diameter_m)
    alpha = -theta / (n - 1)
    rot = np.array([[math.cos(alpha), -math.sin(alpha)], [math.sin(alpha), math.cos(alpha)]])
    centre = e * np.array([math.cos(theta), math.sin(theta)])
    lever, rho_disc = [], []
    for k in range(n):
        beta = 2 * math.pi * k / n
        u = beta + theta / (n - 1)
        xp, yp = -r * math.sin(u) + e * n * math.sin(n * u), r * math.cos(u) - e * n * math.cos(n * u)
        xpp = -r * math.cos(u) + e * n * n * math.cos(n * u)
        ypp = -r * math.sin(u) + e * n * n * math.sin(n * u)
        kappa = (xp * ypp - yp * xpp) / (xp * xp + yp * yp) ** 1.5
        rho_disc.append(1 / kappa - rr)
        t = rot @ np.array([xp, yp])
        normal = np.array([t[1], -t[0]]) / math.hypot(*t)  # outward normal of the disc
        d = r * np.array([math.cos(beta), math.sin(beta)]) - centre
        lever.append(d[0] * normal[1] - d[1] * normal[0])
    lever_a = np.array(lever)
    pressed = lever_a > 0
    force = np.where(pressed, disc_torque_nm * lever_a / float((lever_a[pressed] ** 2).sum()), 0)
    out = []
    for f, rho in zip(force, rho_disc, strict=True):
        p = _shigley_p_max(f, stage.disc_thickness_m, 2 * rr, 2 * rho, stage.pin_material,
                           stage.disc_material) if f > 0 else 0.0
        out.append((float(f), rho, p))
    return out


@pytest.mark.parametrize("theta", [0.1, 0.3])
def test_ring_pin_lobe_pressure_by_hand_at_a_fixed_crank_angle(theta, monkeypatch):
    # the check's ring-pin pressure at one crank angle is the largest hand pressure of the
    # pressed pins; the pressed pins include concave parts of the profile (rho < 0), where
    # the sign of the curvature decides the pressure
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    tc = 5.0
    pins = _hand_ring_pin_pressures(stage, tc, theta)
    assert any(f > 0 and rho < 0 for f, rho, _ in pins)  # a concave contact is loaded
    k_max = max(range(len(pins)), key=lambda k: pins[k][2])
    f, rho, p_hand = pins[k_max]
    assert rho > 0  # the governing pin presses on a convex lobe flank
    monkeypatch.setattr(c.CycloidStage, "_crank_angles", lambda self, steps=16:
                        np.array([theta]))
    assert stage.ring_contact_pressure_pa(tc) == pytest.approx(p_hand, rel=1e-9)
    # the pin force behind it, from the project's force analysis, is the hand force too
    assert g.ring_pin_forces_n(stage.ring_pins, stage.pin_circle_radius_m,
                               stage.eccentricity_m, tc, theta)[k_max] == pytest.approx(f, rel=1e-9)


@pytest.mark.parametrize("theta", [0.1, 0.3])
def test_each_pressed_ring_pin_has_its_hand_pressure(theta, monkeypatch):
    # pin by pin, convex and concave contacts alike: the check's force analysis is narrowed
    # to one pin at a time (the others unloaded), so its pressure is that pin's alone
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    tc = 5.0
    pins = _hand_ring_pin_pressures(stage, tc, theta)
    monkeypatch.setattr(c.CycloidStage, "_crank_angles", lambda self, steps=16:
                        np.array([theta]))
    full = g.ring_pin_forces_n
    concave = 0
    for k, (f, rho, p_hand) in enumerate(pins):
        if f == 0:
            continue
        concave += rho < 0
        monkeypatch.setattr(c, "ring_pin_forces_n", lambda *a, k=k: np.where(
            np.arange(stage.ring_pins) == k, full(*a), 0.0))
        assert stage.ring_contact_pressure_pa(tc) == pytest.approx(p_hand, rel=1e-9), k
    assert concave >= 1


def test_ring_pin_pressure_over_the_pitch_is_the_hand_maximum():
    # over the check's crank angles (one pin pitch) the reported pressure is the largest hand
    # pressure, and p grows as sqrt(T) (Hertz: p^2 ~ F)
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    thetas = np.linspace(0, 2 * np.pi / stage.ring_pins, 16, endpoint=False)
    hand = max(p for t in thetas for _, _, p in _hand_ring_pin_pressures(stage, 5.0, t))
    assert stage.ring_contact_pressure_pa(5.0) == pytest.approx(hand, rel=1e-9)
    assert stage.ring_contact_pressure_pa(20.0) == pytest.approx(2 * hand, rel=1e-9)


def test_output_pin_hole_pressure_by_hand():
    # output pin j = 0 at psi = 90 deg from the eccentric direction (crank angle -90 deg)
    # carries the largest force of a turn: Q = T_c R_w sin(psi_0) / sum (R_w sin psi)^2 over
    # the pins pressed (sin psi > 0); six pins give sum sin^2 = 1.5 at every crank angle, so
    # Q = T_c/(1.5 R_w). The pin (convex, d_pin) sits in a hole (concave, d_pin + 2e).
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    tc, rw, nw = 5.0, stage.output_pin_circle_radius_m, stage.output_pins
    psi = 2 * np.pi * np.arange(nw) / nw + np.pi / 2
    s = np.sin(psi)
    q = tc * rw * s[0] / float(((rw * s[s > 1e-12]) ** 2).sum())
    assert q == pytest.approx(tc / (1.5 * rw), rel=1e-12)
    d_pin = stage.output_pin_diameter_m
    d_hole = d_pin + 2 * stage.eccentricity_m
    p_hand = _shigley_p_max(q, stage.disc_thickness_m, d_pin, -d_hole,
                            stage.output_pin_material, stage.disc_material)
    assert stage.output_contact_pressure_pa(tc) == pytest.approx(p_hand, rel=1e-9)
    # the hole conforms to the pin: taken as convex it would press over twice as hard
    assert 2 * p_hand < _shigley_p_max(q, stage.disc_thickness_m, d_pin, d_hole,
                                       stage.output_pin_material, stage.disc_material)


def test_contact_limits_of_the_check_carry_the_hand_pressures():
    # through the whole check: the limits' pressures at the spectrum peak equal the hand
    # values, and the torque utilisation is (p / p_allow)^2 (p ~ sqrt T)
    from sim.checks.reducer import CheckSettings, JointDuty
    from sim.loads.spectra import JointSpectrum
    stage = c.cycloid_from_table(part_table(), "hip.toml")
    spec = JointSpectrum("fl_hip", np.array([9.0, 11.0]), np.array([-10.0, 10.0]),
                         np.array([[3600.0]]), np.array([[3600 * 2.0 / (2 * np.pi)]]), 3600.0,
                         10.0)
    lims = {lim.name: lim for lim in stage.limits(JointDuty(spec), CheckSettings())}
    tc = 0.55 * 10.0  # two discs, most loaded disc share (common practice)
    thetas = np.linspace(0, 2 * np.pi / stage.ring_pins, 16, endpoint=False)
    ring = max(p for t in thetas for _, _, p in _hand_ring_pin_pressures(stage, tc, t))
    lim = lims["ring pin / lobe contact (Hertz)"]
    assert lim.detail["max_pressure_pa"] == pytest.approx(ring, rel=1e-9)
    sf = CheckSettings().safety_factor
    allow = min(stage.disc_material.contact_allowable_pa,
                stage.pin_material.contact_allowable_pa) / sf
    assert lim.utilisation == pytest.approx((ring / allow) ** 2, rel=1e-9)
    q = tc / (1.5 * stage.output_pin_circle_radius_m)
    d_pin = stage.output_pin_diameter_m
    out = _shigley_p_max(q, stage.disc_thickness_m, d_pin, -(d_pin + 2 * stage.eccentricity_m),
                         stage.output_pin_material, stage.disc_material)
    assert lims["output pin / hole contact (Hertz)"].detail["max_pressure_pa"] == \
        pytest.approx(out, rel=1e-9)
