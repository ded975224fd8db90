"""The actuator clamp of the simulation loop: each commanded joint torque limited to its
envelope at the joint speed (:class:`sim.drive.envelope.Envelope`: current limit and
voltage limit), with a saturation flag per joint.

Takes the twelve envelopes in joint-name order; gives ``clamp(tc, qd) -> (tau, sat)`` on plain
float lists. When every command lies within the smallest current limit and every speed below
the smallest corner speed, no joint can be clamped and the commands pass through untouched
(one max/min test per step; the common case while standing and walking).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

from sim.drive.envelope import Envelope

ZERO12: list[float] = [0.0] * 12  # the saturation flags when nothing is clamped (read only)


def make_clamp(envs: Sequence[Envelope]) -> Callable[[list[float], list[float]],
                                                     tuple[list[float], list[float]]]:
    """The clamp of the twelve joints whose envelopes are ``envs`` (joint-name order)."""
    A = [e.a for e in envs]
    B = [e.b for e in envs]
    C = [e.c for e in envs]
    CORNER = [e.corner_speed_rad_s for e in envs]
    # inside this box for every joint at once, no joint can be clamped (fast path)
    A_MIN, CORNER_MIN = min(A), min(CORNER)
    n = len(envs)

    def clamp(tc: list[float], qd: list[float]) -> tuple[list[float], list[float]]:
        """Each command clamped to its envelope at the joint speed; saturation flags."""
        if (max(tc) <= A_MIN and min(tc) >= -A_MIN and max(qd) <= CORNER_MIN
                and min(qd) >= -CORNER_MIN):
            return tc, ZERO12
        tau = [0.0] * n
        sat = [0.0] * n
        for j in range(n):
            x = tc[j]
            wj = qd[j]
            aj = A[j]
            cj = CORNER[j]
            if -aj <= x <= aj and -cj <= wj <= cj:
                tau[j] = x
                continue
            hi = B[j] - C[j] * wj
            if hi > aj:
                hi = aj
            lo = -B[j] - C[j] * wj
            if lo < -aj:
                lo = -aj
            if hi < lo:
                hi = lo
            if x > hi:
                tau[j] = hi
                sat[j] = 1.0
            elif x < lo:
                tau[j] = lo
                sat[j] = 1.0
            else:
                tau[j] = x
        return tau, sat

    return clamp
