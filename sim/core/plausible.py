"""Plausible ranges of the numbers in gaitload's files, to catch unit slips.

A file's spec (:class:`sim.core.config.Field`) says what is *valid* (a mass is > 0); this table
says what is *plausible* for a legged robot from a toy to a large quadruped, so a leg length
in millimetres, a mass in grams, a torque constant of 90 N m/A, an ambient temperature of
-500 C, a torque-bin count of 1e12 or a run of 1e9 s is an error that names the key, the
range and, where the slip is a known one, the unit the value looks like. The bounds are wide
on purpose (common practice for input screening: about a factor of 10 beyond anything
reasonable); a value outside them is far more likely a slip than a design.

Entries are matched against the dotted key (``leg.thigh_length_m``,
``actuator.fl_knee.mass_kg``) with :func:`fnmatch.fnmatchcase`, first match first; a bare
name matches that last part of any key. One table for every file, so a key means the same
wherever it appears (one place for each fact).
"""

from __future__ import annotations

import math
import re
from fnmatch import fnmatchcase

INT64_MAX = 2**63 - 1

# (pattern, lowest, highest)
RANGES: tuple[tuple[str, float, float], ...] = (
    # robot geometry, m
    ("thigh_length_m", 0.005, 3.0), ("shank_length_m", 0.005, 3.0),
    ("abad_offset_m", 0.0, 1.0), ("thigh_radius_m", 1e-4, 0.5), ("shank_radius_m", 1e-4, 0.5),
    ("foot_radius_m", 1e-4, 0.5), ("hips.x_m", 0.0, 3.0), ("hips.y_m", 0.0, 3.0),
    ("hips.z_m", -3.0, 3.0), ("hip_height_m", 0.005, 5.0), ("stance.foot_x_m", -3.0, 3.0),
    ("stance.foot_y_m", -3.0, 3.0), ("body.size_m", 0.005, 10.0), ("payload.size_m", 0.0, 10.0),
    ("payload.position_m", -10.0, 10.0), ("housing_radius_m", 0.0, 1.0),
    ("housing_length_m", 0.0, 2.0), ("crouch_height_m", 0.0, 5.0),
    ("push_height_m", 0.0, 5.0), ("stance_height_m", 0.0, 5.0),
    # masses, kg
    ("actuator.*.mass_kg", 0.0, 100.0), ("body.mass_kg", 0.0, 2000.0),
    ("payload.mass_kg", 0.0, 2000.0), ("thigh_mass_kg", 0.0, 200.0),
    ("shank_mass_kg", 0.0, 200.0), ("foot_mass_kg", 0.0, 100.0), ("mass_kg", 0.0, 2000.0),
    ("disc_mass_kg", 0.0, 100.0),
    # motors and drivers
    ("torque_constant_nm_a", 1e-4, 20.0), ("torque_constant_nm_per_a", 1e-4, 20.0),
    ("speed_constant_rpm_per_v", 1.0, 1e5), ("current_limit_a", 0.0, 5000.0),
    ("no_load_current_a", 0.0, 500.0), ("phase_resistance_ohm", 0.0, 1000.0),
    ("phase_resistance_ohm_20c", 0.0, 1000.0), ("bus_voltage_v", 0.0, 2000.0),
    ("rotor_inertia_kg_m2", 0.0, 10.0), ("input_inertia_kg_m2", 0.0, 10.0),
    ("output_inertia_kg_m2", 0.0, 1000.0), ("gear_ratio", 1.0, 1e5), ("ratio", 1.0, 1e5),
    ("peak_torque_nm", 0.0, 1e6), ("continuous_torque_nm", 0.0, 1e6),
    ("rated_torque_nm", 0.0, 1e6), ("momentary_peak_torque_nm", 0.0, 1e6),
    ("repeated_peak_torque_nm", 0.0, 1e6), ("rated_speed_rad_s", 0.0, 1e5),
    ("rated_life_h", 0.0, 1e7), ("friction_coulomb_nm", 0.0, 1e5),
    ("friction_torque_nm", 0.0, 1e5), ("input_drag_torque_nm", 0.0, 1e4),
    ("friction_viscous_nm_s_rad", 0.0, 1e4), ("viscous_friction_nm_s_per_rad", 0.0, 1e4),
    ("mesh_stiffness_nm_rad", 0.0, 1e9), ("mesh_damping_nm_s_rad", 0.0, 1e6),
    ("backlash_rad", 0.0, 0.5), ("eddy_loss_w_s2_per_rad2", 0.0, 1e3),
    ("hysteresis_loss_w_s_per_rad", 0.0, 1e4),
    # thermal, temperatures in degrees Celsius
    ("ambient_temp_c", -80.0, 100.0), ("max_winding_temp_c", 0.0, 400.0),
    ("thermal_capacity_*_j_per_k", 0.0, 1e7), ("thermal_resistance_*_k_per_w", 0.0, 1e3),
    # supply
    ("cell_count", 1, 1000), ("parallel_count", 1, 1000),
    ("cell_internal_resistance_ohm", 0.0, 10.0), ("auxiliary_power_w", 0.0, 1e6),
    # reducer geometry, m, and counts
    ("module_m", 1e-5, 0.1), ("pitch_m", 1e-5, 0.5), ("eccentricity_m", 1e-6, 0.1),
    ("*diameter_m", 0.0, 2.0), ("*circle_radius_m", 0.0, 2.0), ("face_width_m", 0.0, 1.0),
    ("width_m", 0.0, 1.0), ("centre_distance_m", 0.0, 10.0), ("disc_spacing_m", 0.0, 1.0),
    ("disc_thickness_m", 0.0, 1.0), ("*_teeth", 1, 10000), ("ring_pins", 1, 10000),
    ("output_pins", 1, 1000), ("lobes", 1, 10000), ("planets", 1, 100), ("discs", 1, 100),
    ("min_teeth_in_mesh", 1, 10000), ("pressure_angle_deg", 1.0, 60.0),
    ("dynamic_rating_n", 0.0, 1e9), ("static_rating_n", 0.0, 1e9),
    ("pretension_n", 0.0, 1e8), ("rated_pull_n", 0.0, 1e8), ("youngs_modulus_pa.value", 1e6, 1e13),
    ("life_exponent", 1.0, 30.0), ("record.life_exponents", 0.5, 30.0),
    # scenarios
    ("duration_s", 0.0, 1e6), ("start_s", 0.0, 1e6), ("record.torque_bins", 2, 100000),
    ("record.speed_bins", 2, 100000), ("record.decimation", 1, 10**7),
    ("control.update_period_s", 0.0, 1.0), ("control.kp_nm_rad.*", 0.0, 1e6),
    ("control.kd_nm_s_rad.*", 0.0, 1e5), ("ground.stiffness_n_m", 0.0, 1e10),
    ("ground.damping_n_s_m", 0.0, 1e8), ("limits.max_joint_speed_rad_s", 0.0, 1e5),
    ("limits.max_tilt_rad", 0.0, math.pi), ("max_force_n", 0.0, 1e7), ("force_n", -1e7, 1e7),
    ("point_m", -10.0, 10.0), ("hold_s", 0.0, 1e5), ("crouch_s", 0.0, 1e5),
    ("push_s", 0.0, 1e5), ("move_time_s", 0.0, 1e5), ("ramp_s", 0.0, 1e5),
    ("velocity_filter_s", 0.0, 1e3), ("after_liftoff_s", 0.0, 1e3),
    ("drive.efficiency_band_rad_s", 0.0, 1e3), ("joint_range_rad.*", -4 * math.pi, 4 * math.pi),
    ("seed", 0, INT64_MAX),
    # usage mixes and sweeps
    ("per_day", 0.0, 1e7), ("sample.count", 1, 10**6), ("num", 1, 10**6),
    ("peak_count", 1, 10**9),
)


