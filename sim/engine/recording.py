"""Recording in the simulation loop: every recorded step into a block buffer that feeds the
record's histograms and exact summary statistics, sampled steps into the series.

Takes the open :class:`sim.record.RecordWriter`, the engine world and its drive; gives a
:class:`StepRecorder` with ``keep(row)`` (every step after ``record.start_s``: the 48 numbers
load torque, joint speed, saturation flag and motor-side torque of the twelve joints; returns
how many steps are buffered), ``sample(row)`` (every ``record.decimation``-th step: time, joint
and base state, torques, foot forces and flags, planned stance; ``SAMPLE_COLUMNS`` numbers) and
``flush()`` (at ``BLOCK`` buffered steps, at each segment end and at the end of the run).
When the series are decimated, each flush also writes the duty series the checks need
(joint torque, joint speed, reducer output torque) every step under ``/steps/<joint>/``.
Buffers are flat ``array('d')`` that the loop extends with plain float lists (no numpy call
per step); a flush hands them to numpy once per block.
"""

from __future__ import annotations

from array import array
from typing import Any

import numpy as np

from sim import JOINT_NAMES, LEGS
from sim.engine.summary import RunSummary
from sim.engine.world import Engine, quat_rotate
from sim.record import RecordWriter

BLOCK = 8000  # steps buffered before statistics and series are flushed
STEP_COLUMNS = 48  # load torque, speed, saturated, motor-side torque
SAMPLE_COLUMNS = 1 + 12 * 5 + 13 + 12 + 4 + 4  # time, joints, base, forces, contact, plan


class StepRecorder:
    """Buffers of one run and their flush into the record (see the module docstring)."""

    def __init__(self, w: RecordWriter, eng: Engine, series: bool, pushes: bool, dt: float,
                 decimation: int = 1):
        self.w, self.eng, self.drv = w, eng, eng.drive
        self.series, self.pushes, self.dt = series, pushes, dt
        # decimated series: the duty series the checks need are also kept every step
        self.step_series = series and decimation > 1
        self.steps = array("d")
        self.samples = array("d")
        self.external = array("d")
        self.n_steps = 0
        self.n_samples = 0
        self.summary = RunSummary()  # the segment whose positive work the steps add to

    def keep_fn(self) -> Any:
        """``keep(row) -> buffered steps``, bound for the loop (no attribute lookups)."""
        extend = self.steps.extend
        rec = self

        def keep(row: list[float]) -> int:
            extend(row)
            rec.n_steps += 1
            return rec.n_steps

        return keep

    def sample_fn(self) -> Any:
        """``sample(row, external_force)``, bound for the loop."""
        extend = self.samples.extend
        ext = self.external.extend
        pushes = self.pushes
        rec = self

        def sample(row: list[float], f_ext: list[float]) -> None:
            extend(row)
            if pushes:
                ext(f_ext)
            rec.n_samples += 1

        return sample

    @staticmethod
    def _take(buf: array, cols: int) -> np.ndarray:
        out = np.frombuffer(buf, float).reshape(-1, cols).copy()
        del buf[:]
        return out

    def flush(self) -> None:
        w, dt = self.w, self.dt
        if self.n_steps:
            blk = self._take(self.steps, STEP_COLUMNS)
            w.accumulate(blk[:, 0:12], blk[:, 12:24], blk[:, 24:36], dt,
                         blk[:, 36:48] if self.drv.records else None)
            self.summary.work_j += float(np.maximum(blk[:, 0:12] * blk[:, 12:24],
                                                    0.0).sum()) * dt
            if self.step_series:
                self._write_steps(blk)
            self.n_steps = 0
        if self.n_samples and self.series:
            self._write_series(self._take(self.samples, SAMPLE_COLUMNS))
        del self.samples[:]
        self.n_samples = 0

    def _write_steps(self, blk: np.ndarray) -> None:
        """The every-step duty series of a decimated record: ``/steps/<joint>/...``."""
        w = self.w
        for k, jn in enumerate(JOINT_NAMES):
            w.append(f"steps/{jn}/torque_nm", blk[:, 36 + k])
            w.append(f"steps/{jn}/speed_rad_s", blk[:, 12 + k])
            if self.drv.records:
                w.append(f"steps/{jn}/gearbox_torque_nm", blk[:, k])

    def _write_series(self, s_: np.ndarray) -> None:
        w = self.w
        w.append("time_s", s_[:, 0])
        for k, jn in enumerate(JOINT_NAMES):
            w.append(f"joints/{jn}/angle_rad", s_[:, 1 + k])
            w.append(f"joints/{jn}/speed_rad_s", s_[:, 13 + k])
            w.append(f"joints/{jn}/torque_nm", s_[:, 25 + k])
            w.append(f"joints/{jn}/torque_command_nm", s_[:, 37 + k])
            w.append(f"joints/{jn}/saturated", s_[:, 49 + k], dtype="i1")
        o = 61
        w.append("base/position_m",
                 s_[:, o:o + 3] - quat_rotate(s_[:, o + 3:o + 7], self.eng.base_local_com))
        w.append("base/orientation_xyzw", s_[:, o + 3:o + 7])
        w.append("base/velocity_m_s", s_[:, o + 7:o + 10])
        w.append("base/angular_velocity_rad_s", s_[:, o + 10:o + 13])
        o += 13
        for k, leg in enumerate(LEGS):
            w.append(f"feet/{leg}/force_n", s_[:, o + 3 * k:o + 3 * k + 3])
        o += 12
        for k, leg in enumerate(LEGS):
            w.append(f"feet/{leg}/contact", s_[:, o + k], dtype="i1")
        self.drv.flush(w)  # joints/<joint>/gearbox_torque_nm (sim/drive/dynamics.py)
        o += 4
        for k, leg in enumerate(LEGS):  # planned phase: 1 = stance, 0 = swing
            w.append(f"feet/{leg}/phase_plan", s_[:, o + k], dtype="i1")
        if self.pushes:
            w.append("base/external_force_n", self._take(self.external, 3))
