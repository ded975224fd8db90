"""Robot model files (``models/*.toml``): parameters, validation and derived mass properties.

A model is a handful of numbers (SI units) from which the multibody model is built
procedurally: a body box, four hips, identical legs of abad link, thigh, shank and spherical
foot, actuator masses lumped at the joints, and per joint kind (abad, hip, knee) or per joint an
actuator. See ``models/fennec.toml`` for a commented example of every key.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sim import JOINT_KINDS, JOINT_NAMES, LEGS
from sim.core.config import Field, dump_toml, load_toml, set_dotted, validate
from sim.core.errors import InputError
from sim.parts.drivetrain import ResolvedDrivetrain, resolve_drivetrain
from sim.robot.inertia import MassProps, box, combine, cylinder, sphere

POS: dict[str, Any] = {"min": 0.0, "min_inclusive": False}
NONNEG: dict[str, Any] = {"min": 0.0}

ACTUATOR_SPEC: dict[str, Any] = {
    "mass_kg": Field(float, "actuator mass lumped at the joint", required=True, **NONNEG),
    "housing_radius_m": Field(float, "actuator housing radius (solid cylinder for inertia)",
                              default=0.04, **POS),
    "housing_length_m": Field(float, "actuator housing length along the joint axis",
                              default=0.04, **POS),
}

# keys an [actuator.*] table used to hold; they now live in the part files of the drivetrain
MOVED_TO_PARTS = {
    "gear_ratio": "the reducer part's ratio (or its geometry)",
    "rotor_inertia_kg_m2": "the motor part's rotor_inertia_kg_m2 (plus the reducer's "
                           "input_inertia_kg_m2)",
    "torque_constant_nm_a": "the motor part's speed_constant_rpm_per_v or "
                            "torque_constant_nm_per_a",
    "current_limit_a": "the drivetrain's supply.current_limit_a or a [[joint]] current_limit_a",
    "phase_resistance_ohm": "the motor part's phase_resistance_ohm_20c",
    "bus_voltage_v": "the drivetrain's supply.bus_voltage_v",
    "friction_coulomb_nm": "the reducer part's output_friction_torque_nm and "
                           "input_drag_torque_nm",
    "friction_viscous_nm_s_rad": "the reducer part's viscous_drag_nm_s_rad",
    "efficiency_forward": "the reducer part's efficiency_forward",
    "efficiency_back": "the reducer part's efficiency_back",
    "backlash_rad": "the reducer part's backlash_rad",
    "mesh_stiffness_nm_rad": "the reducer part's mesh_stiffness_nm_rad",
    "mesh_damping_nm_s_rad": "the reducer part's mesh_damping_nm_s_rad",
}


def _pair(lo_max: float | None = None) -> Field:
    def chk(v: list[float]) -> str | None:
        return None if v[0] < v[1] else "[lower, upper] with lower < upper"
    return Field(list, "[lower, upper] in rad", required=True, item=float, length=2, check=chk)


MODEL_SPEC: dict[str, Any] = {
    "name": Field(str, "model name", required=True),
    "drivetrain": Field(str, "drivetrain file (which reducer and motor part drive each joint, "
                        "and the supply), relative to this model file", required=True),
    "description": Field(str, "free text", default=""),
    "body": {
        "size_m": Field(list, "[length x, width y, height z] of the body box", required=True,
                        item=float, length=3, min=0.0, min_inclusive=False),
        "mass_kg": Field(float, "body mass without legs and actuators", required=True, **POS),
    },
    "hips": {
        "x_m": Field(float, "abad axis forward of body centre (front; hind at -x)", required=True,
                     **NONNEG),
        "y_m": Field(float, "abad axis to the side of the centre line", required=True, **NONNEG),
        "z_m": Field(float, "abad axis height above body centre", default=0.0),
    },
    "leg": {
        "abad_offset_m": Field(float, "abad axis to thigh plane, outward", required=True, **NONNEG),
        "thigh_length_m": Field(float, "hip axis to knee axis", required=True, **POS),
        "thigh_mass_kg": Field(float, "thigh structure mass", required=True, **POS),
        "thigh_radius_m": Field(float, "thigh as a solid cylinder", required=True, **POS),
        "shank_length_m": Field(float, "knee axis to foot centre", required=True, **POS),
        "shank_mass_kg": Field(float, "shank structure mass", required=True, **POS),
        "shank_radius_m": Field(float, "shank as a solid cylinder", required=True, **POS),
        "foot_radius_m": Field(float, "spherical foot radius", required=True, **POS),
        "foot_mass_kg": Field(float, "foot mass", required=True, **POS),
        "front_knee": Field(str, "where the front knees point", default="backward",
                            choices=("backward", "forward")),
        "hind_knee": Field(str, "where the hind knees point", default="backward",
                           choices=("backward", "forward")),
        "knee_actuator_at": Field(str, "knee actuator mass sits at the hip or at the knee",
                                  default="hip", choices=("hip", "knee")),
    },
    "stance": {
        "hip_height_m": Field(float, "nominal height of the hip axes above ground", required=True,
                              **POS),
        "foot_x_m": Field(float, "foot ahead of the hip axis in the nominal stance", default=0.0),
        "foot_y_m": Field(float, "foot further out than the thigh plane", default=0.0),
    },
    "joint_range_rad": {k: _pair() for k in JOINT_KINDS},
    "actuator": Field(dict, "actuator mass and housing per joint kind (abad, hip, knee), "
                      "optionally per joint", required=True),
}


@dataclass(frozen=True)
class Actuator:
    """One joint's actuator (SI) as simulated: mass and housing from the model file, the rest
    from the drivetrain's parts (:data:`sim.parts.drivetrain.SIM_KEYS`). Torque constant is
    DC-equivalent: Kt = Ke (V s/rad)."""

    gear_ratio: float
    rotor_inertia_kg_m2: float
    torque_constant_nm_a: float
    current_limit_a: float
    phase_resistance_ohm: float
    bus_voltage_v: float
    mass_kg: float
    housing_radius_m: float
    housing_length_m: float
    friction_coulomb_nm: float = 0.0
    friction_viscous_nm_s_rad: float = 0.0
    efficiency_forward: float = 1.0
    efficiency_back: float = 1.0
    backlash_rad: float = 0.0
    mesh_stiffness_nm_rad: float = 0.0
    mesh_damping_nm_s_rad: float = 0.0

    @property
    def compliant_mesh(self) -> bool:
        """True when the reducer mesh is an elastic contact (with or without lash)."""
        return self.mesh_stiffness_nm_rad > 0.0

    @property
    def reflected_inertia_kg_m2(self) -> float:
        """Rotor inertia seen at the joint output through the reducer: N^2 J_r."""
        return self.gear_ratio ** 2 * self.rotor_inertia_kg_m2

    @property
    def lossless(self) -> bool:
        """True when the reducer has neither friction nor efficiency losses."""
        return (self.friction_coulomb_nm == 0.0 and self.friction_viscous_nm_s_rad == 0.0
                and self.efficiency_forward == 1.0 and self.efficiency_back == 1.0)

    @property
    def peak_torque_nm(self) -> float:
        """Output torque at the current limit: I_max x Kt x N."""
        return self.current_limit_a * self.torque_constant_nm_a * self.gear_ratio

    @property
    def no_load_speed_rad_s(self) -> float:
        """Output speed at which the back-EMF equals the bus voltage: V / (Kt N)."""
        return self.bus_voltage_v / (self.torque_constant_nm_a * self.gear_ratio)


@dataclass(frozen=True)
class RobotModel:
    """A validated model. ``data`` is the resolved TOML content (after overrides)."""

    data: dict[str, Any]
    file: str
    actuators: dict[str, Actuator] = field(default_factory=dict)
    drivetrain: ResolvedDrivetrain | None = None

    # convenient accessors -------------------------------------------------------------------
    @property
    def name(self) -> str:
        return str(self.data["name"])

    @property
    def leg(self) -> dict[str, Any]:
        return self.data["leg"]

    def knee_sign(self, leg: str) -> float:
        """-1 when the knee of ``leg`` points backward (knee angle negative), +1 forward."""
        key = "front_knee" if leg[0] == "f" else "hind_knee"
        return -1.0 if self.leg[key] == "backward" else 1.0

    def hip_position_m(self, leg: str) -> np.ndarray:
        """Abad axis point of ``leg`` in the base frame (body box centre)."""
        h = self.data["hips"]
        sx = 1.0 if leg[0] == "f" else -1.0
        sy = 1.0 if leg[1] == "l" else -1.0
        return np.array([sx * h["x_m"], sy * h["y_m"], h["z_m"]])

    @staticmethod
    def side(leg: str) -> float:
        return 1.0 if leg[1] == "l" else -1.0

    def joint_range(self, joint: str) -> tuple[float, float]:
        """Range of ``joint``; hip and knee ranges are mirrored for forward-pointing knees."""
        leg, kind = joint.split("_")
        lo, hi = self.data["joint_range_rad"][kind]
        if kind in ("hip", "knee") and self.knee_sign(leg) > 0:
            lo, hi = -hi, -lo
        return float(lo), float(hi)

    # mass properties (frames as in the URDF) -----------------------------------------------
    def base_parts(self) -> list[MassProps]:
        b = self.data["body"]
        parts = [box(b["mass_kg"], b["size_m"])]
        for leg in LEGS:
            a = self.actuators[f"{leg}_abad"]
            parts.append(cylinder(a.mass_kg, a.housing_radius_m, a.housing_length_m, "x",
                                  self.hip_position_m(leg)))
        return [p for p in parts if p.mass_kg > 0]

    def abad_link(self, leg: str) -> MassProps:
        """Hip actuator, at the hip joint; frame at the abad axis point."""
        a = self.actuators[f"{leg}_hip"]
        off = np.array([0.0, self.side(leg) * self.leg["abad_offset_m"], 0.0])
        return _nonzero(cylinder(a.mass_kg, a.housing_radius_m, a.housing_length_m, "y", off))

    def thigh_link(self, leg: str) -> MassProps:
        """Thigh cylinder plus the knee actuator; frame at the hip joint."""
        lg = self.leg
        L = lg["thigh_length_m"]
        a = self.actuators[f"{leg}_knee"]
        z_act = 0.0 if lg["knee_actuator_at"] == "hip" else -L
        parts = [cylinder(lg["thigh_mass_kg"], lg["thigh_radius_m"], L, "z", (0, 0, -L / 2))]
        if a.mass_kg > 0:
            parts.append(cylinder(a.mass_kg, a.housing_radius_m, a.housing_length_m, "y",
                                  (0, 0, z_act)))
        return combine(parts)

    def shank_link(self) -> MassProps:
        lg = self.leg
        L = lg["shank_length_m"]
        return cylinder(lg["shank_mass_kg"], lg["shank_radius_m"], L, "z", (0, 0, -L / 2))

    def foot_link(self) -> MassProps:
        lg = self.leg
        return sphere(lg["foot_mass_kg"], lg["foot_radius_m"])

    @property
    def total_mass_kg(self) -> float:
        legs = sum(self.abad_link(leg).mass_kg + self.thigh_link(leg).mass_kg for leg in LEGS)
        legs += 4 * (self.shank_link().mass_kg + self.foot_link().mass_kg)
        return float(sum(p.mass_kg for p in self.base_parts()) + legs)

    def to_toml(self) -> str:
        return dump_toml(self.data)


def _nonzero(mp: MassProps) -> MassProps:
    if mp.mass_kg > 0:
        return mp
    return MassProps(1e-4, mp.com_m, np.eye(3) * 1e-8)  # massless bracket placeholder


def _actuators(data: dict[str, Any], file: str, drive: ResolvedDrivetrain
               ) -> dict[str, Actuator]:
    table = data["actuator"]
    for key in table:
        if key not in JOINT_KINDS and key not in JOINT_NAMES:
            raise InputError(file, f"actuator.{key}",
                             "a joint kind (abad, hip, knee) or a joint name such as fl_knee")
        for k in table[key] if isinstance(table[key], dict) else ():
            if k in MOVED_TO_PARTS:
                raise InputError(file, f"actuator.{key}.{k}",
                                 f"no {k} here: it moved to {MOVED_TO_PARTS[k]}, in the part "
                                 f"files the drivetrain {drive.file} names (docs/drivetrain.md)")
    kinds = {}
    for kind in JOINT_KINDS:
        if kind not in table:
            raise InputError(file, f"actuator.{kind}", "an actuator table for every joint kind")
        kinds[kind] = validate(table[kind], ACTUATOR_SPEC, file, f"actuator.{kind}.")
    partial = {k: Field(f.kind, f.doc, min=f.min, min_inclusive=f.min_inclusive, max=f.max)
               for k, f in ACTUATOR_SPEC.items()}
    out = {}
    for j in JOINT_NAMES:
        vals = dict(kinds[j.split("_")[1]])
        if j in table:
            over = validate(table[j], partial, file, f"actuator.{j}.")
            vals.update({k: v for k, v in over.items() if v is not None})
        out[j] = Actuator(**vals, **drive.values[j])
        _check_mesh(out[j], j, drive)
    return out


def actuator_key(model: RobotModel, joint: str, key: str) -> str:
    """Where ``joint``'s simulated actuator value ``key`` comes from (part file and key), for
    messages that name what to change."""
    return model.drivetrain.value_source(joint, key) if model.drivetrain else key


def _check_mesh(a: Actuator, joint: str, drive: ResolvedDrivetrain) -> None:
    """Mesh damping needs an elastic mesh, and the mesh needs a motor-side inertia."""
    red = drive.part(joint, "reducer").source
    if a.mesh_damping_nm_s_rad > 0 and not a.compliant_mesh:
        raise InputError(red, "mesh_stiffness_nm_rad",
                         f"a mesh stiffness > 0 for {joint}, whose mesh_damping_nm_s_rad is "
                         f"{a.mesh_damping_nm_s_rad:g} (damping acts only in an elastic mesh; "
                         "see docs/dynamics.md)", a.mesh_stiffness_nm_rad)
    if a.compliant_mesh and a.rotor_inertia_kg_m2 <= 0:
        raise InputError(drive.part(joint, "motor").source, "rotor_inertia_kg_m2",
                         f"a rotor inertia > 0 for {joint}, whose reducer mesh is elastic "
                         "(the motor side of the mesh needs an inertia)", a.rotor_inertia_kg_m2)


def model_from_data(data: dict[str, Any], file: str,
                    part_overrides: dict[str, Any] | None = None,
                    drivetrain: ResolvedDrivetrain | None = None) -> RobotModel:
    """Validate raw TOML content and return the model, or raise :class:`InputError`.

    The drivetrain the model names (relative to ``file``) is resolved with ``part_overrides``
    (dotted keys after ``robot.parts.``; :mod:`sim.parts.drivetrain`), unless ``drivetrain``
    gives it already resolved (a record's ``drivetrain_toml``)."""
    values = validate(data, MODEL_SPEC, file)
    values["actuator"] = data["actuator"]
    if drivetrain is not None:
        drive = drivetrain
    else:
        rel = values["drivetrain"]
        path = Path(rel) if Path(rel).is_absolute() else Path(file).resolve().parent / rel
        if not path.is_file():
            raise InputError(file, "drivetrain", "an existing drivetrain file (relative to "
                             "the model file)", rel)
        drive = resolve_drivetrain(path, part_overrides)
    acts = _actuators(values, file, drive)
    model = RobotModel(values, file, acts, drive)
    _check_geometry(model)
    return model


def model_from_texts(model_toml: str, drivetrain_toml: str, file: str) -> RobotModel:
    """The model a record was simulated with, from its ``model_toml`` and ``drivetrain_toml``
    attributes (``file`` names the record in messages)."""
    import tomllib

    from sim.parts.drivetrain import drivetrain_from_toml

    try:
        data = tomllib.loads(model_toml)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(file, "model_toml", f"the model as gaitload stores it ({exc})") from None
    return model_from_data(data, file, drivetrain=drivetrain_from_toml(drivetrain_toml, file))


def load_model(path: str | Path, overrides: dict[str, Any] | None = None) -> RobotModel:
    """Read ``models/<name>.toml``; ``overrides`` maps dotted keys to values (``--set robot.``
    without the prefix); keys under ``parts.`` change the drivetrain's parts."""
    data = load_toml(path, "robot model file")
    parts = {}
    for key, value in (overrides or {}).items():
        if key.startswith("parts."):
            parts[key[len("parts."):]] = value
        else:
            set_dotted(data, key, value)
    return model_from_data(data, str(path), parts)


def _check_geometry(m: RobotModel) -> None:
    f = m.file
    lg, st = m.leg, m.data["stance"]
    l1, l2 = lg["thigh_length_m"], lg["shank_length_m"]
    reach = l1 + l2
    h = st["hip_height_m"] - lg["foot_radius_m"]  # hip axis to foot centre
    dist = math.hypot(h, st["foot_x_m"])
    if dist >= 0.995 * reach:
        raise InputError(f, "stance.hip_height_m",
                         f"a stance the legs can reach: hip to foot centre {dist:.3f} m needs "
                         f"thigh + shank > {dist / 0.995:.3f} m, the legs give {reach:.3f} m")
    if dist <= abs(l1 - l2) * 1.01 + 1e-9:
        raise InputError(f, "stance.hip_height_m",
                         f"a stance the legs can fold to (at least {abs(l1 - l2):.3f} m)")
    if st["hip_height_m"] <= m.data["body"]["size_m"][2] / 2 - m.data["hips"]["z_m"]:
        raise InputError(f, "stance.hip_height_m", "a stance that keeps the body off the ground")
    if m.data["hips"]["y_m"] * 2 > m.data["body"]["size_m"][1] * 1.5:
        raise InputError(f, "hips.y_m", "hips within the body width")
