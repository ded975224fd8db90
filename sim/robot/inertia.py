"""Mass properties of closed-form solids and their composition.

Formulas: mass moments of inertia of homogeneous solids about their centroidal axes, as tabulated
in engineering-mechanics handbooks (e.g. Meriam & Kraige, Engineering Mechanics: Dynamics,
Appendix B table of mass moments of inertia; from memory) and the parallel-axis (Huygens-Steiner)
theorem for composition.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class MassProps:
    """A rigid body: mass (kg), centre of mass (m, [3]) and inertia about the COM (kg m^2, [3,3])."""

    mass_kg: float
    com_m: np.ndarray
    inertia_kg_m2: np.ndarray

    def shifted(self, offset_m: Iterable[float]) -> MassProps:
        return MassProps(self.mass_kg, self.com_m + np.asarray(offset_m, float), self.inertia_kg_m2)


def box(mass_kg: float, size_m: Iterable[float], com_m: Iterable[float] = (0, 0, 0)) -> MassProps:
    """Solid cuboid with edges (a, b, c) along x, y, z: Ixx = m(b^2 + c^2)/12, etc."""
    a, b, c = (float(v) for v in size_m)
    m = float(mass_kg)
    inertia = np.diag([m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12])
    return MassProps(m, np.asarray(com_m, float), inertia)


def cylinder(mass_kg: float, radius_m: float, length_m: float, axis: str = "z",
             com_m: Iterable[float] = (0, 0, 0)) -> MassProps:
    """Solid cylinder: I_axis = m r^2 / 2, I_transverse = m (3 r^2 + L^2) / 12."""
    m, r, L = float(mass_kg), float(radius_m), float(length_m)
    ia = m * r * r / 2
    it = m * (3 * r * r + L * L) / 12
    d = {"x": [ia, it, it], "y": [it, ia, it], "z": [it, it, ia]}[axis]
    return MassProps(m, np.asarray(com_m, float), np.diag(d))


def sphere(mass_kg: float, radius_m: float, com_m: Iterable[float] = (0, 0, 0)) -> MassProps:
    """Solid sphere: I = 2 m r^2 / 5 about any diameter."""
    m, r = float(mass_kg), float(radius_m)
    return MassProps(m, np.asarray(com_m, float), np.eye(3) * (0.4 * m * r * r))


def combine(parts: Iterable[MassProps]) -> MassProps:
    """Composite body: total mass, mass-weighted COM, inertias moved by the parallel-axis theorem
    I_O = I_G + m (|d|^2 E - d d^T)."""
    parts = list(parts)
    m = sum(p.mass_kg for p in parts)
    if m <= 0:
        raise ValueError("composite mass must be positive")
    com = np.sum([p.mass_kg * p.com_m for p in parts], axis=0) / m
    inertia = np.zeros((3, 3))
    for p in parts:
        d = p.com_m - com
        inertia += p.inertia_kg_m2 + p.mass_kg * (d @ d * np.eye(3) - np.outer(d, d))
    return MassProps(m, com, inertia)
