"""The run summary's figures recomputed from the record's own series.

The runner accumulates mean forward speed, tilt, positive joint work and the cost of transport
while it steps (sim.engine.observe, sim.engine.recording, sim.engine.summary); here they are
recomputed from the every-step series of a short demo trot (decimation 1), by the definitions
in the RunSummary docstring:
- mean forward speed: the time mean, over the control updates, of the base velocity projected
  on the body heading (yaw of the base orientation);
- tilt RMS: the angle between body z and the ground normal, acos(R_zz), RMS over the updates;
- positive joint work: sum over joints and steps of max(tau qd, 0) dt, tau the load torque;
  power that flows back from the joints is not work done (it would cancel or, as |tau qd|,
  add);
- cost of transport W / (m g d) (the specific resistance of Gabrielli and von Karman, 1950,
  from memory), d the horizontal base displacement.
Rotation matrix element and yaw from a unit quaternion (x, y, z, w): R_zz = 1 - 2(x^2 + y^2),
yaw = atan2(2(w z + x y), 1 - 2(y^2 + z^2)) (standard quaternion algebra).
"""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest

from sim import JOINT_NAMES
from sim.engine.recording import STEP_COLUMNS, StepRecorder
from sim.record import open_record

G = 9.80665


def _trot_series(path):
    with open_record(path) as rec:
        attrs = rec.attrs
        t = rec.read("time_s")
        v = rec.read("base/velocity_m_s")
        q = rec.read("base/orientation_xyzw")
        load = attrs["load_torque"]
        tau = np.stack([rec.read(f"joints/{j}/{load}") for j in JOINT_NAMES], 1)
        w = np.stack([rec.read(f"joints/{j}/speed_rad_s") for j in JOINT_NAMES], 1)
        seg = {k: rec.read(f"segments/{k}") for k in ("name", "start_s", "end_s",
                                                       "mean_forward_speed_m_s",
                                                       "positive_work_j", "tilt_rms_rad")}
        pos = rec.read("base/position_m")
    return attrs, t, v, q, tau, w, seg, pos


def test_run_summary_figures_recomputed_from_the_record(trot_records):
    attrs, t, v, q, tau, w, seg, pos = _trot_series(trot_records["dec1"])
    dt = float(attrs["time_step_s"])
    assert int(attrs["decimation"]) == 1  # every step is in the series
    scn = tomllib.loads(attrs["scenario_toml"])
    # only the trot segment lies in the recorded span; the trot controller updates every
    # max(update_period, its own minimum 2 ms) = 2 steps, counted from the segment start
    names = [n.decode() if isinstance(n, bytes) else str(n) for n in seg["name"]]
    k = names.index("trot")
    t0 = float(seg["start_s"][k])
    assert t0 <= t[0] and float(seg["end_s"][k]) >= t[-1]
    every = max(round(scn["control"]["update_period_s"] / dt), 2)
    upd = np.round((t - t0) / dt).astype(int) % every == 0
    x, y, z, qw = q[:, 0], q[:, 1], q[:, 2], q[:, 3]
    yaw = np.arctan2(2 * (qw * z + x * y), 1 - 2 * (y * y + z * z))
    fwd = np.cos(yaw) * v[:, 0] + np.sin(yaw) * v[:, 1]
    mean_fwd = float(fwd[upd].mean())
    tilt = np.arccos(np.clip(1 - 2 * (x * x + y * y), -1, 1))
    tilt_rms = float(np.sqrt((tilt[upd] ** 2).mean()))
    power = tau * w
    assert (power < 0).mean() > 0.2  # the joints absorb power for a good share of the time
    work = float(np.maximum(power, 0).sum()) * dt
    assert mean_fwd > 0.3 and work > 1.0
    run_fwd = float(attrs["summary_mean_forward_speed_m_s"])
    assert run_fwd == pytest.approx(mean_fwd, rel=1e-9)
    assert float(seg["mean_forward_speed_m_s"][k]) == pytest.approx(mean_fwd, rel=1e-9)
    assert float(attrs["summary_tilt_rms_rad"]) == pytest.approx(tilt_rms, rel=1e-9)
    assert float(attrs["summary_positive_work_j"]) == pytest.approx(work, rel=1e-9)
    assert float(seg["positive_work_j"][k]) == pytest.approx(work, rel=1e-9)
    # cost of transport from the summary's own distance, and that distance against the
    # record's base frame displacement over the update span (the record's base position is
    # the frame origin, the summary's the base COM: they differ by the turn of the small COM
    # offset, well under a millimetre here)
    d = float(attrs["summary_distance_m"])
    ups = np.flatnonzero(upd)
    d_rec = float(np.hypot(*(pos[ups[-1], :2] - pos[ups[0], :2])))
    assert d == pytest.approx(d_rec, abs=1e-3)
    weight = float(attrs["total_mass_kg"]) * G
    assert float(attrs["summary_cost_of_transport"]) == pytest.approx(work / (weight * d),
                                                                       rel=1e-9)


class _Writer:
    def __init__(self):
        self.calls = []

    def accumulate(self, *a):
        self.calls.append(a)


class _Engine:
    class drive:  # stands for the engine's drivetrain
        records = False


def test_positive_work_of_a_synthetic_step_block_with_negative_power():
    # twelve joints over 3 steps: power tau qd of +6, -4, 0 W on joint 0 and -10, +2, +2 W on
    # joint 5; work = (6 + 2 + 2) W x dt, the negative power is not work done
    rec = StepRecorder(_Writer(), _Engine(), series=False, pushes=False, dt=0.01)
    keep = rec.keep_fn()
    rows = [((3.0, 2.0), (-5.0, 2.0)), ((-2.0, 2.0), (1.0, 2.0)), ((0.0, 7.0), (-1.0, -2.0))]
    for (t0, w0), (t5, w5) in rows:
        row = [0.0] * STEP_COLUMNS
        row[0], row[12], row[5], row[17] = t0, w0, t5, w5
        keep(row)
    rec.flush()
    assert rec.summary.work_j == pytest.approx(10.0 * 0.01, rel=1e-12)
    assert math.isclose(rec.summary.figures(1.0)["positive_work_j"], 0.1, rel_tol=1e-12)
