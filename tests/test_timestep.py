"""The time-step study: a scenario at its step and at half of it, compared joint by joint.

References: the figures are recomputed here from each record's every-step load series with
numpy (peak, RMS over time, and Palmgren's revolution-weighted mean
[sum |T|^p |w| dt / sum |w| dt]^(1/p), Harris & Kotzalas, Rolling Bearing Analysis; from
memory); the 10 % limit is common practice for step halving.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from sim import JOINT_NAMES
from sim.commands.cli import main
from sim.loads.series import load_series_name
from sim.record import open_record
from sim.sweeps.timestep import FIGURES, STEP_CHANGE_LIMIT, StepStudy

from .conftest import SCENARIOS

P = 10.0 / 3.0


def _direct(path):
    out = {}
    with open_record(path) as rec:
        for j in JOINT_NAMES:
            t = np.abs(rec.read(load_series_name(rec, j)))
            w = np.abs(rec.read(f"joints/{j}/speed_rad_s"))
            out[j] = {"peak_torque_nm": float(t.max()),
                      "rms_torque_nm": float(np.sqrt((t * t).mean())),
                      "equivalent_torque_nm": float(((t ** P * w).sum() / w.sum()) ** (1 / P))}
    return out


def test_the_step_study_compares_the_figures_of_both_records(tmp_path, capsys):
    out = tmp_path / "s.h5"
    code = main(["run", str(SCENARIOS / "stand.toml"), "--dt-study", "--json", "-o", str(out),
                 "--set", "segment.0.duration_s=1.3", "--set", "record.start_s=1.0"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    assert doc["time_step_s"] == 0.001 and doc["half_step_s"] == 0.0005
    # the record's quality screen comes with the study's changes judged (sim.loads.quality)
    assert doc["quality"]["record"] == str(out)
    beyond = [(j, f) for j in JOINT_NAMES for f in FIGURES
              if abs(doc["joints"][j][f]["change"]) > STEP_CHANGE_LIMIT]
    assert all(any(r.startswith(f"step halving change of {f}") and j in r
                   for r in doc["quality"]["failed"]) for j, f in beyond)
    half = tmp_path / "s_half_step.h5"
    assert out.is_file() and half.is_file()
    with open_record(half) as rec:
        assert float(rec.attrs["time_step_s"]) == 0.0005
    a, b = _direct(out), _direct(half)
    for j in JOINT_NAMES:
        for f in FIGURES:
            got = doc["joints"][j][f]
            assert got["at_step"] == pytest.approx(a[j][f], rel=1e-6), (j, f)
            assert got["at_half_step"] == pytest.approx(b[j][f], rel=1e-6), (j, f)
            assert got["change"] == pytest.approx(a[j][f] / b[j][f] - 1.0, rel=1e-6, abs=1e-9)


def test_a_change_beyond_the_limit_flags_the_joint():
    fig = {f: 10.0 for f in FIGURES}
    at = {j: dict(fig) for j in JOINT_NAMES}
    half = {j: dict(fig) for j in JOINT_NAMES}
    at["fl_knee"]["peak_torque_nm"] = 10.0 * (1 + STEP_CHANGE_LIMIT) + 0.01  # just beyond
    at["fl_hip"]["rms_torque_nm"] = 10.0 * (1 + STEP_CHANGE_LIMIT) - 0.01  # just within
    s = StepStudy(0.001, ("a", "b"), ("completed", "completed"), at, half)
    assert [(j, f) for j, f, _ in s.flagged] == [("fl_knee", "peak_torque_nm")]
    assert "STEP STUDY FLAGGED" in s.to_text()
    assert s.to_json()["flagged"][0]["change"] == pytest.approx(0.101)


def test_the_quality_screen_takes_the_step_study(stand_record):
    """A figure changing beyond the 10 % step-halving limit (common practice) flags the
    record's screen like chatter does; one within it does not."""
    from sim.loads.quality import THRESHOLDS, screen_record, with_step_changes

    base = screen_record(stand_record)
    assert THRESHOLDS["step_change"].value == STEP_CHANGE_LIMIT
    ok = with_step_changes(base, {("fl_knee", "peak_torque_nm"): 0.05,
                                  ("fl_hip", "rms_torque_nm"): -0.099})
    assert ok.flagged == base.flagged
    bad = with_step_changes(base, {("fl_knee", "peak_torque_nm"): -0.12})
    assert bad.flagged
    assert "step halving change of peak_torque_nm > 0.1: fl_knee 0.12" in bad.reasons()
    assert "QUALITY FLAGGED" in (bad.flag_line() or "")
