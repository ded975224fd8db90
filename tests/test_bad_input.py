"""Bad model and scenario files: one clear message naming file, key and expectation; exit 2;
no output file. (Strict validation is our own contract; each case is a distinct mistake.)"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sim.commands.cli import main

from .conftest import MODELS, SCENARIOS

MODEL_TEXT = (MODELS / "fennec.toml").read_text().replace(
    'drivetrain = "drivetrain_demo.toml"', f'drivetrain = "{MODELS / "drivetrain_demo.toml"}"')
SCEN_TEXT = (SCENARIOS / "stand.toml").read_text().replace(
    'robot = "../models/fennec.toml"', 'robot = "robot.toml"')


def _setup(tmp: Path, model: str = MODEL_TEXT, scen: str = SCEN_TEXT) -> Path:
    (tmp / "robot.toml").write_text(model)
    (tmp / "s.toml").write_text(scen)
    return tmp / "s.toml"


def _sub(text: str, pattern: str, repl: str) -> str:
    out, n = re.subn(pattern, repl, text, count=1, flags=re.M)
    assert n == 1, pattern
    return out


CASES = [
    # (id, model text, scenario text, extra args, expected fragments of the message)
    ("unknown model key", _sub(MODEL_TEXT, r"^mass_kg = 6.5", "mass_kgs = 6.5"), SCEN_TEXT, [],
     ["robot.toml", "body.mass_kgs", "known key"]),
    ("wrong type", _sub(MODEL_TEXT, r"^thigh_length_m = 0.22", 'thigh_length_m = "long"'),
     SCEN_TEXT, [], ["robot.toml", "leg.thigh_length_m", "a number"]),
    ("negative mass", _sub(MODEL_TEXT, r"^shank_mass_kg = 0.15", "shank_mass_kg = -0.15"),
     SCEN_TEXT, [], ["robot.toml", "leg.shank_mass_kg", "> 0"]),
    ("legs too short", _sub(MODEL_TEXT, r"^hip_height_m = 0.30", "hip_height_m = 0.50"),
     SCEN_TEXT, [], ["robot.toml", "stance.hip_height_m", "reach"]),
    ("bad knee direction", _sub(MODEL_TEXT, r'^front_knee = "backward"', 'front_knee = "up"'),
     SCEN_TEXT, [], ["robot.toml", "leg.front_knee", "'backward'"]),
    ("reversed joint range", _sub(MODEL_TEXT, r"^knee = \[-2.80, -0.30\]", "knee = [-0.3, -2.8]"),
     SCEN_TEXT, [], ["robot.toml", "joint_range_rad.knee", "lower < upper"]),
    ("missing actuator kind", MODEL_TEXT.split("[actuator.knee]")[0], SCEN_TEXT, [],
     ["robot.toml", "actuator.knee", "every joint kind"]),
    ("unknown actuator joint", MODEL_TEXT + "\n[actuator.xx_knee]\nmass_kg = 5.0\n", SCEN_TEXT,
     [], ["robot.toml", "actuator.xx_knee", "joint name"]),
    ("a part value in the model", MODEL_TEXT.replace("[actuator.knee]\n",
                                                     "[actuator.knee]\ngear_ratio = 9.0\n"),
     SCEN_TEXT, [], ["robot.toml", "actuator.knee.gear_ratio", "moved to the reducer part"]),
    ("missing drivetrain file", MODEL_TEXT.replace(str(MODELS / "drivetrain_demo.toml"),
                                                   "nowhere.toml"), SCEN_TEXT, [],
     ["robot.toml", "drivetrain", "existing drivetrain file"]),
    ("--set part value out of range", MODEL_TEXT, SCEN_TEXT,
     ["--set", "robot.parts.knee.reducer.efficiency_forward=1.5"],
     ["reducer_knee_belt.toml", "efficiency_forward", "<= 1"]),
    ("--set misspelt part key", MODEL_TEXT, SCEN_TEXT,
     ["--set", "robot.parts.knee.reducer.efficency_back=0.5"],
     ["reducer_knee_belt.toml", "efficency_back", "known key"]),
    ("--set part of no joint", MODEL_TEXT, SCEN_TEXT,
     ["--set", "robot.parts.elbow.reducer.ratio=5"],
     ["--set", "robot.parts.elbow.reducer.ratio", "joint kind"]),
    ("--set self-locking reducer", MODEL_TEXT, SCEN_TEXT,
     ["--set", "robot.parts.knee.reducer.efficiency_back=0.0"],
     ["reducer_knee_belt.toml", "efficiency_back", "at least 0.05"]),
    ("malformed TOML", MODEL_TEXT.replace("[body]", "[body"), SCEN_TEXT, [],
     ["robot.toml", "valid TOML"]),
    ("missing robot file", MODEL_TEXT, SCEN_TEXT.replace('"robot.toml"', '"nowhere.toml"'), [],
     ["nowhere.toml", "no such file"]),
    ("unknown scenario key", MODEL_TEXT, _sub(SCEN_TEXT, r"^seed = 0", "sead = 0"), [],
     ["s.toml", "sead", "known key"]),
    ("time step out of range", MODEL_TEXT, _sub(SCEN_TEXT, r"^time_step_s = 0.001",
                                                "time_step_s = 0.1"), [],
     ["s.toml", "time_step_s", "<= 0.005"]),
    ("unknown segment kind", MODEL_TEXT, SCEN_TEXT.replace('kind = "stand"', 'kind = "dance"'),
     [], ["s.toml", "segment.0.kind", "one of"]),
    ("no segments", MODEL_TEXT, SCEN_TEXT.split("[[segment]]")[0], [],
     ["s.toml", "segment", "present"]),
    ("duplicate table", MODEL_TEXT, SCEN_TEXT + "\n[payload]\nmass_kg = 1.0\n", [],
     ["s.toml", "valid TOML"]),
    ("bad --set syntax", MODEL_TEXT, SCEN_TEXT, ["--set", "ground.friction"],
     ["--set", "KEY=VALUE"]),
    ("--set unknown top key", MODEL_TEXT, SCEN_TEXT, ["--set", "grund.friction=0.5"],
     ["--set", "grund.friction", "scenario key"]),
    ("--set model value out of range", MODEL_TEXT, SCEN_TEXT,
     ["--set", "robot.actuator.knee.mass_kg=-0.5"],
     ["robot.toml", "actuator.knee.mass_kg", ">= 0"]),
]


@pytest.mark.parametrize("name,model,scen,extra,fragments", CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_refused_clearly(tmp_path, capsys, name, model, scen, extra, fragments):
    path = _setup(tmp_path, model, scen)
    out = tmp_path / "out.h5"
    code = main(["run", str(path), "-o", str(out), *extra])
    err = capsys.readouterr().err
    assert code == 2, err
    for frag in fragments:
        assert frag in err, (frag, err)
    assert len(err.strip().splitlines()) == 1  # one clear message
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["robot.toml", "s.toml"]


def test_missing_scenario_file(tmp_path, capsys):
    assert main(["run", str(tmp_path / "none.toml"), "-o", str(tmp_path / "o.h5")]) == 2
    assert "none.toml" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_model_command_writes_urdf_and_refuses_bad_model(tmp_path, capsys):
    urdf = tmp_path / "r.urdf"
    assert main(["model", str(MODELS / "fennec.toml"), "--urdf", str(urdf)]) == 0
    assert urdf.read_text().startswith("<?xml")
    bad = tmp_path / "bad.toml"
    bad.write_text(MODEL_TEXT.replace("name = \"fennec\"\n", ""))
    assert main(["model", str(bad), "--urdf", str(tmp_path / "b.urdf")]) == 2
    assert "'name'" in capsys.readouterr().err
    assert not (tmp_path / "b.urdf").exists()
