"""Planetary stage (sun input, ring fixed, carrier output) from its tooth counts and sizes.

Methods (standard gear texts, e.g. Shigley ch. 13-14, from memory):

- ratio from Willis's relation with the ring fixed: ``i = 1 + Z_r/Z_s``;
- concentricity (one module, standard centre distance): ``Z_r = Z_s + 2 Z_p``;
- assembly with N_p equally spaced planets: ``(Z_s + Z_r)/N_p`` an integer;
- neighbour (tip clearance, addendum = module): ``(Z_s + Z_p) sin(pi/N_p) > Z_p + 2``;
- sun-planet mesh load per planet ``W_t = K_share T_out/(i N_p r_s)``, ``r_s = m Z_s/2``;
  Lewis bending on sun and planet teeth (:mod:`sim.checks.gear`) at the pitch-line speed
  relative to the carrier ``|w_s - w_c| r_s = w_out (i - 1) r_s``;
- Hertz line contact at the pitch point: radii ``r sin(alpha)``, normal force ``W_t/cos(alpha)``;
- planet bearing load ``2 W_t`` (sun and ring mesh forces add), speed relative to the carrier
  ``w_out (i-1) Z_s/Z_p``; ISO 281 life under the spectrum.

Not modelled: ring-gear teeth (internal-gear form factor), profile shift, load-sharing
errors beyond the user's factor, centrifugal planet loads, tooth wear and polymer fatigue.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from sim.checks.bearing import (
    Bearing,
    bearing_from_table,
    l10_h,
    reliability_factor_a1,
    static_safety,
)
from sim.checks.contact import line_contact
from sim.checks.gear import PROFILES, dynamic_factor, lewis_bending_stress_pa
from sim.checks.materials import Material, get_material
from sim.checks.reducer_part import (
    COMMON_SPEC,
    CheckSettings,
    JointDuty,
    ReducerPart,
    check_stated_ratio,
    common_values,
    max_speed_rad_s,
)
from sim.checks.report import Limit
from sim.core.config import Field, validate
from sim.core.errors import InputError
from sim.loads.spectra import equivalent_torque_nm, mean_abs_speed_rad_s
from sim.parts.ratios import planetary_ratio


def concentric(sun_teeth: int, ring_teeth: int, planet_teeth: int) -> bool:
    """Same module, standard centre distances: ``Z_r = Z_s + 2 Z_p``."""
    return ring_teeth == sun_teeth + 2 * planet_teeth


def assembles(sun_teeth: int, ring_teeth: int, planets: int) -> bool:
    """Equally spaced planets fit: ``(Z_s + Z_r)/N_p`` is an integer."""
    return (sun_teeth + ring_teeth) % planets == 0


def neighbours_clear(sun_teeth: int, planet_teeth: int, planets: int) -> bool:
    """Planet tips clear each other: ``(Z_s + Z_p) sin(pi/N_p) > Z_p + 2``."""
    return (sun_teeth + planet_teeth) * math.sin(math.pi / planets) > planet_teeth + 2


PLANETARY_SPEC: dict[str, Any] = {
    "sun_teeth": Field(int, required=True, min=12),
    "ring_teeth": Field(int, required=True, min=12),
    "planet_teeth": Field(int, required=True, min=12),
    "planets": Field(int, required=True, min=2),
    "module_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "face_width_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "pressure_angle_deg": Field(float, "the Lewis table is for 20 degree teeth", default=20.0,
                                choices=(20.0,)),
    "tooth_profile": Field(str, "for the dynamic factor", default="cut", choices=PROFILES),
    "load_sharing_factor": Field(float, "most loaded planet / mean (1 = equal sharing)",
                                 default=1.0, min=1.0),
    "sun_material": Field(str, required=True),
    "planet_material": Field(str, required=True),
    "planet_bearing": Field(dict, "table: dynamic_rating_n, static_rating_n, kind",
                            required=True),
}


@dataclass(frozen=True, kw_only=True)
class PlanetaryStage(ReducerPart):
    """A simple planetary stage: sun input, fixed ring, carrier output."""

    sun_teeth: int
    ring_teeth: int
    planet_teeth: int
    planets: int
    module_m: float
    face_width_m: float
    pressure_angle_rad: float
    tooth_profile: str
    load_sharing_factor: float
    sun_material: Material
    planet_material: Material
    planet_bearing: Bearing

    @property
    def sun_pitch_radius_m(self) -> float:
        return 0.5 * self.module_m * self.sun_teeth

    @property
    def planet_pitch_radius_m(self) -> float:
        return 0.5 * self.module_m * self.planet_teeth

    def tangential_load_n(self, output_torque_nm: float) -> float:
        """Sun-planet tangential load on the most loaded planet (N)."""
        return self.load_sharing_factor * abs(output_torque_nm) / (
            self.ratio * self.planets * self.sun_pitch_radius_m)

    def pitch_line_speed_m_s(self, output_speed_rad_s: float) -> float:
        """Sun-planet pitch-line speed relative to the carrier (m/s)."""
        return abs(output_speed_rad_s) * (self.ratio - 1.0) * self.sun_pitch_radius_m

    def bending_stress_pa(self, output_torque_nm: float, output_speed_rad_s: float
                          ) -> tuple[float, float]:
        """Lewis stress (Pa) in the sun and in the planet teeth."""
        wt = self.tangential_load_n(output_torque_nm)
        kv = dynamic_factor(self.pitch_line_speed_m_s(output_speed_rad_s), self.tooth_profile)
        return (lewis_bending_stress_pa(wt, self.face_width_m, self.module_m, self.sun_teeth, kv),
                lewis_bending_stress_pa(wt, self.face_width_m, self.module_m, self.planet_teeth,
                                        kv))

    def contact_pressure_pa(self, output_torque_nm: float) -> float:
        """Hertz peak pressure at the sun-planet pitch point (Pa)."""
        a = self.pressure_angle_rad
        wn = self.tangential_load_n(output_torque_nm) / math.cos(a)
        c = line_contact(wn, self.face_width_m, 2 * self.sun_pitch_radius_m * math.sin(a),
                         2 * self.planet_pitch_radius_m * math.sin(a),
                         self.sun_material.youngs_modulus_pa, self.sun_material.poisson_ratio,
                         self.planet_material.youngs_modulus_pa,
                         self.planet_material.poisson_ratio)
        return c.max_pressure_pa

    def planet_bearing_load_n(self, output_torque_nm: float) -> float:
        """Radial load on one planet bearing, ``2 W_t`` (N)."""
        return 2.0 * self.tangential_load_n(output_torque_nm)

    def limits(self, duty: JointDuty, settings: CheckSettings) -> list[Limit]:
        spec = duty.spectrum
        sf = settings.safety_factor
        peak = spec.peak_torque_nm
        w_max = max_speed_rad_s(spec)
        out: list[Limit] = []
        s_sun, s_pl = self.bending_stress_pa(peak, w_max)
        for name, s, mat in (("sun tooth bending (Lewis)", s_sun, self.sun_material),
                             ("planet tooth bending (Lewis)", s_pl, self.planet_material)):
            allow = mat.bending_allowable_pa / sf
            use = s / allow
            out.append(Limit(name, "peak", use,
                             allowable_peak_torque_nm=peak / use if use > 0 else math.inf,
                             detail={"stress_pa": s, "allowable_stress_pa": allow}))
        p = self.contact_pressure_pa(peak)
        p_allow = min(self.sun_material.contact_allowable_pa,
                      self.planet_material.contact_allowable_pa) / sf
        use = (p / p_allow) ** 2
        out.append(Limit("sun-planet contact (Hertz)", "peak", use,
                         allowable_peak_torque_nm=peak / use if use > 0 else math.inf,
                         detail={"max_pressure_pa": p, "allowable_pressure_pa": p_allow}))
        brg = self.planet_bearing
        p_eq = self.planet_bearing_load_n(equivalent_torque_nm(spec, brg.exponent))
        speed = mean_abs_speed_rad_s(spec) * (self.ratio - 1) * self.sun_teeth / self.planet_teeth
        life = l10_h(brg.dynamic_rating_n, p_eq, speed, brg.exponent) \
            * reliability_factor_a1(settings.reliability_pct)
        out.append(Limit("planet bearing L10", "life", settings.required_life_h / life,
                         life_h=life,
                         detail={"equivalent_load_n": p_eq, "mean_speed_rad_s": speed}))
        p0 = self.planet_bearing_load_n(peak)
        s0 = static_safety(brg.static_rating_n, p0)
        out.append(Limit("planet bearing static (ISO 76)", "peak", sf / s0,
                         allowable_peak_torque_nm=peak * s0 / sf if p0 > 0 else math.inf,
                         detail={"static_load_n": p0, "static_safety": s0}))
        return out

    def extra_values(self, duty: JointDuty) -> dict[str, Any]:
        peak = duty.spectrum.peak_torque_nm
        return {"sun_teeth": self.sun_teeth, "ring_teeth": self.ring_teeth,
                "planet_teeth": self.planet_teeth, "planets": self.planets,
                "peak_tangential_load_n": self.tangential_load_n(peak),
                "peak_planet_bearing_load_n": self.planet_bearing_load_n(peak),
                "pitch_line_speed_m_s": self.pitch_line_speed_m_s(
                    max_speed_rad_s(duty.spectrum))}

    def notes(self) -> list[str]:
        if self.sun_teeth < 17:
            return [f"planetary: a {self.sun_teeth}-tooth 20 deg sun undercuts unless "
                    "profile-shifted (17 teeth minimum, common practice)"]
        return []


def planetary_from_table(data: Mapping[str, Any], file: str) -> PlanetaryStage:
    """Validate a ``kind = "planetary"`` part file (common keys plus a ``[planetary]`` table)."""
    v = validate(data, {**COMMON_SPEC, "planetary": Field(dict, required=True)}, file=file)
    g = validate(v["planetary"], PLANETARY_SPEC, file=file, prefix="planetary.")
    zs, zr, zp, n = g["sun_teeth"], g["ring_teeth"], g["planet_teeth"], g["planets"]
    if not concentric(zs, zr, zp):
        raise InputError(file, "planetary.planet_teeth",
                         f"(ring_teeth - sun_teeth)/2 = {(zr - zs) / 2:g} (concentric gears)",
                         zp)
    if not assembles(zs, zr, n):
        raise InputError(file, "planetary.planets",
                         f"a divisor of sun_teeth + ring_teeth = {zs + zr} (assembly condition)",
                         n)
    if not neighbours_clear(zs, zp, n):
        raise InputError(file, "planetary.planets",
                         "fewer planets: neighbouring planet tips touch "
                         f"((Zs + Zp) sin(pi/N) = {(zs + zp) * math.sin(math.pi / n):.3f} "
                         f"must exceed Zp + 2 = {zp + 2})", n)
    ratio = planetary_ratio(zs, zr)
    check_stated_ratio(v, ratio, file)
    return PlanetaryStage(
        **common_values(v, file), ratio=ratio, sun_teeth=zs, ring_teeth=zr, planet_teeth=zp,
        planets=n, module_m=g["module_m"], face_width_m=g["face_width_m"],
        pressure_angle_rad=math.radians(g["pressure_angle_deg"]),
        tooth_profile=g["tooth_profile"], load_sharing_factor=g["load_sharing_factor"],
        sun_material=get_material(g["sun_material"], file, "planetary.sun_material"),
        planet_material=get_material(g["planet_material"], file, "planetary.planet_material"),
        planet_bearing=bearing_from_table(g["planet_bearing"], file, "planetary.planet_bearing"))
