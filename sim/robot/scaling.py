"""Robot generator: a new robot scaled from a given model to another total mass.

Takes a validated :class:`~sim.robot.model.RobotModel` and a target total mass; gives the
texts of a new model file, its drivetrain file and the part files that drivetrain names
(:class:`ScaledRobot`), ready to be written side by side and loaded like any model.

Scaling rules, with the mass ratio ``k = m / m0`` and the length ratio ``s = k^(1/3)``
(geometric similarity at equal density):

* lengths and radii (body box, hip positions, leg segments, foot, stance, actuator housings)
  scale by ``s``; joint ranges (angles) are kept;
* every mass (body, thigh, shank, foot, actuators) scales by ``k``, so the total mass is
  exactly ``m``; inertias follow from the solids' formulas (``m L^2``, i.e. ``k^(5/3)``);
* the actuators (:func:`scale_actuators`, the one place where they are scaled), for
  dynamically similar motion (equal Froude number ``v^2 / (g L)``, so joint speeds go as
  ``sqrt(g / L)``, ``s^(-1/2)``, and the torques that hold and swing a leg as ``m g L``,
  ``s^4``) at the same gear ratio and bus voltage: peak output torque ``Kt I N ~ s^4`` and
  no-load output speed ``V / (Kt N) ~ s^(-1/2)`` give a torque constant ``Kt ~ s^(1/2)`` and
  a current limit ``I ~ s^(7/2)``; the winding resistance keeps the stall current a fixed
  multiple of the limit (``R ~ s^(-7/2)``), so the voltage-limited envelope keeps its shape
  and copper loss at the limit scales with mechanical power (``s^(7/2)``); rotor inertia
  follows mass times radius squared (``s^5``); reducer friction scales with torque (``s^4``,
  viscous ``s^(9/2)``), mesh stiffness with torque per radian (``s^4``), efficiencies and
  backlash angles are kept.

Geometric and dynamic similarity as scaling laws for legged animals and machines: Alexander
& Jayes, "A dynamic similarity hypothesis for the gaits of quadrupedal mammals", J. Zool.
201, 1983 (Froude number; from memory). The generated parts are a quick drivetrain (a rated
reducer and a motor given by its constants per joint kind): invented placeholders for a
first study, not a design. The shipped scenarios command fixed speeds and periods, not
Froude-scaled ones, so a small robot trots relatively faster than the source robot.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim import JOINT_KINDS, LEGS
from sim.core.config import dump_toml
from sim.core.errors import InputError
from sim.robot.model import RobotModel

MASS_RANGE_KG = (3.0, 60.0)  # the range the generator is tested over (about 5 to 40 kg) and a margin

# model keys that are lengths (scaled by s); every other number is kept unless it is a mass
_LENGTH_KEYS = {
    "body": ("size_m",),
    "hips": ("x_m", "y_m", "z_m"),
    "leg": ("abad_offset_m", "thigh_length_m", "thigh_radius_m", "shank_length_m",
            "shank_radius_m", "foot_radius_m"),
    "stance": ("hip_height_m", "foot_x_m", "foot_y_m"),
}
_MASS_KEYS = {"body": ("mass_kg",), "leg": ("thigh_mass_kg", "shank_mass_kg", "foot_mass_kg")}

# placeholder rating of the generated rated reducers, relative to the joint's actuator:
# rated torque and speed at these shares of the peak torque and no-load speed, the momentary
# limit above the actuator's peak torque. Invented (common practice is to rate a reducer for
# the continuous load and let the peaks pass as momentary events); replace them with the
# catalogue values of the reducer you mean to use.
RATED_TORQUE_SHARE = 0.5
RATED_SPEED_SHARE = 0.25
MOMENTARY_PEAK_FACTOR = 1.5
RATED_LIFE_H = 5000.0
LIFE_EXPONENT = 3.333


@dataclass(frozen=True)
class ScaledActuator:
    """The actuator values of one joint kind of a scaled robot (SI, DC-equivalent current)."""

    gear_ratio: float
    current_limit_a: float
    rotor_inertia_kg_m2: float  # at the motor shaft, reducer input inertia included
    torque_constant_nm_a: float
    phase_resistance_ohm: float
    mass_kg: float
    housing_radius_m: float
    housing_length_m: float
    efficiency_forward: float
    efficiency_back: float
    friction_coulomb_nm: float  # at the output
    friction_viscous_nm_s_rad: float
    backlash_rad: float
    mesh_stiffness_nm_rad: float
    mesh_damping_nm_s_rad: float

    @property
    def peak_torque_nm(self) -> float:
        return self.current_limit_a * self.torque_constant_nm_a * self.gear_ratio


@dataclass(frozen=True)
class ScaledRobot:
    """The files of a scaled robot: ``texts`` maps a path relative to the model file's folder
    to its content; ``model_file`` is the key of the model itself."""

    model_file: str
    texts: dict[str, str]
    mass_kg: float
    mass_ratio: float
    actuators: dict[str, ScaledActuator]


def check_target_mass(mass_kg: float, key: str = "--scale-to-mass") -> None:
    """Refuse a target mass outside :data:`MASS_RANGE_KG` (an :class:`InputError`)."""
    lo, hi = MASS_RANGE_KG
    if not (isinstance(mass_kg, int | float) and math.isfinite(mass_kg) and lo <= mass_kg <= hi):
        raise InputError("command line", key, f"a total mass from {lo:g} to {hi:g} kg (the "
                         "range the scaling rules were tried over)", mass_kg)


def scale_actuators(model: RobotModel, mass_ratio: float) -> dict[str, ScaledActuator]:
    """Per joint kind, the actuator of ``model`` scaled to a robot ``mass_ratio`` times as
    heavy (module docstring for the rules). Reads the simulated values through
    ``model.actuators``; the joints of a kind must share one actuator."""
    k = float(mass_ratio)
    s = k ** (1.0 / 3.0)
    out = {}
    for kind in JOINT_KINDS:
        joints = [f"{leg}_{kind}" for leg in LEGS]
        a = model.actuators[joints[0]]
        for j in joints[1:]:
            if model.actuators[j] != a:
                raise InputError(model.file, f"actuator.{j}", f"the same actuator on every "
                                 f"{kind} joint (the generator scales one actuator per joint "
                                 f"kind; {j} differs from {joints[0]})")
        out[kind] = ScaledActuator(
            gear_ratio=a.gear_ratio,
            current_limit_a=a.current_limit_a * s ** 3.5,
            rotor_inertia_kg_m2=a.rotor_inertia_kg_m2 * s ** 5,
            torque_constant_nm_a=a.torque_constant_nm_a * s ** 0.5,
            phase_resistance_ohm=a.phase_resistance_ohm * s ** -3.5,
            mass_kg=a.mass_kg * k,
            housing_radius_m=a.housing_radius_m * s,
            housing_length_m=a.housing_length_m * s,
            efficiency_forward=a.efficiency_forward,
            efficiency_back=a.efficiency_back,
            friction_coulomb_nm=a.friction_coulomb_nm * s ** 4,
            friction_viscous_nm_s_rad=a.friction_viscous_nm_s_rad * s ** 4.5,
            backlash_rad=a.backlash_rad,
            mesh_stiffness_nm_rad=a.mesh_stiffness_nm_rad * s ** 4,
            mesh_damping_nm_s_rad=a.mesh_damping_nm_s_rad * s ** 4.5,
        )
    return out


def _scaled_model_data(model: RobotModel, k: float, name: str, drivetrain: str,
                       actuators: dict[str, ScaledActuator]) -> dict[str, Any]:
    s = k ** (1.0 / 3.0)
    d = copy.deepcopy(model.data)
    for table, keys in _LENGTH_KEYS.items():
        for key in keys:
            v = d[table][key]
            d[table][key] = [x * s for x in v] if isinstance(v, list) else v * s
    for table, keys in _MASS_KEYS.items():
        for key in keys:
            d[table][key] = d[table][key] * k
    d["name"] = name
    d["description"] = (f"{model.name} scaled to {model.total_mass_kg * k:.3g} kg "
                        f"(mass x {k:.4g}, lengths x {s:.4g}) by gaitload model "
                        "--scale-to-mass; invented, describes no real robot")
    d["drivetrain"] = drivetrain
    d["actuator"] = {kind: {"mass_kg": a.mass_kg, "housing_radius_m": a.housing_radius_m,
                            "housing_length_m": a.housing_length_m}
                     for kind, a in actuators.items()}
    return d


def _header(lines: list[str]) -> str:
    return "".join(f"# {x}\n" if x else "#\n" for x in lines)


def _part_texts(actuators: dict[str, ScaledActuator], source: str, mass_kg: float,
                bus_voltage_v: float) -> dict[str, str]:
    """Part files of the scaled actuators, ``{"reducer_<kind>.toml": text, "motor_...}``:
    a rated reducer and a motor given by its constants per joint kind."""
    out = {}
    for kind, a in actuators.items():
        peak = a.peak_torque_nm
        no_load_rad_s = bus_voltage_v / (a.torque_constant_nm_a * a.gear_ratio)
        rated = {
            "kind": "rated", "name": f"generated {kind} reducer {a.gear_ratio:g}:1 (invented)",
            "ratio": a.gear_ratio,
            "efficiency_forward": a.efficiency_forward, "efficiency_back": a.efficiency_back,
            "backlash_rad": a.backlash_rad, "input_inertia_kg_m2": 0.0,
            "output_friction_torque_nm": a.friction_coulomb_nm,
            "viscous_drag_nm_s_rad": a.friction_viscous_nm_s_rad,
            "mesh_stiffness_nm_rad": a.mesh_stiffness_nm_rad,
            "mesh_damping_nm_s_rad": a.mesh_damping_nm_s_rad,
            "rated_torque_nm": RATED_TORQUE_SHARE * peak,
            "rated_speed_rad_s": RATED_SPEED_SHARE * no_load_rad_s,
            "rated_life_h": RATED_LIFE_H, "life_exponent": LIFE_EXPONENT,
            "momentary_peak_torque_nm": MOMENTARY_PEAK_FACTOR * peak,
        }
        out[f"reducer_{kind}.toml"] = rated
        out[f"motor_{kind}.toml"] = {
            "kind": "motor", "name": f"generated {kind} motor (invented)",
            "note": "invented by scaling; no thermal network, so the motor check leaves its "
                    "heating out",
            "torque_constant_nm_per_a": a.torque_constant_nm_a,
            "torque_constant_current": "dc_equivalent",
            "phase_resistance_ohm_20c": a.phase_resistance_ohm,
            "winding": "star",
            "rotor_inertia_kg_m2": a.rotor_inertia_kg_m2,
        }
    texts = {}
    for name, table in out.items():
        what = "reducer" if name.startswith("reducer") else "motor"
        head = [f"INVENTED: a {what} part generated by scaling {source} to {mass_kg:.3g} kg "
                "(gaitload model --scale-to-mass).",
                "It describes no real product. Units SI; keys in docs/drivetrain.md, "
                "docs/reducer.md and docs/motor.md."]
        if what == "reducer":
            head.append("The rating (rated torque and speed, life, momentary peak) is a "
                        "placeholder derived from the actuator: replace it with the catalogue "
                        "values of your reducer.")
        texts[name] = _header(head) + dump_toml(table)
    return texts


def scale_robot(model: RobotModel, mass_kg: float, stem: str) -> ScaledRobot:
    """The files of ``model`` scaled to a total mass of ``mass_kg``, named after ``stem``:
    ``<stem>.toml`` (the model), ``<stem>_drivetrain.toml`` and ``<stem>_parts/*.toml``."""
    check_target_mass(mass_kg)
    k = mass_kg / model.total_mass_kg
    acts = scale_actuators(model, k)
    parts_dir = f"{stem}_parts"
    drive_name = f"{stem}_drivetrain.toml"
    data = _scaled_model_data(model, k, stem, drive_name, acts)
    if model.drivetrain is None or model.drivetrain.supply is None:
        raise InputError(model.file, "drivetrain", "a drivetrain with a [supply] to scale")
    supply = copy.deepcopy(dict(model.drivetrain.supply))
    bus_v = model.actuators[f"fl_{JOINT_KINDS[0]}"].bus_voltage_v  # as simulated
    texts: dict[str, str] = {}
    for name, text in _part_texts(acts, model.name, mass_kg, bus_v).items():
        texts[f"{parts_dir}/{name}"] = text
    # the supply as the source robot's, with the scaled current limits per joint kind given
    # in the simulation's (DC-equivalent) convention
    supply["current_limit_convention"] = "dc_equivalent"
    supply["current_limit_a"] = max(a.current_limit_a for a in acts.values())
    joints = [{"match": f"*_{kind}", "reducer": f"{parts_dir}/reducer_{kind}.toml",
               "motor": f"{parts_dir}/motor_{kind}.toml", "current_limit_a": a.current_limit_a}
              for kind, a in acts.items()]
    texts[drive_name] = _header([
        f"Drivetrain of {stem}, generated by scaling {model.name} to {mass_kg:.3g} kg "
        "(gaitload model --scale-to-mass).",
        "INVENTED: the parts describe no real product. Paths relative to this file; later "
        "entries win. Units SI.",
        "The supply is the source robot's; current limits are DC-equivalent amperes."]) + \
        dump_toml({"joint": joints, "supply": supply})
    texts[f"{stem}.toml"] = _header([
        f"gaitload robot model: {stem!r}, {model.name} scaled to {mass_kg:.3g} kg.",
        f"Generated by gaitload model --scale-to-mass {mass_kg:g} from {model.name}: "
        f"masses x {k:.6g}, lengths x {k ** (1 / 3):.6g}",
        "(docs/gaits.md, 'Robots of other sizes'). INVENTED: it describes no real robot.",
        "Units SI: metres, kilograms, radians. Keys as in models/fennec.toml."]) + \
        dump_toml(data)
    return ScaledRobot(f"{stem}.toml", texts, mass_kg, k, acts)


def load_scaled(robot: ScaledRobot) -> RobotModel:
    """Validate the scaled files as gaitload reads them (in a temporary folder): the model,
    its drivetrain and parts; an :class:`InputError` names what is wrong."""
    import tempfile

    from sim.robot.model import load_model

    with tempfile.TemporaryDirectory() as tmp:
        for rel, text in robot.texts.items():
            p = Path(tmp) / rel
            p.parent.mkdir(parents=True, exist_ok=True)
            p.write_text(text)
        return load_model(Path(tmp) / robot.model_file)


def write_scaled(robot: ScaledRobot, folder: str | Path) -> list[Path]:
    """Write the files of ``robot`` under ``folder``, all or none (:func:`sim.core.atomic.
    output_batch`; validated first, so a robot gaitload would refuse leaves nothing behind);
    returns the paths written."""
    from sim.core.atomic import output_batch, write_text_atomic

    load_scaled(robot)
    home = Path(folder)
    with output_batch():
        return [write_text_atomic(home / rel, text) for rel, text in sorted(robot.texts.items())]
