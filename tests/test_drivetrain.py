"""Drivetrain files, demo parts and the materials table (strict reading, clear errors)."""

from __future__ import annotations

from pathlib import Path

import pytest

from sim import JOINT_NAMES
from sim.checks.belt import BeltDrive
from sim.checks.cycloid import CycloidStage
from sim.checks.drivetrain_file import load_drivetrain
from sim.checks.materials import MATERIALS_FILE, load_materials
from sim.checks.planetary import PlanetaryStage
from sim.core.errors import InputError

MODELS = Path(__file__).resolve().parent.parent / "models"
PARTS = MODELS / "parts"

RATED = """
kind = "rated"
ratio = 10.0
efficiency_forward = 0.9
efficiency_back = 0.8
input_inertia_kg_m2 = 1e-5
rated_torque_nm = 20.0
rated_speed_rad_s = 2.0
rated_life_h = 6000.0
momentary_peak_torque_nm = 60.0
"""


def write(tmp: Path, text: str, name: str = "dt.toml") -> Path:
    p = tmp / name
    p.write_text(text)
    return p


def test_demo_drivetrain_matches_the_demo_ratios():
    dt = load_drivetrain(MODELS / "drivetrain_demo.toml")
    assert set(dt.joints) == set(JOINT_NAMES) and dt.unassigned == ()
    for leg in ("fl", "fr", "hl", "hr"):
        assert isinstance(dt.joints[f"{leg}_abad"].reducer, PlanetaryStage)
        assert isinstance(dt.joints[f"{leg}_hip"].reducer, CycloidStage)
        assert isinstance(dt.joints[f"{leg}_knee"].reducer, BeltDrive)
    assert dt.joints["fl_abad"].reducer.ratio == 7.0
    assert dt.joints["fl_hip"].reducer.ratio == 11.0
    assert dt.joints["fl_knee"].reducer.ratio == pytest.approx(9.0)
    assert Path(dt.joints["fl_knee"].motor_source).name == "motor_demo.toml"
    assert dt.supply is not None and dt.supply["bus_voltage_v"] == 24.0
    # one part object shared by every joint that names the same file
    assert dt.joints["fl_knee"].reducer is dt.joints["hr_knee"].reducer


def test_every_demo_part_says_it_is_invented():
    for p in [*PARTS.glob("reducer_*.toml"), MODELS / "drivetrain_demo.toml"]:
        assert "invented for the demo" in p.read_text().lower(), p


def test_later_entries_win_and_motor_paths(tmp_path):
    write(tmp_path, RATED, "r1.toml")
    write(tmp_path, RATED.replace("ratio = 10.0", "ratio = 12.0"), "r2.toml")
    write(tmp_path, (PARTS / "motor_demo.toml").read_text(), "m.toml")
    dt = load_drivetrain(write(tmp_path, """
[[joint]]
match = "*"
reducer = "r1.toml"
[[joint]]
match = "fl_knee"
reducer = "r2.toml"
[[joint]]
match = "*_knee"
motor = "m.toml"
current_limit_a = 20.0
[supply]
bus_voltage_v = 24.0
current_limit_a = 30.0
inverter_efficiency = 0.95
regeneration_absorbed = true
"""))
    assert dt.joints["fl_knee"].reducer.ratio == 12.0
    assert dt.joints["fr_knee"].reducer.ratio == 10.0
    assert Path(dt.joints["fl_knee"].motor_source).resolve() == (tmp_path / "m.toml").resolve()
    assert dt.joints["fl_hip"].motor is None and dt.joints["fl_hip"].motor_source is None
    assert dt.joints["fl_knee"].current_limit_a == 20.0  # the joint's own limit
    assert dt.supply is not None and dt.supply["bus_voltage_v"] == 24.0


def test_unassigned_joints_are_listed(tmp_path):
    write(tmp_path, RATED, "r.toml")
    dt = load_drivetrain(write(tmp_path, '[[joint]]\nmatch = "fl_*"\nreducer = "r.toml"\n'))
    assert set(dt.joints) == {"fl_abad", "fl_hip", "fl_knee"}
    assert len(dt.unassigned) == 9


@pytest.mark.parametrize(("text", "key"), [
    ('[[joint]]\nmatch = "*_elbow"\nreducer = "r.toml"\n', "joint[0].match"),
    ('[[joint]]\nmatch = "*_knee"\nreducer = "missing.toml"\n', "joint[0].reducer"),
    ('[[joint]]\nmatch = "*_knee"\nmotor = "missing.toml"\n', "joint[0].motor"),
    ('[[joint]]\nmatch = "*_knee"\nreduser = "r.toml"\n', "joint[0].reduser"),
    ('[[joint]]\nmatch = "*_knee"\n', "joint[0]"),
    ('[[joint]]\nmatch = "*_knee"\nreducer = "r.toml"\n[suply]\n', "suply"),
])
def test_bad_drivetrain_names_file_and_key(tmp_path, text, key):
    write(tmp_path, RATED, "r.toml")
    path = write(tmp_path, text)
    with pytest.raises(InputError) as info:
        load_drivetrain(path)
    assert info.value.key == key
    assert info.value.file == str(path)


def test_bad_part_file_names_its_own_file(tmp_path):
    write(tmp_path, RATED.replace("rated_life_h", "rated_lfe_h"), "r.toml")
    with pytest.raises(InputError) as info:
        load_drivetrain(write(tmp_path, '[[joint]]\nmatch = "*"\nreducer = "r.toml"\n'))
    assert info.value.key == "rated_lfe_h"
    assert info.value.file.endswith("r.toml")
    write(tmp_path, RATED.replace('kind = "rated"', 'kind = "harmonic"'), "r.toml")
    with pytest.raises(InputError) as info:
        load_drivetrain(write(tmp_path, '[[joint]]\nmatch = "*"\nreducer = "r.toml"\n'))
    assert info.value.key == "kind"


def test_peak_count_needs_a_threshold(tmp_path):
    write(tmp_path, RATED + "peak_count = 1000\n", "r.toml")
    with pytest.raises(InputError) as info:
        load_drivetrain(write(tmp_path, '[[joint]]\nmatch = "*"\nreducer = "r.toml"\n'))
    assert info.value.key == "repeated_peak_torque_nm"


def test_materials_table_has_a_source_for_every_value():
    mats = load_materials()
    assert {"pla", "petg", "nylon", "steel_1020", "steel_1045", "steel_52100"} <= set(mats)
    for m in mats.values():
        assert len(m.sources) == 5 and all(s.strip() for _, s in m.sources)
        assert 0 < m.poisson_ratio < 0.5


def test_materials_reject_misspelt_key_and_missing_source(tmp_path):
    text = MATERIALS_FILE.read_text()
    bad = write(tmp_path, text.replace("poisson_ratio = { value = 0.36",
                                       "poisson_ration = { value = 0.36"), "m.toml")
    with pytest.raises(InputError) as info:
        load_materials(bad)
    assert info.value.key == "pla.poisson_ration"
    bad = write(tmp_path, '[x]\ndescription = "x"\nyoungs_modulus_pa = { value = 1.0e9 }\n',
                "m2.toml")
    with pytest.raises(InputError) as info:
        load_materials(bad)
    assert info.value.key == "x.youngs_modulus_pa.source"
