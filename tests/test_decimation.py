"""Every-step figures do not depend on ``record.decimation``: the duty series are kept every
step (``/steps``) when the other series are decimated, and a decimated record without them
(format 1) is refused with exit 2 and what to do."""

from __future__ import annotations

import json
import shutil

import h5py
import pytest

from sim.commands.cli import main

from .conftest import MODELS

DRIVETRAIN = str(MODELS / "drivetrain_demo.toml")


def _json(capsys, argv):
    code = main(argv)
    doc = json.loads(capsys.readouterr().out)
    # exit 1 exactly when a check verdict fails (loads has no verdicts: always 0)
    failed = any(s.get("verdict", "pass") != "pass" for j in doc.get("joints", {}).values()
                 for s in j.values() if isinstance(s, dict))
    assert code == (1 if failed and argv[0] == "check" else 0)
    return doc


def test_rainflow_damage_and_peaks_are_the_same_at_decimation_1_and_10(trot_records, capsys):
    # before the duty series were kept every step, this trot at decimation 10 gave 29 instead
    # of 762 knee cycles, 28 % less damage, a 19 % lower motor peak and a 32 % lower battery
    # peak; now the same steps are read, so the figures agree exactly
    loads = [_json(capsys, ["loads", str(trot_records[k]), "--json", "--sn", "20", "1e6", "5"])
             for k in ("dec1", "dec10")]
    checks = [_json(capsys, ["check", str(trot_records[k]), "--drivetrain", DRIVETRAIN,
                             "--json"]) for k in ("dec1", "dec10")]
    for j, a in loads[0]["joints"].items():
        b = loads[1]["joints"][j]
        assert a["rainflow"]["cycles"] > 50
        assert b["rainflow"] == a["rainflow"]
        assert b["exceedances"] == a["exceedances"]
        assert b["hold"] == a["hold"]
    for j, a in checks[0]["joints"].items():
        b = checks[1]["joints"][j]
        for key in ("peak_torque_nm", "winding_peak_c", "rms_torque_nm", "outside_envelope_s"):
            assert b["motor"][key] == pytest.approx(a["motor"][key], rel=1e-12), (j, key)
        # momentary-peak events and the reducer's figures
        assert b["reducer"] == a["reducer"]
    for key in ("peak_current_a", "rms_current_a", "peak_regen_current_a", "energy_wh_per_h"):
        assert checks[1]["supply"][key] == pytest.approx(checks[0]["supply"][key], rel=1e-12)


def test_a_decimated_record_without_every_step_series_is_refused(trot_records, tmp_path,
                                                                 capsys):
    old = tmp_path / "old_decimated.h5"
    shutil.copyfile(trot_records["dec10"], old)
    with h5py.File(old, "r+") as f:  # as a format 1 record had it: no /steps
        f.attrs["format_version"] = 1
        del f["steps"]
    for argv in (["loads", str(old), "--json"],
                 ["check", str(old), "--drivetrain", DRIVETRAIN, "--json"]):
        assert main(argv) == 2
        captured = capsys.readouterr()
        assert captured.out == ""
        err = captured.err
        assert str(old) in err and "record.decimation = 10" in err
        assert "re-run the scenario" in err
