"""The ``gaitload loads`` command, called through ``sim.commands.cli.main``."""

from __future__ import annotations

import json

import h5py
import numpy as np
import pytest

from sim.commands.cli import main
from sim.loads.damage import cycle_matrix_edges
from sim.loads.mix import resolve_usage
from sim.loads.rainflow import extract_cycles
from sim.loads.spectra import equivalent_torque_nm, usage_spectra
from sim.record import open_record
from tests.loads_records import write_record


@pytest.fixture(scope="module")
def rec(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli")
    return write_record(d / "trot.h5", 1.0, 0.001,
                        {"fl_knee": lambda t: 8 + 6 * np.sin(2 * np.pi * 3 * t),
                         "hr_hip": lambda t: 2 * np.cos(2 * np.pi * 3 * t)},
                        {"fl_knee": lambda t: 4 * np.cos(2 * np.pi * 3 * t),
                         "hr_hip": lambda t: 0 * t + 0.05},
                        contact={"fl": lambda t: (np.sin(2 * np.pi * 3 * t) > 0).astype(int),
                                 "hr": lambda t: (np.cos(2 * np.pi * 3 * t) > 0).astype(int)})


def _json(capsys, argv):
    code = main(argv)
    out = capsys.readouterr()
    return code, json.loads(out.out) if code == 0 else None, out.err


def test_json_has_the_issue_keys_and_library_values(rec, capsys):
    code, d, _ = _json(capsys, ["loads", str(rec), "--json", "--exponent", "3",
                                "--exponent", "3.333", "--exponent", "10/3"])
    assert code == 0
    j = d["joints"]["fl_knee"]
    for k in ("peak_torque_nm", "rms_torque_nm", "mean_abs_speed_rad_s", "hours"):
        assert isinstance(j[k], float)
    assert list(j["equivalent_torque_nm"]) == ["3", "3.333", "10/3"]  # keys as written
    spec = usage_spectra(resolve_usage(rec))["fl_knee"]
    assert j["equivalent_torque_nm"]["10/3"] == equivalent_torque_nm(spec, 10 / 3)
    assert j["hours"] == pytest.approx(1.0 / 3600)
    assert j["sources"]["rainflow"] == "series" and j["sources"]["peak_torque_nm"] == "histogram"
    assert j["phases"]["stance"]["time_s"] + j["phases"]["swing"]["time_s"] == pytest.approx(1.0)
    # hr_hip turns at 0.05 rad/s under 2 N m: held (heats the motor, no bearing wear)
    assert d["joints"]["hr_hip"]["hold"]["time_s"] > 0.3
    assert any("half cycles" in n for n in d["notes"])
    assert any("take precedence" in n for n in d["notes"])


def test_default_exponents_and_joint_pattern(rec, capsys):
    code, d, _ = _json(capsys, ["loads", str(rec), "--json", "--joints", "*_knee"])
    assert code == 0 and list(d["joints"]) == ["fl_knee"]
    assert list(d["joints"]["fl_knee"]["equivalent_torque_nm"]) == ["3", "3.333"]


def test_sn_curve_gives_damage_and_life(rec, capsys):
    code, d, _ = _json(capsys, ["loads", str(rec), "--json", "--sn", "12", "1e6", "5"])
    rf = d["joints"]["fl_knee"]["rainflow"]
    assert code == 0
    # by hand: ASTM E1049 rainflow of the recorded series by the reference library `rainflow`
    # (PyPI, 3.x; half cycles count 0.5) and Basquin N = 1e6 (12 / S)^5, Palmgren-Miner
    # D = sum n / N; a lone record stands for one day
    import rainflow as ref

    with open_record(rec) as r:
        series = r.read("joints/fl_knee/torque_nm")
    hand = sum(n * (s / 12.0) ** 5 / 1e6 for s, n in ref.count_cycles(series))
    assert hand > 2e-6  # three 12 N m cycles and the half cycles at the ends
    assert rf["damage_per_day"] == pytest.approx(hand, rel=1e-6)
    assert rf["life_days"] == pytest.approx(1 / hand, rel=1e-6)


def test_csv_and_plots_written_and_bit_identical(rec, tmp_path, capsys):
    outs = []
    for k in range(2):
        c, p = tmp_path / f"csv{k}", tmp_path / f"png{k}"
        assert main(["loads", str(rec), "--csv", str(c), "--plot", str(p)]) == 0
        outs.append((c, p))
    text = capsys.readouterr().out
    assert "fl_knee" in text and "wrote" in text
    names = sorted(f.name for f in outs[0][0].iterdir())
    assert names == ["fl_knee.csv", "fl_knee_rainflow.csv", "hr_hip.csv", "hr_hip_rainflow.csv",
                     "summary.csv"]
    pngs = sorted(f.name for f in outs[0][1].iterdir())
    assert "fl_knee_time_at_level.png" in pngs and "fl_knee_rainflow.png" in pngs
    for a, b in ((outs[0][0], outs[1][0]), (outs[0][1], outs[1][1])):
        for f in a.iterdir():
            assert f.read_bytes() == (b / f.name).read_bytes()
    rows = (outs[0][0] / "fl_knee.csv").read_text().splitlines()
    assert rows[0].startswith("torque_lo_nm,torque_hi_nm")
    total = sum(float(r.split(",")[4]) for r in rows[1:])
    assert total == pytest.approx(1.0)


def test_mix_option(rec, tmp_path, capsys):
    m = tmp_path / "mix.toml"
    m.write_text(f'[[duty]]\nrecord = "{rec}"\nhours_per_day = 2.5\n')
    code, d, _ = _json(capsys, ["loads", "--mix", str(m), "--json"])
    assert code == 0 and d["joints"]["fl_knee"]["hours"] == pytest.approx(2.5)
    assert d["mix"]["daily"] is True


def _bad_version(tmp_path, rec):
    p = tmp_path / "v9.h5"
    p.write_bytes(rec.read_bytes())
    with h5py.File(p, "r+") as f:
        f.attrs["format_version"] = 9
    return p


@pytest.mark.parametrize("case, match", [
    ("version", "format version 1"),
    ("failed", "completed run"),
    ("empty", "empty"),
    ("negative", ">= 0"),
    ("pattern", "--joints"),
    ("missing", "no such file"),
    ("missing_mix", "no such file"),
    ("nothing", "at least one run record"),
])
def test_bad_input_exits_2_with_message_and_writes_nothing(rec, tmp_path, capsys, case, match):
    csv_dir = tmp_path / "out"
    argv = ["loads", "--csv", str(csv_dir)]
    if case == "version":
        argv.append(str(_bad_version(tmp_path, rec)))
    elif case == "failed":
        argv.append(str(write_record(tmp_path / "fell.h5", 0.2, 0.001, {}, status="fell")))
    elif case in ("empty", "negative"):
        m = tmp_path / "m.toml"
        m.write_text("" if case == "empty"
                     else f'[[duty]]\nrecord = "{rec}"\nhours_per_day = -2.0\n')
        argv += ["--mix", str(m)]
    elif case == "pattern":
        argv += [str(rec), "--joints", "*_ankle"]
    elif case == "missing":
        argv.append(str(tmp_path / "none.h5"))
    elif case == "missing_mix":
        argv += ["--mix", str(tmp_path / "none.toml")]
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2
    assert match in err and "gaitload loads: error:" in err
    assert not csv_dir.exists()


def test_failed_run_read_with_allow_failed(tmp_path, capsys):
    p = write_record(tmp_path / "fell.h5", 0.2, 0.001, {"fl_knee": lambda t: 0 * t + 1.0},
                     status="fell")
    code, d, _ = _json(capsys, ["loads", str(p), "--json", "--allow-failed"])
    assert code == 0 and d["joints"]["fl_knee"]["peak_torque_nm"] == 1.0


def test_histogram_only_record_reported_as_such(tmp_path, capsys):
    p = write_record(tmp_path / "h.h5", 0.2, 0.001, {"fl_knee": lambda t: 0 * t + 1.0},
                     series=False)
    assert main(["loads", str(p)]) == 0
    out = capsys.readouterr().out
    assert "histograms only" in out and "rainflow=unavailable" in out


def test_rainflow_csv_is_the_matrix_of_the_whole_series(rec, tmp_path):
    # the CSV's cycle matrix (counted in a second pass, chunk by chunk) equals the matrix of
    # the whole series' cycle list (extract_cycles, checked against rainflow 3.2.0) on 20 x 20
    # bins spanning the cycles; CSV floats are written with repr, so they read back exactly
    assert main(["loads", str(rec), "--csv", str(tmp_path / "c")]) == 0
    with open_record(rec) as r:
        c = extract_cycles(r.series("fl_knee", "torque_nm"))
    re_, me = cycle_matrix_edges(c.range.max(), c.mean.min(), c.mean.max(), 20)
    m = c.matrix(re_, me)
    want = [[re_[a], re_[a + 1], me[b], me[b + 1], m[a, b]] for a, b in zip(*np.nonzero(m > 0),
                                                                           strict=True)]
    rows = (tmp_path / "c" / "fl_knee_rainflow.csv").read_text().splitlines()
    assert rows[0] == "range_lo_nm,range_hi_nm,mean_lo_nm,mean_hi_nm,cycles"
    assert [[float(v) for v in r.split(",")] for r in rows[1:]] == want
    assert sum(w[-1] for w in want) == c.total > 0
