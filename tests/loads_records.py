"""Tiny records for the loads tests: series with foot contact flags, or histograms only.

Written through :class:`sim.record.RecordWriter` (the simulator's writer), like
``tests/synthetic.py``, with the extra ``/feet/<leg>/contact`` series the loads need.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from sim import LEGS
from sim.record import RecordWriter

TE = np.linspace(-50.0, 50.0, 101)
SE = np.linspace(-40.0, 40.0, 81)


def write_record(path: str | Path, duration_s: float, dt: float,
                 torque: dict[str, Callable[[np.ndarray], np.ndarray]],
                 speed: dict[str, Callable[[np.ndarray], np.ndarray]] | None = None,
                 contact: dict[str, Callable[[np.ndarray], np.ndarray]] | None = None,
                 joints: Sequence[str] = ("fl_knee", "hr_hip"), series: bool = True,
                 status: str = "completed", block: int = 5000,
                 torque_edges_nm: np.ndarray = TE, decimation: int = 1,
                 steps: bool = True) -> Path:
    """Record with the given signals (functions of time); ``series=False`` writes only the
    every-step histograms (as histogram-only recording does). ``decimation`` keeps every
    n-th step in the series while the histograms see every step, and (with ``steps``, as
    the simulator does) the duty series every step under ``/steps``."""
    speed = speed or {}
    n = round(duration_s / dt)
    attrs = {"tool_version": "test", "scenario_toml": "", "model_toml": "", "time_step_s": dt,
             "sample_period_s": dt * decimation, "decimation": decimation, "seed": 0,
             "engine_version": "none", "total_mass_kg": 0.0, "leg_names": list(LEGS)}
    with RecordWriter(path, joints, {j: torque_edges_nm for j in joints},
                      {j: SE for j in joints}, attrs) as w:
        for start in range(0, n, block):
            t = np.arange(start, min(n, start + block)) * dt
            tau = np.stack([np.broadcast_to(torque.get(j, lambda t: 0.0 * t)(t), t.shape)
                            for j in joints], axis=1).astype(float)
            om = np.stack([np.broadcast_to(speed.get(j, lambda t: 0.0 * t)(t), t.shape)
                           for j in joints], axis=1).astype(float)
            if series:
                keep = (np.arange(start, start + t.size) % decimation) == 0
                w.append("time_s", t[keep])
                for k, j in enumerate(joints):
                    w.append(f"joints/{j}/torque_nm", tau[keep, k])
                    w.append(f"joints/{j}/speed_rad_s", om[keep, k])
                for leg, fn in (contact or {}).items():
                    w.append(f"feet/{leg}/contact", np.asarray(fn(t[keep])), dtype="i1")
                if decimation > 1 and steps:
                    for k, j in enumerate(joints):
                        w.append(f"steps/{j}/torque_nm", tau[:, k])
                        w.append(f"steps/{j}/speed_rad_s", om[:, k])
            w.accumulate(tau, om, np.zeros_like(tau), dt)
        return w.finish(status, "test record")
