"""Planetary stage: ratio, assembly and neighbour conditions, tooth and bearing loads.

Sources: Willis's relation and the assembly/neighbour conditions as in Shigley, Mechanical
Engineering Design, ch. 13 (from memory); Lewis bending Shigley ch. 14; Hertz contact at the
pitch point Shigley sec. 14-5 (r sin(phi) curvature radii, from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim.checks import planetary as pl
from sim.checks.contact import line_contact
from sim.checks.gear import dynamic_factor, lewis_form_factor
from sim.checks.reducer import CheckSettings, JointDuty, check_reducer
from sim.core.errors import InputError
from sim.loads.spectra import JointSpectrum


def part_table(**geom) -> dict:
    g = {"sun_teeth": 12, "ring_teeth": 72, "planet_teeth": 30, "planets": 3,
         "module_m": 0.0008, "face_width_m": 0.008, "sun_material": "steel_1045",
         "planet_material": "nylon",
         "planet_bearing": {"dynamic_rating_n": 1500.0, "static_rating_n": 600.0,
                            "kind": "needle"}}
    g.update(geom)
    return {"kind": "planetary", "efficiency_forward": 0.9, "efficiency_back": 0.85,
            "input_inertia_kg_m2": 2e-6, "planetary": g}


@pytest.mark.parametrize(("zs", "zr", "n", "zp", "ratio", "neighbour_ok"), [
    # Willis, ring fixed: i = 1 + Zr/Zs; concentric Zp = (Zr - Zs)/2; neighbour
    # (Zs + Zp) sin(pi/N) > Zp + 2 (Shigley ch. 13, from memory)
    (12, 60, 3, 24, 6.0, True),
    (12, 60, 4, 24, 6.0, False),   # 36 sin 45 deg = 25.46 < 26
    (15, 45, 4, 15, 4.0, True),
    (14, 46, 3, 16, 60 / 14, True),
    (20, 70, 3, 25, 4.5, True),
])
def test_ratio_assembly_and_neighbour_cases(zs, zr, n, zp, ratio, neighbour_ok):
    assert pl.planetary_ratio(zs, zr) == pytest.approx(ratio, rel=1e-12)
    assert pl.concentric(zs, zr, zp)
    assert pl.assembles(zs, zr, n)
    assert pl.neighbours_clear(zs, zp, n) == neighbour_ok


def test_willis_relation_gives_the_ratio():
    # Willis: (w_s - w_c)/(w_r - w_c) = -Zr/Zs with w_r = 0 -> w_s/w_c = 1 + Zr/Zs
    zs, zr, wc = 12, 72, 1.0
    ws = wc + (-zr / zs) * (0.0 - wc)
    assert ws / wc == pl.planetary_ratio(zs, zr) == 7.0


def test_assembly_condition_fails_for_non_integer():
    # (12 + 60)/5 = 14.4: five equally spaced planets cannot be assembled
    assert not pl.assembles(12, 60, 5)
    with pytest.raises(InputError) as info:
        pl.planetary_from_table(part_table(ring_teeth=60, planet_teeth=24, planets=5), "a.toml")
    assert info.value.key == "planetary.planets"


def test_bad_planet_geometry_names_the_parameter():
    with pytest.raises(InputError) as info:
        pl.planetary_from_table(part_table(planet_teeth=29), "a.toml")  # not concentric
    assert info.value.key == "planetary.planet_teeth"
    with pytest.raises(InputError) as info:  # 12/60/24 with 4 planets: tips touch
        pl.planetary_from_table(part_table(ring_teeth=60, planet_teeth=24, planets=4), "a.toml")
    assert info.value.key == "planetary.planets" and "neighbouring" in str(info.value)
    with pytest.raises(InputError) as info:
        pl.planetary_from_table(part_table(sun_teethh=12), "a.toml")  # misspelt key
    assert info.value.key == "planetary.sun_teethh"


def test_demo_stage_loads_follow_the_hand_formulas():
    st = pl.planetary_from_table(part_table(), "abad.toml")
    assert st.ratio == 7.0
    t_out, w_out = 20.0, 10.0
    r_s = 0.0008 * 12 / 2
    wt = t_out / 7.0 / (3 * r_s)                      # per planet, equal sharing
    assert st.tangential_load_n(t_out) == pytest.approx(wt, rel=1e-12)
    kv = dynamic_factor(w_out * 6.0 * r_s, "cut")       # speed relative to the carrier
    s_sun, _ = st.bending_stress_pa(t_out, w_out)
    assert s_sun == pytest.approx(kv * wt / (0.008 * 0.0008 * lewis_form_factor(12)), rel=1e-12)
    a = math.radians(20.0)
    hz = line_contact(wt / math.cos(a), 0.008, 2 * r_s * math.sin(a),
                      2 * 0.0008 * 15 * math.sin(a), 207e9, 0.3, 1.7e9, 0.39)
    assert st.contact_pressure_pa(t_out) == pytest.approx(hz.max_pressure_pa, rel=1e-12)
    assert st.planet_bearing_load_n(t_out) == pytest.approx(2 * wt, rel=1e-12)
    assert any("undercuts" in n for n in st.notes())


def test_check_reports_every_element_and_scales_with_torque():
    st = pl.planetary_from_table(part_table(), "abad.toml")

    def spec(t):
        return JointSpectrum("fl_abad", np.array([t - 1, t + 1]), np.array([-20.0, 20.0]),
                             np.array([[3600.0]]), np.array([[3600 * 5.0 / (2 * np.pi)]]),
                             3600.0, t)
    a = check_reducer(st, JointDuty(spec(5.0)), CheckSettings())
    b = check_reducer(st, JointDuty(spec(10.0)), CheckSettings())
    names = {lim.name for lim in a.limits}
    assert names == {"sun tooth bending (Lewis)", "planet tooth bending (Lewis)",
                     "sun-planet contact (Hertz)", "planet bearing L10",
                     "planet bearing static (ISO 76)"}
    # allowable peak torque is a property of the part, not of the duty (same at 5 and 10 N m)
    assert a.values["allowable_peak_torque_nm"] == pytest.approx(
        b.values["allowable_peak_torque_nm"], rel=1e-9)
    # planet-bearing life ~ T^-p (ISO 281; needle -> 10/3)
    la = next(lim.life_h for lim in a.limits if lim.name == "planet bearing L10")
    lb = next(lim.life_h for lim in b.limits if lim.name == "planet bearing L10")
    assert la / lb == pytest.approx(2 ** (10 / 3), rel=1e-9)
