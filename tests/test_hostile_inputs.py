"""Every bad input handled: a table of hostile and mistaken inputs over every input kind.

Each case runs a command in-process (``main([...])``) and must give exit code 2, one message
on stderr naming the file or option, the key and what was expected, no traceback, and no new
file anywhere under the test's folder (temporary files included). The cases are distinct
mistakes: unit slips, NaN and infinity in scalars and lists, integers beyond 64 bits, wrong
types, unknown keys, missing items, unwritable output paths, and run records crafted by
someone else (missing or mistyped items, hostile names, links into other files).
This is gaitload's own input contract (README, "Commands"); no outside oracle applies.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sim.commands.cli import main

from .conftest import MODELS, SCENARIOS


def sub(text: str, old: str, new: str) -> str:
    assert text.count(old) >= 1, old
    return text.replace(old, new, 1)


# the model names its drivetrain relative to itself: point it at the shipped one
MODEL_TEXT = sub((MODELS / "fennec.toml").read_text(), 'drivetrain = "drivetrain_demo.toml"',
                 f'drivetrain = "{MODELS / "drivetrain_demo.toml"}"')
SCEN_TEXT = (SCENARIOS / "stand.toml").read_text().replace(
    'robot = "../models/fennec.toml"', 'robot = "robot.toml"')
DRIVETRAIN_TEXT = (MODELS / "drivetrain_demo.toml").read_text()
PARTS = {p.name: p.read_text() for p in (MODELS / "parts").glob("*.toml")}


@dataclass(frozen=True)
class Case:
    id: str
    build: Callable[[Path, Path], list[str]]  # (folder, a completed record) -> argv
    fragments: tuple[str, ...]


CASES: list[Case] = []


def case(id_: str, *fragments: str):
    def deco(build):
        CASES.append(Case(id_, build, fragments))
        return build
    return deco


# -- model files: `gaitload model robot.toml --urdf out.urdf` -------------------------------
def model_case(id_: str, old: str, new: str, *fragments: str,
               text: str | bytes | None = None) -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        body = text if text is not None else sub(MODEL_TEXT, old, new)
        (tmp / "robot.toml").write_bytes(body if isinstance(body, bytes) else body.encode())
        return ["model", str(tmp / "robot.toml"), "--urdf", str(tmp / "out.urdf")]
    CASES.append(Case("model: " + id_, build, ("robot.toml", *fragments)))


model_case("NaN in a list", "size_m = [0.46,", "size_m = [nan,", "body.size_m[0]", "finite")
model_case("infinity last in a list", "0.22, 0.10]", "0.22, inf]", "body.size_m[2]", "finite")
model_case("box in millimetres", "size_m = [0.46, 0.22, 0.10]", "size_m = [460.0, 220.0, 100.0]",
           "body.size_m[0]", "millimetres")
model_case("list too short", "size_m = [0.46, 0.22, 0.10]", "size_m = [0.46, 0.22]",
           "body.size_m", "list of 3")
model_case("text in a list", "size_m = [0.46,", 'size_m = ["big",', "body.size_m[0]",
           "a list of 3 floats")
model_case("body mass in grams", "mass_kg = 6.5 ", "mass_kg = 6500.0 ", "body.mass_kg", "grams")
model_case("body mass NaN", "mass_kg = 6.5 ", "mass_kg = nan ", "body.mass_kg", "finite")
model_case("body mass infinite", "mass_kg = 6.5 ", "mass_kg = -inf ", "body.mass_kg", "finite")
model_case("thigh in millimetres", "thigh_length_m = 0.22", "thigh_length_m = 220.0",
           "leg.thigh_length_m", "millimetres")
model_case("negative shank", "shank_length_m = 0.22", "shank_length_m = -0.22",
           "leg.shank_length_m", "> 0")
model_case("thigh mass in grams", "thigh_mass_kg = 0.55", "thigh_mass_kg = 550.0",
           "leg.thigh_mass_kg", "grams")
model_case("foot in millimetres", "foot_radius_m = 0.02", "foot_radius_m = 20.0",
           "leg.foot_radius_m", "millimetres")
model_case("hips in millimetres", "x_m = 0.19", "x_m = 190.0", "hips.x_m", "millimetres")
model_case("hip height in millimetres", "hip_height_m = 0.30", "hip_height_m = 300.0",
           "stance.hip_height_m", "millimetres")
model_case("integer beyond 64 bits", "mass_kg = 0.50", "mass_kg = 99999999999999999999999",
           "actuator.abad.mass_kg", "64 bits")
model_case("housing as text", "housing_length_m = 0.045", 'housing_length_m = "short"',
           "actuator.abad.housing_length_m", "a number")
model_case("housing as a boolean", "housing_radius_m = 0.045", "housing_radius_m = true",
           "actuator.abad.housing_radius_m", "a number")
model_case("drivetrain missing", f'drivetrain = "{MODELS / "drivetrain_demo.toml"}"',
           'drivetrain = "none.toml"', "drivetrain", "an existing drivetrain file")
model_case("actuator mass in grams", "mass_kg = 0.50", "mass_kg = 500.0",
           "actuator.abad.mass_kg", "grams")
model_case("joint range in degrees", "knee = [-2.80, -0.30]", "knee = [-160.0, -17.0]",
           "joint_range_rad.knee[0]", "degrees")
model_case("joint range NaN", "hip = [-1.20, 3.00]", "hip = [nan, 3.00]",
           "joint_range_rad.hip[0]", "finite")
model_case("misspelt key", "thigh_length_m = 0.22", "thigh_lenght_m = 0.22",
           "leg.thigh_lenght_m", "known key")
model_case("name not text", 'name = "fennec"', "name = 5", "name", "a string")
model_case("missing stance height", "hip_height_m = 0.30", "", "stance.hip_height_m",
           "present")
model_case("bad choice", 'knee_actuator_at = "hip"', 'knee_actuator_at = "elbow"',
           "leg.knee_actuator_at", "one of")
model_case("per-joint mass negative", "[actuator.knee]", "[actuator.fl_knee]\nmass_kg = -0.5\n"
           "\n[actuator.knee]", "actuator.fl_knee.mass_kg", ">= 0")
model_case("housing in millimetres", "housing_radius_m = 0.045", "housing_radius_m = 45.0",
           "actuator.abad.housing_radius_m", "millimetres")
model_case("stance offset infinite", "foot_x_m = 0.0 ", "foot_x_m = inf ", "stance.foot_x_m",
           "finite")
model_case("description a number",
           'description = "invented demo quadruped, 15.5 kg, knees pointing backward"',
           "description = 1.0", "description", "a string")
model_case("housing absurd", "housing_length_m = 0.045\n\n[actuator.hip]",
           "housing_length_m = 1e300\n\n[actuator.hip]", "actuator.abad.housing_length_m",
           "plausible")
model_case("table where a value goes", "mass_kg = 6.5 ", "mass_kg = {value = 6.5} ",
           "body.mass_kg", "a number")
model_case("a list where text goes", 'name = "fennec"', 'name = ["fennec"]', "name", "a string")
model_case("empty file", "", "", "name", "present", text="")
model_case("not UTF-8", "", "", "UTF-8", text=b"name = \"\xff\"\n")


@case("model: file missing", "nowhere.toml", "no such file")
def _(tmp, rec):
    return ["model", str(tmp / "nowhere.toml")]


# -- scenario files: `gaitload run s.toml -o out.h5` ----------------------------------------
def scen_case(id_: str, old: str, new: str, *fragments: str, extra: tuple[str, ...] = (),
              model: str = MODEL_TEXT, text: str | None = None) -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        (tmp / "robot.toml").write_text(model)
        (tmp / "s.toml").write_text(text if text is not None else sub(SCEN_TEXT, old, new))
        return ["run", str(tmp / "s.toml"), "-o", str(tmp / "out.h5"), *extra]
    CASES.append(Case("scenario: " + id_, build, fragments))


S = ("s.toml",)
scen_case("time step NaN", "time_step_s = 0.001", "time_step_s = nan", *S, "time_step_s", "finite")
scen_case("time step in milliseconds", "time_step_s = 0.001", "time_step_s = 1.0", *S,
          "time_step_s", "<= 0.005")
scen_case("run of 1e9 s", "duration_s = 4.0", "duration_s = 1e9", *S, "segment.0.duration_s",
          "plausible")
scen_case("duration infinite", "duration_s = 4.0", "duration_s = inf", *S,
          "segment[0].duration_s", "finite")
scen_case("negative seed", "seed = 0", "seed = -1", *S, "seed", ">= 0")
scen_case("seed beyond 64 bits", "seed = 0", "seed = 1180591620717411303424", *S, "seed",
          "64 bits")
scen_case("friction NaN", "friction = 0.8", "friction = nan", *S, "ground.friction", "finite")
scen_case("slope in degrees", "slope_rad = 0.0", "slope_rad = 30.0", *S, "ground.slope_rad",
          "<= 0.6")
scen_case("payload in grams", "mass_kg = 0.0 ", "mass_kg = 30000.0 ", *S, "payload.mass_kg",
          "grams")
scen_case("payload position NaN", "mass_kg = 0.0 ", "mass_kg = 0.0\nposition_m = [0.0, nan, 0.0]",
          *S, "payload.position_m[1]", "finite")
scen_case("gain infinite", "[record]", "[control.kp_nm_rad]\nknee = inf\n\n[record]", *S,
          "control.kp_nm_rad.knee", "finite")
scen_case("gain negative", "[record]", "[control.kd_nm_s_rad]\nknee = -3.0\n\n[record]", *S,
          "control.kd_nm_s_rad.knee", ">= 0")
scen_case("update period in milliseconds", "update_period_s = 0.002", "update_period_s = 2.0",
          *S, "control.update_period_s", "milliseconds")
scen_case("decimation zero", "decimation = 1 ", "decimation = 0 ", *S, "record.decimation",
          ">= 1")
scen_case("decimation fractional", "decimation = 1 ", "decimation = 2.5 ", *S,
          "record.decimation", "an integer")
scen_case("torque bins 1e12", "decimation = 1 ", "decimation = 1\ntorque_bins = 1000000000000\n",
          *S, "record.torque_bins", "plausible")
scen_case("torque bins as a float", "decimation = 1 ", "decimation = 1\ntorque_bins = 1e12\n",
          *S, "record.torque_bins", "an integer")
scen_case("negative start", "start_s = 1.0", "start_s = -1.0", *S, "record.start_s", ">= 0")
scen_case("life exponent NaN", "decimation = 1 ", "decimation = 1\nlife_exponents = [nan]\n",
          *S, "record.life_exponents[0]", "finite")
scen_case("segment without kind", 'kind = "stand"', "", *S, "segment.0.kind", "present")
scen_case("segment duration as text", "duration_s = 4.0", 'duration_s = "4 s"', *S,
          "segment.0.duration_s", "a number")
scen_case("segment name hostile", 'name = "stand"', 'name = "$\\\\x$ =cmd()"', *S,
          "segment.0.name", "label")
scen_case("segment name with a newline", 'name = "stand"', 'name = "a\\nb"', *S,
          "segment.0.name", "label")
scen_case("robot path a number", 'robot = "robot.toml"', "robot = 5", *S, "robot", "a string")
scen_case("robot path a folder", 'robot = "robot.toml"', 'robot = "."', "robot model file",
          "no such file")
scen_case("unknown table", "[ground]", "[grond]", *S, "grond", "known key")
scen_case("contact stiffness absurd", "friction = 0.8", "friction = 0.8\nstiffness_n_m = 1e300",
          *S, "ground.stiffness_n_m", "plausible")
scen_case("tilt limit in degrees", "[record]", "[limits]\nmax_tilt_rad = 50.0\n\n[record]", *S,
          "limits.max_tilt_rad", "degrees")
scen_case("drop height in millimetres", "[record]", "[start]\ndrop_height_m = 200.0\n\n[record]",
          *S, "start.drop_height_m", "<= 2")
scen_case("push force NaN", "[[segment]]", "[[push]]\nstart_s = 0.5\nduration_s = 0.1\n"
          "force_n = [nan, 0.0, 0.0]\n\n[[segment]]", *S, "force_n[0]", "finite")
scen_case("trot far too fast", 'kind = "stand"', 'kind = "trot"\nspeed_m_s = 60.0', *S,
          "speed_m_s", "<= 2")
scen_case("model with NaN through the scenario", "", "", "robot.toml", "body.size_m[0]",
          "finite", model=sub(MODEL_TEXT, "size_m = [0.46,", "size_m = [nan,"), text=SCEN_TEXT)
scen_case("not TOML", "", "", *S, "valid TOML", text="[[segment]\nkind = 1")


@case("scenario: file missing", "none.toml", "no such file")
def _(tmp, rec):
    return ["run", str(tmp / "none.toml"), "-o", str(tmp / "o.h5")]


# -- --set: `gaitload run s.toml -o out.h5 --set ...` ----------------------------------------
def set_case(id_: str, setting: str, *fragments: str) -> None:
    scen_case("--set " + id_, "", "", *fragments, extra=("--set", setting), text=SCEN_TEXT)


set_case("NaN", "ground.friction=nan", "ground.friction", "finite")
set_case("infinity", "ground.friction=inf", "ground.friction", "finite")
set_case("model length in millimetres", "robot.leg.thigh_length_m=220", "robot.toml",
         "leg.thigh_length_m", "millimetres")
set_case("index out of range", "segment.5.duration_s=1", "--set", "segment.5.duration_s",
         "index below")
set_case("empty key", "=3", "--set", "dotted key")
set_case("empty key part", "ground..friction=1", "--set", "dotted key")
set_case("no equals sign", "ground.friction", "--set", "KEY=VALUE")
set_case("list of wrong length", "robot.body.size_m=[1.0, 2.0]", "body.size_m", "list of 3")
set_case("seed beyond 64 bits", "seed=99999999999999999999999", "seed", "64 bits")
set_case("float for an integer", "record.torque_bins=1e12", "record.torque_bins", "an integer")
set_case("actuator mass in grams", "robot.actuator.knee.mass_kg=500",
         "actuator.knee.mass_kg", "grams")
set_case("unknown top key", "grund.x=1", "--set", "grund.x", "scenario key")
set_case("value used as a table", "ground.friction.x=1", "--set", "'friction' to be a table")
set_case("model height -inf", "robot.stance.hip_height_m=-inf", "stance.hip_height_m", "finite")
set_case("text for a number", 'time_step_s="fast"', "time_step_s", "a number")
set_case("payload in grams", "payload.mass_kg=5000", "payload.mass_kg", "grams")
set_case("NaN in a model list", "robot.body.size_m=[0.4, nan, 0.1]", "body.size_m[1]", "finite")


# -- output paths, refused before any simulation --------------------------------------------
def _file(p: Path) -> Path:
    p.write_text("x\n")
    return p


@case("output: run -o is a folder", "-o", "existing folder")
def _(tmp, rec):
    (tmp / "d").mkdir()
    (tmp / "robot.toml").write_text(MODEL_TEXT)
    (tmp / "s.toml").write_text(SCEN_TEXT)
    return ["run", str(tmp / "s.toml"), "-o", str(tmp / "d")]


@case("output: run -o under a file", "-o", "is a file")
def _(tmp, rec):
    (tmp / "robot.toml").write_text(MODEL_TEXT)
    (tmp / "s.toml").write_text(SCEN_TEXT)
    return ["run", str(tmp / "s.toml"), "-o", str(_file(tmp / "f") / "out.h5")]


@case("output: run -o ends with a slash", "-o", "a file name")
def _(tmp, rec):
    (tmp / "robot.toml").write_text(MODEL_TEXT)
    (tmp / "s.toml").write_text(SCEN_TEXT)
    return ["run", str(tmp / "s.toml"), "-o", str(tmp / "new") + "/"]


@case("output: model --urdf is a folder", "--urdf", "existing folder")
def _(tmp, rec):
    (tmp / "d").mkdir()
    return ["model", str(MODELS / "fennec.toml"), "--urdf", str(tmp / "d")]


@case("output: model --urdf deep under a file", "--urdf", "is a file")
def _(tmp, rec):
    return ["model", str(MODELS / "fennec.toml"), "--urdf",
            str(_file(tmp / "f") / "a" / "b" / "r.urdf")]


@case("output: loads --csv is a file", "--csv", "is a file")
def _(tmp, rec):
    return ["loads", str(rec), "--csv", str(_file(tmp / "f.csv"))]


@case("output: loads --plot under a file", "--plot", "is a file")
def _(tmp, rec):
    return ["loads", str(rec), "--plot", str(_file(tmp / "f") / "plots")]


@case("output: check --plot is a file", "--plot", "is a file")
def _(tmp, rec):
    return ["check", str(rec), "--drivetrain", str(MODELS / "drivetrain_demo.toml"), "--plot",
            str(_file(tmp / "f"))]


@case("output: sweep -o is a file", "-o", "is a file")
def _(tmp, rec):
    return ["sweep", str(SCENARIOS / "sweep_ratio.toml"), "-o", str(_file(tmp / "f"))]


@case("output: demo folder is a file", "DIR", "is a file")
def _(tmp, rec):
    return ["demo", str(_file(tmp / "f"))]


# -- command-line options -------------------------------------------------------------------
def option_case(id_: str, args: list[str], *fragments: str, command: str = "loads") -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        if command == "check":
            return ["check", str(rec), "--drivetrain", str(MODELS / "drivetrain_demo.toml"),
                    *args]
        if command == "sweep":
            return ["sweep", str(SCENARIOS / "sweep_ratio.toml"), "-o", str(tmp / "o"), *args]
        return ["loads", str(rec), "--csv", str(tmp / "csv"), *args]
    CASES.append(Case(f"option: {command} {' '.join(args)}", build, fragments))


option_case("hold speed NaN", ["--hold-speed", "nan"], "--hold-speed", "rad/s")
option_case("hold speed negative", ["--hold-speed", "-1"], "--hold-speed", ">= 0")
option_case("hold torque infinite", ["--hold-torque", "inf"], "--hold-torque", "N m")
option_case("level NaN", ["--level", "nan"], "--level", "torque level")
option_case("level absurd", ["--level", "1e300"], "--level", "<= 1e+06")
option_case("S-N range zero", ["--sn", "0", "1e6", "3"], "--sn RANGE_NM", "> 0")
option_case("S-N cycles NaN", ["--sn", "10", "nan", "3"], "--sn CYCLES", "cycles")
option_case("S-N slope absurd", ["--sn", "10", "1e6", "500"], "--sn K", "<= 50")
option_case("S-N cut-off negative", ["--sn-cutoff", "-1"], "--sn-cutoff", ">= 0")
option_case("exponent zero", ["--exponent", "0"], "--exponent", "positive")
option_case("exponent text", ["--exponent", "three"], "--exponent", "positive")
option_case("joints match none", ["--joints", "zz_*"], "--joints", "joint name")
option_case("life zero", ["--required-life-h", "0"], "--required-life-h", "> 0",
            command="check")
option_case("life without a value", ["--required-life-h"], "--required-life-h",
            "expected one argument", command="check")
option_case("life NaN", ["--required-life-h", "nan"], "--required-life-h", "hours",
            command="check")
option_case("life absurd", ["--required-life-h", "1e300"], "--required-life-h", "<= 1e+15",
            command="check")
option_case("safety below 1", ["--safety-factor", "0.5"], "--safety-factor", ">= 1",
            command="check")
option_case("safety infinite", ["--safety-factor", "inf"], "--safety-factor", "safety factor",
            command="check")
option_case("reliability 100", ["--reliability", "100"], "--reliability", "[90, 100)",
            command="check")
option_case("mission negative", ["--mission-h", "-1"], "--mission-h", "> 0", command="check")
option_case("mission absurd", ["--mission-h", "1e300"], "--mission-h", "<= 1e+06",
            command="check")
option_case("workers zero", ["--workers", "0"], "--workers", "at least 1", command="sweep")
option_case("cluster address malformed", ["--cluster", "tcp//sched"], "--cluster",
            "scheduler address", command="sweep")
option_case("cluster port out of range", ["--cluster", "tcp://10.0.0.5:99999"], "--cluster",
            "scheduler address", command="sweep")
option_case("cluster tls without files", ["--cluster", "tls://sched.example:8786"],
            "--cluster", "TLS files", command="sweep")
option_case("cluster tls file missing", ["--cluster", "tls://sched.example:8786",
                                         "--tls-ca-file", "/nonexistent/ca.pem", "--tls-cert",
                                         "/nonexistent/c.pem", "--tls-key", "/nonexistent/k"],
            "--tls-ca-file", "no such file", command="sweep")
option_case("tls files with plain tcp", ["--cluster", "tcp://127.0.0.1:8786", "--tls-ca-file",
                                         str(MODELS / "fennec.toml"), "--tls-cert",
                                         str(MODELS / "fennec.toml"), "--tls-key",
                                         str(MODELS / "fennec.toml")],
            "--cluster", "tls://", command="sweep")
option_case("unknown option", ["--frobnicate"], "unrecognized arguments")
option_case("number expected", ["--hold-speed", "fast"], "--hold-speed", "invalid float")


# -- drivetrain and part files: `gaitload check RECORD --drivetrain dt/drivetrain.toml` ------
def dt_case(id_: str, file: str, old: str, new: str, *fragments: str) -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        d = tmp / "dt"
        (d / "parts").mkdir(parents=True)
        texts = {"drivetrain.toml": DRIVETRAIN_TEXT,
                 **{f"parts/{k}": v for k, v in PARTS.items()}}
        texts[file] = sub(texts[file], old, new)
        for name, text in texts.items():
            (d / name).write_text(text)
        return ["check", str(rec), "--drivetrain", str(d / "drivetrain.toml"), "--plot",
                str(tmp / "plots")]
    CASES.append(Case(f"drivetrain: {id_}", build, (Path(file).name, *fragments)))


DT, MOTOR, BELT = "drivetrain.toml", "parts/motor_demo.toml", "parts/reducer_knee_belt.toml"
dt_case("unknown key", DT, "[supply]", "[suply]", "suply", "known key")
dt_case("pattern matches no joint", DT, 'match = "*_knee"', 'match = "*_elbow"', "*_elbow",
        "joint name")
dt_case("motor file missing", DT, 'motor = "parts/motor_demo.toml"\nreducer = "parts/reducer_knee',
        'motor = "parts/nope.toml"\nreducer = "parts/reducer_knee', "joint[2].motor",
        "an existing part file")
dt_case("bus voltage NaN", DT, "bus_voltage_v = 24.0", "bus_voltage_v = nan",
        "supply.bus_voltage_v", "finite")
dt_case("no cells", DT, "cell_count = 6", "cell_count = 0", "supply.cell_count", ">= 1")
dt_case("inverter efficiency above 1", DT, "inverter_efficiency = 0.95",
        "inverter_efficiency = 1.5", "supply.inverter_efficiency", "<= 1")
dt_case("cell resistance in milliohms", DT, "cell_internal_resistance_ohm = 0.004",
        "cell_internal_resistance_ohm = 40.0", "supply.cell_internal_resistance_ohm",
        "plausible")
dt_case("cell count beyond 64 bits", DT, "cell_count = 6", "cell_count = 99999999999999999999",
        "supply.cell_count", "64 bits")
dt_case("supply current absurd", DT, "current_limit_a = 30.0", "current_limit_a = 1e9",
        "supply.current_limit_a", "plausible")
dt_case("speed constant given as a torque constant", MOTOR, "speed_constant_rpm_per_v = 80.0",
        "speed_constant_rpm_per_v = 0.11937", "speed_constant_rpm_per_v", "N m/A")
dt_case("motor resistance negative", MOTOR, "phase_resistance_ohm_20c = 0.16",
        "phase_resistance_ohm_20c = -0.16", "phase_resistance_ohm_20c", "> 0")
dt_case("motor speed constant NaN", MOTOR, "speed_constant_rpm_per_v = 80.0",
        "speed_constant_rpm_per_v = nan", "speed_constant_rpm_per_v", "finite")
dt_case("ambient -500 C", MOTOR, "ambient_temp_c = 30.0", "ambient_temp_c = -500.0",
        "ambient_temp_c", "absolute zero")
dt_case("ambient in kelvin", MOTOR, "ambient_temp_c = 30.0", "ambient_temp_c = 303.15",
        "ambient_temp_c", "kelvin")
dt_case("rotor inertia as text", MOTOR, "rotor_inertia_kg_m2 = 6.5e-5",
        'rotor_inertia_kg_m2 = "x"', "rotor_inertia_kg_m2", "a number")
dt_case("motor unknown key", MOTOR, "peak_torque_nm = 4.0", "peak_torque_nm = 4.0\npeak = 1",
        "peak", "known key")
dt_case("winding capacity infinite", MOTOR, "thermal_capacity_winding_j_per_k = 45.0",
        "thermal_capacity_winding_j_per_k = inf", "thermal_capacity_winding_j_per_k", "finite")
dt_case("motor peak torque in N mm", MOTOR, "peak_torque_nm = 4.0", "peak_torque_nm = 4e9",
        "peak_torque_nm", "plausible")
dt_case("belt pitch in millimetres", BELT, "pitch_m = 0.005", "pitch_m = 5.0", "pitch_m",
        "millimetres")
dt_case("belt teeth fractional", BELT, "driver_teeth = 15", "driver_teeth = 15.5",
        "driver_teeth", "a whole number")
dt_case("belt efficiency above 1", BELT, "efficiency_forward = 0.90",
        "efficiency_forward = 2.0", "efficiency_forward", "<= 1")
dt_case("belt ratio against teeth", BELT, "ratio = 9.0 ", "ratio = 10.0 ", "ratio", "9")
dt_case("reducer kind unknown", BELT, 'kind = "belt"', 'kind = "chain"', "kind", "one of")
dt_case("backlash in degrees", BELT, "backlash_rad = 0.005", "backlash_rad = 17.0",
        "backlash_rad", "degrees")
dt_case("belt pull NaN", BELT, "rated_pull_n = 1500.0 ", "rated_pull_n = nan ", "rated_pull_n",
        "finite")


@case("drivetrain: file missing", "nope.toml", "no such file")
def _(tmp, rec):
    return ["check", str(rec), "--drivetrain", str(tmp / "nope.toml")]


# -- usage mixes: `gaitload loads --mix mix.toml --csv csv` ----------------------------------
def mix_case(id_: str, body: str, *fragments: str, records: tuple[str, ...] = ()) -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        (tmp / "mix.toml").write_text(body.replace("REC", str(rec)).replace("TMP", str(tmp)))
        return ["loads", *records, "--mix", str(tmp / "mix.toml"), "--csv", str(tmp / "csv")]
    CASES.append(Case(f"mix: {id_}", build, ("mix.toml", *fragments)))


DUTY = '[[duty]]\nrecord = "REC"\n'
mix_case("more than a day", DUTY + "hours_per_day = 25.0\n", "hours_per_day", "<= 24")
mix_case("hours NaN", DUTY + "hours_per_day = nan\n", "duty[0].hours_per_day", "finite")
mix_case("shares not adding up", "hours_per_day = 8.0\n" + DUTY + "share = 0.5\n",
         "duty", "shares adding up to 1")
mix_case("record missing", '[[duty]]\nrecord = "TMP/none.h5"\nhours_per_day = 1.0\n',
         "duty[0].record", "no such file")
mix_case("unknown key", DUTY + "hours_per_day = 1.0\nhour = 2\n", "duty[0].hour", "known key")
mix_case("events negative", DUTY + 'hours_per_day = 1.0\n[[event]]\nname = "up"\nper_day = -1\n',
         "event[0].per_day", ">= 0")
mix_case("event name mathtext", DUTY + 'hours_per_day = 1.0\n[[event]]\nname = "$x$"\n'
         "per_day = 1\n", "event[0].name", "label")
mix_case("duty name a formula", DUTY + 'hours_per_day = 1.0\nname = "=cmd()"\n',
         "duty[0].name", "label")
mix_case("hours and share", DUTY + "hours_per_day = 1.0\nshare = 1.0\n", "duty[0]",
         "exactly one")
mix_case("events infinite", DUTY + 'hours_per_day = 1.0\n[[event]]\nname = "up"\n'
         "per_day = inf\n", "event[0].per_day", "finite")
mix_case("record path a number", "[[duty]]\nrecord = 5\nhours_per_day = 1.0\n",
         "duty[0].record", "a string")
mix_case("empty", "", "duty", "at least one")
mix_case("events per day beyond 64 bits", DUTY + 'hours_per_day = 1.0\n[[event]]\nname = "up"\n'
         "per_day = 99999999999999999999\n", "event[0].per_day", "64 bits")


@case("mix: record is a text file", "x.h5", "HDF5 run record")
def _(tmp, rec):
    (tmp / "x.h5").write_text("not a record\n")
    (tmp / "mix.toml").write_text('[[duty]]\nrecord = "x.h5"\nhours_per_day = 1.0\n')
    return ["loads", "--mix", str(tmp / "mix.toml")]


@case("mix: records and a mix", "--mix", "not both")
def _(tmp, rec):
    (tmp / "mix.toml").write_text(f'[[duty]]\nrecord = "{rec}"\nhours_per_day = 1.0\n')
    return ["loads", str(rec), "--mix", str(tmp / "mix.toml")]


@case("mix: file missing", "none.toml", "no such file")
def _(tmp, rec):
    return ["loads", "--mix", str(tmp / "none.toml")]


# -- sweep files: `gaitload sweep sw.toml -o out` --------------------------------------------
SWEEP = (f'scenario = "{SCENARIOS / "stand.toml"}"\n'
         'metrics = ["run.joints.fl_knee.rms_torque_nm"]\n'
         '[rank]\nmetric = "run.joints.fl_knee.rms_torque_nm"\n'
         '[[param]]\nkey = "payload.mass_kg"\nvalues = [0.0, 1.0]\n')


def sweep_case(id_: str, old: str, new: str, *fragments: str, file: str = "sw.toml") -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        (tmp / "sw.toml").write_text(sub(SWEEP, old, new))
        return ["sweep", str(tmp / "sw.toml"), "-o", str(tmp / "out"), "--workers", "1"]
    CASES.append(Case(f"sweep: {id_}", build, (file, *fragments)))


sweep_case("scenario missing", 'stand.toml"', 'none.toml"', "none.toml", "no such file",
           file="")
sweep_case("unknown parameter key", 'key = "payload.mass_kg"', 'key = "payload.mas_kg"',
           "param.0.key", "a key of the base scenario", "payload.mas_kg")
sweep_case("unknown metric provider", 'metrics = ["run.', 'metrics = ["walk.', "metrics[0]",
           "known provider")
sweep_case("no cases", "values = [0.0, 1.0]", "values = []", "param.0.values", "non-empty")
sweep_case("sample count zero", "[rank]", "[sample]\ncount = 0\n[rank]", "sample.count", ">= 1")
sweep_case("value NaN", "values = [0.0, 1.0]", "values = [nan, 1.0]", "values[0]", "finite")
sweep_case("range start NaN", "values = [0.0, 1.0]", "start = nan\nstop = 1.0\nnum = 2",
           "param[0].start", "finite")
sweep_case("parameter name mathtext", 'key = "payload.mass_kg"',
           'key = "payload.mass_kg"\nname = "$x^$"', "param.0.name", "label")
sweep_case("drivetrain missing", "[rank]", 'drivetrain = "none.toml"\n[rank]', "sw.toml",
           "drivetrain", "an existing drivetrain file")
sweep_case("fixed --set NaN", "[rank]", 'set = ["ground.friction=nan"]\n[rank]',
           "ground.friction", "finite", file="")
sweep_case("unknown top key", "[rank]", "colour = 1\n[rank]", "colour", "known key")
sweep_case("key and keys", 'key = "payload.mass_kg"',
           'key = "payload.mass_kg"\nkeys = ["seed"]', "param.0.key", "not both")
sweep_case("constraint malformed", "[rank]", 'constraints = ["run.joints.fl_knee.rms_torque_nm '
           '<<< 3"]\n[rank]', "constraints[0]", "METRIC <= NUMBER")
sweep_case("num beyond 64 bits", "values = [0.0, 1.0]",
           "start = 0.0\nstop = 1.0\nnum = 99999999999999999999", "num", "64 bits")
sweep_case("every value a unit slip", "values = [0.0, 1.0]", "values = [20000.0, 30000.0]",
           "payload.mass_kg", "grams", file="")


# -- run records made by someone else: `gaitload loads RECORD --csv csv` ---------------------
def record_case(id_: str, mutate: Callable[[h5py.File], None], *fragments: str,
                command: str = "loads") -> None:
    def build(tmp: Path, rec: Path) -> list[str]:
        bad = tmp / "bad.h5"
        shutil.copyfile(rec, bad)
        with h5py.File(bad, "r+") as f:
            mutate(f)
        if command == "check":
            return ["check", str(bad), "--drivetrain", str(MODELS / "drivetrain_demo.toml"),
                    "--plot", str(tmp / "plots")]
        return ["loads", str(bad), "--csv", str(tmp / "csv"), "--plot", str(tmp / "plots")]
    CASES.append(Case(f"record ({command}): {id_}", build, ("bad.h5", *fragments)))


def _only_version(f: h5py.File) -> None:
    for k in list(f):
        del f[k]
    for k in list(f.attrs):
        del f.attrs[k]
    f.attrs["format_version"] = 1


def _set(name: str, value):
    def m(f: h5py.File) -> None:
        f.attrs[name] = value
    return m


def _delete(name: str):
    def m(f: h5py.File) -> None:
        if name.startswith("@"):
            del f.attrs[name[1:]]
        elif "@" in name:
            obj, attr = name.split("@")
            del f[obj].attrs[attr]
        else:
            del f[name]
    return m


def _replace(name: str, data):
    def m(f: h5py.File) -> None:
        del f[name]
        f[name] = data
    return m


def _names(*names: str):
    return _set("joint_names", np.array(names, dtype=h5py.string_dtype()))


def _link(kind: str):
    def m(f: h5py.File) -> None:
        del f["histograms/fl_knee/time_s"]
        f["histograms/fl_knee/time_s"] = (h5py.ExternalLink("/etc/hostname", "/x")
                                          if kind == "external" else h5py.SoftLink("/time_s"))
    return m


def _external_storage(f: h5py.File) -> None:
    shape = f["histograms/fl_knee/time_s"].shape
    del f["histograms/fl_knee/time_s"]
    f.create_dataset("histograms/fl_knee/time_s", shape=shape, dtype="f8",
                     external=[("/etc/hostname", 0, h5py.h5f.UNLIMITED)])


record_case("only format_version = 1 (issue 13)", _only_version, "status", "missing")
record_case("format from the future", _set("format_version", 99), "format_version", "1 or 2")
record_case("format as text", _set("format_version", "two"), "format_version", "integer")
record_case("format missing", _delete("@format_version"), "format_version", "missing")
record_case("joint name climbing out", _names("../../evil", "fl_hip"), "joint_names[0]",
            "lower-case")
record_case("joint name with a slash", _names("fl_knee/x"), "joint_names[0]", "lower-case")
record_case("joint name a formula", _names("=cmd()"), "joint_names[0]", "lower-case")
record_case("joint name with a newline", _names("fl\nknee"), "joint_names[0]", "lower-case")
record_case("joint names repeated", _names("fl_knee", "fl_knee"), "joint_names", "once")
record_case("joint names numbers", _set("joint_names", np.arange(3)), "joint_names", "list")
record_case("joint names missing", _delete("@joint_names"), "joint_names", "missing")
record_case("leg name hostile", _set("leg_names", np.array(["..", "fr"],
                                                            dtype=h5py.string_dtype())),
            "leg_names[0]", "lower-case")
record_case("status unknown", _set("status", "great"), "status", "one of")
record_case("histogram missing", _delete("histograms/fl_knee/time_s"),
            "histograms/fl_knee/time_s", "missing")
record_case("histogram of wrong shape", _replace("histograms/fl_knee/time_s", np.zeros((3, 3))),
            "histograms/fl_knee/time_s", "shape")
record_case("histogram NaN", _replace("histograms/fl_knee/revolutions",
                                      np.full((80, 80), np.nan)),
            "histograms/fl_knee/revolutions", "finite")
record_case("edges decreasing", _replace("histograms/fl_knee/speed_edges_rad_s",
                                         np.linspace(1, -1, 81)),
            "speed_edges_rad_s", "increasing")
record_case("histogram as text", _replace("histograms/fl_knee/time_s",
                                          np.array(["a"] * 3, dtype=h5py.string_dtype())),
            "histograms/fl_knee/time_s", "numeric")
record_case("summary attribute missing", _delete("summary/fl_knee@peak_torque_nm"),
            "summary/fl_knee attribute peak_torque_nm", "missing")
record_case("summary attribute text", lambda f: f["summary/fl_knee"].attrs.__setitem__(
    "rms_torque_nm", "big"), "summary/fl_knee attribute rms_torque_nm", "finite")
record_case("summary group missing", _delete("summary/hr_hip"), "summary/hr_hip", "missing")
record_case("time step NaN", _set("time_step_s", np.nan), "time_step_s", "> 0")
record_case("time step missing", _delete("@time_step_s"), "time_step_s", "missing")
record_case("decimation zero", _set("decimation", 0), "decimation", "integer >= 1")
record_case("series of wrong length", _replace("joints/fl_knee/torque_nm", np.zeros(7)),
            "joints/fl_knee/torque_nm", "shape")
record_case("external link", _link("external"), "histograms/fl_knee/time_s", "ExternalLink")
record_case("soft link", _link("soft"), "histograms/fl_knee/time_s", "SoftLink")
record_case("data in another file", _external_storage, "histograms/fl_knee/time_s",
            "another file")
record_case("load torque unknown", _set("load_torque", "motor_nm"), "load_torque", "one of")
record_case("model TOML broken", _set("model_toml", "[[[bad"), "model_toml", "TOML")
record_case("segment name hostile", _replace("segments/name", np.array(
    ["$\\x$"], dtype=h5py.string_dtype())), "segments/name[0]", "label")
record_case("joint name climbing out", _names("../../evil", "fl_hip"), "joint_names[0]",
            "lower-case", command="check")
record_case("histogram missing", _delete("histograms/fl_hip/time_s"), "histograms/fl_hip",
            "missing", command="check")
record_case("model TOML not text", _set("model_toml", 5), "model_toml", "text",
            command="check")


@case("record: a text file", "x.h5", "HDF5 run record")
def _(tmp, rec):
    (tmp / "x.h5").write_text("hello\n")
    return ["loads", str(tmp / "x.h5"), "--csv", str(tmp / "csv")]


@case("record: an empty file", "x.h5", "HDF5 run record")
def _(tmp, rec):
    (tmp / "x.h5").write_bytes(b"")
    return ["loads", str(tmp / "x.h5")]


@case("record: truncated", "x.h5", "HDF5 run record")
def _(tmp, rec):
    (tmp / "x.h5").write_bytes(rec.read_bytes()[:4096])
    return ["check", str(tmp / "x.h5"), "--drivetrain", str(MODELS / "drivetrain_demo.toml")]


@case("record: a folder", "d.h5", "no such file")
def _(tmp, rec):
    (tmp / "d.h5").mkdir()
    return ["loads", str(tmp / "d.h5")]


# -- the suite ------------------------------------------------------------------------------
def _tree(folder: Path) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*")}


@pytest.mark.parametrize("c", CASES, ids=[c.id for c in CASES])
def test_bad_input_exit_2_one_message_nothing_written(c: Case, tmp_path, stand_record, capsys):
    argv = c.build(tmp_path, stand_record)
    capsys.readouterr()
    before, rec_before = _tree(tmp_path), _tree(stand_record.parent)
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2, (code, err)
    assert "Traceback" not in err and "Traceback" not in out
    lines = [ln for ln in err.strip().splitlines() if ln.strip()]
    assert lines, "no message"
    msg = lines[-1]
    # one message; argparse's own errors come after its usage lines
    assert len(lines) == 1 or (lines[0].startswith("usage:") and all(
        ln.startswith(" ") for ln in lines[1:-1])), err
    for frag in c.fragments:
        assert frag in msg, (frag, msg)
    assert _tree(tmp_path) == before, "output left behind"
    assert _tree(stand_record.parent) == rec_before


def test_the_table_covers_every_input_kind():
    kinds = {c.id.split(":")[0].split(" (")[0] for c in CASES}
    assert kinds >= {"model", "scenario", "output", "option", "drivetrain", "mix", "sweep",
                     "record"}
    assert len(CASES) >= 150


# -- random values and random TOML: exit 0 or 2, never a traceback --------------------------
TOML_VALUES = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr).map(
        lambda s: {"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(s, s)),
    st.integers(min_value=-(2**80), max_value=2**80).map(str),
    st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=12).map(
        lambda s: '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
        .replace("\r", "\\r").replace("\t", "\\t") + '"'),
    st.booleans().map(lambda b: "true" if b else "false"),
    st.lists(st.floats(allow_nan=True, allow_infinity=True, width=32), max_size=4).map(
        lambda xs: "[" + ", ".join({"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(
            repr(x), repr(x)) for x in xs) + "]"),
)
MODEL_KEYS = [("body", "mass_kg = 6.5 "), ("leg", "thigh_length_m = 0.22"),
              ("body", "size_m = [0.46, 0.22, 0.10]"), ("stance", "hip_height_m = 0.30"),
              ("actuator", "mass_kg = 0.50"), ("actuator", "housing_radius_m = 0.045"),
              ("joint_range_rad", "knee = [-2.80, -0.30]")]


def _replace_value(text: str, line: str, value: str) -> str:
    key = line.split("=")[0]
    return sub(text, line, f"{key}= {value} ")


def _quiet_main(argv: list[str], capsys) -> int:
    code = main(argv)
    capsys.readouterr()
    return code


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(which=st.sampled_from(MODEL_KEYS), value=TOML_VALUES)
def test_random_model_values_never_give_a_traceback(tmp_path, capsys, which, value):
    (tmp_path / "r.toml").write_text(_replace_value(MODEL_TEXT, which[1], value))
    assert _quiet_main(["model", str(tmp_path / "r.toml"), "--json"], capsys) in (0, 2)


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=st.text(alphabet="[]=.\"' \nabcdefghijklmnopqrstuvwxyz_0123456789-+",
                    max_size=120))
def test_random_toml_to_every_loader_never_gives_a_traceback(tmp_path, capsys, stand_record,
                                                             text):
    f = tmp_path / "x.toml"
    f.write_text(text)
    runs = [["model", str(f)],
            ["run", str(f), "-o", str(tmp_path / "o.h5")],
            ["loads", "--mix", str(f)],
            ["check", str(stand_record), "--drivetrain", str(f)],
            ["sweep", str(f), "-o", str(tmp_path / "sw")]]
    for argv in runs:
        # a random text that happens to be a valid scenario or sweep would run: none is, as
        # every loader needs keys the alphabet cannot spell together (exit 2 each)
        assert _quiet_main(argv, capsys) == 2, argv
    assert {p.name for p in tmp_path.iterdir()} == {"x.toml"}


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(key=st.sampled_from(["ground.friction", "payload.mass_kg", "segment.0.duration_s",
                            "record.torque_bins", "robot.leg.shank_length_m",
                            "robot.actuator.knee.current_limit_a", "seed"]),
       value=TOML_VALUES)
def test_random_set_values_are_refused_or_accepted_never_a_traceback(tmp_path, capsys, key,
                                                                      value):
    from sim.core.errors import InputError
    from sim.scenario.scenario_file import load_scenario

    try:
        load_scenario(SCENARIOS / "stand.toml", [f"{key}={value}"])
    except InputError as exc:
        assert exc.key or exc.file
