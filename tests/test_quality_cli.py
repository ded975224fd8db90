"""The quality screen in the commands: run, loads, check and sweep show it (text and JSON),
a flagged record gets its own line, --strict makes it exit 1, a sweep ranks flagged cases
after the clean ones."""

from __future__ import annotations

import json

import pytest

from sim.commands.cli import main

from .conftest import CHATTER, MODELS, SCENARIOS, TROT

DRIVETRAIN = str(MODELS / "drivetrain_demo.toml")


def _sets(overrides):
    return [a for s in overrides for a in ("--set", s)]


def _flag_lines(text):
    return [line for line in text.splitlines() if line.startswith("QUALITY FLAGGED ")]


def test_run_shows_the_screen_and_strict_exits_1_on_a_chattering_run(tmp_path, capsys):
    args = ["run", str(SCENARIOS / "trot.toml"), *_sets(CHATTER)]
    assert main([*args, "-o", str(tmp_path / "c.h5")]) == 0  # shown, not fatal
    out = capsys.readouterr().out
    assert "quality screen of" in out and "FLAGGED" in out
    assert len(_flag_lines(out)) == 1 and str(tmp_path / "c.h5") in _flag_lines(out)[0]
    assert main([*args, "-o", str(tmp_path / "c2.h5"), "--strict", "--json"]) == 1
    cap = capsys.readouterr()
    doc = json.loads(cap.out)  # stdout is JSON only; the flag line goes to stderr
    assert doc["quality"]["flagged"] is True
    assert doc["quality"]["thresholds"]["high_frequency_share"]["value"] == 0.15
    assert len(_flag_lines(cap.err)) == 1


def test_run_of_the_demo_trot_passes_strict(tmp_path, capsys):
    args = ["run", str(SCENARIOS / "trot.toml"), *_sets(TROT),
            "-o", str(tmp_path / "t.h5"), "--strict", "--json"]
    assert main(args) == 0
    cap = capsys.readouterr()
    assert json.loads(cap.out)["quality"]["flagged"] is False
    assert _flag_lines(cap.err) == []


def test_loads_and_check_show_the_screen_of_each_record(trot_records, capsys):
    good, bad = str(trot_records["dec1"]), str(trot_records["chatter"])
    assert main(["loads", good, "--strict"]) == 0
    assert "quality screen of" in capsys.readouterr().out
    assert main(["loads", good, bad]) == 0
    out = capsys.readouterr().out
    lines = _flag_lines(out)
    assert len(lines) == 1 and bad in lines[0] and good not in lines[0]
    assert main(["loads", good, bad, "--json", "--strict"]) == 1
    cap = capsys.readouterr()
    q = json.loads(cap.out)["quality"]
    assert [r["flagged"] for r in q["records"]] == [False, True]
    assert len(_flag_lines(cap.err)) == 1
    code = main(["check", bad, "--drivetrain", DRIVETRAIN, "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["quality"]["flagged"] is True
    # without --strict a flagged record changes no exit code: 1 exactly when a verdict fails
    failed = any(s["verdict"] != "pass" for j in doc["joints"].values() for s in j.values())
    assert code == (1 if failed else 0)
    assert main(["check", good, "--drivetrain", DRIVETRAIN, "--strict"]) == 0
    out = capsys.readouterr().out
    assert "quality screen of" in out and _flag_lines(out) == []
    assert main(["check", bad, "--drivetrain", DRIVETRAIN, "--strict"]) == 1
    assert len(_flag_lines(capsys.readouterr().out)) == 1


@pytest.fixture(scope="module")
def chatter_sweep(tmp_path_factory):
    d = tmp_path_factory.mktemp("qsweep")
    path = d / "sweep.toml"
    # a modest knee damping (3) and one past the explicit step's alternation limit (18,
    # tests/conftest.py CHATTER); ranked
    # by the largest knee peak, so the chattering case (peaks at the clamp) would win unscreened
    path.write_text(
        f'scenario = "{SCENARIOS / "trot.toml"}"\nset = {json.dumps(TROT)}\n'
        'metrics = ["run.joints.*_knee.peak_torque_nm:max"]\n'
        '[rank]\nmetric = "run.joints.*_knee.peak_torque_nm:max"\ngoal = "max"\n'
        '[[param]]\nkey = "control.kd_nm_s_rad.knee"\nvalues = [3.0, 18.0]\n')
    return path, d / "out"


def test_a_sweep_ranks_the_flagged_case_after_the_clean_one(chatter_sweep, capsys):
    path, out = chatter_sweep
    assert main(["sweep", str(path), "-o", str(out), "--workers", "1", "--no-plots",
                 "--json"]) == 0
    cap = capsys.readouterr()
    doc = json.loads(cap.out)
    rows = doc["cases"]
    assert [r["case"] for r in rows] == [0, 1]  # the clean case first although its peak is lower
    assert rows[0]["rank"] == 1 and rows[0]["quality"] == ""
    assert rows[1]["rank"] == 2 and rows[1]["quality"].startswith("flagged: chatter")
    by_case = {r["case"]: r for r in rows}
    assert (by_case[1]["run.joints.*_knee.peak_torque_nm:max"]
            > by_case[0]["run.joints.*_knee.peak_torque_nm:max"])
    assert doc["winner"]["case"] == 0 and doc["winner"]["flagged"] is False
    assert doc["n_flagged"] == 1
    assert len(_flag_lines(cap.err)) == 1
    # the table marks it; --strict exits 1 (the cases are reused, not run again)
    assert main(["sweep", str(path), "-o", str(out), "--no-plots", "--strict"]) == 1
    text = capsys.readouterr().out
    assert "* flagged by the quality screen" in text
    assert len(_flag_lines(text)) == 1
    csv_text = (out / "results.csv").read_text()
    assert "quality" in csv_text.splitlines()[0] and "flagged: chatter" in csv_text
