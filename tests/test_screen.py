"""The quality screen and the every-step moments a run writes into its record, against offline
computations on the every-step series of the same run."""

from __future__ import annotations

import h5py
import numpy as np
import pytest
from scipy import signal

from sim import JOINT_NAMES
from sim.loads.series import load_series_name
from sim.record import open_record


def test_high_frequency_share_matches_an_offline_filter_of_the_every_step_series(trot_records):
    # reference: scipy.signal.firwin (101 taps, Hamming, 100 Hz) and scipy.signal.convolve over
    # the whole every-step load torque series of the run, the 50 samples at each end left out
    # as the screen does; the record's share was measured block by block during the run.
    # Tolerance 1e-9 relative (block-wise and whole-series convolution agree to rounding)
    for name in ("dec1", "chatter"):
        with h5py.File(trot_records[name]) as f:
            dt = float(f.attrs["time_step_s"])
            assert float(f["quality"].attrs["chatter_cutoff_hz"]) == 100.0
            taps = signal.firwin(101, 100.0, fs=1.0 / dt, window="hamming")
            for j in JOINT_NAMES:
                x = f[f"joints/{j}/{f.attrs['load_torque']}"][:]  # the load torque series
                r = x[50:-50] - signal.convolve(x, taps, mode="valid")
                ref = np.sqrt((r * r).sum() / (x[50:-50] ** 2).sum())
                got = float(f[f"quality/{j}"].attrs["torque_high_frequency_share"])
                assert got == pytest.approx(ref, rel=1e-9), (name, j)


def test_reversals_match_a_count_on_the_every_step_series(trot_records):
    with h5py.File(trot_records["dec1"]) as f:
        dur = float(f[f"summary/{JOINT_NAMES[0]}"].attrs["duration_s"])
        for j in JOINT_NAMES:
            x = f[f"joints/{j}/{f.attrs['load_torque']}"][:]
            band = 1e-6 * float(np.abs(f[f"histograms/{j}/torque_edges_nm"][:]).max())
            d = np.diff(x)
            s = np.sign(d[np.abs(d) > band])
            ref = np.count_nonzero(s[1:] != s[:-1]) / dur
            assert float(f[f"quality/{j}"].attrs["torque_reversals_per_s"]) == pytest.approx(
                ref, rel=1e-12)


def test_power_sums_equal_sums_over_the_every_step_series(trot_records):
    with open_record(trot_records["dec1"]) as rec:
        dt = float(rec.attrs["time_step_s"])
        for j in JOINT_NAMES:
            sums = rec.power_sums(j)
            assert sums is not None
            powers, angle = sums
            assert sorted(powers) == [3.0, 3.333, 10.0 / 3.0, 9.0]
            t = np.abs(rec.read(load_series_name(rec, j)))
            w = np.abs(rec.read(f"joints/{j}/speed_rad_s"))
            assert angle == pytest.approx((w * dt).sum(), rel=1e-12)
            for p, v in powers.items():
                assert v == pytest.approx((t ** p * w * dt).sum(), rel=1e-12)


