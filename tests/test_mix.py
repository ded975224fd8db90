"""Usage mixes: one day of use from records weighted by hours per day and events per day."""

from __future__ import annotations

import numpy as np
import pytest

from sim.core.errors import InputError
from sim.loads.mix import load_mix, resolve_usage
from sim.loads.spectra import (
    equivalent_torque_nm,
    mean_abs_speed_rad_s,
    rms_torque_nm,
    usage_spectra,
)
from tests.loads_records import write_record


@pytest.fixture(scope="module")
def records(tmp_path_factory):
    d = tmp_path_factory.mktemp("mix")
    walk = write_record(d / "walk.h5", 0.5, 0.001, {"fl_knee": lambda t: 8 + 4 * np.sin(20 * t)},
                        {"fl_knee": lambda t: 3 * np.cos(20 * t)})
    stand = write_record(d / "stand.h5", 0.25, 0.001, {"fl_knee": lambda t: 0 * t + 5.0})
    up = write_record(d / "up.h5", 0.1, 0.001, {"fl_knee": lambda t: 30 * t / 0.1},
                      {"fl_knee": lambda t: 0 * t + 4.0})
    return d, walk, stand, up


def _mix(d, text, name="m.toml"):
    p = d / name
    p.write_text(text)
    return p


def test_mix_of_one_record_equals_that_record(records):
    d, walk, _, _ = records
    m = load_mix(_mix(d, '[[duty]]\nrecord = "walk.h5"\nhours_per_day = 3.0\n'))
    spec = usage_spectra(m)["fl_knee"]
    ref = usage_spectra(resolve_usage(walk))["fl_knee"]
    for p in (3.0, 10 / 3):
        assert equivalent_torque_nm(spec, p) == pytest.approx(equivalent_torque_nm(ref, p),
                                                              rel=1e-12)
    assert mean_abs_speed_rad_s(spec) == pytest.approx(mean_abs_speed_rad_s(ref), rel=1e-12)
    assert rms_torque_nm(spec) == pytest.approx(rms_torque_nm(ref), rel=1e-12)
    assert spec.peak_torque_nm == ref.peak_torque_nm
    assert spec.duration_s == pytest.approx(3 * 3600.0, rel=1e-12)
    assert spec.time_s.sum() == pytest.approx(3 * 3600.0, rel=1e-9)


def test_hours_scale_exactly(records):
    d, *_ = records
    a = usage_spectra(load_mix(_mix(d, '[[duty]]\nrecord = "walk.h5"\nhours_per_day = 2.0\n'
                                       '[[duty]]\nrecord = "stand.h5"\nhours_per_day = 1.0\n')))
    b = usage_spectra(load_mix(_mix(d, '[[duty]]\nrecord = "walk.h5"\nhours_per_day = 4.0\n'
                                       '[[duty]]\nrecord = "stand.h5"\nhours_per_day = 2.0\n',
                                    "m2.toml")))
    sa, sb = a["fl_knee"], b["fl_knee"]
    np.testing.assert_allclose(sb.time_s, 2 * sa.time_s, rtol=1e-12)
    np.testing.assert_allclose(sb.revolutions, 2 * sa.revolutions, rtol=1e-12)
    assert sb.duration_s == pytest.approx(2 * sa.duration_s, rel=1e-12)
    assert equivalent_torque_nm(sb, 3) == pytest.approx(equivalent_torque_nm(sa, 3), rel=1e-12)


def test_two_duties_mix_by_time(records):
    # time-weighted RMS of two duties: sqrt((h1 rms1^2 + h2 rms2^2) / (h1 + h2))
    d, walk, _, _ = records
    m = load_mix(_mix(d, '[[duty]]\nrecord = "walk.h5"\nhours_per_day = 1.5\n'
                         '[[duty]]\nrecord = "stand.h5"\nhours_per_day = 4.5\n'))
    s = usage_spectra(m)["fl_knee"]
    rw = rms_torque_nm(usage_spectra(resolve_usage(walk))["fl_knee"])
    assert rms_torque_nm(s) == pytest.approx(np.sqrt((1.5 * rw**2 + 4.5 * 25.0) / 6.0),
                                             rel=1e-12)
    assert m.use_hours_per_day == pytest.approx(6.0)