def plausible_range(key: str) -> tuple[float, float] | None:
    """``(lowest, highest)`` plausible for the dotted ``key`` (list indices dropped), or None."""
    base = re.sub(r"\[\d+\]", "", key)
    last = base.rsplit(".", 1)[-1]
    for pattern, lo, hi in RANGES:
        if "." in pattern:
            if fnmatchcase(base, pattern) or fnmatchcase(base, "*." + pattern):
                return lo, hi
        elif fnmatchcase(last, pattern):
            return lo, hi
    return None


def _inside(v: float, lo: float, hi: float) -> bool:
    return lo <= v <= hi and v != 0


def unit_slip(key: str, value: float, lo: float, hi: float) -> str:
    """What a value outside ``[lo, hi]`` looks like, if it is a known unit slip, else ''."""
    name = re.sub(r"\[\d+\]", "", key).rsplit(".", 1)[-1]
    if name.endswith("_c") and value < -273.15:
        return "it is below absolute zero (-273.15 C)"
    if name.endswith("_c") and _inside(value - 273.15, lo, hi):
        return "it looks like kelvin; the key is in degrees Celsius"
    if name == "speed_constant_rpm_per_v" and 0 < value < lo:
        kv = 60.0 / (2.0 * math.pi * value)
        return (f"it looks like a torque constant in N m/A (that would be a speed constant of "
                f"60 / (2 pi Kt) = {kv:.3g} rpm/V)")
    if name.endswith(("_nm_a", "_nm_per_a")) and value > hi:
        kt = 60.0 / (2.0 * math.pi * value)
        return (f"it looks like a speed constant in rpm/V (that would be a torque constant of "
                f"60 / (2 pi Kv) = {kt:.3g} N m/A)")
    for suffix, factor, unit, si in (("_m", 1e-3, "millimetres", "metres"),
                                     ("_kg", 1e-3, "grams", "kilograms"),
                                     ("_rad", math.pi / 180.0, "degrees", "radians"),
                                     ("_s", 1e-3, "milliseconds", "seconds"),
                                     ("_pa", 1e9, "gigapascals", "pascals"),
                                     ("_pa", 1e6, "megapascals", "pascals")):
        if (name.endswith(suffix) or name == suffix[1:] or f"{suffix}." in key) and _inside(
                value * factor, lo, hi):
            return f"it looks like {unit}; the key is in {si}"
    return ""


def plausibility_error(key: str, value: float) -> str | None:
    """The expectation to report if ``value`` is not plausible for ``key``, else None."""
    rng = plausible_range(key)
    if rng is None:
        return None
    lo, hi = rng
    if lo <= value <= hi:
        return None
    text = f"a plausible value from {lo:g} to {hi:g} (SI units as in the key's name)"
    slip = unit_slip(key, value, lo, hi)
    return f"{text}: {slip}" if slip else text
