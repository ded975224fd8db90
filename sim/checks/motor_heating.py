"""Winding temperature over a record: periodic steady state, a mission from cold, time to the limit.

Takes a run record and the stacked motors (:class:`~.motor_duty.MotorBank`) and gives, per
motor, the start state and peak winding rise of the periodic steady state (the record
repeated as one cycle of a periodic activity), the peak over a mission of a given length from
cold, and the minutes from cold until the winding limit is reached (:func:`thermal_analysis`).
Works on the affine per-sample maps of the two-node network (:mod:`sim.checks.thermal`),
composed chunk by chunk, so no cycle is simulated sample by sample more than a few times.
"""

from __future__ import annotations

import math

import numpy as np

from sim.checks import thermal as th
from sim.checks.motor_duty import MotorBank, duty_chunks, thermal_step_maps
from sim.core.errors import InputError
from sim.record import RunRecord


def _cycle_pass(rec: RunRecord, bank: MotorBank, dt: float, rows: int
                ) -> tuple[th.Maps, np.ndarray]:
    """Whole-record map per motor and the largest winding-row sum of any prefix map."""
    nm = len(bank.joints)
    total = th.identity_map((nm,))
    amax = np.zeros(nm)
    for c in duty_chunks(rec, bank, rows):
        pre = th.prefix_maps(thermal_step_maps(bank, dt, c))
        glob = th.compose(tuple(x[:, None] for x in total), pre)  # type: ignore[arg-type]
        amax = np.maximum(amax, (glob[0] + glob[1]).max(axis=1))
        total = tuple(x[:, -1] for x in glob)  # type: ignore[assignment]
    return total, amax


