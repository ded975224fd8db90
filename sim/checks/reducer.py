"""Reducer check: rated life, momentary peak torque and back-drivability from a duty spectrum.

Any reducer by its ratings (kind ``"rated"``), or a home-made stage from its geometry (kinds
``"cycloidal"``, ``"planetary"``, ``"belt"``, in their own modules), is checked against a
joint's :class:`sim.loads.spectra.JointSpectrum`. Torques and speeds are at the reducer OUTPUT (the
joint), SI units.

Rated life (the rating-point form of Palmgren's law, ISO 281 / Shigley ch. 11 applied to a
reducer whose life-limiting rolling contacts carry loads proportional to output torque)::

    L_h = L_rated (T_rated / T_eq)^p (n_rated / n_m)
    T_eq = [sum |T_i|^p N_i / sum N_i]^(1/p)      revolution-weighted, N_i output revolutions
    n_m  = sum |n_i| t_i / sum t_i                time-weighted mean |speed|

``L_h`` is in hours of use: the hours the spectrum stands for. Damage per hour of use is
``1/L_h`` (Palmgren-Miner); momentary-peak events add ``events_per_h / permitted_count``.

Back-drivability: the output torque that turns the input against its drag,
``T_bd = ratio (T_drag_in + T_motor_drag) / eta_back + T_friction_out`` (self-locking when ``eta_back = 0``), and
the inertia felt at the output, ``J_out = (J_rotor + J_in) ratio^2 + J_out_stage``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim.checks.belt import belt_from_table
from sim.checks.cycloid import cycloid_from_table
from sim.checks.planetary import planetary_from_table
from sim.checks.reducer_part import (
    COMMON_SPEC,
    KINDS,
    CheckSettings,
    JointDuty,
    ReducerPart,
    common_values,
    count_excursions,
    max_speed_rad_s,
)
from sim.checks.report import Limit, Section, section_from_limits
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError
from sim.loads.spectra import (
    JointSpectrum,
    equivalent_torque_detail,
    equivalent_torque_nm,
    mean_abs_speed_rad_s,
)

__all__ = ["KINDS", "CheckSettings", "JointDuty", "ReducerPart", "check_reducer",
           "count_excursions", "load_reducer_part", "max_speed_rad_s"]

NOT_MODELLED = (
    "wear, lubrication, temperature and creep of printed parts",
    "fatigue of printed-polymer teeth, lobes and pins (static strength only)",
    "tolerances, clearances and profile modifications (ideal load sharing)",
    "shaft, housing and fastener strength",
)

# ---- rated-life formula and its inverse ---------------------------------------------------

def rated_life_h(rated_torque_nm: float, rated_speed_rad_s: float, rated_life_h_: float,
                 exponent: float, equivalent_torque_nm_: float, mean_speed_rad_s: float) -> float:
    """``L_rated (T_rated/T_eq)^p (n_rated/n_m)`` in hours; infinite if nothing turns."""
    if equivalent_torque_nm_ <= 0.0 or mean_speed_rad_s <= 0.0:
        return math.inf
    return rated_life_h_ * (rated_torque_nm / equivalent_torque_nm_) ** exponent \
        * (rated_speed_rad_s / mean_speed_rad_s)


def allowable_equivalent_torque_nm(rated_torque_nm: float, rated_speed_rad_s: float,
                                   rated_life_h_: float, exponent: float, life_h: float,
                                   mean_speed_rad_s: float) -> float:
    """Inverse of :func:`rated_life_h`: the T_eq that gives ``life_h`` at ``n_m``."""
    if mean_speed_rad_s <= 0.0:
        return math.inf
    return rated_torque_nm * (rated_life_h_ * rated_speed_rad_s
                              / (life_h * mean_speed_rad_s)) ** (1.0 / exponent)

# ---- back-drivability ---------------------------------------------------------------------

def backdrive_torque_nm(part: ReducerPart, motor_drag_torque_nm: float = 0.0) -> float:
    """Output torque needed to back-drive: ``ratio (T_drag_in + T_motor)/eta_back + T_out``
    (N m), ``T_out`` the part's Coulomb friction at the output.

    Infinite when the reducer is self-locking (``efficiency_back == 0``).
    """
    if part.efficiency_back <= 0.0:
        return math.inf
    return part.ratio * (part.input_drag_torque_nm + motor_drag_torque_nm) / part.efficiency_back \
        + part.output_friction_torque_nm


def reflected_inertia_kg_m2(part: ReducerPart, rotor_inertia_kg_m2: float = 0.0) -> float:
    """Inertia felt at the output: ``(J_rotor + J_in) ratio^2 + J_out`` (kg m^2)."""
    return (rotor_inertia_kg_m2 + part.input_inertia_kg_m2) * part.ratio**2 \
        + part.output_inertia_kg_m2


# ---- any reducer by its ratings -----------------------------------------------------------

RATED_SPEC: dict[str, Any] = {
    **COMMON_SPEC,
    "rated_torque_nm": Field(float, "output torque of the rating point", required=True,
                             min=0.0, min_inclusive=False),
    "rated_speed_rad_s": Field(float, "output speed of the rating point", required=True,
                               min=0.0, min_inclusive=False),
    "rated_life_h": Field(float, "L10 life at the rating point, hours", required=True, min=0.0,
                          min_inclusive=False),
    "life_exponent": Field(float, "p: 10/3 roller-limited, 3 ball-limited", default=10.0 / 3.0,
                           min=1.0),
    "momentary_peak_torque_nm": Field(float, "never-exceed output torque", required=True,
                                      min=0.0, min_inclusive=False),
    "peak_count": Field(int, "permitted number of momentary-peak events over the life", min=1),
    "repeated_peak_torque_nm": Field(float, "torque above which an excursion counts as a "
                                     "momentary-peak event", min=0.0, min_inclusive=False),
}


@dataclass(frozen=True, kw_only=True)
class RatedReducer(ReducerPart):
    """A bought reducer described by the maker's rating point and limits."""

    rated_torque_nm: float
    rated_speed_rad_s: float
    rated_life_h: float
    life_exponent: float = 10.0 / 3.0
    momentary_peak_torque_nm: float
    peak_count: int | None = None
    repeated_peak_torque_nm: float | None = None

    def life_h(self, spec: JointSpectrum) -> float:
        """Fatigue life in hours of use under ``spec`` (rated-life formula)."""
        p = self.life_exponent
        return rated_life_h(self.rated_torque_nm, self.rated_speed_rad_s, self.rated_life_h, p,
                            equivalent_torque_nm(spec, p), mean_abs_speed_rad_s(spec))

    def allowable_torque_nm(self, life_h: float, mean_speed_rad_s: float) -> float:
        """Equivalent torque giving ``life_h`` hours at mean speed (inverse of life_h)."""
        return allowable_equivalent_torque_nm(self.rated_torque_nm, self.rated_speed_rad_s,
                                              self.rated_life_h, self.life_exponent, life_h,
                                              mean_speed_rad_s)

    def limits(self, duty: JointDuty, settings: CheckSettings) -> list[Limit]:
        spec = duty.spectrum
        fatigue_h = self.life_h(spec)
        damage = 0.0 if math.isinf(fatigue_h) else 1.0 / fatigue_h
        detail: dict[str, Any] = {"fatigue_life_h": fatigue_h}
        if self.peak_count is not None and self.repeated_peak_torque_nm is not None \
                and duty.count_events is not None and duty.hours > 0:
            events = duty.count_events(self.repeated_peak_torque_nm)
            per_h = events / duty.hours
            detail["peak_events_per_h"] = per_h
            detail["peak_event_life_h"] = math.inf if per_h == 0 else self.peak_count / per_h
            damage += per_h / self.peak_count
        life = math.inf if damage == 0 else 1.0 / damage
        peak = spec.peak_torque_nm
        return [
            Limit("rated life", "life", settings.required_life_h / life, life_h=life,
                  detail=detail),
            Limit("momentary peak torque", "peak", peak / self.momentary_peak_torque_nm,
                  allowable_peak_torque_nm=self.momentary_peak_torque_nm),
        ]

    def notes(self) -> list[str]:
        out = []
        if self.peak_count is not None and self.repeated_peak_torque_nm is None:
            out.append("peak_count given without repeated_peak_torque_nm: events not counted")
        return out


