"""Cycloidal stage geometry: ratio, pitch curve and disc profile, curvature, pin forces.

Takes the geometry of a cycloidal stage as floats (pure functions, no part file) and gives
the quantities the part and its check use (:mod:`sim.checks.cycloid`).

Symbols: N ring pins on a circle of radius R, pin radius r_r, eccentricity e, K1 = e N / R,
z_c = N - 1 disc lobes, N_w output pins of radius r_w on a circle of radius R_w, crank angle
theta; phi is a pin's angle measured from the eccentric direction. SI units.

Methods (Malhotra & Parameswaran, Mech. Mach. Theory 18(6) 1983, ideal force analysis;
Sensinger, ASME J. Mech. Des. 132(2) 2010, profile with pin offset; both from memory; the
closed forms below were re-derived and checked numerically, see tests/test_cycloid.py):

- ratio, ring fixed, output from the disc through pins in holes: ``i = z_c/(N - z_c) = N - 1``.
- pitch curve (pin-centre locus in disc coordinates), ``u`` in [0, 2 pi)::

      x = R cos u - e cos(N u),   y = R sin u - e sin(N u)

  disc profile = inward offset by r_r along the normal ``u + psi``,
  ``psi = atan2(sin((1-N) u), 1/K1 - cos((1-N) u))``.
- signed curvature radius of the pitch curve (> 0 on the lobes), ``c = cos phi``::

      rho = R (1 + K1^2 - 2 K1 c)^(3/2) / (1 + N K1^2 - (N+1) K1 c)

  no undercut when ``r_r < rho_min``; contact curvature of the disc ``rho - r_r``.
- output holes: ``D_hole = d_pin + 2 e`` (hole centre = pin centre + e along the eccentric).
- ideal ring-pin loads (rigid disc, equal contact stiffness, no clearance): every contact
  normal passes through the pitch point at ``e N`` from the ring centre; lever arm about the
  disc centre ``l = e (N-1) sin phi / sqrt(1 + K1^2 - 2 K1 cos phi)``; loaded pins
  ``0 < phi < pi`` carry ``F = T_c l / sum l^2``; continuum limit
  ``F_max = 4 T_c / (N (N-1) e)``.
- output pins ``Q_j = T_c R_w sin psi_j / sum (R_w sin psi)^2`` (``4 T_c/(N_w R_w)`` peak for
  even N_w); crank-bearing load from the disc's force balance; input torque ``T_c/(N-1)``.
- imbalance of one disc ``m e omega_in^2``; two discs at 180 deg leave a couple ``m e w^2 a``.

Not modelled: clearances and profile modification (real drives load fewer pins, so the ideal
peak pin force is a lower bound), friction, pin bending, ring-pin bearings.
"""

from __future__ import annotations

import math

import numpy as np

from sim.parts.ratios import ratio_fixed_ring

__all__ = ["ratio_fixed_ring"]  # re-exported: the ratio is defined once, in sim.parts


def pitch_curve_xy(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                   u: np.ndarray) -> np.ndarray:
    """Points ``[n, 2]`` of the pitch curve (pin-centre locus) in disc coordinates."""
    n, r, e = ring_pins, pin_circle_radius_m, eccentricity_m
    return np.stack([r * np.cos(u) - e * np.cos(n * u), r * np.sin(u) - e * np.sin(n * u)], -1)


def disc_profile_xy(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                    pin_radius_m: float, points: int = 3600) -> np.ndarray:
    """The disc outline ``[points, 2]`` (m): the pitch curve offset inward by the pin radius."""
    n, r, e = ring_pins, pin_circle_radius_m, eccentricity_m
    u = np.linspace(0.0, 2.0 * np.pi, points, endpoint=False)
    k1 = e * n / r
    psi = np.arctan2(np.sin((1 - n) * u), 1.0 / k1 - np.cos((1 - n) * u))
    pc = pitch_curve_xy(n, r, e, u)
    return pc - pin_radius_m * np.stack([np.cos(u + psi), np.sin(u + psi)], -1)


def pitch_curvature_radius_m(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                             phi: np.ndarray | float) -> np.ndarray:
    """Signed curvature radius of the pitch curve at angle ``phi`` (> 0 convex, on the lobes)."""
    n, r = ring_pins, pin_circle_radius_m
    k = eccentricity_m * n / r
    c = np.cos(phi)
    return r * (1 + k * k - 2 * k * c) ** 1.5 / (1 + n * k * k - (n + 1) * k * c)


def min_curvature_radius_m(ring_pins: int, pin_circle_radius_m: float,
                           eccentricity_m: float) -> tuple[float, float]:
    """``(rho_min, phi)``: the smallest convex curvature radius of the pitch curve and where.

    Stationary point ``cos phi* = [2 - N + (2N-1) K1^2]/((N+1) K1)`` when it lies on the convex
    part, else the lobe tip ``phi = pi`` with ``rho = R (1+K1)^2/(1 + N K1)``.
    """
    n, r = ring_pins, pin_circle_radius_m
    k = eccentricity_m * n / r
    tip = r * (1 + k) ** 2 / (1 + n * k)
    c = (2 - n + (2 * n - 1) * k * k) / ((n + 1) * k)
    if abs(c) <= 1.0 and 1 + n * k * k - (n + 1) * k * c > 0:
        phi = math.acos(c)
        rho = float(pitch_curvature_radius_m(n, r, eccentricity_m, phi))
        if rho < tip:
            return rho, phi
    return tip, math.pi


