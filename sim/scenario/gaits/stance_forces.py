"""Static force distribution over the stance feet, weighted for a smooth load hand-over.

The ground forces ``f_i = lambda_i u`` (``u`` against gravity) on the feet at contact points
``c_i`` (relative to the whole-robot centre of mass) must carry the weight, ``sum lambda_i =
W``, with no moment about the centre of mass, ``sum lambda_i (c_i x u) = 0``, i.e.
``sum lambda_i s_i = 0`` for the two coordinates ``s_i`` of ``c_i`` across ``u``. Among the
solutions the one minimising ``sum lambda_i^2 / w_i`` is taken (weighted minimum norm,
``lambda_i = w_i a_i . mu`` with ``(sum w_i a_i a_i^T + eps I) mu = (W, 0, 0)``, ``a_i = (1,
s_i)``; the small ``eps`` keeps two diagonal feet, whose moment about their own line is zero,
solvable, and the result is rescaled to carry exactly ``W``; pulling forces are cut to zero).
A weight ``w_i`` rising from 0 after touchdown and falling to 0 before lift-off hands the load
over smoothly. With equal weights this is the minimum-norm distribution of
:func:`sim.robot.statics.distribute_weight` (common practice for quasi-static stance).

The joint torques holding those forces, ``tau = g(q) - J_c^T f``, come from
:class:`sim.scenario.gaits.leg_solver.LegSolver`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence


def distribute(contacts_m: Sequence[Sequence[float]], weight_n: float, up: Sequence[float],
               w: Sequence[float], eps: float = 1e-6) -> list[list[float]]:
    """Ground forces (4 triples, N) on feet at ``contacts_m`` (m, relative to the COM).

    ``up``: unit vector against gravity; ``w``: load weights in [0, 1] (0 = carries nothing).
    """
    ux, uy, uz = up
    # basis across u: e1 from the x axis, e2 = u x e1
    e1x, e1y, e1z = 1.0 - ux * ux, -ux * uy, -ux * uz
    n = math.sqrt(e1x * e1x + e1y * e1y + e1z * e1z)
    e1x, e1y, e1z = e1x / n, e1y / n, e1z / n
    e2x, e2y, e2z = uy * e1z - uz * e1y, uz * e1x - ux * e1z, ux * e1y - uy * e1x
    s1 = [c[0] * e1x + c[1] * e1y + c[2] * e1z for c in contacts_m]
    s2 = [c[0] * e2x + c[1] * e2y + c[2] * e2z for c in contacts_m]
    m00 = m01 = m02 = m11 = m12 = m22 = 0.0
    for wi, a1, a2 in zip(w, s1, s2, strict=True):
        m00 += wi
        m01 += wi * a1
        m02 += wi * a2
        m11 += wi * a1 * a1
        m12 += wi * a1 * a2
        m22 += wi * a2 * a2
    if m00 <= 1e-12:
        return [[0.0, 0.0, 0.0] for _ in w]
    sc = eps * max(m00, m11 + m22)
    m00 += sc
    m11 += sc
    m22 += sc
    # first column of the inverse of the symmetric 3x3 matrix (right-hand side (W, 0, 0))
    c00 = m11 * m22 - m12 * m12
    c01 = m02 * m12 - m01 * m22
    c02 = m01 * m12 - m02 * m11
    det = m00 * c00 + m01 * c01 + m02 * c02
    mu0, mu1, mu2 = c00 / det, c01 / det, c02 / det
    lam = [max(0.0, wi * (mu0 + a1 * mu1 + a2 * mu2)) for wi, a1, a2 in zip(w, s1, s2,
                                                                              strict=True)]
    tot = sum(lam)
    if tot <= 0.0:
        return [[0.0, 0.0, 0.0] for _ in w]
    k = weight_n / tot
    return [[li * k * ux, li * k * uy, li * k * uz] for li in lam]


def load_weights(phi: Sequence[float], duty: float, ramp: float) -> list[float]:
    """Share of the load each foot is planned to take, in [0, 1], at gait phase ``phi``.

    Rises from 0 over the first ``ramp`` of the stance and falls to 0 over its last ``ramp``
    (fractions of the stance duration) as a smoothstep ``3 s^2 - 2 s^3``; 0 in swing.
    """
    out = []
    for p in phi:
        if p >= duty:
            out.append(0.0)
            continue
        s = p / duty
        r = min(s, 1.0 - s) / ramp
        r = 1.0 if r > 1.0 else r
        out.append(r * r * (3.0 - 2.0 * r))
    return out
