"""Cycloidal stage from its geometry: the part file, its limits and bearing life, the disc profile.

Takes the ``[cycloid]`` table of a reducer part file and gives a :class:`CycloidStage` (a
:class:`~sim.checks.reducer_part.ReducerPart`): ratio, undercut and contact checks, pin and
bearing loads per newton metre, its limits against a joint's duty (contact pressures, pin
forces, crank-bearing L10 life), and its disc profile as CSV or SVG
(:func:`write_profile_csv`, :func:`write_profile_svg`). The geometry and the force analysis,
with their methods and sources, are in :mod:`sim.checks.cycloid_geometry`.

Not modelled: clearances and profile modification (real drives load fewer pins, so the ideal
peak pin force is a lower bound), friction, pin bending, ring-pin bearings.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from typing import Any

import numpy as np

from sim.checks.bearing import (
    Bearing,
    bearing_from_table,
    l10_h,
    reliability_factor_a1,
    static_safety,
)
from sim.checks.contact import contact_modulus_pa, line_contact, line_contact_from_radius
from sim.checks.cycloid_geometry import (
    disc_forces,
    disc_profile_xy,
    imbalance_force_n,
    max_pin_force_closed_form_n,
    min_curvature_radius_m,
    output_hole_diameter_m,
    pin_lever_arms_m,
    pitch_curvature_radius_m,
    polygon_area_m2,
    ratio_fixed_ring,
    ring_pin_forces_n,
    two_disc_couple_nm,
)
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
from sim.core.atomic import write_text_atomic
from sim.core.config import Field, validate
from sim.core.errors import InputError
from sim.loads.spectra import equivalent_torque_nm, mean_abs_speed_rad_s

# ---- the part -----------------------------------------------------------------------------

CYCLOID_SPEC: dict[str, Any] = {
    "ring_pins": Field(int, "N", required=True, min=3),
    "lobes": Field(int, "z_c = ring_pins - 1", required=True, min=2),
    "eccentricity_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "pin_circle_radius_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "pin_diameter_m": Field(float, "ring pin or roller diameter", required=True, min=0.0,
                            min_inclusive=False),
    "disc_thickness_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "discs": Field(int, "1 or 2 (two at 180 degrees)", default=1, choices=(1, 2)),
    "disc_spacing_m": Field(float, "axial distance of the disc mid-planes (default: the disc "
                            "thickness)", min=0.0),
    "disc_load_share": Field(float, "share of output torque on the most loaded disc (default "
                             "1 for one disc, 0.55 for two, common practice)", min=0.5, max=1.0),
    "output_pins": Field(int, "N_w", required=True, min=3),
    "output_pin_circle_radius_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "output_pin_diameter_m": Field(float, "output pin or roller diameter", required=True,
                                   min=0.0, min_inclusive=False),
    "bore_diameter_m": Field(float, "disc bore for the eccentric bearing", default=0.0, min=0.0),
    "disc_mass_kg": Field(float, "default: from profile area, thickness and density",
                          min=0.0),
    "disc_material": Field(str, required=True),
    "pin_material": Field(str, required=True),
    "output_pin_material": Field(str, default=""),
    "eccentric_bearing": Field(dict, "table: dynamic_rating_n, static_rating_n, kind",
                               required=True),
}


@dataclass(frozen=True, kw_only=True)
class CycloidStage(ReducerPart):
    """A single-stage cycloidal reducer, ring fixed, output through pins in holes."""

    ring_pins: int
    lobes: int
    eccentricity_m: float
    pin_circle_radius_m: float
    pin_diameter_m: float
    disc_thickness_m: float
    discs: int
    disc_spacing_m: float
    disc_load_share: float
    output_pins: int
    output_pin_circle_radius_m: float
    output_pin_diameter_m: float
    bore_diameter_m: float
    disc_mass_kg: float
    disc_material: Material
    pin_material: Material
    output_pin_material: Material
    eccentric_bearing: Bearing

    # geometry ---------------------------------------------------------------------------
    @property
    def k1(self) -> float:
        return self.eccentricity_m * self.ring_pins / self.pin_circle_radius_m

    @property
    def pin_radius_m(self) -> float:
        return 0.5 * self.pin_diameter_m

    @property
    def output_hole_diameter_m(self) -> float:
        return output_hole_diameter_m(self.output_pin_diameter_m, self.eccentricity_m)

    def min_curvature_radius_m(self) -> float:
        return min_curvature_radius_m(self.ring_pins, self.pin_circle_radius_m,
                                      self.eccentricity_m)[0]

    def profile_xy_m(self, points: int = 3600) -> np.ndarray:
        return disc_profile_xy(self.ring_pins, self.pin_circle_radius_m, self.eccentricity_m,
                               self.pin_radius_m, points)

    def disc_torque_nm(self, output_torque_nm: float) -> float:
        return self.disc_load_share * abs(output_torque_nm)

    def _crank_angles(self, steps: int = 16) -> np.ndarray:
        return np.linspace(0.0, 2.0 * np.pi / self.ring_pins, steps, endpoint=False)

    def forces_per_nm(self) -> dict[str, float]:
        """Largest forces (N) per N m of disc torque over a turn of the crank (720 steps)."""
        return self._forces_per_nm

    @cached_property
    def _forces_per_nm(self) -> dict[str, float]:
        pin = out = brg = 0.0
        for th in np.linspace(0.0, 2.0 * np.pi, 720, endpoint=False):
            f = disc_forces(self.ring_pins, self.pin_circle_radius_m, self.eccentricity_m,
                            self.output_pins, self.output_pin_circle_radius_m, 1.0, th)
            pin = max(pin, float(np.linalg.norm(f["ring_forces"], axis=1).max()))
            out = max(out, float(np.linalg.norm(f["output_forces"], axis=1).max()))
            brg = max(brg, float(np.linalg.norm(f["bearing_force"])))
        return {"ring_pin": pin, "output_pin": out, "bearing": brg}

    def ring_contact_pressure_pa(self, disc_torque_nm: float) -> float:
        """Largest Hertz pressure between a ring pin and the disc over one pin pitch (Pa)."""
        es = contact_modulus_pa(self.disc_material.youngs_modulus_pa,
                                self.disc_material.poisson_ratio,
                                self.pin_material.youngs_modulus_pa,
                                self.pin_material.poisson_ratio)
        worst = 0.0
        for th in self._crank_angles():
            phi, _ = pin_lever_arms_m(self.ring_pins, self.pin_circle_radius_m,
                                      self.eccentricity_m, th)
            f = ring_pin_forces_n(self.ring_pins, self.pin_circle_radius_m,
                                  self.eccentricity_m, disc_torque_nm, th)
            rho_d = pitch_curvature_radius_m(self.ring_pins, self.pin_circle_radius_m,
                                             self.eccentricity_m, phi) - self.pin_radius_m
            inv_r = 1.0 / self.pin_radius_m + 1.0 / rho_d
            for fk, ik in zip(f, inv_r, strict=True):
                if fk > 0 and ik > 0:
                    c = line_contact_from_radius(fk / self.disc_thickness_m, 1.0 / ik, es)
                    worst = max(worst, c.max_pressure_pa)
        return worst

    def output_contact_pressure_pa(self, disc_torque_nm: float) -> float:
        """Hertz pressure of the most loaded output pin in its hole (convex in concave, Pa)."""
        q = self.forces_per_nm()["output_pin"] * disc_torque_nm
        c = line_contact(q, self.disc_thickness_m, self.output_pin_diameter_m,
                         -self.output_hole_diameter_m, self.disc_material.youngs_modulus_pa,
                         self.disc_material.poisson_ratio,
                         self.output_pin_material.youngs_modulus_pa,
                         self.output_pin_material.poisson_ratio)
        return c.max_pressure_pa

    def input_torque_nm(self, output_torque_nm: float) -> float:
        """Ideal input torque per disc, ``T_c/(N-1)`` (N m)."""
        return self.disc_torque_nm(output_torque_nm) / (self.ring_pins - 1)

    # the check --------------------------------------------------------------------------
    def limits(self, duty: JointDuty, settings: CheckSettings) -> list[Limit]:
        spec = duty.spectrum
        sf = settings.safety_factor
        peak_tc = self.disc_torque_nm(spec.peak_torque_nm)
        per_nm = self.forces_per_nm()
        out: list[Limit] = []
        # eccentric bearing: life under the spectrum, static safety at the peak
        brg = self.eccentric_bearing
        t_eq = equivalent_torque_nm(spec, brg.exponent)
        p_eq = per_nm["bearing"] * self.disc_torque_nm(t_eq)
        speed = self.ring_pins * mean_abs_speed_rad_s(spec)  # crank relative to disc
        life = l10_h(brg.dynamic_rating_n, p_eq, speed, brg.exponent) \
            * reliability_factor_a1(settings.reliability_pct)
        out.append(Limit("eccentric bearing L10", "life", settings.required_life_h / life,
                         life_h=life, detail={"equivalent_load_n": p_eq,
                                              "mean_speed_rad_s": speed}))
        p0 = per_nm["bearing"] * peak_tc
        s0 = static_safety(brg.static_rating_n, p0)
        allow = brg.static_rating_n / (sf * per_nm["bearing"] * self.disc_load_share)
        out.append(Limit("eccentric bearing static (ISO 76)", "peak", sf / s0,
                         allowable_peak_torque_nm=allow,
                         detail={"static_load_n": p0, "static_safety": s0}))
        # ring pin on lobe: Hertz line contact at the peak (p ~ sqrt T)
        p_ring = self.ring_contact_pressure_pa(peak_tc)
        p_allow = min(self.disc_material.contact_allowable_pa,
                      self.pin_material.contact_allowable_pa) / sf
        out.append(self._contact_limit("ring pin / lobe contact (Hertz)", p_ring, p_allow,
                                       spec.peak_torque_nm,
                                       {"max_pin_force_n": per_nm["ring_pin"] * peak_tc}))
        p_out = self.output_contact_pressure_pa(peak_tc)
        p_allow_o = min(self.disc_material.contact_allowable_pa,
                        self.output_pin_material.contact_allowable_pa) / sf
        out.append(self._contact_limit("output pin / hole contact (Hertz)", p_out, p_allow_o,
                                       spec.peak_torque_nm,
                                       {"max_output_pin_force_n": per_nm["output_pin"] * peak_tc}
                                       ))
        return out

    @staticmethod
    def _contact_limit(name: str, pressure_pa: float, allowable_pa: float, peak_nm: float,
                       extra: dict[str, float]) -> Limit:
        use = (pressure_pa / allowable_pa) ** 2  # torque utilisation: p ~ sqrt(T)
        allow_t = peak_nm / use if use > 0 else math.inf
        return Limit(name, "peak", use, allowable_peak_torque_nm=allow_t,
                     detail={"max_pressure_pa": pressure_pa,
                             "allowable_pressure_pa": allowable_pa, **extra})

    def extra_values(self, duty: JointDuty) -> dict[str, Any]:
        """Geometry, peak forces, input torque and imbalance (at the fastest input speed)."""
        spec = duty.spectrum
        tc = self.disc_torque_nm(spec.peak_torque_nm)
        per_nm = self.forces_per_nm()
        w_in = max_speed_rad_s(spec) * self.ratio
        couple = two_disc_couple_nm(self.disc_mass_kg, self.eccentricity_m, w_in,
                                    self.disc_spacing_m) if self.discs == 2 else None
        return {"k1": self.k1, "min_curvature_radius_m": self.min_curvature_radius_m(),
                "output_hole_diameter_m": self.output_hole_diameter_m,
                "disc_mass_kg": self.disc_mass_kg, "peak_disc_torque_nm": tc,
                "peak_pin_force_n": per_nm["ring_pin"] * tc,
                "peak_pin_force_closed_form_n": max_pin_force_closed_form_n(
                    self.ring_pins, self.eccentricity_m, tc),
                "peak_output_pin_force_n": per_nm["output_pin"] * tc,
                "peak_eccentric_bearing_load_n": per_nm["bearing"] * tc,
                "peak_input_torque_per_disc_nm": self.input_torque_nm(spec.peak_torque_nm),
                "max_input_speed_rad_s": w_in,
                "imbalance_force_n": imbalance_force_n(self.disc_mass_kg, self.eccentricity_m,
                                                       w_in),
                "two_disc_couple_nm": couple}

    def notes(self) -> list[str]:
        return ["cycloid: ideal pin load sharing (no clearance) is a lower bound on pin force"]


def _bad(file: str, key: str, expected: str, got: object) -> InputError:
    return InputError(file, "cycloid." + key, expected, got)


def check_geometry(g: dict[str, Any], file: str) -> None:
    """Raise an InputError naming the parameter for an impossible or unsafe geometry."""
    n, z = g["ring_pins"], g["lobes"]
    if z >= n:
        raise _bad(file, "lobes", f"fewer lobes than ring_pins ({n}): lobes = ring_pins - 1", z)
    if z != n - 1:
        raise _bad(file, "lobes", f"ring_pins - 1 = {n - 1} for a single-lobe-difference disc",
                   z)
    r, e, rr = g["pin_circle_radius_m"], g["eccentricity_m"], 0.5 * g["pin_diameter_m"]
    if e * n / r >= 1.0:
        raise _bad(file, "eccentricity_m",
                   f"less than pin_circle_radius_m / ring_pins = {r / n:.6g} m (K1 < 1)", e)
    if rr >= r * math.sin(math.pi / n):
        raise _bad(file, "pin_diameter_m",
                   f"less than 2 R sin(pi/N) = {2 * r * math.sin(math.pi / n):.6g} m "
                   "(neighbouring pins overlap)", g["pin_diameter_m"])
    rho_min, _ = min_curvature_radius_m(n, r, e)
    if rr >= rho_min:
        raise _bad(file, "pin_diameter_m",
                   f"less than 2 rho_min = {2 * rho_min:.6g} m: the profile undercuts "
                   "(use smaller pins, a smaller eccentricity_m or a larger pin circle)",
                   g["pin_diameter_m"])
    nw, rw = g["output_pins"], g["output_pin_circle_radius_m"]
    dh = output_hole_diameter_m(g["output_pin_diameter_m"], e)
    if 2.0 * rw * math.sin(math.pi / nw) <= dh:
        raise _bad(file, "output_pin_circle_radius_m",
                   f"more than {dh / (2 * math.sin(math.pi / nw)):.6g} m: output holes of "
                   f"{dh:.6g} m diameter overlap", rw)
    root = r - e - rr
    if rw + 0.5 * dh >= root:
        raise _bad(file, "output_pin_circle_radius_m",
                   f"less than {root - 0.5 * dh:.6g} m: output holes break through the "
                   f"profile root (radius {root:.6g} m)", rw)
    if g["bore_diameter_m"] > 0 and rw - 0.5 * dh <= 0.5 * g["bore_diameter_m"]:
        raise _bad(file, "output_pin_circle_radius_m",
                   f"more than {0.5 * (g['bore_diameter_m'] + dh):.6g} m: output holes break "
                   "into the bore", rw)


def cycloid_from_table(data: Mapping[str, Any], file: str) -> CycloidStage:
    """Validate a ``kind = "cycloidal"`` part file (common keys plus a ``[cycloid]`` table)."""
    v = validate(data, {**COMMON_SPEC, "cycloid": Field(dict, required=True)}, file=file)
    g = validate(v["cycloid"], CYCLOID_SPEC, file=file, prefix="cycloid.")
    check_geometry(g, file)
    ratio = ratio_fixed_ring(g["ring_pins"], g["lobes"])
    check_stated_ratio(v, ratio, file)
    mats = {k: get_material(g[k] or g["pin_material"], file, "cycloid." + k)
            for k in ("disc_material", "pin_material", "output_pin_material")}
    brg = bearing_from_table(g["eccentric_bearing"], file, "cycloid.eccentric_bearing")
    e, rr = g["eccentricity_m"], 0.5 * g["pin_diameter_m"]
    mass = g["disc_mass_kg"]
    if mass is None:
        prof = disc_profile_xy(g["ring_pins"], g["pin_circle_radius_m"], e, rr, 3600)
        dh = output_hole_diameter_m(g["output_pin_diameter_m"], e)
        area = polygon_area_m2(prof) - g["output_pins"] * math.pi * dh**2 / 4 \
            - math.pi * g["bore_diameter_m"] ** 2 / 4
        mass = area * g["disc_thickness_m"] * mats["disc_material"].density_kg_m3
    share = g["disc_load_share"]
    if share is None:
        share = 1.0 if g["discs"] == 1 else 0.55
    spacing = g["disc_spacing_m"] if g["disc_spacing_m"] is not None else g["disc_thickness_m"]
    return CycloidStage(**common_values(v, file), ratio=ratio, ring_pins=g["ring_pins"],
                        lobes=g["lobes"], eccentricity_m=e,
                        pin_circle_radius_m=g["pin_circle_radius_m"],
                        pin_diameter_m=g["pin_diameter_m"],
                        disc_thickness_m=g["disc_thickness_m"], discs=g["discs"],
                        disc_spacing_m=spacing, disc_load_share=share,
                        output_pins=g["output_pins"],
                        output_pin_circle_radius_m=g["output_pin_circle_radius_m"],
                        output_pin_diameter_m=g["output_pin_diameter_m"],
                        bore_diameter_m=g["bore_diameter_m"], disc_mass_kg=mass,
                        disc_material=mats["disc_material"], pin_material=mats["pin_material"],
                        output_pin_material=mats["output_pin_material"], eccentric_bearing=brg)


# ---- profile export -----------------------------------------------------------------------

def _atomic_write(path: Path, text: str) -> None:
    write_text_atomic(path, text)


def write_profile_csv(stage: CycloidStage, path: str | Path, points: int = 720) -> Path:
    """The disc outline as a closed CSV polyline ``x_m,y_m`` (disc coordinates, metres)."""
    xy = stage.profile_xy_m(points)
    lines = [f"# cycloid disc profile of {stage.file}: {stage.lobes} lobes, pitch-curve "
             f"offset inward by the pin radius {stage.pin_radius_m:.6g} m; metres",
             "x_m,y_m"]
    lines += [f"{x:.9f},{y:.9f}" for x, y in np.vstack([xy, xy[:1]])]
    p = Path(path)
    _atomic_write(p, "\n".join(lines) + "\n")
    return p


def write_profile_svg(stage: CycloidStage, path: str | Path, points: int = 720) -> Path:
    """An SVG drawing (millimetres) of the disc, its output holes and the ring pins at theta=0.

    The disc is drawn in ring coordinates at crank angle 0 (disc centre at (e, 0)).
    """
    mm = 1e3
    e = stage.eccentricity_m
    xy = stage.profile_xy_m(points) * mm + np.array([e * mm, 0.0])
    half = (stage.pin_circle_radius_m + stage.pin_radius_m) * mm * 1.1
    pts = " ".join(f"{x:.4f},{-y:.4f}" for x, y in xy)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{2 * half:.3f}mm" '
           f'height="{2 * half:.3f}mm" viewBox="{-half:.3f} {-half:.3f} {2 * half:.3f} '
           f'{2 * half:.3f}">',
           f"<title>cycloid disc: {stage.ring_pins} pins, {stage.lobes} lobes, e = "
           f"{e * mm:.3f} mm (gaitload)</title>",
           f'<polygon points="{pts}" fill="none" stroke="black" stroke-width="0.1"/>']
    for k in range(stage.ring_pins):
        a = 2 * math.pi * k / stage.ring_pins
        out.append(f'<circle cx="{stage.pin_circle_radius_m * mm * math.cos(a):.4f}" '
                   f'cy="{-stage.pin_circle_radius_m * mm * math.sin(a):.4f}" '
                   f'r="{stage.pin_radius_m * mm:.4f}" fill="none" stroke="grey" '
                   'stroke-width="0.1"/>')
    for j in range(stage.output_pins):
        a = 2 * math.pi * j / stage.output_pins
        cx = stage.output_pin_circle_radius_m * mm * math.cos(a) + e * mm
        cy = -stage.output_pin_circle_radius_m * mm * math.sin(a)
        out.append(f'<circle cx="{cx:.4f}" cy="{cy:.4f}" '
                   f'r="{stage.output_hole_diameter_m * mm / 2:.4f}" fill="none" '
                   'stroke="black" stroke-width="0.1"/>')
    if stage.bore_diameter_m > 0:
        out.append(f'<circle cx="{e * mm:.4f}" cy="0" r="{stage.bore_diameter_m * mm / 2:.4f}" '
                   'fill="none" stroke="black" stroke-width="0.1"/>')
    out.append("</svg>")
    p = Path(path)
    _atomic_write(p, "\n".join(out) + "\n")
    return p
