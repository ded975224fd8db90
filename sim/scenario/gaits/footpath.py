"""Foot paths: the phase clock of a periodic gait, the swing curve and the foot placement.

Phase: leg k has phase ``phi_k = frac(t / T - lift_k + beta)`` with step period ``T``, duty
factor ``beta`` (share of the period in stance) and ``lift_k`` the cycle fraction at which
the leg lifts off. The leg is in stance for ``phi_k < beta`` and in swing otherwise.

Swing: the horizontal path is a cubic Hermite curve from the lift-off point to the touchdown
point whose end velocities equal the stance-foot velocity in the body frame, so the foot
leaves and lands at zero speed relative to the ground; the height adds a bump
``16 h s^2 (1 - s)^2`` (peak ``h`` at mid-swing, zero vertical speed at lift-off and
touchdown) to a smoothstep blend of the end heights.

Placement: the touchdown point ahead of the hip follows the heuristic of Raibert (M. H.
Raibert, *Legged Robots That Balance*, MIT Press, 1986, ch. 2-3): half the stance stride
``v T_stance / 2`` plus a correction proportional to the velocity error ``k (v - v*)``.
"""

from __future__ import annotations

from collections.abc import Sequence

TROT_LIFT = (0.0, 0.5, 0.5, 0.0)  # fl, fr, hl, hr: diagonal pairs half a cycle apart
WALK_LIFT = (0.25, 0.75, 0.0, 0.5)  # lateral sequence hl, fl, hr, fr
BOUND_LIFT = (0.0, 0.0, 0.5, 0.5)  # front pair together, hind pair half a cycle later
PRONK_LIFT = (0.0, 0.0, 0.0, 0.0)  # all four together


def phases(t_s: float, period_s: float, duty: float, lift: Sequence[float]) -> list[float]:
    """Phase of each leg in [0, 1): stance below ``duty``, swing above."""
    c = t_s / period_s + duty
    return [(c - lk) % 1.0 for lk in lift]


def swing_curve(s: float, p0: Sequence[float], p1: Sequence[float], v0: Sequence[float],
                v1: Sequence[float], height_m: float) -> tuple[list[float], list[float]]:
    """Swing position and its derivative by ``s`` (two triples) at progress ``s`` in [0, 1].

    ``p0``/``p1``: lift-off and touchdown points; ``v0``/``v1``: foot velocity at lift-off and
    touchdown times the swing duration (x and y used; the vertical end speeds are zero).
    """
    s = 0.0 if s < 0.0 else (1.0 if s > 1.0 else s)
    s2 = s * s
    s3 = s2 * s
    h00, h10, h01, h11 = 2 * s3 - 3 * s2 + 1, s3 - 2 * s2 + s, -2 * s3 + 3 * s2, s3 - s2
    d00, d10, d01, d11 = 6 * s2 - 6 * s, 3 * s2 - 4 * s + 1, -6 * s2 + 6 * s, 3 * s2 - 2 * s
    p = [h00 * p0[i] + h10 * v0[i] + h01 * p1[i] + h11 * v1[i] for i in (0, 1)]
    dp = [d00 * p0[i] + d10 * v0[i] + d01 * p1[i] + d11 * v1[i] for i in (0, 1)]
    u = 1.0 - s
    dz = p1[2] - p0[2]
    p.append(p0[2] + dz * (3 * s2 - 2 * s3) + height_m * 16.0 * s2 * u * u)
    dp.append(dz * 6.0 * s * u + height_m * 32.0 * s * u * (1.0 - 2.0 * s))
    return p, dp


def touchdown_offset(hip_velocity_m_s: Sequence[float], velocity_error_m_s: Sequence[float],
                     stance_s: float, gain_s: float) -> tuple[float, float]:
    """Raibert-style touchdown point ahead of the nominal foot point (x, y in m).

    ``hip_velocity_m_s``: commanded velocity of the hip over the ground; ``velocity_error``:
    measured minus commanded body velocity; ``gain_s``: the correction gain ``k`` (s).
    """
    return (0.5 * stance_s * hip_velocity_m_s[0] + gain_s * velocity_error_m_s[0],
            0.5 * stance_s * hip_velocity_m_s[1] + gain_s * velocity_error_m_s[1])