def output_hole_diameter_m(output_pin_diameter_m: float, eccentricity_m: float) -> float:
    """Hole diameter for zero backlash in the pins-in-holes output: ``d_pin + 2 e``."""
    return output_pin_diameter_m + 2.0 * eccentricity_m


def max_pin_force_closed_form_n(ring_pins: int, eccentricity_m: float,
                                disc_torque_nm: float) -> float:
    """Continuum limit of the largest ring-pin force, ``4 T_c/(N (N-1) e)`` (N)."""
    return 4.0 * abs(disc_torque_nm) / (ring_pins * (ring_pins - 1) * eccentricity_m)


def pin_lever_arms_m(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                     crank_angle_rad: float) -> tuple[np.ndarray, np.ndarray]:
    """``(phi_k, l_k)`` for every ring pin: angle from the eccentric direction, lever arm."""
    n, r, e = ring_pins, pin_circle_radius_m, eccentricity_m
    k = e * n / r
    phi = 2.0 * np.pi * np.arange(n) / n - crank_angle_rad
    lever = e * (n - 1) * np.sin(phi) / np.sqrt(1 + k * k - 2 * k * np.cos(phi))
    return phi, lever


def ring_pin_forces_n(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                      disc_torque_nm: float, crank_angle_rad: float) -> np.ndarray:
    """Ideal contact force on each ring pin ``[N]`` (N) for a disc torque T_c >= 0."""
    _, lever = pin_lever_arms_m(ring_pins, pin_circle_radius_m, eccentricity_m,
                                crank_angle_rad)
    loaded = np.where(lever > 1e-15, lever, 0.0)
    return abs(disc_torque_nm) * loaded / float((loaded**2).sum())


def output_pin_forces_n(output_pins: int, output_pin_circle_radius_m: float,
                        disc_torque_nm: float, crank_angle_rad: float) -> np.ndarray:
    """Ideal force on each output pin ``[N_w]`` (N), along the eccentric direction."""
    psi = 2.0 * np.pi * np.arange(output_pins) / output_pins - crank_angle_rad
    arm = output_pin_circle_radius_m * np.sin(psi)
    loaded = np.where(arm > 1e-15, arm, 0.0)
    return abs(disc_torque_nm) * loaded / float((loaded**2).sum())


def disc_forces(ring_pins: int, pin_circle_radius_m: float, eccentricity_m: float,
                output_pins: int, output_pin_circle_radius_m: float, disc_torque_nm: float,
                crank_angle_rad: float) -> dict[str, np.ndarray]:
    """All forces on one disc in ring coordinates (origin at the ring centre).

    Returns ``ring_points`` / ``ring_forces`` ``[N, 2]`` (a point on each line of action and the
    force), ``output_points`` / ``output_forces`` ``[N_w, 2]``, ``bearing_force`` ``[2]`` (from
    the crank bearing, by force balance) and ``disc_centre`` ``[2]``.
    """
    n, r, e = ring_pins, pin_circle_radius_m, eccentricity_m
    ecc = np.array([math.cos(crank_angle_rad), math.sin(crank_angle_rad)])
    centre = e * ecc
    pitch = e * n * ecc
    ang = 2.0 * np.pi * np.arange(n) / n
    pins = r * np.stack([np.cos(ang), np.sin(ang)], -1)
    toward = pitch - pins
    unit = toward / np.linalg.norm(toward, axis=1)[:, None]
    fr = ring_pin_forces_n(n, r, e, disc_torque_nm, crank_angle_rad)[:, None] * unit
    wang = 2.0 * np.pi * np.arange(output_pins) / output_pins
    wpins = output_pin_circle_radius_m * np.stack([np.cos(wang), np.sin(wang)], -1)
    q = output_pin_forces_n(output_pins, output_pin_circle_radius_m, disc_torque_nm,
                            crank_angle_rad)
    fo = -q[:, None] * ecc[None, :]
    fb = -(fr.sum(axis=0) + fo.sum(axis=0))
    return {"ring_points": pins, "ring_forces": fr, "output_points": wpins + centre,
            "output_forces": fo, "bearing_force": fb, "disc_centre": centre}


def imbalance_force_n(disc_mass_kg: float, eccentricity_m: float, input_speed_rad_s: float
                      ) -> float:
    """Rotating force of one disc orbiting with the crank, ``m e omega^2`` (N)."""
    return disc_mass_kg * eccentricity_m * input_speed_rad_s**2


def two_disc_couple_nm(disc_mass_kg: float, eccentricity_m: float, input_speed_rad_s: float,
                       disc_spacing_m: float) -> float:
    """Residual rocking couple of two discs at 180 deg, ``m e omega^2 a`` (N m)."""
    return imbalance_force_n(disc_mass_kg, eccentricity_m, input_speed_rad_s) * disc_spacing_m


def polygon_area_m2(xy: np.ndarray) -> float:
    """Area of a closed polygon ``[n, 2]`` by the shoelace formula."""
    x, y = xy[:, 0], xy[:, 1]
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
