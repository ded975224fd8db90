"""``gaitload check``: exit codes, JSON shape, table, plots, bad input, report extension."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from sim.checks.drivetrain_check import build_report
from sim.checks.drivetrain_file import load_drivetrain
from sim.checks.duty_input import load_duties
from sim.checks.reducer import CheckSettings
from sim.checks.report import Section, add_section, exit_code, to_json_dict
from sim.commands.cli import main
from tests.synthetic import write_synthetic_record

DEMO = str(Path(__file__).resolve().parent.parent / "models" / "drivetrain_demo.toml")
LEGS = ("fl", "fr", "hl", "hr")


def trot_like(path: Path, knee_peak_nm: float = 18.0) -> Path:
    amp = knee_peak_nm - 10.0
    tq, sp = {}, {}
    for leg in LEGS:
        tq[f"{leg}_knee"] = lambda t: 10 + amp * np.sin(2 * np.pi * 2 * t)
        sp[f"{leg}_knee"] = lambda t: 8 * np.cos(2 * np.pi * 2 * t)
        tq[f"{leg}_hip"] = lambda t: 5 * np.sin(2 * np.pi * 2 * t)
        sp[f"{leg}_hip"] = lambda t: 6 * np.cos(2 * np.pi * 2 * t)
        tq[f"{leg}_abad"] = 2.0
        sp[f"{leg}_abad"] = lambda t: np.cos(2 * np.pi * 2 * t)
    return write_synthetic_record(path, 0.5, 0.002, torque_nm=tq, speed_rad_s=sp)


@pytest.fixture(scope="module")
def record(tmp_path_factory) -> Path:
    return trot_like(tmp_path_factory.mktemp("rec") / "trot.h5")


def test_demo_passes_with_table_and_cautions(record, capsys):
    assert main(["check", str(record), "--drivetrain", DEMO]) == 0
    out = capsys.readouterr().out
    assert "fl_knee" in out and "belt stage 2 pull" in out
    assert "estimates" in out and "take precedence" in out and "Not modelled" in out


def test_json_only_and_its_shape(record, capsys):
    assert main(["check", str(record), "--drivetrain", DEMO, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)  # stdout is JSON and nothing else
    assert set(data["joints"]) == {f"{leg}_{k}" for leg in LEGS for k in ("abad", "hip", "knee")}
    red = data["joints"]["fl_knee"]["reducer"]
    for key in ("life_h", "peak_torque_ratio", "governing", "verdict", "damage_per_h",
                "backdrive_torque_nm", "reflected_inertia_kg_m2", "limits"):
        assert key in red
    assert red["verdict"] == "pass" and red["life_h"] is None  # belt: no life model -> null
    hip = data["joints"]["fl_hip"]["reducer"]
    assert hip["ratio"] == 11.0 and hip["life_h"] > 0
    assert hip["peak_torque_nm"] == pytest.approx(5.0, rel=1e-3)
    assert hip["peak_torque_ratio"] == pytest.approx(
        hip["peak_torque_nm"] / hip["allowable_peak_torque_nm"], rel=1e-12)
    assert data["cautions"] and data["not_modelled"]


def test_any_failing_joint_gives_exit_1(tmp_path, capsys):
    rec = trot_like(tmp_path / "hard.h5", knee_peak_nm=60.0)
    assert main(["check", str(rec), "--drivetrain", DEMO, "--json"]) == 1
    data = json.loads(capsys.readouterr().out)
    assert data["joints"]["fl_knee"]["reducer"]["verdict"] == "fail"
    assert data["joints"]["fl_hip"]["reducer"]["verdict"] == "pass"
    assert data["verdict"] == "fail"


def test_required_life_can_fail_a_joint(record, capsys):
    assert main(["check", str(record), "--drivetrain", DEMO, "--json",
                 "--required-life-h", "1e12"]) == 1
    data = json.loads(capsys.readouterr().out)
    assert data["joints"]["fl_hip"]["reducer"]["governing"] == "eccentric bearing L10"


def test_plots_and_profiles_are_reproducible(record, tmp_path, capsys):
    a, b = tmp_path / "a", tmp_path / "b"
    assert main(["check", str(record), "--drivetrain", DEMO, "--plot", str(a)]) == 0
    assert main(["check", str(record), "--drivetrain", DEMO, "--plot", str(b)]) == 0
    names = sorted(p.name for p in a.iterdir())
    assert {"reducer_hip_cycloid_disc_profile.csv", "reducer_hip_cycloid_disc_profile.svg",
            "reducer_utilisation.svg", "winding_temperature.png", "bus_current.png",
            "motor_envelope_fl_knee.png"} <= set(names)
    for n in names:
        assert (a / n).read_bytes() == (b / n).read_bytes()


@pytest.mark.parametrize("case", ["missing_drivetrain", "misspelt", "failed_run", "mix",
                                  "bad_factor", "missing_record"])
def test_bad_input_exit_2_and_nothing_written(case, record, tmp_path, capsys):
    dt = DEMO
    duty = str(record)
    extra: list[str] = []
    if case == "missing_drivetrain":
        dt = str(tmp_path / "nope.toml")
    elif case == "misspelt":
        p = tmp_path / "dt.toml"
        p.write_text(Path(DEMO).read_text().replace("reducer =", "reduser =", 1))
        dt = str(p)
        (tmp_path / "parts").symlink_to(Path(DEMO).parent / "parts")
    elif case == "failed_run":
        duty = str(write_synthetic_record(tmp_path / "fell.h5", 0.1, 0.01, status="fell"))
    elif case == "mix":
        duty = str(tmp_path / "usage.toml")
        Path(duty).write_text("")
    elif case == "bad_factor":
        extra = ["--safety-factor", "0.5"]
    elif case == "missing_record":
        duty = str(tmp_path / "none.h5")
    out_dir = tmp_path / "plots"
    assert main(["check", duty, "--drivetrain", dt, "--plot", str(out_dir), *extra]) == 2
    cap = capsys.readouterr()
    assert "error" in cap.err and cap.out == ""
    assert not out_dir.exists()
    if case == "misspelt":
        assert "reduser" in cap.err and "dt.toml" in cap.err


PEAK_PART = """# invented for a test
kind = "rated"
ratio = 10.0
efficiency_forward = 0.9
efficiency_back = 0.8
input_inertia_kg_m2 = 1e-5
rated_torque_nm = 10.0
rated_speed_rad_s = 2.0
rated_life_h = 6000.0
momentary_peak_torque_nm = 30.0
peak_count = 1000
repeated_peak_torque_nm = 15.0
"""


def _pulses(per_s: int):
    """20 N m pulses (50 ms) ``per_s`` times a second on a 5 N m base."""
    return lambda t: np.where((t % (1 / per_s)) < 0.05, 20.0, 5.0)


def test_peak_events_of_a_mix_are_weighted_like_its_spectra(tmp_path):
    # Miner's rule over a day of use (hand calculation): 2 h/day of a 1 s record with 3
    # events, 1 h/day of a record with none -> 3 * 7200 events in 3 h = 7200 events per hour
    (tmp_path / "r.toml").write_text(PEAK_PART)
    dt = tmp_path / "dt.toml"
    dt.write_text('[[joint]]\nmatch = "fl_knee"\nreducer = "r.toml"\n')
    write_synthetic_record(tmp_path / "p.h5", 1.0, 0.001, torque_nm={"fl_knee": _pulses(3)},
                           speed_rad_s={"fl_knee": 1.0})
    write_synthetic_record(tmp_path / "q.h5", 1.0, 0.001, torque_nm={"fl_knee": 5.0},
                           speed_rad_s={"fl_knee": 1.0})
    mix = tmp_path / "m.toml"
    mix.write_text('[[duty]]\nrecord = "p.h5"\nhours_per_day = 2.0\n'
                   '[[duty]]\nrecord = "q.h5"\nhours_per_day = 1.0\n')
    drive = load_drivetrain(dt)
    duties = load_duties(mix, list(drive.joints))
    assert duties["fl_knee"].count_events(15.0) == pytest.approx(3 * 7200.0, rel=1e-12)
    lim = build_report(drive, duties, CheckSettings()).joints["fl_knee"]["reducer"].limits[0]
    assert lim.detail["peak_events_per_h"] == pytest.approx(7200.0, rel=1e-12)
    # a mix of the pulse record alone gives that record's own rate (3 per second)
    one = tmp_path / "one.toml"
    one.write_text('[[duty]]\nrecord = "p.h5"\nhours_per_day = 5.0\n')
    lim1 = build_report(drive, load_duties(one, list(drive.joints)),
                        CheckSettings()).joints["fl_knee"]["reducer"].limits[0]
    assert lim1.detail["peak_events_per_h"] == pytest.approx(3 * 3600.0, rel=1e-12)


def test_peak_events_follow_the_reducer_output_torque(tmp_path):
    # when rotors or losses were simulated the load is gearbox_torque_nm (root attribute
    # load_torque): 5 pulses a second there against 3 in the motor-side torque_nm
    import h5py

    (tmp_path / "r.toml").write_text(PEAK_PART)
    dt = tmp_path / "dt.toml"
    dt.write_text('[[joint]]\nmatch = "fl_knee"\nreducer = "r.toml"\n')
    rec = write_synthetic_record(tmp_path / "g.h5", 1.0, 0.001,
                                 torque_nm={"fl_knee": _pulses(3)},
                                 speed_rad_s={"fl_knee": 1.0})
    with h5py.File(rec, "a") as f:
        t = f["time_s"][()]
        f["joints/fl_knee/gearbox_torque_nm"] = _pulses(5)(t)
        f.attrs["load_torque"] = "gearbox_torque_nm"
    duties = load_duties(rec, list(load_drivetrain(dt).joints))
    assert duties["fl_knee"].count_events(15.0) == 5


def test_peak_events_counted_from_the_record(tmp_path):
    # three 20 N m pulses above a 15 N m threshold in 1 s; rated part allows 1000 events
    (tmp_path / "r.toml").write_text(PEAK_PART)
    dt = tmp_path / "dt.toml"
    dt.write_text('[[joint]]\nmatch = "fl_knee"\nreducer = "r.toml"\n')
    rec = write_synthetic_record(tmp_path / "p.h5", 1.0, 0.001, torque_nm={"fl_knee": _pulses(3)},
                                 speed_rad_s={"fl_knee": 1.0})
    drive = load_drivetrain(dt)
    duties = load_duties(rec, list(drive.joints))
    assert duties["fl_knee"].count_events(15.0) == 3
    report = build_report(drive, duties, CheckSettings())
    lim = report.joints["fl_knee"]["reducer"].limits[0]
    assert lim.detail["peak_events_per_h"] == pytest.approx(3 * 3600.0)
    # Miner: 10 800 events per hour against 1000 permitted dominate the damage
    assert lim.life_h == pytest.approx(1.0 / (1 / lim.detail["fatigue_life_h"] + 10.8),
                                       rel=1e-9)


def test_another_section_joins_the_same_json(record):
    drive = load_drivetrain(DEMO)
    report = build_report(drive, load_duties(record, list(drive.joints)), CheckSettings())
    motor = Section("motor", "fail", "winding temperature", {"winding_temp_c": 160.0})
    report = add_section(report, "fl_knee", motor)
    data = to_json_dict(report)
    assert set(data["joints"]["fl_knee"]) == {"reducer", "motor"}
    assert data["joints"]["fl_knee"]["motor"]["winding_temp_c"] == 160.0
    assert exit_code(report) == 1


def test_mix_check_has_reducer_motor_and_supply_sections(record, tmp_path, capsys):
    # the documented JSON shape of the combined check over a usage mix of one record
    mix = tmp_path / "usage.toml"
    mix.write_text(f"""# a test mix: the record stands for two hours of use per day