def rated_from_table(data: Mapping[str, Any], file: str) -> RatedReducer:
    v = validate(data, RATED_SPEC, file=file)
    if v["ratio"] is None:
        raise InputError(file, "ratio", "this key for a rated reducer: a number > 1")
    if v["peak_count"] is not None and v["repeated_peak_torque_nm"] is None:
        raise InputError(file, "repeated_peak_torque_nm",
                         "a threshold (N m) when peak_count is given")
    return RatedReducer(**common_values(v, file), ratio=v["ratio"],
                        rated_torque_nm=v["rated_torque_nm"],
                        rated_speed_rad_s=v["rated_speed_rad_s"],
                        rated_life_h=v["rated_life_h"], life_exponent=v["life_exponent"],
                        momentary_peak_torque_nm=v["momentary_peak_torque_nm"],
                        peak_count=v["peak_count"],
                        repeated_peak_torque_nm=v["repeated_peak_torque_nm"])


# ---- loading any part and checking a joint ------------------------------------------------

FROM_TABLE: dict[str, Callable[[Mapping[str, Any], str], ReducerPart]] = {
    "rated": rated_from_table,
    "cycloidal": cycloid_from_table,
    "planetary": planetary_from_table,
    "belt": belt_from_table,
}


def reducer_from_table(data: Mapping[str, Any], file: str) -> ReducerPart:
    """Build the part of the kind named in ``data['kind']``."""
    kind = data.get("kind")
    if kind not in KINDS:
        raise InputError(file, "kind", "one of " + ", ".join(repr(k) for k in KINDS), kind)
    return FROM_TABLE[kind](data, file)


