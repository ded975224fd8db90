"""Hertz contact of elastic bodies: line contact (parallel cylinders) and point contact (spheres).

Formulas (Johnson, *Contact Mechanics*, CUP 1985, ch. 4; Shigley, *Mechanical Engineering
Design*, sec. 3-19), SI units throughout. A concave surface takes a negative diameter, a flat
an infinite one (``math.inf``).

- Contact modulus ``1/E* = (1-nu1^2)/E1 + (1-nu2^2)/E2``.
- Line contact, force F over length l: half-width ``b = sqrt(4 F' R/(pi E*))``, peak pressure
  ``p_max = 2F/(pi b l) = sqrt(F' E*/(pi R))`` with ``F' = F/l`` and ``1/R = 2/d1 + 2/d2``.
  Largest subsurface shear on the load axis ``0.30028 p_max`` at ``z = 0.78615 b`` (found
  here by maximising ``p (t - t^2/sqrt(1+t^2))``; Shigley quotes 0.30 p_max at 0.786 b).
- Point contact (spheres): radius ``a = (3 F R/(4 E*))^(1/3)``, ``p_max = 3F/(2 pi a^2)``,
  approach ``delta = a^2/R``; largest shear on the axis found numerically for the given nu
  (about 0.31 p_max at 0.48 a for nu = 0.3).

Valid for elastic, frictionless, smooth bodies with contact size small against the radii.
Edge effects of short cylinders and tangential traction are not modelled.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache

from scipy.optimize import brentq, minimize_scalar


def contact_modulus_pa(e1_pa: float, nu1: float, e2_pa: float, nu2: float) -> float:
    """Contact modulus E* (Pa): ``1/E* = (1-nu1^2)/E1 + (1-nu2^2)/E2``."""
    return 1.0 / ((1.0 - nu1 * nu1) / e1_pa + (1.0 - nu2 * nu2) / e2_pa)


def effective_radius_m(d1_m: float, d2_m: float) -> float:
    """Effective radius R (m), ``1/R = 2/d1 + 2/d2`` (negative d for concave, inf for flat)."""
    inv = 2.0 / d1_m + 2.0 / d2_m
    if inv <= 0.0:
        raise ValueError("the bodies do not touch at a point or line: the concave diameter "
                         "must be larger than the convex one")
    return 1.0 / inv


@cache
def line_shear_factors() -> tuple[float, float]:
    """``(tau_max/p_max, z/b)`` for line contact (independent of nu while sigma_x is middle)."""
    # stationary point of t - t^2/sqrt(1+t^2): (1+t^2)^(3/2) = 2t + t^3
    t = float(brentq(lambda x: (1.0 + x * x) ** 1.5 - 2.0 * x - x**3, 0.1, 3.0, xtol=1e-15))
    return t - t * t / math.sqrt(1.0 + t * t), t


@cache
def point_shear_factors(nu: float) -> tuple[float, float]:
    """``(tau_max/p_max, z/a)`` on the axis of a circular Hertz contact for Poisson ratio nu.

    ``tau = (sigma_1 - sigma_3)/2`` with ``sigma_1 = -p[(1 - s atan(1/s))(1+nu) - 1/(2(1+s^2))]``
    and ``sigma_3 = -p/(1+s^2)``, ``s = z/a`` (Johnson eq. 3.45, from memory).
    """

    def tau(s: float) -> float:
        return 0.5 * (1.5 / (1.0 + s * s) - (1.0 + nu) * (1.0 - s * math.atan(1.0 / s)))

    res = minimize_scalar(lambda s: -tau(s), bounds=(0.05, 3.0), method="bounded",
                          options={"xatol": 1e-12})
    return tau(float(res.x)), float(res.x)


@dataclass(frozen=True)
class LineContact:
    """Result of a Hertz line contact (SI)."""

    half_width_m: float
    max_pressure_pa: float
    mean_pressure_pa: float
    max_shear_pa: float
    max_shear_depth_m: float


@dataclass(frozen=True)
class PointContact:
    """Result of a Hertz point contact of two spheres (SI)."""

    radius_m: float
    max_pressure_pa: float
    approach_m: float
    max_shear_pa: float
    max_shear_depth_m: float


def line_contact_from_radius(force_per_length_n_m: float, effective_radius_m: float,
                             modulus_pa: float) -> LineContact:
    """Line contact from load per length F' (N/m), effective radius R (m) and E* (Pa)."""
    if force_per_length_n_m < 0.0:
        raise ValueError("contact force must be >= 0")
    b = math.sqrt(4.0 * force_per_length_n_m * effective_radius_m / (math.pi * modulus_pa))
    p = math.sqrt(force_per_length_n_m * modulus_pa / (math.pi * effective_radius_m))
    k, t = line_shear_factors()
    return LineContact(b, p, math.pi / 4.0 * p, k * p, t * b)


def line_contact(force_n: float, length_m: float, d1_m: float, d2_m: float, e1_pa: float,
                 nu1: float, e2_pa: float, nu2: float) -> LineContact:
    """Hertz contact of two parallel cylinders of diameters d1, d2 pressed by F over length l."""
    return line_contact_from_radius(force_n / length_m, effective_radius_m(d1_m, d2_m),
                                    contact_modulus_pa(e1_pa, nu1, e2_pa, nu2))


def line_contact_force_n(max_pressure_pa: float, length_m: float, d1_m: float, d2_m: float,
                         e1_pa: float, nu1: float, e2_pa: float, nu2: float) -> float:
    """Inverse of :func:`line_contact`: the force giving ``max_pressure_pa``.

    From ``p_max^2 = F' E*/(pi R)``: ``F = pi R p_max^2 l / E*``.
    """
    r = effective_radius_m(d1_m, d2_m)
    es = contact_modulus_pa(e1_pa, nu1, e2_pa, nu2)
    return math.pi * r * max_pressure_pa**2 * length_m / es


def point_contact(force_n: float, d1_m: float, d2_m: float, e1_pa: float, nu1: float,
                  e2_pa: float, nu2: float) -> PointContact:
    """Hertz contact of two spheres (or a sphere on a flat, ``d2 = inf``).

    The shear depth uses the Poisson ratio of body 1 (bodies of one material in practice).
    """
    r = effective_radius_m(d1_m, d2_m)
    es = contact_modulus_pa(e1_pa, nu1, e2_pa, nu2)
    a = (3.0 * force_n * r / (4.0 * es)) ** (1.0 / 3.0)
    p = 3.0 * force_n / (2.0 * math.pi * a * a) if a > 0 else 0.0
    k, s = point_shear_factors(round(nu1, 12))
    return PointContact(a, p, a * a / r, k * p, s * a)