def test_shares_and_events(records):
    d, *_ = records
    m = load_mix(_mix(d, 'hours_per_day = 8.0\n'
                         '[[duty]]\nrecord = "walk.h5"\nshare = 0.25\nname = "walk"\n'
                         '[[duty]]\nrecord = "stand.h5"\nshare = 0.75\n'
                         '[[event]]\nname = "stand_up"\nper_day = 20\nrecord = "up.h5"\n'
                         '[[event]]\nname = "fall"\nper_day = 0.1\n'))
    hours = {e.name: e.hours_per_day for e in m.entries}
    assert hours["walk"] == pytest.approx(2.0) and hours["stand"] == pytest.approx(6.0)
    assert hours["stand_up"] == pytest.approx(20 * 0.1 / 3600)
    assert m.events_per_day == {"stand_up": 20.0, "fall": 0.1}
    s = usage_spectra(m)["fl_knee"]
    assert s.peak_torque_nm == pytest.approx(30.0 * 0.099 / 0.1)  # from the stand-up record
    # the stand-up adds 20 x its revolutions: 20 x 0.1 s x 4 rad/s / 2 pi
    walk_only = usage_spectra(load_mix(_mix(d, '[[duty]]\nrecord = "walk.h5"\nhours_per_day = 2.0'
                                               '\n', "w.toml")))["fl_knee"]
    assert s.revolutions.sum() - walk_only.revolutions.sum() == pytest.approx(
        20 * 0.1 * 4 / (2 * np.pi), rel=1e-9)


@pytest.mark.parametrize("text, key, match", [
    ("", "duty", "empty"),
    ('[[event]]\nname = "x"\nper_day = 3\n', "duty", "empty"),
    ('[[duty]]\nrecord = "walk.h5"\nhours_per_day = -1.0\n', "duty[0].hours_per_day", ">= 0"),
    ('[[duty]]\nrecord = "walk.h5"\nhours_per_dya = 1.0\n', "duty[0].hours_per_dya", "unknown"),
    ('[[duty]]\nrecord = "walk.h5"\n', "duty[0]", "exactly one"),
    ('[[duty]]\nrecord = "walk.h5"\nhours_per_day = 1.0\nshare = 0.5\n', "duty[0]", "exactly"),
    ('[[duty]]\nrecord = "walk.h5"\nshare = 0.5\n', "hours_per_day", "top-level"),
    ('hours_per_day = 8.0\n[[duty]]\nrecord = "walk.h5"\nshare = 0.5\n', "duty", "adding up"),
    ('[[duty]]\nrecord = "nope.h5"\nhours_per_day = 1.0\n', "duty[0].record", "no such file"),
    ('[[duty]]\nrecord = "walk.h5"\nhours_per_day = 0.0\n', "hours_per_day", "some hours"),
    ('[[duty]]\nrecord = "walk.h5"\nhours_per_day = 20.0\n[[duty]]\nrecord = "stand.h5"\n'
     'hours_per_day = 5.0\n', "hours_per_day", "at most 24"),
    ('[[event]]\nname = "x"\nper_day = -2\nrecord = "up.h5"\n', "event[0].per_day", ">= 0"),
])
def test_bad_mix_files_name_file_and_key(records, text, key, match):
    d, *_ = records
    p = _mix(d, text, "bad.toml")
    with pytest.raises(InputError, match=match) as exc:
        load_mix(p)
    assert exc.value.key == key and exc.value.file == str(p)


def test_missing_mix_file(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        resolve_usage(tmp_path / "none.toml")
