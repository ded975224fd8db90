"""Synthetic run records for tests of post-processing and checks (no physics engine).

``write_synthetic_record`` feeds given torque and speed signals through the same
:class:`sim.record.RecordWriter` the runner uses, so spectra and checks can be tested on
signals with known closed-form answers.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from sim import JOINT_NAMES, LEGS
from sim.record import RecordWriter

Signal = Callable[[np.ndarray], np.ndarray] | float


def _eval(sig: Signal, t: np.ndarray) -> np.ndarray:
    if callable(sig):
        return np.asarray(sig(t), float) * np.ones_like(t)
    return np.full_like(t, float(sig))


def write_synthetic_record(
    path: str | Path,
    duration_s: float,
    dt: float = 0.001,
    torque_nm: dict[str, Signal] | None = None,
    speed_rad_s: dict[str, Signal] | None = None,
    joints: Sequence[str] = JOINT_NAMES,
    torque_edges_nm: np.ndarray | None = None,
    speed_edges_rad_s: np.ndarray | None = None,
    status: str = "completed",
    block: int = 1000,
    extra_attrs: dict | None = None,
) -> Path:
    """Write a record whose joints follow the given signals (functions of time, or constants).

    Angles are the running integral of speed. Joints not named get zero torque and speed.
    """
    torque_nm = torque_nm or {}
    speed_rad_s = speed_rad_s or {}
    te = np.linspace(-50.0, 50.0, 101) if torque_edges_nm is None else torque_edges_nm
    se = np.linspace(-40.0, 40.0, 81) if speed_edges_rad_s is None else speed_edges_rad_s
    n = round(duration_s / dt)
    attrs = {
        "tool_version": "synthetic", "scenario_toml": "", "model_toml": "", "time_step_s": dt,
        "sample_period_s": dt, "decimation": 1, "seed": 0, "engine_version": "none",
        "total_mass_kg": 0.0, "leg_names": np.array(LEGS, dtype=object).astype(str).tolist(),
    }
    attrs.update(extra_attrs or {})
    with RecordWriter(path, joints, {j: te for j in joints}, {j: se for j in joints},
                      attrs) as w:
        angle = np.zeros(len(joints))
        for start in range(0, n, block):
            t = (np.arange(start, min(n, start + block)) * dt)
            tau = np.stack([_eval(torque_nm.get(j, 0.0), t) for j in joints], axis=1)
            w_ = np.stack([_eval(speed_rad_s.get(j, 0.0), t) for j in joints], axis=1)
            ang = angle + np.cumsum(w_ * dt, axis=0)
            angle = ang[-1]
            w.append("time_s", t)
            for k, j in enumerate(joints):
                w.append(f"joints/{j}/angle_rad", ang[:, k])
                w.append(f"joints/{j}/speed_rad_s", w_[:, k])
                w.append(f"joints/{j}/torque_nm", tau[:, k])
                w.append(f"joints/{j}/torque_command_nm", tau[:, k])
                w.append(f"joints/{j}/saturated", np.zeros(len(t)), dtype="i1")
            w.accumulate(tau, w_, np.zeros_like(tau), dt)
        return w.finish(status, "synthetic record" if status == "completed" else "synthetic failure")
