"""Spur-gear tooth bending by the Lewis equation, with the Barth-type dynamic factor.

Shigley, *Mechanical Engineering Design*, ch. 14 (from memory; form-factor table checked
against several public reproductions of Table 14-2):

    sigma = K_v W_t / (b m Y)            (SI: module m, face width b)
    K_v = (6.1 + V)/6.1   cut or milled profile, V pitch-line speed in m/s
          (3.05 + V)/3.05 cast iron, cast profile
          (3.56 + sqrt V)/3.56 hobbed or shaped
          sqrt((5.56 + sqrt V)/5.56) shaved or ground

Y is the Lewis form factor for 20 degree full-depth teeth, interpolated linearly in tooth count.
A screening method: the full tip load on one tooth, no load sharing, no stress concentration
beyond what Y implies. ISO 6336-3 / AGMA 2001 and, for plastics, VDI 2736 are the detailed
methods; they are not implemented.
"""

from __future__ import annotations

import math

import numpy as np

# Shigley Table 14-2: Lewis form factor Y, 20 degree pressure angle, full-depth teeth
LEWIS_TEETH = np.array([12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 22, 24, 26, 28, 30, 34, 38,
                        43, 50, 60, 75, 100, 150, 300, 400], float)
LEWIS_Y = np.array([0.245, 0.261, 0.277, 0.290, 0.296, 0.303, 0.309, 0.314, 0.322, 0.328,
                    0.331, 0.337, 0.346, 0.353, 0.359, 0.371, 0.384, 0.397, 0.409, 0.422,
                    0.435, 0.447, 0.460, 0.472, 0.480])
LEWIS_Y_RACK = 0.485

PROFILES = ("cast", "cut", "hobbed", "ground")


def lewis_form_factor(teeth: int) -> float:
    """Lewis form factor Y for ``teeth`` (>= 12); rack value beyond 400 teeth."""
    if teeth < 12:
        raise ValueError(f"the Lewis table starts at 12 teeth, got {teeth}")
    if teeth > 400:
        return LEWIS_Y_RACK
    return float(np.interp(float(teeth), LEWIS_TEETH, LEWIS_Y))


def dynamic_factor(pitch_line_speed_m_s: float, profile: str = "cut") -> float:
    """Dynamic factor K_v (>= 1) for pitch-line speed V in m/s and the tooth ``profile``."""
    v = abs(pitch_line_speed_m_s)
    if profile == "cast":
        return (3.05 + v) / 3.05
    if profile == "cut":
        return (6.1 + v) / 6.1
    if profile == "hobbed":
        return (3.56 + math.sqrt(v)) / 3.56
    if profile == "ground":
        return math.sqrt((5.56 + math.sqrt(v)) / 5.56)
    raise ValueError(f"profile must be one of {PROFILES}, got {profile!r}")


def lewis_bending_stress_pa(tangential_load_n: float, face_width_m: float, module_m: float,
                            teeth: int, dynamic_factor_kv: float = 1.0) -> float:
    """Tooth-root bending stress (Pa): ``sigma = K_v W_t / (b m Y)``."""
    return dynamic_factor_kv * tangential_load_n / (face_width_m * module_m
                                                    * lewis_form_factor(teeth))


def lewis_allowable_load_n(allowable_stress_pa: float, face_width_m: float, module_m: float,
                           teeth: int, dynamic_factor_kv: float = 1.0) -> float:
    """Inverse of :func:`lewis_bending_stress_pa`: ``W_t = b m Y sigma_all / K_v`` (N)."""
    return allowable_stress_pa * face_width_m * module_m * lewis_form_factor(teeth) \
        / dynamic_factor_kv