[[duty]]
name = "trot"
record = "{record}"
hours_per_day = 2.0
""")
    code = main(["check", str(mix), "--drivetrain", DEMO, "--json"])
    doc = json.loads(capsys.readouterr().out)
    # exit 1 exactly when a verdict fails (the demo drivetrain passes this record)
    failed = any(s["verdict"] != "pass" for j in doc["joints"].values() for s in j.values())
    assert code == (1 if failed else 0)
    assert code == 0
    knee = doc["joints"]["fl_knee"]
    assert {"life_h", "peak_torque_ratio", "governing", "verdict"} <= set(knee["reducer"])
    assert {"winding_peak_c", "rms_torque_ratio", "outside_envelope_s", "verdict"} <= set(
        knee["motor"])
    assert {"peak_current_a", "rms_current_a", "energy_wh_per_h", "cost_of_transport"} <= set(
        doc["supply"])
    # the same record given directly: motor temperatures do not depend on hours per day
    main(["check", str(record), "--drivetrain", DEMO, "--json"])
    single = json.loads(capsys.readouterr().out)
    assert single["joints"]["fl_knee"]["motor"]["winding_peak_c"] == pytest.approx(
        knee["motor"]["winding_peak_c"], rel=1e-9)
    # reducer life in hours of use is the same; a mix only rescales the day. The knee's belt
    # has no life model (null in both); the hip's cycloid bearing life is compared
    assert single["joints"]["fl_knee"]["reducer"]["life_h"] is None
    assert knee["reducer"]["life_h"] is None
    a = single["joints"]["fl_hip"]["reducer"]["life_h"]
    b = doc["joints"]["fl_hip"]["reducer"]["life_h"]
    assert a is not None and a > 0
    assert b == pytest.approx(a, rel=1e-6)
