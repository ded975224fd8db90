"""Scenario files (``scenarios/*.toml``): what to simulate, on which ground, how to record.

A scenario names a robot model file, the time step, the ground, an optional payload, the
controller gains, fall limits, recording options and a list of ``[[segment]]`` tables that run
one after another into one record (a single stand, or a mission such as stand up, walk, trot,
sit down). Segment keys other than ``kind`` and ``duration_s`` belong to the segment's kind and
are validated by :mod:`sim.scenario.segments`.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim import JOINT_KINDS
from sim.core.config import Field, dump_toml, load_toml, parse_override, set_dotted, validate
from sim.core.errors import InputError
from sim.core.paths import label_problem
from sim.robot.model import RobotModel, model_from_data

POS: dict[str, Any] = {"min": 0.0, "min_inclusive": False}

WRITTEN_KP, WRITTEN_KD = 150.0, 3.0  # the written gains' defaults, N m/rad and N m s/rad

SEGMENT_KINDS = ("stand", "stand_up", "sit_down", "walk", "trot", "lie", "jump", "bound",
                 "pronk")

SCENARIO_SPEC: dict[str, Any] = {
    "description": Field(str, "free text", default=""),
    "robot": Field(str, "robot model file, relative to this scenario file", required=True),
    "time_step_s": Field(float, "fixed simulation step", default=0.001, min=1e-5, max=0.005),
    "seed": Field(int, "seed for any randomness in the scenario", default=0, min=0),
    "ground": {
        "friction": Field(float, "Coulomb friction coefficient foot-ground", default=0.8,
                          min=0.05, max=3.0),
        "slope_rad": Field(float, "ground slope, rising along +x (uphill when walking forward)",
                           default=0.0, min=-0.6, max=0.6),
        "stiffness_n_m": Field(float, "contact stiffness per foot; 0 = the engine's rigid "
                               "contact; left out = rigid, or with pad = true a foot pad "
                               "derived from the robot's weight (foot_pad_n_m)", min=0.0),
        "pad": Field(bool, "a foot pad derived from the robot's weight where stiffness_n_m is "
                     "left out", default=False),
        "damping_n_s_m": Field(float, "contact damping per foot (with stiffness); left out "
                               "with the stiffness = derived", min=0.0),
        "restitution": Field(float, "coefficient of restitution", default=0.0, min=0.0, max=1.0),
    },
    "drive": {
        "rotor_inertia": Field(str, "motor rotors: 'off' (rigid joints), 'approximate' (N^2 J_r "
                               "added to the child link) or 'exact' (geared rotor links, "
                               "about 1.6 x the run time)",
                               default="off", choices=("off", "approximate", "exact")),
        "losses": Field(bool, "simulate the reducer friction and efficiency of the "
                        "drivetrain's reducer parts", default=True),
        "efficiency_band_rad_s": Field(float, "speed band around rest over which the forward "
                                       "and back-driven efficiency are blended", default=0.01,
                                       min=0.0, min_inclusive=False),
    },
    "start": {
        "drop_height_m": Field(float, "feet start this far above the ground (a drop)",
                               default=0.0, min=0.0, max=2.0),
    },
    "payload": {
        "mass_kg": Field(float, "payload fixed to the body; 0 = none", default=0.0, min=0.0),
        "position_m": Field(list, "payload centre in the base frame", default=[0.0, 0.0, 0.075],
                            item=float, length=3),
        "size_m": Field(list, "payload box size", default=[0.2, 0.15, 0.05], item=float, length=3,
                        min=0.0, min_inclusive=False),
    },
    "control": {
        "gains": Field(str, "'written': the kp/kd tables (defaults 150 N m/rad, 3 N m s/rad); "
                       "'derived': from the robot's joint inertias, bandwidth_hz and "
                       "damping_ratio, where the tables leave a kind out (sim/drive/gains.py)",
                       default="written", choices=("written", "derived")),
        "hold": Field(str, "between control updates: 'targets' (targets follow the planned "
                      "joint speed, feed-forward held) or 'command' (the whole command follows "
                      "its last rate of change: no ripple at the update rate)",
                      default="targets", choices=("targets", "command")),
        "kp_nm_rad": {k: Field(float, "joint stiffness", min=0.0) for k in JOINT_KINDS},
        "kd_nm_s_rad": {k: Field(float, "joint damping", min=0.0) for k in JOINT_KINDS},
        "bandwidth_hz": Field(float, "target bandwidth of the derived joint gains; left out "
                              "= 16 x the leg's pendulum frequency sqrt(g / L) / 2 pi, L = "
                              "thigh + shank (12 Hz on the demo)", **POS),
        "damping_ratio": Field(float, "damping ratio of the derived joint gains", default=1.0,
                               **POS),
        "update_period_s": Field(float, "period of target and feed-forward updates",
                                 default=0.002, **POS),
    },
    "limits": {
        "max_tilt_rad": Field(float, "fall: body tilt beyond this", default=0.9, **POS),
        "min_height_fraction": Field(float, "fall: hip height below this share of the stance "
                                     "height while the robot should stand", default=0.4,
                                     min=0.0, max=1.0),
        "max_joint_speed_rad_s": Field(float, "diverged: any joint faster than this",
                                       default=200.0, **POS),
    },
    "record": {
        "decimation": Field(int, "keep every n-th step in the series", default=1, min=1),
        "series": Field(bool, "write time series (false: histograms and summary only)",
                        default=True),
        "start_s": Field(float, "leave out the first seconds (settling) from the record",
                         default=0.0, min=0.0),
        "torque_bins": Field(int, "histogram torque bins over +-peak torque", default=80, min=2),
        "speed_bins": Field(int, "histogram speed bins over +-1.5 x no-load speed", default=80,
                            min=2),
        "life_exponents": Field(list, "life exponents p whose exact sums of |torque|^p "
                                "|speed| dt the record keeps besides 3, 10/3 and 3.333",
                                default=[], item=float, min=0.0, min_inclusive=False),
    },
    "segment": Field(list, "segments run in order, each a table with kind and duration_s",
                     required=True, item=dict),
    "push": Field(list, "external pushes on the body (sim/scenario/disturbance.py)", default=[],
                  item=dict),
    "trip": Field(list, "swing feet held fast for a while (sim/scenario/disturbance.py)", default=[],
                  item=dict),
}

SEGMENT_BASE = {
    "kind": Field(str, "segment kind", required=True, choices=SEGMENT_KINDS),
    "name": Field(str, "label of the segment in the record", default="",
                  check=label_problem),
    "duration_s": Field(float, "segment duration", required=True, **POS),
}


@dataclass(frozen=True)
class Scenario:
    """A validated scenario with its resolved robot model."""

    data: dict[str, Any]
    file: str
    model: RobotModel
    segments: tuple[dict[str, Any], ...]
    gains: dict[str, Any] = field(default_factory=dict)  # joint -> sim.drive.gains.JointGains

    @property
    def time_step_s(self) -> float:
        return float(self.data["time_step_s"])

    @property
    def duration_s(self) -> float:
        return float(sum(s["duration_s"] for s in self.segments))

    def to_toml(self) -> str:
        d = copy.deepcopy(self.data)
        d["segment"] = [dict(s) for s in self.segments]
        return dump_toml(d)


def load_scenario(path: str | Path, overrides: list[str] | None = None) -> Scenario:
    """Read a scenario and its robot; ``overrides`` are ``KEY=VALUE`` texts as for ``--set``.

    Keys under ``robot.`` go to the model file (``robot.leg.thigh_length_m=0.24``); the others
    to the scenario (``ground.friction=0.5``, ``segment.0.duration_s=2``).
    """
    path = Path(path)
    data = load_toml(path, "scenario file")
    model_over: dict[str, Any] = {}
    for text in overrides or []:
        key, value = parse_override(text)
        if key.startswith("robot."):
            model_over[key[len("robot."):]] = value
        else:
            _check_override_key(data, key)
            set_dotted(data, key, value)
    values = validate(data, SCENARIO_SPEC, path)
    if not values["segment"]:
        raise InputError(str(path), "segment", "at least one [[segment]]")
    from sim.scenario.segments import validate_segment  # gait parameters belong to the gait module

    segments = []
    for i, seg in enumerate(values["segment"]):
        base = {k: seg[k] for k in seg if k in SEGMENT_BASE}
        v = validate(base, SEGMENT_BASE, path, f"segment.{i}.")
        rest = {k: seg[k] for k in seg if k not in SEGMENT_BASE}
        v.update(validate_segment(v["kind"], rest, str(path), f"segment.{i}."))
        if not v["name"]:
            v["name"] = f"{i}_{v['kind']}"
        segments.append(v)
    from sim.scenario.disturbance import PUSH_SPEC, TRIP_SPEC, validate_disturbances

    values["push"] = validate_disturbances(values["push"], PUSH_SPEC, "push", str(path))
    values["trip"] = validate_disturbances(values["trip"], TRIP_SPEC, "trip", str(path))
    robot_path = (path.parent / values["robot"]).resolve()
    mdata = load_toml(robot_path, "robot model file")
    parts_over = {}
    for key, value in model_over.items():
        if key.startswith("parts."):
            parts_over[key[len("parts."):]] = value
        else:
            set_dotted(mdata, key, value)
    model = model_from_data(mdata, str(robot_path), parts_over)
    if values["record"]["start_s"] >= sum(s["duration_s"] for s in segments):
        raise InputError(str(path), "record.start_s", "a start before the end of the scenario")
    if values["control"]["update_period_s"] < values["time_step_s"] * 0.999:
        raise InputError(str(path), "control.update_period_s", "at least one time step")
    from sim.drive.dynamics import DriveOptions, check_mesh  # the mesh must suit the time step

    check_mesh(model, DriveOptions.from_table(values["drive"]), values["time_step_s"], str(path))
    _resolve_ground(values, model, str(path))
    from sim.drive.gains import derived_bandwidth_hz, joint_gains
    from sim.scenario.segments import stance_angles

    ctl = values["control"]
    if ctl["bandwidth_hz"] is None:
        ctl["bandwidth_hz"] = round(derived_bandwidth_hz(model), 6)
    if ctl["gains"] == "written":  # the tables, with their defaults where they leave a kind out
        ctl["kp_nm_rad"] = {k: (WRITTEN_KP if v is None else v)
                            for k, v in ctl["kp_nm_rad"].items()}
        ctl["kd_nm_s_rad"] = {k: (WRITTEN_KD if v is None else v)
                              for k, v in ctl["kd_nm_s_rad"].items()}
    gains = joint_gains(model, stance_angles(model), values["time_step_s"],
                        values["drive"]["rotor_inertia"] != "off", ctl["bandwidth_hz"],
                        ctl["damping_ratio"], ctl["kp_nm_rad"], ctl["kd_nm_s_rad"])
    return Scenario(values, str(path), model, tuple(segments), gains)


PAD_DEFLECTION_M = 0.004  # static deflection of a foot pad under half the weight
PAD_DAMPING_RATIO = 0.1


def foot_pad_n_m(mass_kg: float) -> tuple[float, float]:
    """A foot pad for a robot of ``mass_kg`` (payload included): stiffness per foot that
    deflects ``PAD_DEFLECTION_M`` = 4 mm under half the weight (two feet down in a trot), and
    the damping that gives a damping ratio of 0.1 on that half mass: ``k = m g / (2 d)``,
    ``c = 2 zeta sqrt(k m / 2)``. Common practice: rubber feet of legged robots deflect a few
    millimetres. A contact this soft lasts tens of steps, so its forces converge in the time
    step, where the engine's rigid contact stops a foot in one step; the damping is low because
    the engine's spring-damper contact applies ``c v`` the instant a foot touches (a larger
    ratio made a one-step force spike at every touchdown: measured, docs/gaits.md)."""
    k = mass_kg * 9.80665 / (2.0 * PAD_DEFLECTION_M)
    return k, 2.0 * PAD_DAMPING_RATIO * (k * mass_kg / 2.0) ** 0.5


def _resolve_ground(values: dict[str, Any], model: RobotModel, file: str) -> None:
    g = values["ground"]
    if g["stiffness_n_m"] is None and not g["pad"]:
        g["stiffness_n_m"] = 0.0
    if g["stiffness_n_m"] is None:
        if g["damping_n_s_m"] is not None:
            raise InputError(file, "ground.damping_n_s_m", "a ground.stiffness_n_m with it "
                             "(left out, both are derived from the robot's weight)")
        k, c = foot_pad_n_m(model.total_mass_kg + values["payload"]["mass_kg"])
        g["stiffness_n_m"], g["damping_n_s_m"] = round(k, 3), round(c, 3)
    else:
        g["damping_n_s_m"] = 0.0 if g["damping_n_s_m"] is None else g["damping_n_s_m"]


def _check_override_key(data: dict[str, Any], key: str) -> None:
    top = key.split(".")[0]
    if top not in SCENARIO_SPEC:
        raise InputError("--set", key, "a scenario key (" + ", ".join(sorted(SCENARIO_SPEC))
                         + ") or a model key under robot.")