def test_decimated_record_keeps_the_duty_series_every_step(trot_records):
    # the simulation does not depend on the decimation: the every-step duty series of the
    # decimated record are the series of the undecimated one, bit for bit
    with h5py.File(trot_records["dec1"]) as a, h5py.File(trot_records["dec10"]) as b:
        assert "steps" not in a
        assert b["time_s"].shape[0] == -(-a["time_s"].shape[0] // 10)
        assert float(b["steps"].attrs["period_s"]) == float(a.attrs["time_step_s"])
        for j in JOINT_NAMES:
            for q in ("torque_nm", "speed_rad_s"):
                np.testing.assert_array_equal(b[f"steps/{j}/{q}"][:], a[f"joints/{j}/{q}"][:])
            np.testing.assert_array_equal(b[f"joints/{j}/torque_nm"][:],
                                          a[f"joints/{j}/torque_nm"][::10])
        for key in ("slip_m", "touchdowns", "height_error_mean_m"):
            assert b["quality"].attrs[key] == a["quality"].attrs[key]
    with open_record(trot_records["dec10"]) as rec:
        assert rec.duty_name("fl_knee", "torque_nm") == "steps/fl_knee/torque_nm"
        assert rec.duty_period_s == rec.attrs["time_step_s"]
        assert rec.duty_unavailable_reason() is None


def test_the_demo_trot_and_the_chattering_trot_differ_in_the_screen(trot_records):
    # the measurements themselves (the thresholds are tested with sim.loads.quality)
    with h5py.File(trot_records["dec1"]) as good, h5py.File(trot_records["chatter"]) as bad:
        for j in ("fl_knee", "fr_knee", "hl_knee", "hr_knee"):
            assert float(good[f"quality/{j}"].attrs["torque_high_frequency_share"]) < 0.15
            assert float(bad[f"quality/{j}"].attrs["torque_high_frequency_share"]) > 0.5
            # period-two chatter reverses the torque change at nearly every step
            assert float(bad[f"quality/{j}"].attrs["torque_reversals_per_s"]) > 900.0
        q = good["quality"].attrs
        assert q["touchdowns"] > 0 and q["stance_travel_m"] > 0.5
        assert abs(q["height_error_mean_m"]) < 0.01
        assert q["recorded_s"] == pytest.approx(1.5)
        assert good.attrs["planned_s"] == pytest.approx(3.0)


# -- the judged screen (sim.loads.quality) --------------------------------------------------

def test_the_screen_passes_the_demo_trot_and_flags_the_chattering_one(trot_records):
    from sim.loads.quality import screen_record

    good = screen_record(trot_records["dec1"])
    assert good.screened and not good.flagged, good.reasons()
    assert good.flag_line() is None
    # decimation changes nothing in the screen: it is measured every step
    assert screen_record(trot_records["dec10"]).to_json()["joints"] == good.to_json()["joints"]
    bad = screen_record(trot_records["chatter"])
    assert bad.flagged
    failed = {(f.check, f.subject) for f in bad.failures}
    for j in ("fl_knee", "fr_knee", "hl_knee", "hr_knee"):
        assert ("chatter, torque RMS share above the cut-off", j) in failed
        assert ("chatter, torque reversals per step", j) in failed
    line = bad.flag_line()
    assert line is not None and line.startswith("QUALITY FLAGGED ") and "\n" not in line
    doc = bad.to_json()
    assert doc["flagged"] and doc["failed"] == bad.reasons()


def _edited_copy(src, dst, edit):
    import shutil

    shutil.copyfile(src, dst)
    with h5py.File(dst, "r+") as f:
        edit(f)
    return dst


@pytest.mark.parametrize(("key", "value", "check"), [
    ("bounces", 40.0, "touchdown bounce share"),
    ("slip_m", 5.0, "foot slip share of the stance travel"),
    ("height_error_mean_m", -0.05, "base height error share of the plan"),
])
def test_each_locomotion_limit_flags_on_its_own(trot_records, tmp_path, key, value, check):
    from sim.loads.quality import THRESHOLDS, screen_record

    src = trot_records["dec1"]
    q = dict(h5py.File(src)["quality"].attrs)
    out = _edited_copy(src, tmp_path / "e.h5",
                       lambda f: f["quality"].attrs.__setitem__(key, value))
    s = screen_record(out)
    assert [f.check for f in s.failures] == [check]
    # the figure behind the check, as the screen computes it, is above its threshold
    shares = {"touchdown bounce share": value / q["touchdowns"],
              "foot slip share of the stance travel": value / q["stance_travel_m"],
              "base height error share of the plan": abs(value) / q["height_plan_mean_m"]}
    limit = {"touchdown bounce share": "bounce_share",
             "foot slip share of the stance travel": "slip_share",
             "base height error share of the plan": "height_error_share"}[check]
    assert s.failures[0].value == pytest.approx(shares[check])
    assert shares[check] > THRESHOLDS[limit].value


def test_a_run_that_ended_early_or_an_old_record_is_flagged(trot_records, tmp_path):
    from sim.loads.quality import screen_record

    src = trot_records["dec1"]
    short = _edited_copy(src, tmp_path / "short.h5",
                         lambda f: f.attrs.__setitem__("simulated_s", 2.0))
    assert [f.check for f in screen_record(short).failures] == ["ended early"]
    fell = _edited_copy(src, tmp_path / "fell.h5",
                        lambda f: f.attrs.__setitem__("status", "fell"))
    assert "status fell" in screen_record(fell).reasons()[0]

    def to_format_1(f):
        f.attrs["format_version"] = 1
        del f["quality"]

    old = screen_record(_edited_copy(src, tmp_path / "old.h5", to_format_1))
    assert old.flagged and not old.screened
    assert "format 1 record" in old.reasons()[0]