def load_reducer_part(path: str | Path) -> ReducerPart:
    """Read a reducer part file (any kind)."""
    return reducer_from_table(load_toml(path, "reducer part file"), str(path))


REDUCER_COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("ratio", "ratio", ".3g"),
    ("peak_torque_nm", "peak N m", ".1f"),
    ("allowable_peak_torque_nm", "allow N m", ".1f"),
    ("peak_torque_ratio", "peak ratio", ".2f"),
    ("life_h", "life h", ".3g"),
    ("backdrive_torque_nm", "back-drive N m", ".2f"),
)


def check_reducer(part: ReducerPart, duty: JointDuty,
                  settings: CheckSettings | None = None) -> Section:
    """Check one joint's reducer against its duty; the ``"reducer"`` section of the report."""
    settings = settings if settings is not None else CheckSettings()
    spec = duty.spectrum
    limits = part.limits(duty, settings)
    lives = [lim.life_h for lim in limits if lim.life_h is not None]
    life = min(lives) if lives else math.inf
    peaks = [lim.allowable_peak_torque_nm for lim in limits
             if lim.allowable_peak_torque_nm is not None]
    allow = min(peaks) if peaks else math.inf
    bd = backdrive_torque_nm(part)
    # exact from the every-step power sums when the record holds the exponent, else binned
    teq = equivalent_torque_detail(spec, float(getattr(part, "life_exponent", 10.0 / 3.0)))
    values = {
        "kind": part.kind, "part": part.file, "ratio": part.ratio,
        "life_h": life, "required_life_h": settings.required_life_h,
        "damage_per_h": 0.0 if math.isinf(life) else 1.0 / life,
        "peak_torque_nm": spec.peak_torque_nm, "allowable_peak_torque_nm": allow,
        "peak_torque_ratio": spec.peak_torque_nm / allow if allow > 0 else math.inf,
        "duty_h": duty.hours, "mean_speed_rad_s": mean_abs_speed_rad_s(spec),
        "equivalent_torque_nm": teq["value"],
        "equivalent_torque_route": teq["route"],
        "equivalent_torque_bias_bound": teq["bias_bound"],
        "backdrive_torque_nm": bd, "backdrivable": math.isfinite(bd),
        "reflected_inertia_kg_m2": reflected_inertia_kg_m2(part),
        "backlash_rad": part.backlash_rad, "efficiency_forward": part.efficiency_forward,
        "efficiency_back": part.efficiency_back, "safety_factor": settings.safety_factor,
        **part.extra_values(duty),
    }
    notes = part.notes()
    notes.append("reflected inertia excludes the motor rotor (added by the motor check)")
    if duty.count_events is None and getattr(part, "peak_count", None) is not None:
        notes.append("momentary-peak events not counted (no time series for this input)")
    return section_from_limits("reducer", limits, values, REDUCER_COLUMNS, notes)