def _candidate_pass(rec: RunRecord, bank: MotorBank, dt: float, rows: int, sw: np.ndarray,
                    sh: np.ndarray, nlim: np.ndarray, limit_rise: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Peak winding rise over the record from each start state ``[motor, Q]`` (counting the
    start and samples ``< nlim``) and the first sample index whose end state reaches
    ``limit_rise[motor]`` (-2: the start state already does; -1: never)."""
    peak = sw.copy()
    first = np.where(sw >= limit_rise[:, None], -2, -1).astype(np.int64)
    state = th.identity_map((sw.shape[0],))
    sub = 4096
    for c in duty_chunks(rec, bank, rows):
        pre = th.prefix_maps(thermal_step_maps(bank, dt, c))
        glob = th.compose(tuple(x[:, None] for x in state), pre)  # type: ignore[arg-type]
        state = tuple(x[:, -1] for x in glob)  # type: ignore[assignment]
        n = glob[0].shape[1]
        for s0 in range(0, n, sub):
            a0 = glob[0][:, None, s0:s0 + sub]
            a1 = glob[1][:, None, s0:s0 + sub]
            v0 = glob[4][:, None, s0:s0 + sub]
            rise = a0 * sw[:, :, None] + a1 * sh[:, :, None] + v0  # [motor, Q, sub]
            idx = c.start + s0 + np.arange(rise.shape[2])
            rise = np.where(idx[None, None, :] < nlim[:, :, None], rise, -np.inf)
            peak = np.maximum(peak, rise.max(axis=2))
            hit = rise >= limit_rise[:, None, None]
            newly = hit.any(axis=2) & (first == -1)
            if newly.any():
                first = np.where(newly, idx[0] + np.argmax(hit, axis=2), first)
    return peak, first


def _iterate_cycles(cycle: th.Maps, q_max: int) -> tuple[np.ndarray, np.ndarray]:
    """Cycle-start states from cold for q = 0..q_max: ``([motor, q_max+1], [...])``."""
    nm = cycle[0].shape[0]
    xw = np.zeros((nm, q_max + 1))
    xh = np.zeros((nm, q_max + 1))
    with np.errstate(over="ignore", invalid="ignore"):
        for q in range(1, q_max + 1):
            xw[:, q], xh[:, q] = th.apply_map(cycle, xw[:, q - 1], xh[:, q - 1])
    return xw, xh


_MAX_CYCLES = 2_000_000
_GRID = 48


def _crossing_bound(cycle_i: th.Maps, ok: bool, sw: float, sh: float, amax: float,
                    margin: float, limit: float) -> int:
    """A cycle count from cold after which the cycle peak surely passes the limit.

    With periodic steady state: the cycle-start state approaches ``theta*`` from below and the
    cycle peak is ``max_k a_k . x + c_k`` with ``a_k >= 0``, so it is within
    ``amax * max(theta* - x)`` of the steady peak. On runaway: until the start state passes.
    """
    xw, xh = 0.0, 0.0
    for q in range(_MAX_CYCLES):
        if ok:
            gap = max(sw - xw, sh - xh)
            if amax * gap < margin or gap <= 1e-12 * max(sw, 1.0):
                return q
        elif xw >= limit or not math.isfinite(xw):
            return q
        a, b = th.apply_map(cycle_i, np.asarray(xw), np.asarray(xh))
        xw, xh = float(a), float(b)
    return _MAX_CYCLES


def thermal_analysis(rec: RunRecord, bank: MotorBank, dt: float, n: int, rows: int,
                      mission_s: float | None) -> dict[str, np.ndarray]:
    """Periodic steady state, mission from cold and time from cold to the winding limit."""
    cycle, amax = _cycle_pass(rec, bank, dt, rows)
    sw, sh, ok = th.periodic_state(cycle)
    nm = len(bank.joints)
    limit_rise = (bank.limit - bank.ambient)[:, 0]
    t_cyc = n * dt
    m = r = 0  # mission: m full records and r samples from cold
    if mission_s is not None:
        m = math.floor(mission_s / t_cyc + 1e-12)
        r = round((mission_s - m * t_cyc) / dt)
        if m > _MAX_CYCLES:
            raise InputError(rec.path.as_posix(), "mission_s",
                             f"a mission of at most {_MAX_CYCLES} record lengths", mission_s)
    xw, xh = _iterate_cycles(cycle, max(m, 1))
    # candidates: 0 steady state, 1 full cycle m-1 from cold, 2 partial cycle m (r samples)
    s_w = np.stack([np.where(ok, sw, 0.0), xw[:, max(m - 1, 0)], xw[:, m]], axis=1)
    s_h = np.stack([np.where(ok, sh, 0.0), xh[:, max(m - 1, 0)], xh[:, m]], axis=1)
    nlim = np.array([[n, n if m >= 1 else 0, r]] * nm, dtype=np.int64)
    peak0, _ = _candidate_pass(rec, bank, dt, rows, s_w, s_h, nlim, limit_rise)
    steady_peak = np.where(ok, peak0[:, 0], np.inf)
    mission_peak = np.full(nm, np.nan)
    if mission_s is not None:
        if m >= 1:
            mission_peak = np.maximum(peak0[:, 1], peak0[:, 2])
        else:
            mission_peak = peak0[:, 2]
    # time from cold to the limit: bracket the first cycle whose peak reaches it
    minutes = np.full(nm, np.nan)
    todo = [int(i) for i in np.flatnonzero(steady_peak >= limit_rise)]
    lo = {i: -1 for i in todo}
    hi: dict[int, int] = {}
    hi_first: dict[int, int] = {}
    starts: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    for i in todo:
        cyc_i = tuple(x[i] for x in cycle)
        hi[i] = _crossing_bound(cyc_i, bool(ok[i]), float(sw[i]), float(sh[i]),
                                float(amax[i]), float(steady_peak[i] - limit_rise[i]),
                                float(limit_rise[i]))
        sub_cycle = tuple(x[i:i + 1] for x in cycle)
        starts[i] = _iterate_cycles(sub_cycle, hi[i])  # type: ignore[arg-type]
    while todo:
        qs = np.zeros((nm, _GRID), dtype=np.int64)
        for i in todo:
            cand = np.unique(np.linspace(lo[i] + 1, hi[i], _GRID).round().astype(np.int64))
            qs[i] = np.concatenate([cand, np.full(_GRID - cand.size, cand[-1])])
        c_w = np.zeros((nm, _GRID))
        c_h = np.zeros((nm, _GRID))
        lim = np.full(nm, np.inf)
        for i in todo:
            c_w[i], c_h[i] = starts[i][0][0, qs[i]], starts[i][1][0, qs[i]]
            lim[i] = limit_rise[i]
        _, first = _candidate_pass(rec, bank, dt, rows, c_w, c_h,
                                   np.full((nm, _GRID), n, dtype=np.int64), lim)
        still = []
        for i in todo:
            reached = first[i] != -1
            if not reached.any():  # not reached within the bound (steady peak at the limit)
                continue
            if (~reached).any():
                lo[i] = max(lo[i], int(qs[i][~reached].max()))
            k = int(np.argmin(np.where(reached, qs[i], np.iinfo(np.int64).max)))
            hi[i], hi_first[i] = int(qs[i][k]), int(first[i][k])
            if hi[i] - lo[i] <= 1:
                t_in = 0.0 if hi_first[i] == -2 else (hi_first[i] + 1) * dt
                minutes[i] = (hi[i] * t_cyc + t_in) / 60.0
            else:
                still.append(i)
        todo = still
    return {"start_w": s_w[:, 0], "start_h": s_h[:, 0], "ok": ok,
            "steady_peak_rise": steady_peak, "mission_peak_rise": mission_peak,
            "minutes_to_limit": minutes}

