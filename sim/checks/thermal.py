"""Winding heating: copper resistance with temperature and a two-node thermal network.

Copper (IEC 60028, standard annealed copper): resistivity at 20 C ``rho20 = 1/58 ohm mm^2/m``
and temperature coefficient ``alpha20 = 0.00393 /K``, so ``R(T) = R20 * (1 + alpha20 (T - 20))``.

Network (lumped, two nodes; temperatures as rises ``theta = T - T_ambient`` in K)::

    P_w --> [C_w] winding --R_wh-- [C_h] housing --R_ha-- ambient
                                     ^ P_h (iron and friction loss)

    C_w dtheta_w/dt = P_w - (theta_w - theta_h)/R_wh
    C_h dtheta_h/dt = (theta_w - theta_h)/R_wh - theta_h/R_ha

Copper loss rises with the winding temperature: with a constant current over a step,
``P_w = I^2 R20 (1 + alpha (T_a - 20)) + I^2 R20 alpha theta_w``, which is still linear in the
state, so each sample of a record (current held for one sample period, zero-order hold) is an
exact affine map ``theta -> Phi theta + gamma`` with ``Phi = expm(A h)`` and
``gamma = (integral_0^h expm(A s) ds) b``. Both are evaluated in closed form (Sylvester's formula
for a 2 x 2 matrix with real distinct eigenvalues, which a thermal network always has) for all
samples at once, and composed with a blocked prefix scan (about 2 sqrt(n) vectorised steps for
n samples) instead of a Python loop per sample.

Arrays of maps are stored as a tuple of six arrays ``(m00, m01, m10, m11, v0, v1)`` of equal
shape (any shape; the last axis is the sample axis in this package).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: IEC 60028 resistivity of standard annealed copper at 20 C, ohm m (1/58 ohm mm^2/m).
COPPER_RESISTIVITY_20C_OHM_M = 1.0 / 58.0e6
#: IEC 60028 temperature coefficient of resistance of copper at 20 C, 1/K.
COPPER_ALPHA_20C_PER_K = 0.00393

#: IEC 60085 thermal classes: designation -> class temperature in C (letters are the older names).
INSULATION_CLASSES_C: dict[str, float] = {
    "90": 90.0, "Y": 90.0, "105": 105.0, "A": 105.0, "120": 120.0, "E": 120.0,
    "130": 130.0, "B": 130.0, "155": 155.0, "F": 155.0, "180": 180.0, "H": 180.0,
    "200": 200.0, "N": 200.0, "220": 220.0, "R": 220.0, "250": 250.0,
}

Maps = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]


def copper_resistance_ratio(temp_c: float | np.ndarray) -> float | np.ndarray:
    """``R(T)/R20 = 1 + alpha20 (T - 20)`` for copper (IEC 60028), dimensionless."""
    if isinstance(temp_c, np.ndarray):
        return 1.0 + COPPER_ALPHA_20C_PER_K * (temp_c.astype(float) - 20.0)
    return 1.0 + COPPER_ALPHA_20C_PER_K * (float(temp_c) - 20.0)


def copper_resistance_ohm(length_m: float, area_m2: float, temp_c: float = 20.0) -> float:
    """Resistance of a copper conductor, ohm: ``rho20 L / A * (1 + alpha20 (T - 20))``."""
    if length_m < 0 or area_m2 <= 0:
        raise ValueError("length_m must be >= 0 and area_m2 > 0")
    return COPPER_RESISTIVITY_20C_OHM_M * length_m / area_m2 * float(
        copper_resistance_ratio(temp_c))


def insulation_limit_c(designation: str) -> float:
    """Class temperature (C) of an IEC 60085 thermal class such as ``"155"`` or ``"F"``."""
    key = str(designation).strip().upper()
    if key not in INSULATION_CLASSES_C:
        raise ValueError(f"unknown IEC 60085 class {designation!r}")
    return INSULATION_CLASSES_C[key]


@dataclass(frozen=True)
class ThermalNetwork:
    """Two-node winding-housing-ambient network.

    capacity_winding_j_per_k (C_w), capacity_housing_j_per_k (C_h),
    resistance_winding_housing_k_per_w (R_wh), resistance_housing_ambient_k_per_w (R_ha).
    Fields may be arrays (one network per motor, shape ``[motor, 1]``) that broadcast against
    per-sample inputs ``[motor, sample]``.
    """

    capacity_winding_j_per_k: float | np.ndarray
    capacity_housing_j_per_k: float | np.ndarray
    resistance_winding_housing_k_per_w: float | np.ndarray
    resistance_housing_ambient_k_per_w: float | np.ndarray

    @property
    def total_resistance_k_per_w(self) -> float | np.ndarray:
        return self.resistance_winding_housing_k_per_w + self.resistance_housing_ambient_k_per_w

    def time_constants_s(self, feedback_w_per_k: float = 0.0) -> tuple[float, float]:
        """The two time constants ``-1/s`` (s), slow first; ``feedback_w_per_k`` = I^2 R20 alpha."""
        s1, s2 = _eigen(*self._matrix(np.asarray(feedback_w_per_k, float)))
        return float(-1.0 / s1), float(-1.0 / s2)

    def _matrix(self, beta: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        g1 = 1.0 / self.resistance_winding_housing_k_per_w
        g2 = 1.0 / self.resistance_housing_ambient_k_per_w
        cw, ch = self.capacity_winding_j_per_k, self.capacity_housing_j_per_k
        a = (beta - g1) / cw
        zero = np.zeros_like(a)
        return a, zero + g1 / cw, zero + g1 / ch, zero - (g1 + g2) / ch

    def steady_rise_k(self, copper_w: float, housing_w: float = 0.0,
                      feedback_w_per_k: float = 0.0) -> tuple[float, float]:
        """Steady rises ``(theta_w, theta_h)`` in K for constant inputs.

        Without feedback ``theta_h = (P_w + P_h) R_ha`` and ``theta_w = theta_h + P_w R_wh``.
        With copper feedback ``P_w = copper_w + feedback_w_per_k * theta_w`` solved exactly;
        raises ValueError at or beyond thermal runaway.
        """
        r_wh = self.resistance_winding_housing_k_per_w
        r_ha = self.resistance_housing_ambient_k_per_w
        denom = 1.0 - feedback_w_per_k * (r_wh + r_ha)
        if denom <= 0.0:
            raise ValueError("thermal runaway: no steady state")
        theta_w = (copper_w * (r_wh + r_ha) + housing_w * r_ha) / denom
        p_w = copper_w + feedback_w_per_k * theta_w
        theta_h = (p_w + housing_w) * r_ha
        return float(theta_w), float(theta_h)


def _eigen(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray
           ) -> tuple[np.ndarray, np.ndarray]:
    half_tr = 0.5 * (a + d)
    disc = np.sqrt(0.25 * (a - d) ** 2 + b * c)  # b c > 0: real, distinct eigenvalues
    return half_tr + disc, half_tr - disc


def step_maps(net: ThermalNetwork, dt_s: float, feedback_w_per_k: np.ndarray,
              winding_w: np.ndarray, housing_w: np.ndarray) -> Maps:
    """Exact one-sample maps for inputs held constant over ``dt_s``.

    feedback_w_per_k: ``I^2 R20 alpha`` (W/K) per sample; winding_w: winding heat at ambient
    temperature (W); housing_w: heat into the housing node (W). All of equal shape.
    Returns ``(m00, m01, m10, m11, v0, v1)`` with ``theta_next = M theta + v``.
    """
    beta = np.asarray(feedback_w_per_k, float)
    a, b, c, d = net._matrix(beta)
    s1, s2 = _eigen(a, b, c, d)
    h = float(dt_s)
    den = s1 - s2
    e1, e2 = np.expm1(s1 * h), np.expm1(s2 * h)
    # Phi = D1 A + D0 I (Sylvester, written with expm1 to keep digits for small s h)
    d1 = (e1 - e2) / den
    d0 = 1.0 + (e2 * s1 - e1 * s2) / den
    # Gamma = integral_0^h expm(A s) ds = G1 A + G0 I with phi(s) = (e^{s h} - 1)/s
    p1 = _phi(s1, e1, h)
    p2 = _phi(s2, e2, h)
    g1 = (p1 - p2) / den
    g0 = (p2 * s1 - p1 * s2) / den
    bw = np.asarray(winding_w, float) / net.capacity_winding_j_per_k
    bh = np.asarray(housing_w, float) / net.capacity_housing_j_per_k
    m00, m01, m10, m11 = d1 * a + d0, d1 * b, d1 * c, d1 * d + d0
    v0 = (g1 * a + g0) * bw + g1 * b * bh
    v1 = g1 * c * bw + (g1 * d + g0) * bh
    return m00, m01, m10, m11, v0, v1


def _phi(s: np.ndarray, em1: np.ndarray, h: float) -> np.ndarray:
    small = np.abs(s * h) < 1e-8
    safe = np.where(small, 1.0, s)
    return np.where(small, h * (1.0 + 0.5 * s * h), em1 / safe)


def compose(first: Maps, then: Maps) -> Maps:
    """The map ``then(first(x))`` (element-wise over arrays of maps)."""
    a00, a01, a10, a11, av0, av1 = first
    b00, b01, b10, b11, bv0, bv1 = then
    return (b00 * a00 + b01 * a10, b00 * a01 + b01 * a11,
            b10 * a00 + b11 * a10, b10 * a01 + b11 * a11,
            b00 * av0 + b01 * av1 + bv0, b10 * av0 + b11 * av1 + bv1)


def prefix_maps(maps: Maps) -> Maps:
    """Inclusive prefix composition along the last axis: element k maps the state before sample
    0 to the state after sample k.

    Two-level blocked scan: the samples are cut into about sqrt(n) blocks of about sqrt(n);
    prefixes inside all blocks are built together (one vectorised step per position in a
    block), then the block totals are chained (one step per block) and applied. O(n) work in
    about 2 sqrt(n) vectorised steps.
    """
    arrs = [np.asarray(m, float) for m in maps]
    shape = np.broadcast_shapes(*(x.shape for x in arrs))
    arrs = [np.broadcast_to(x, shape) for x in arrs]
    n = shape[-1]
    if n == 0:
        return tuple(x.copy() for x in arrs)  # type: ignore[return-value]
    bsz = max(1, math.isqrt(n))
    nb = -(-n // bsz)
    pad = nb * bsz - n
    lead = shape[:-1]
    ident = (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)
    blocks = []
    for x, fill in zip(arrs, ident, strict=True):
        full = np.concatenate([x, np.full((*lead, pad), fill)], axis=-1) if pad else x.copy()
        blocks.append(full.reshape(*lead, nb, bsz).copy())
    for j in range(1, bsz):  # prefixes inside every block at once
        new = compose(tuple(x[..., j - 1] for x in blocks),  # type: ignore[arg-type]
                      tuple(x[..., j] for x in blocks))  # type: ignore[arg-type]
        for x, v in zip(blocks, new, strict=True):
            x[..., j] = v
    # exclusive prefix of block totals
    excl = [np.empty((*lead, nb)) for _ in range(6)]
    run = identity_map(lead)
    for b in range(nb):
        for x, v in zip(excl, run, strict=True):
            x[..., b] = v
        run = compose(run, tuple(x[..., b, -1] for x in blocks))  # type: ignore[arg-type]
    out = compose(tuple(x[..., None] for x in excl), tuple(blocks))  # type: ignore[arg-type]
    return tuple(x.reshape(*lead, nb * bsz)[..., :n] for x in out)  # type: ignore[return-value]


def total_map(maps: Maps) -> Maps:
    """The composition of all maps along the last axis (last element of the prefix scan)."""
    pre = prefix_maps(maps)
    return tuple(m[..., -1] for m in pre)  # type: ignore[return-value]


def identity_map(shape: tuple[int, ...] = ()) -> Maps:
    one, zero = np.ones(shape), np.zeros(shape)
    return one, zero.copy(), zero.copy(), one.copy(), zero.copy(), zero.copy()


def apply_map(maps: Maps, theta_w: np.ndarray, theta_h: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray]:
    """``(M theta + v)`` for states broadcast against the maps."""
    m00, m01, m10, m11, v0, v1 = maps
    return m00 * theta_w + m01 * theta_h + v0, m10 * theta_w + m11 * theta_h + v1


def periodic_state(cycle: Maps) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Fixed point of a cycle map: ``theta* = (I - M)^-1 v`` (the state at every cycle start in
    periodic steady state). Returns ``(theta_w, theta_h, ok)``; ``ok`` is False where the
    spectral radius of M is >= 1 (thermal runaway, no periodic steady state)."""
    m00, m01, m10, m11, v0, v1 = (np.asarray(x, float) for x in cycle)
    half_tr = 0.5 * (m00 + m11)
    disc = np.sqrt(np.maximum(0.25 * (m00 - m11) ** 2 + m01 * m10, 0.0))
    rho = np.abs(half_tr) + disc
    ok = rho < 1.0
    a, b, c, d = 1.0 - m00, -m01, -m10, 1.0 - m11
    det = a * d - b * c
    det = np.where(ok, det, 1.0)
    tw = np.where(ok, (d * v0 - b * v1) / det, np.inf)
    th = np.where(ok, (a * v1 - c * v0) / det, np.inf)
    return tw, th, ok


def simulate_rise(net: ThermalNetwork, dt_s: float, feedback_w_per_k: np.ndarray,
                  winding_w: np.ndarray, housing_w: np.ndarray,
                  theta0: tuple[float, float] = (0.0, 0.0)) -> tuple[np.ndarray, np.ndarray]:
    """Rises after each sample, ``([n], [n])`` in K, from ``theta0`` (exact for held inputs)."""
    pre = prefix_maps(step_maps(net, dt_s, feedback_w_per_k, winding_w, housing_w))
    return apply_map(pre, np.asarray(theta0[0]), np.asarray(theta0[1]))


def runaway_current_a(r20_ohm: float, total_resistance_k_per_w: float) -> float:
    """Steady current (DC-equivalent) at which copper feedback runs away: ``I^2 R20 alpha R = 1``."""
    return math.sqrt(1.0 / (r20_ohm * COPPER_ALPHA_20C_PER_K * total_resistance_k_per_w))
