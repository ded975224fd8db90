"""One actuator definition: the part files feed both the simulation and the checks.

Outside references: the torque at the driver current limit is I_max Kt N (DC-equivalent
motor model, e.g. Hughes & Drury, Electric Motors and Drives; from memory) with
Kt = 60 / (2 pi kV) N m/A for a kV in rpm per volt of line-to-line peak back-EMF (Krishnan,
Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010; from memory); the inertia at
the joint is N^2 (J_rotor + J_in) + J_out (reflected inertia through a gear, Shigley's
Mechanical Engineering Design; from memory). Everything else checks that two stages agree.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import h5py
import pytest

from sim import JOINT_NAMES
from sim.checks.drivetrain_check import check_drivetrain
from sim.checks.drivetrain_file import load_drivetrain
from sim.checks.motor_part import MOTOR_SPEC, current_limit_torque_nm, load_motor_part
from sim.checks.reducer import RATED_SPEC, load_reducer_part
from sim.checks.supply import load_supply
from sim.commands.cli import main
from sim.core.errors import InputError
from sim.drive.envelope import Envelope
from sim.parts.drivetrain import MOTOR_KEYS, REDUCER_COMMON_SPEC, REDUCER_KIND_KEYS
from sim.robot.model import load_model

from .conftest import MODELS, SCENARIOS

PARTS = MODELS / "parts"


def _kt(kv_rpm_per_v: float) -> float:
    return 60.0 / (2.0 * math.pi * kv_rpm_per_v)


def _quick_copy(tmp: Path, ratio: float, amps: float) -> Path:
    """The quick drivetrain copied with one ratio and one current limit edited in its files."""
    (tmp / "parts").mkdir()
    for name in ("reducer_rated_generic.toml", "motor_quick.toml"):
        shutil.copy(PARTS / name, tmp / "parts" / name)
    red = tmp / "parts" / "reducer_rated_generic.toml"
    red.write_text(red.read_text().replace("ratio = 10.0", f"ratio = {ratio}"))
    dt = tmp / "dt.toml"
    dt.write_text((MODELS / "drivetrain_quick.toml").read_text().replace(
        "current_limit_a = 20.0", f"current_limit_a = {amps}"))
    return dt


@pytest.mark.parametrize(("ratio", "amps"), [(10.0, 20.0), (12.0, 25.0)])
def test_one_edit_in_a_part_file_reaches_the_clamp_and_the_check(tmp_path, ratio, amps):
    dt = _quick_copy(tmp_path, ratio, amps)
    model = load_model(MODELS / "fennec.toml", {"drivetrain": str(dt)})
    by_hand = amps * _kt(90.0) * ratio  # I_max Kt N, quick motor kV = 90 rpm/V
    for j in JOINT_NAMES:
        act = model.actuators[j]
        assert act.gear_ratio == ratio
        assert act.peak_torque_nm == pytest.approx(by_hand, rel=1e-12)
        # the simulation's clamp at rest is the current limit
        lo, hi = Envelope.of(act).limits(0.0)
        assert float(hi) == pytest.approx(by_hand, rel=1e-12)
        assert float(lo) == pytest.approx(-by_hand, rel=1e-12)
    # ... and the check reads the same files
    chk = load_drivetrain(dt)
    knee = chk.joints["fl_knee"]
    assert knee.reducer.ratio == ratio
    supply = load_supply(dict(chk.supply), chk.file)
    assert current_limit_torque_nm(knee.motor, supply) * knee.reducer.ratio == pytest.approx(
        by_hand, rel=1e-12)


def test_simulated_values_equal_the_check_parts_for_every_shipped_part():
    # the simulation's constants and the check's part objects come from the same tables
    for dt_file in ("drivetrain_demo.toml", "drivetrain_quick.toml"):
        model = load_model(MODELS / "fennec.toml", {"drivetrain": str(MODELS / dt_file)})
        chk = load_drivetrain(MODELS / dt_file)
        for j in JOINT_NAMES:
            act, jd = model.actuators[j], chk.joints[j]
            red, mot = jd.reducer, jd.motor
            assert act.gear_ratio == pytest.approx(red.ratio, rel=1e-12)
            assert act.torque_constant_nm_a == pytest.approx(mot.back_emf_v_s_per_rad,
                                                             rel=1e-12)
            assert 2 * act.phase_resistance_ohm == pytest.approx(
                float(mot.line_resistance_ohm(20.0)), rel=1e-12)
            assert act.efficiency_forward == red.efficiency_forward
            assert act.efficiency_back == red.efficiency_back
            # N^2 (J_rotor + J_in) + J_out, by hand from the part files
            assert act.reflected_inertia_kg_m2 == pytest.approx(
                red.ratio ** 2 * (mot.rotor_inertia_kg_m2 + red.input_inertia_kg_m2)
                + red.output_inertia_kg_m2, rel=1e-12)
            assert act.friction_coulomb_nm == pytest.approx(
                red.output_friction_torque_nm + red.ratio * red.input_drag_torque_nm)


def test_the_part_key_lists_match_the_check_specs():
    # a key the check knows but the simulation's key screen does not (or the reverse) would
    # refuse a good file before a run, or let a misspelt one through
    assert set(MOTOR_KEYS) == set(MOTOR_SPEC)
    assert set(REDUCER_COMMON_SPEC) | set(REDUCER_KIND_KEYS["rated"]) == set(RATED_SPEC)


def test_the_demo_parts_load_in_both_stages():
    for p in PARTS.glob("reducer_*.toml"):
        assert load_reducer_part(p).ratio > 1
    for p in PARTS.glob("motor_*.toml"):
        assert load_motor_part(p).back_emf_v_s_per_rad > 0


# --- a record and its drivetrain -----------------------------------------------------------

@pytest.fixture(scope="module")
def stand_record(tmp_path_factory):
    d = tmp_path_factory.mktemp("parts")
    out = d / "stand.h5"
    assert main(["run", str(SCENARIOS / "stand.toml"), "-o", str(out), "--json",
                 "--set", "segment.0.duration_s=1.5", "--set", "record.start_s=1.0"]) == 0
    return out


def test_the_record_stores_the_resolved_drivetrain_and_what_it_left_out(stand_record):
    with h5py.File(stand_record) as f:
        text = f.attrs["drivetrain_toml"]
        notes = [str(n) for n in f.attrs["drive_notes"]]
    assert "reducer_knee_belt" in text and "speed_constant_rpm_per_v" in text
    assert any("backlash" in n and "not simulated" in n for n in notes)
    assert any("motor drag" in n for n in notes)


def test_check_uses_the_records_drivetrain_by_default(stand_record, capsys):
    res = check_drivetrain(stand_record)
    assert res.report.what_if == ()
    assert set(res.report.joints) == set(JOINT_NAMES)


def _edited_demo(tmp: Path, old: str, new: str, part: str | None = None) -> Path:
    shutil.copytree(PARTS, tmp / "parts")
    dt = tmp / "dt.toml"
    text = (MODELS / "drivetrain_demo.toml").read_text()
    if part is None:
        text = text.replace(old, new)
    else:
        p = tmp / "parts" / part
        p.write_text(p.read_text().replace(old, new))
    dt.write_text(text)
    return dt


def test_a_mismatched_drivetrain_exits_2_naming_both_values(stand_record, tmp_path, capsys):
    # the hip cycloid with one more pin and lobe: 12:1 against the 11:1 simulated
    dt = _edited_demo(tmp_path, "ring_pins = 12\nlobes = 11", "ring_pins = 13\nlobes = 12",
                      "reducer_hip_cycloid.toml")
    dt.write_text(dt.read_text())
    (tmp_path / "parts" / "reducer_hip_cycloid.toml").write_text(
        (tmp_path / "parts" / "reducer_hip_cycloid.toml").read_text().replace(
            "ratio = 11.0", "ratio = 12.0"))
    code = main(["check", str(stand_record), "--drivetrain", str(dt)])
    cap = capsys.readouterr()
    assert code == 2
    assert cap.out == ""
    err = cap.err.strip()
    assert len(err.splitlines()) == 1
    for frag in (str(dt), "gear_ratio", "simulated with, 11", "checked: 12", "--what-if"):
        assert frag in err, (frag, err)


def test_a_current_limit_mismatch_is_refused_too(stand_record, tmp_path, capsys):
    dt = _edited_demo(tmp_path, "current_limit_a = 30.0", "current_limit_a = 25.0")
    assert main(["check", str(stand_record), "--drivetrain", str(dt), "--json"]) == 2
    err = capsys.readouterr().err
    assert "current_limit_a" in err and "30" in err and "25" in err


def test_the_what_if_option_labels_every_output(stand_record, tmp_path, capsys):
    dt = _edited_demo(tmp_path, "current_limit_a = 30.0", "current_limit_a = 25.0")
    plots = tmp_path / "plots"
    code = main(["check", str(stand_record), "--drivetrain", str(dt), "--what-if",
                 "--plot", str(plots)])
    out = capsys.readouterr().out
    assert code in (0, 1)
    assert out.startswith("WHAT-IF") and "not re-simulated" in out.lower()
    assert "fl_knee current_limit_a: simulated 30, checked 25" in out
    assert "(WHAT-IF: duty not re-simulated)" in out.splitlines()[-1]
    main(["check", str(stand_record), "--drivetrain", str(dt), "--what-if", "--json"])
    cap = capsys.readouterr()
    doc = json.loads(cap.out)
    diffs = doc["what_if"]["differences"]
    assert {d["key"] for d in diffs} == {"current_limit_a"} and len(diffs) == 12
    assert all(d["simulated"] == 30.0 and d["checked"] == 25.0 for d in diffs)
    assert "WHAT-IF" in cap.err
    # the figures carry the banner: the SVG as text, the PNGs by their pixels differing
    assert "WHAT-IF" in (plots / "reducer_utilisation.svg").read_text()
    plain = tmp_path / "plain"
    assert main(["check", str(stand_record), "--plot", str(plain)]) in (0, 1)
    capsys.readouterr()
    assert "WHAT-IF" not in (plain / "reducer_utilisation.svg").read_text()
    assert (plots / "bus_current.png").read_bytes() != (plain / "bus_current.png").read_bytes()


def test_what_if_needs_a_drivetrain(stand_record, capsys):
    assert main(["check", str(stand_record), "--what-if"]) == 2
    assert "--what-if" in capsys.readouterr().err


def test_a_quick_motor_is_simulated_but_its_heating_is_said_unchecked(tmp_path, capsys):
    out = tmp_path / "q.h5"
    assert main(["run", str(SCENARIOS / "stand.toml"), "-o", str(out), "--json",
                 "--set", f"robot.drivetrain={MODELS / 'drivetrain_quick.toml'}",
                 "--set", "segment.0.duration_s=1.2", "--set", "record.start_s=1.0"]) == 0
    capsys.readouterr()
    res = check_drivetrain(out)
    assert all("motor" not in secs for secs in res.report.joints.values())
    assert any("not checked" in n and "thermal" in n for n in res.report.not_modelled)


def test_part_overrides_name_the_part_file_in_errors():
    with pytest.raises(InputError) as err:
        load_model(MODELS / "fennec.toml", {"parts.fl_knee.motor.rotor_inertia_kg_m2": -1.0})
    assert err.value.file.endswith("motor_demo.toml")
    assert err.value.key == "rotor_inertia_kg_m2"
    one = load_model(MODELS / "fennec.toml", {"parts.fl_knee.motor.rotor_inertia_kg_m2": 1e-4})
    assert one.actuators["fl_knee"].rotor_inertia_kg_m2 == pytest.approx(1e-4 + 3e-6 + 2e-5 / 81)
    assert one.actuators["fr_knee"].rotor_inertia_kg_m2 == pytest.approx(6.5e-5 + 3e-6
                                                                         + 2e-5 / 81)
