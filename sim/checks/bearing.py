"""Rolling bearings: basic rating life (ISO 281), reliability factor, equivalent and static loads.

Methods (recalled from the standards; see docs/reducer.md):

- Basic rating life ISO 281:2007 cl. 6/7: ``L10 = (C/P)^p`` million revolutions, ``p = 3`` for
  ball and ``10/3`` for roller bearings; in hours ``L10h = 1e6/(60 n) L10`` with n in rpm.
- Reliability factor a1 (ISO 281:2007 Table 12) from its closed form
  ``a1 = 0.95 [ln(100/R)/ln(100/90)]^(2/3) + 0.05`` (Weibull slope 1.5, 0.05 L10 offset).
- Dynamic equivalent radial load of deep-groove ball bearings ``P = X Fr + Y Fa`` (ISO 281
  Table 3, linear interpolation in ``f0 Fa / C0r``).
- Static equivalent load ``P0 = max(0.6 Fr + 0.5 Fa, Fr)`` and static safety ``s0 = C0/P0``
  (ISO 76).

Speeds inside gaitload are rad/s; conversion to rpm happens only here, in one place. Not
modelled: a_ISO (lubrication, contamination, fatigue limit), wear, fretting at small
oscillation amplitudes, cage failure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from sim.core.config import Field, validate
from sim.core.errors import InputError

BALL_EXPONENT = 3.0
ROLLER_EXPONENT = 10.0 / 3.0
RAD_S_PER_RPM = 2.0 * math.pi / 60.0

# ISO 281 Table 3, deep-groove ball bearings, normal clearance: f0 Fa / C0r -> (e, Y), X = 0.56
_ISO281_T3_F0FA_C0 = np.array([0.172, 0.345, 0.689, 1.03, 1.38, 2.07, 3.45, 5.17, 6.89])
_ISO281_T3_E = np.array([0.19, 0.22, 0.26, 0.28, 0.30, 0.34, 0.38, 0.42, 0.44])
_ISO281_T3_Y = np.array([2.30, 1.99, 1.71, 1.55, 1.45, 1.31, 1.15, 1.04, 1.00])


def life_exponent(kind: str) -> float:
    """ISO 281 life exponent: 3 for ``"ball"``, 10/3 for ``"roller"`` (needle counts as roller)."""
    if kind == "ball":
        return BALL_EXPONENT
    if kind in ("roller", "needle"):
        return ROLLER_EXPONENT
    raise ValueError(f"bearing kind must be 'ball', 'roller' or 'needle', got {kind!r}")


def l10_mrev(dynamic_rating_n: float, load_n: float, exponent: float) -> float:
    """Basic rating life in millions of revolutions, ``(C/P)^p`` (ISO 281). Infinite at P = 0."""
    if load_n <= 0.0:
        return math.inf
    return (dynamic_rating_n / load_n) ** exponent


def l10_h(dynamic_rating_n: float, load_n: float, speed_rad_s: float, exponent: float) -> float:
    """Basic rating life in hours at constant speed: ``1e6/(60 n) (C/P)^p``, n in rpm."""
    if speed_rad_s <= 0.0 or load_n <= 0.0:
        return math.inf
    rpm = speed_rad_s / RAD_S_PER_RPM
    return 1e6 / (60.0 * rpm) * l10_mrev(dynamic_rating_n, load_n, exponent)


def required_dynamic_rating_n(load_n: float, life_h: float, speed_rad_s: float,
                              exponent: float) -> float:
    """Inverse of :func:`l10_h`: the rating C giving ``life_h`` at ``load_n`` and speed."""
    rpm = speed_rad_s / RAD_S_PER_RPM
    return load_n * (life_h * 60.0 * rpm / 1e6) ** (1.0 / exponent)


def reliability_factor_a1(reliability_pct: float) -> float:
    """Life modification factor a1 for reliability R in % (90 <= R < 100), ISO 281:2007.

    Closed form of Table 12: ``0.95 [ln(100/R)/ln(100/90)]^(2/3) + 0.05``.
    """
    if not 90.0 <= reliability_pct < 100.0:
        raise ValueError(f"reliability must be in [90, 100) %, got {reliability_pct}")
    return 0.95 * (math.log(100.0 / reliability_pct) / math.log(100.0 / 90.0)) ** (2.0 / 3.0) \
        + 0.05


def equivalent_radial_load_n(radial_n: float, axial_n: float, static_rating_n: float,
                             f0: float) -> float:
    """Dynamic equivalent load of a deep-groove ball bearing, ``P = X Fr + Y Fa`` (ISO 281 T3).

    ``f0`` is the bearing's geometry factor from the maker's table; ``static_rating_n`` is C0r.
    Below the first table row e and Y are held at the first row (conservative extrapolation
    is not attempted beyond the last row either).
    """
    if axial_n <= 0.0:
        return float(radial_n)
    x = f0 * axial_n / static_rating_n
    e = float(np.interp(x, _ISO281_T3_F0FA_C0, _ISO281_T3_E))
    y = float(np.interp(x, _ISO281_T3_F0FA_C0, _ISO281_T3_Y))
    if radial_n > 0.0 and axial_n / radial_n <= e:
        return float(radial_n)
    return 0.56 * radial_n + y * axial_n


def static_equivalent_load_n(radial_n: float, axial_n: float = 0.0) -> float:
    """Static equivalent load of a radial ball bearing, ``max(0.6 Fr + 0.5 Fa, Fr)`` (ISO 76)."""
    return max(0.6 * radial_n + 0.5 * axial_n, radial_n)


def static_safety(static_rating_n: float, static_load_n: float) -> float:
    """Static safety factor ``s0 = C0/P0`` (ISO 76). Infinite when unloaded."""
    if static_load_n <= 0.0:
        return math.inf
    return static_rating_n / static_load_n


def variable_load_life_h(loads_n: np.ndarray, revolutions: np.ndarray, time_s: float,
                         dynamic_rating_n: float, exponent: float) -> float:
    """L10 in hours under steps of load ``loads_n`` turning ``revolutions`` over ``time_s``.

    Palmgren's p-th power mean load weighted by revolutions (Shigley ch. 11, variable
    loading): ``P_m = [sum P_i^p N_i / sum N_i]^(1/p)``; life ``(C/P_m)^p 1e6 rev`` spread over
    the revolutions per hour of the duty. Equal to the Miner sum of the steps.
    """
    revs = np.asarray(revolutions, float)
    total = revs.sum()
    if total <= 0.0 or time_s <= 0.0:
        return math.inf
    pm = float(((np.abs(np.asarray(loads_n, float)) ** exponent * revs).sum() / total)
               ** (1.0 / exponent))
    if pm <= 0.0:
        return math.inf
    rev_per_h = total / (time_s / 3600.0)
    return l10_mrev(dynamic_rating_n, pm, exponent) * 1e6 / rev_per_h


@dataclass(frozen=True)
class Bearing:
    """A rolling bearing by its ratings (from the maker's catalogue).

    dynamic_rating_n: basic dynamic radial rating C (N). static_rating_n: C0 (N).
    kind: ``ball``, ``roller`` or ``needle`` (sets the ISO 281 exponent).
    """

    dynamic_rating_n: float
    static_rating_n: float
    kind: str = "ball"

    @property
    def exponent(self) -> float:
        return life_exponent(self.kind)


BEARING_SPEC = {
    "dynamic_rating_n": Field(float, "basic dynamic load rating C, N", required=True, min=0.0,
                              min_inclusive=False),
    "static_rating_n": Field(float, "basic static load rating C0, N", required=True, min=0.0,
                             min_inclusive=False),
    "kind": Field(str, choices=("ball", "roller", "needle"), default="ball"),
}


def bearing_from_table(table: Any, file: str | None, key: str) -> Bearing:
    """Validate a ``[..._bearing]`` table of a part file into a :class:`Bearing`."""
    if not isinstance(table, dict):
        raise InputError(file, key, "a table with dynamic_rating_n, static_rating_n, kind", table)
    v = validate(table, BEARING_SPEC, file=file, prefix=key + ".")
    return Bearing(v["dynamic_rating_n"], v["static_rating_n"], v["kind"])
