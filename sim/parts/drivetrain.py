"""The drivetrain file, resolved once for the simulation and the checks.

Format (TOML; part paths relative to the drivetrain file)::

    [[joint]]
    match = "*_knee"                          # a joint name or fnmatch pattern
    reducer = "parts/reducer_knee_belt.toml"  # a reducer part file (any kind)
    motor = "parts/motor_demo.toml"           # a motor part file
    current_limit_a = 25.0                    # optional: this joint's driver limit (supply's
                                              # convention); default supply.current_limit_a
    [supply]                                  # driver and battery shared by all motors

Entries apply in order and later entries win, joint by joint, for the keys they give. A model
names its drivetrain (``drivetrain = "drivetrain_demo.toml"`` in the model file, relative to
it); a scenario or the command line can replace it (``--set robot.drivetrain=FILE``) or change
a part value (``--set robot.parts.<who>.<reducer|motor>.<key>=VALUE``, ``<who>`` a joint kind
such as ``knee`` or a joint such as ``fl_knee``; ``<key>`` a dotted key inside the part file,
e.g. ``belt.stage.1.driven_teeth``), a part file (``robot.parts.<who>.reducer_file=PATH``, path
relative to the drivetrain file), a joint's current limit (``robot.parts.<who>.current_limit_a``)
or a supply value (``robot.parts.supply.<key>``).

What the simulation takes from the parts, per joint (:data:`SIM_KEYS`, the fields of
:class:`sim.robot.model.Actuator` besides mass and housing):

=========================== ===============================================================
``gear_ratio``              reducer ratio (stated for ``rated``, from the geometry otherwise)
``rotor_inertia_kg_m2``     motor rotor + reducer input inertia + reducer output inertia / N^2
                            (all at the motor shaft; N^2 times it is the inertia felt at the
                            joint, the same total as the check's reflected inertia)
``torque_constant_nm_a``    motor ``k`` (DC-equivalent, from kV or Kt and their conventions)
``phase_resistance_ohm``    half the line-to-line resistance at 20 C (star-equivalent phase)
``current_limit_a``         joint's or supply's driver limit, as DC-equivalent amperes
``bus_voltage_v``           supply bus voltage x the modulation's line-voltage factor
``friction_coulomb_nm``     reducer ``output_friction_torque_nm`` + N x ``input_drag_torque_nm``
``friction_viscous_nm_s_rad`` reducer ``viscous_drag_nm_s_rad`` (at the output)
``efficiency_forward/back`` reducer efficiencies
``backlash_rad``            reducer backlash, simulated when the part gives a mesh stiffness
``mesh_stiffness_nm_rad``   reducer mesh stiffness at the output (0 = rigid)
``mesh_damping_nm_s_rad``   reducer mesh damping at the output
=========================== ===============================================================

Not simulated, and said so in :attr:`ResolvedDrivetrain.notes` (stored in the record): the
motor's own drag (friction, no-load current, iron loss; the motor check adds it to the current
and heat), and backlash of a part without a mesh stiffness.
"""

from __future__ import annotations

import copy
import fnmatch
import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim import JOINT_KINDS, JOINT_NAMES
from sim.core.config import Field, dump_toml, load_toml, set_dotted, validate
from sim.core.errors import InputError
from sim.parts.motor_constants import (
    CURRENT_CONVENTIONS,
    SPEED_CONSTANT_VOLTAGES,
    back_emf_constant,
    back_emf_from_torque_constant,
    dc_equivalent_current_a,
    line_resistance_ohm,
)
from sim.parts.ratios import planetary_ratio, ratio_fixed_ring, stage_chain_ratio

REDUCER_KINDS = ("rated", "cycloidal", "planetary", "belt")
MODULATIONS = ("svpwm", "six_step", "sinusoidal")
_POS: dict[str, Any] = {"min": 0.0, "min_inclusive": False}

# keys every reducer part file may give, whatever its kind (the kinds add their own)
REDUCER_COMMON_SPEC: dict[str, Any] = {
    "kind": Field(str, choices=REDUCER_KINDS, required=True),
    "name": Field(str, "a short name", default=""),
    "description": Field(str, default=""),
    "ratio": Field(float, "output/input speed reduction, > 1 (computed for geometry kinds; "
                   "if given it must match)", min=1.0, min_inclusive=False),
    "efficiency_forward": Field(float, "motor driving the joint", required=True, min=0.0,
                                max=1.0, min_inclusive=False),
    "efficiency_back": Field(float, "joint driving the motor; 0 = self-locking", required=True,
                             min=0.0, max=1.0),
    "backlash_rad": Field(float, "at the output", default=0.0, min=0.0),
    "input_inertia_kg_m2": Field(float, "reducer inertia referred to its input", required=True,
                                 min=0.0),
    "output_inertia_kg_m2": Field(float, "stage inertia turning with the output", default=0.0,
                                  min=0.0),
    "input_drag_torque_nm": Field(float, "no-load drag at the input", default=0.0, min=0.0),
    "output_friction_torque_nm": Field(float, "Coulomb friction at the output (seals, output "
                                       "bearing)", default=0.0, min=0.0),
    "viscous_drag_nm_s_rad": Field(float, "viscous drag at the output", default=0.0, min=0.0),
    "mesh_stiffness_nm_rad": Field(float, "torsional stiffness at the output once the lash "
                                   "is closed; 0 = rigid (backlash is then not simulated)",
                                   default=0.0, min=0.0),
    "mesh_damping_nm_s_rad": Field(float, "damping of the closed mesh at the output",
                                   default=0.0, min=0.0),
}

# keys of a motor part file that the simulation uses (the motor check adds the rest)
MOTOR_SIM_SPEC: dict[str, Any] = {
    "speed_constant_rpm_per_v": Field(float, "rpm/V", **_POS),
    "speed_constant_voltage": Field(str, default="line_to_line_peak",
                                    choices=SPEED_CONSTANT_VOLTAGES),
    "torque_constant_nm_per_a": Field(float, "N m/A", **_POS),
    "torque_constant_current": Field(str, choices=CURRENT_CONVENTIONS),
    "phase_resistance_ohm_20c": Field(float, "ohm", required=True, **_POS),
    "winding": Field(str, default="star", choices=("star", "delta")),
    "rotor_inertia_kg_m2": Field(float, "kg m^2", required=True, min=0.0),
}

# every top-level key a part file may hold, by kind: the simulation refuses an unknown key
# before it runs (the checks validate the values; tests/test_parts.py keeps both in step)
REDUCER_KIND_KEYS: dict[str, tuple[str, ...]] = {
    "rated": ("rated_torque_nm", "rated_speed_rad_s", "rated_life_h", "life_exponent",
              "momentary_peak_torque_nm", "peak_count", "repeated_peak_torque_nm"),
    "cycloidal": ("cycloid",), "planetary": ("planetary",), "belt": ("belt",),
}
MOTOR_KEYS: tuple[str, ...] = (
    "kind", "name", "note", *MOTOR_SIM_SPEC, "no_load_current_a", "friction_torque_nm",
    "viscous_friction_nm_s_per_rad", "hysteresis_loss_w_s_per_rad", "eddy_loss_w_s2_per_rad2",
    "thermal_resistance_winding_housing_k_per_w", "thermal_resistance_housing_ambient_k_per_w",
    "thermal_capacity_winding_j_per_k", "thermal_capacity_housing_j_per_k", "insulation_class",
    "max_winding_temp_c", "ambient_temp_c", "continuous_torque_nm", "peak_torque_nm")


def check_part_keys(table: Mapping[str, Any], role: str, file: str) -> None:
    """Refuse a top-level key the part's kind does not know (a misspelt key would otherwise
    leave its default in the simulation)."""
    if not isinstance(table, Mapping):
        raise InputError(file, None, f"a {role} part table", table)
    if role == "motor":
        known: tuple[str, ...] = MOTOR_KEYS
    else:
        kind = table.get("kind")
        if kind not in REDUCER_KIND_KEYS:
            raise InputError(file, "kind", "one of " + ", ".join(REDUCER_KINDS), kind)
        known = (*REDUCER_COMMON_SPEC, *REDUCER_KIND_KEYS[kind])
    for key in table:
        if key not in known:
            raise InputError(file, key, f"a known key of a {role} part (unknown key; known: "
                             + ", ".join(sorted(known)) + ")")


SUPPLY_SPEC: dict[str, Any] = {
    "bus_voltage_v": Field(float, "open-circuit bus voltage, V", required=True, **_POS),
    "current_limit_a": Field(float, "driver current limit per motor, A", required=True, **_POS),
    "current_limit_convention": Field(str, default="dc_equivalent",
                                      choices=CURRENT_CONVENTIONS),
    "modulation": Field(str, default="svpwm", choices=MODULATIONS),
    "inverter_efficiency": Field(float, "fraction", required=True, min=0.0, max=1.0,
                                 min_inclusive=False),
    "regeneration_absorbed": Field(bool, required=True),
    "cell_count": Field(int, "cells in series", default=1, min=1),
    "parallel_count": Field(int, "parallel strings", default=1, min=1),
    "cell_internal_resistance_ohm": Field(float, "ohm per cell", default=0.0, min=0.0),
    "auxiliary_power_w": Field(float, "W", default=0.0, min=0.0),
}

FILE_SPEC = {
    "joint": Field(list, "[[joint]] tables with match, reducer, motor", required=True,
                   item=dict),
    "supply": Field(dict, "driver and battery shared by all motors (needed to simulate)"),
}

JOINT_SPEC = {
    "match": Field(str, "a joint name or fnmatch pattern such as '*_knee'", required=True),
    "reducer": Field(str, "path of a reducer part file, relative to this file"),
    "motor": Field(str, "path of a motor part file, relative to this file"),
    "current_limit_a": Field(float, "this joint's driver current limit (the supply's "
                             "convention)", **_POS),
}

SIM_KEYS = ("gear_ratio", "rotor_inertia_kg_m2", "torque_constant_nm_a", "current_limit_a",
            "phase_resistance_ohm", "bus_voltage_v", "friction_coulomb_nm",
            "friction_viscous_nm_s_rad", "efficiency_forward", "efficiency_back",
            "backlash_rad", "mesh_stiffness_nm_rad", "mesh_damping_nm_s_rad")

# where each simulated value comes from (for messages): part role and key(s)
SOURCES = {
    "gear_ratio": ("reducer", "ratio (or its geometry)"),
    "rotor_inertia_kg_m2": ("motor+reducer", "motor rotor_inertia_kg_m2 + reducer "
                            "input_inertia_kg_m2 + output_inertia_kg_m2 / ratio^2"),
    "torque_constant_nm_a": ("motor", "speed_constant_rpm_per_v or torque_constant_nm_per_a"),
    "current_limit_a": ("supply", "current_limit_a (joint's or supply's)"),
    "phase_resistance_ohm": ("motor", "phase_resistance_ohm_20c and winding"),
    "bus_voltage_v": ("supply", "bus_voltage_v and modulation"),
    "friction_coulomb_nm": ("reducer", "output_friction_torque_nm + ratio x "
                            "input_drag_torque_nm"),
    "friction_viscous_nm_s_rad": ("reducer", "viscous_drag_nm_s_rad"),
    "efficiency_forward": ("reducer", "efficiency_forward"),
    "efficiency_back": ("reducer", "efficiency_back"),
    "backlash_rad": ("reducer", "backlash_rad"),
    "mesh_stiffness_nm_rad": ("reducer", "mesh_stiffness_nm_rad"),
    "mesh_damping_nm_s_rad": ("reducer", "mesh_damping_nm_s_rad"),
}

MIN_SIM_EFFICIENCY_BACK = 0.05  # the simulation divides by it; self-locking is not simulated


# ---- what a part table gives -----------------------------------------------------------------

def reducer_common(table: Mapping[str, Any], file: str) -> dict[str, Any]:
    """The common keys of a reducer part table, validated (kind-specific keys are left to the
    part's own check)."""
    common = {k: v for k, v in table.items() if k in REDUCER_COMMON_SPEC}
    return validate(common, REDUCER_COMMON_SPEC, file=file)


def _count(table: Mapping[str, Any], key: str, file: str, prefix: str) -> int:
    v = table.get(key) if isinstance(table, Mapping) else None
    if isinstance(v, bool) or not isinstance(v, int) or v < 1:
        raise InputError(file, prefix + key, "a whole number >= 1", v)
    return v


def reducer_ratio(table: Mapping[str, Any], file: str) -> float:
    """The ratio a reducer part gives: stated (``rated``) or from its geometry, which a stated
    ratio must match (rel. 1e-6)."""
    check_part_keys(table, "reducer", file)
    v = reducer_common(table, file)
    kind = v["kind"]
    if kind == "rated":
        if v["ratio"] is None:
            raise InputError(file, "ratio", "the ratio of a rated reducer (> 1)")
        return float(v["ratio"])
    sub = table.get({"cycloidal": "cycloid", "planetary": "planetary", "belt": "belt"}[kind])
    name = {"cycloidal": "cycloid", "planetary": "planetary", "belt": "belt"}[kind]
    if not isinstance(sub, Mapping):
        raise InputError(file, name, f"a [{name}] table for a {kind} reducer", sub)
    if kind == "cycloidal":
        pins = _count(sub, "ring_pins", file, "cycloid.")
        lobes = _count(sub, "lobes", file, "cycloid.")
        if lobes >= pins:
            raise InputError(file, "cycloid.lobes", f"fewer lobes than ring pins ({pins})",
                             lobes)
        ratio = ratio_fixed_ring(pins, lobes)
    elif kind == "planetary":
        ratio = planetary_ratio(_count(sub, "sun_teeth", file, "planetary."),
                                _count(sub, "ring_teeth", file, "planetary."))
    else:
        stages = sub.get("stage")
        if not isinstance(stages, list) or not stages:
            raise InputError(file, "belt.stage", "at least one [[belt.stage]] table", stages)
        pairs = []
        for i, st in enumerate(stages):
            pre = f"belt.stage[{i}]."
            pairs.append((_count(st, "driver_teeth", file, pre),
                          _count(st, "driven_teeth", file, pre)))
        ratio = stage_chain_ratio(pairs)
    if v["ratio"] is not None and not math.isclose(v["ratio"], ratio, rel_tol=1e-6):
        raise InputError(file, "ratio", f"the ratio the geometry gives, {ratio:.6g}",
                         v["ratio"])
    return ratio


def motor_sim_values(table: Mapping[str, Any], file: str) -> dict[str, Any]:
    """``back_emf_v_s_per_rad`` (= DC-equivalent torque constant), ``line_resistance_ohm`` at
    20 C and ``rotor_inertia_kg_m2`` of a motor part table."""
    check_part_keys(table, "motor", file)
    v = validate({k: x for k, x in table.items() if k in MOTOR_SIM_SPEC}, MOTOR_SIM_SPEC,
                 file=file)
    kv, kt = v["speed_constant_rpm_per_v"], v["torque_constant_nm_per_a"]
    if (kv is None) == (kt is None):
        raise InputError(file, "speed_constant_rpm_per_v",
                         "exactly one of speed_constant_rpm_per_v or torque_constant_nm_per_a")
    if kt is not None:
        if v["torque_constant_current"] is None:
            raise InputError(file, "torque_constant_current", "the current convention of the "
                             "torque constant: one of " + ", ".join(CURRENT_CONVENTIONS))
        k = back_emf_from_torque_constant(kt, v["torque_constant_current"])
    else:
        if v["torque_constant_current"] is not None:
            raise InputError(file, "torque_constant_current",
                             "no current convention without torque_constant_nm_per_a")
        k = back_emf_constant(kv, v["speed_constant_voltage"])
    return {"back_emf_v_s_per_rad": k,
            "line_resistance_ohm": line_resistance_ohm(v["phase_resistance_ohm_20c"],
                                                       v["winding"]),
            "rotor_inertia_kg_m2": v["rotor_inertia_kg_m2"], "winding": v["winding"]}


def line_voltage_factor(modulation: str) -> float:
    """Largest line-to-line peak voltage per volt of bus: 1 (SVPWM, six-step) or sqrt(3)/2
    (sine-triangle PWM without third-harmonic injection)."""
    return math.sqrt(3.0) / 2.0 if modulation == "sinusoidal" else 1.0


# ---- the resolved drivetrain -----------------------------------------------------------------

@dataclass(frozen=True)
class PartTable:
    """One part as used: its role (``reducer`` or ``motor``), the file it was read from
    (``source``), the overrides applied to it, and its table after them."""

    role: str
    source: str
    table: Mapping[str, Any]
    changed: tuple[str, ...] = ()


@dataclass(frozen=True)
class JointParts:
    """What drives one joint: part ids (keys of :attr:`ResolvedDrivetrain.parts`) and the
    joint's own driver current limit (supply convention; None = the supply's)."""

    joint: str
    reducer: str | None
    motor: str | None
    current_limit_a: float | None = None

    @property
    def complete(self) -> bool:
        return self.reducer is not None and self.motor is not None


@dataclass(frozen=True)
class ResolvedDrivetrain:
    """A drivetrain with every part read and every override applied.

    ``values[joint]`` holds the :data:`SIM_KEYS` of the joint; ``notes`` says what the
    simulation leaves out. :meth:`to_toml` is what a record stores (``drivetrain_toml``)."""

    file: str
    parts: Mapping[str, PartTable]
    joints: Mapping[str, JointParts]
    supply: Mapping[str, Any] | None
    values: Mapping[str, Mapping[str, float]] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    overrides: tuple[str, ...] = ()

    def part(self, joint: str, role: str) -> PartTable:
        jp = self.joints[joint]
        pid = jp.reducer if role == "reducer" else jp.motor
        if pid is None:
            raise KeyError(f"{joint} has no {role} part")
        return self.parts[pid]

    def value_source(self, joint: str, key: str) -> str:
        """Where ``values[joint][key]`` comes from, in words a user can act on."""
        role, keys = SOURCES[key]
        if role == "supply":
            return f"{self.file}: supply (or [[joint]]) {keys}"
        if role == "motor+reducer":
            return (f"{self.part(joint, 'motor').source} and "
                    f"{self.part(joint, 'reducer').source}: {keys}")
        return f"{self.part(joint, role).source}: {keys}"

    def to_toml(self) -> str:
        # file names relative to the drivetrain's folder, so the text (and a record holding
        # it) does not depend on where the files lie
        home = Path(self.file).resolve().parent

        def rel(src: str) -> str:
            try:
                return Path(src).resolve().relative_to(home).as_posix()
            except ValueError:
                return Path(src).name
        doc: dict[str, Any] = {
            "file": Path(self.file).name, "overrides": list(self.overrides),
            "notes": list(self.notes), "supply": dict(self.supply or {}),
            "part": {pid: {"role": p.role, "source": rel(p.source), "changed": list(p.changed),
                           "table": copy.deepcopy(dict(p.table))}
                     for pid, p in self.parts.items()},
            "joint": {j: {"reducer": jp.reducer, "motor": jp.motor,
                          **({} if jp.current_limit_a is None
                             else {"current_limit_a": jp.current_limit_a}),
                          "simulated": dict(self.values[j])}
                      for j, jp in self.joints.items() if j in self.values},
        }
        return dump_toml(doc)


def _part_path(base: Path, rel: str, file: str, key: str) -> Path:
    p = Path(rel) if Path(rel).is_absolute() else (base / rel).resolve()
    if not p.is_file():
        raise InputError(file, key, "an existing part file (path relative to the drivetrain "
                         "file)", rel)
    return p


def _display(p: Path) -> str:
    try:
        return str(p.relative_to(Path.cwd()))
    except ValueError:
        return str(p)


WHO = (*JOINT_KINDS, *JOINT_NAMES)


def split_overrides(overrides: Mapping[str, Any]) -> tuple[dict[str, Any], dict[str, Any]]:
    """``(per joint-or-kind overrides, supply overrides)`` from ``parts.``-free dotted keys
    such as ``knee.reducer.ratio`` or ``supply.bus_voltage_v``; unknown forms are input
    errors naming the ``--set`` key."""
    who_over: dict[str, Any] = {}
    supply: dict[str, Any] = {}
    for key, value in overrides.items():
        head, _, rest = key.partition(".")
        full = "robot.parts." + key
        if head == "supply" and rest:
            supply[rest] = value
            continue
        if head not in WHO or not rest:
            raise InputError("--set", full, "robot.parts.<who>.<reducer|motor>.<key>, "
                             "robot.parts.<who>.<reducer_file|motor_file|current_limit_a> or "
                             "robot.parts.supply.<key>, with <who> a joint kind (abad, hip, "
                             "knee) or a joint such as fl_knee")
        role, _, sub = rest.partition(".")
        if role in ("reducer", "motor") and sub:
            pass
        elif role in ("reducer_file", "motor_file", "current_limit_a") and not sub:
            pass
        else:
            raise InputError("--set", full, "after the joint or kind: reducer.<key>, "
                             "motor.<key>, reducer_file, motor_file or current_limit_a")
        who_over[key] = value
    return who_over, supply


def resolve_drivetrain(path: str | Path, overrides: Mapping[str, Any] | None = None,
                       joint_names: Sequence[str] = JOINT_NAMES, complete: bool = True
                       ) -> ResolvedDrivetrain:
    """Read a drivetrain file and its parts, apply ``overrides`` (keys as after
    ``robot.parts.``), and resolve what the simulation uses for every joint.

    ``complete`` (to simulate): every joint needs a reducer and a motor, and the file a
    ``[supply]``. Without it (a check of parts alone) joints may lack parts or be unassigned;
    ``values`` then holds only the joints with both parts (when there is a supply)."""
    file = str(path)
    base = Path(path).resolve().parent
    raw_doc = load_toml(path, "drivetrain file")
    if isinstance(raw_doc.get("part"), dict) and isinstance(raw_doc.get("joint"), dict):
        # a resolved drivetrain as a record stores it (parts inside, overrides applied)
        if overrides:
            raise InputError(file, "part", "a drivetrain file with [[joint]] tables when parts "
                             "are changed with --set robot.parts.* (this file is a resolved "
                             "drivetrain, as a record stores it)")
        return drivetrain_from_toml(Path(path).read_text(), file)
    data = validate(raw_doc, FILE_SPEC, file=file)
    if not data["joint"]:
        raise InputError(file, "joint", "at least one [[joint]] table")
    chosen: dict[str, dict[str, Any]] = {}
    for i, table in enumerate(data["joint"]):
        key = f"joint[{i}]"
        entry = validate(table, JOINT_SPEC, file=file, prefix=key + ".")
        if entry["reducer"] is None and entry["motor"] is None \
                and entry["current_limit_a"] is None:
            raise InputError(file, key, "a reducer, a motor or a current limit for the "
                             "matched joints")
        hits = [j for j in joint_names if fnmatch.fnmatchcase(j, entry["match"])]
        if not hits:
            raise InputError(file, key + ".match", "a joint name or pattern matching one of "
                             + ", ".join(joint_names), entry["match"])
        got: dict[str, Any] = {r: (_part_path(base, entry[r], file, f"{key}.{r}"), f"{key}.{r}")
                               for r in ("reducer", "motor") if entry[r] is not None}
        if entry["current_limit_a"] is not None:
            got["current_limit_a"] = entry["current_limit_a"]
        for j in hits:
            chosen.setdefault(j, {}).update(got)
    who_over, supply_over = split_overrides(overrides or {})
    if data["supply"] is None and (complete or supply_over):
        raise InputError(file, "supply", "a [supply] table (bus voltage and current limit "
                         "of the drivers; the simulation needs them)")
    supply = None
    if data["supply"] is not None:
        supply_raw = copy.deepcopy(data["supply"])
        for k, v in supply_over.items():
            set_dotted(supply_raw, k, v)
        supply = validate(supply_raw, SUPPLY_SPEC, file=file, prefix="supply.")
    # file replacements first, then value overrides (kind before joint)
    order = sorted(who_over, key=lambda k: (k.split(".")[0] in JOINT_NAMES, k))
    for j in joint_names:
        for k in order:
            who, _, rest = k.partition(".")
            if who not in (j, j.split("_")[1]):
                continue
            if rest in ("reducer_file", "motor_file"):
                path = _part_path(base, str(who_over[k]), "--set", "robot.parts." + k)
                chosen.setdefault(j, {})[rest[:-5]] = (path, "robot.parts." + k)
            elif rest == "current_limit_a":
                val = who_over[k]
                if isinstance(val, bool) or not isinstance(val, int | float) or val <= 0:
                    raise InputError("--set", "robot.parts." + k, "a current > 0 A", val)
                chosen.setdefault(j, {})["current_limit_a"] = float(val)
    raw: dict[Path, dict[str, Any]] = {}
    parts: dict[str, PartTable] = {}
    ids: dict[tuple[str, tuple[str, ...]], str] = {}
    joints: dict[str, JointParts] = {}
    for j in joint_names:
        c = chosen.get(j, {})
        for role in ("reducer", "motor"):
            if role not in c and complete:
                raise InputError(file, "joint", f"a {role} part for {j} (every joint needs a "
                                 "reducer and a motor: the simulation uses both)")
        if not c:
            continue
        pid_of: dict[str, str | None] = {"reducer": None, "motor": None}
        for role in ("reducer", "motor"):
            if role not in c:
                continue
            p, _ = c[role]
            if p not in raw:
                raw[p] = load_toml(p, f"{role} part file")
            table = copy.deepcopy(raw[p])
            changed = []
            for k in order:
                who, _, rest = k.partition(".")
                r, _, sub = rest.partition(".")
                if who in (j, j.split("_")[1]) and r == role and sub:
                    set_dotted(table, sub, who_over[k])
                    changed.append(f"{sub}={who_over[k]!r}")
            sig = (str(p), tuple(changed))
            if sig not in ids:
                stem = p.stem if not changed else f"{p.stem}_{len(ids)}"
                while stem in parts:
                    stem += "_"
                ids[sig] = stem
                parts[stem] = PartTable(role, _display(p), table, tuple(changed))
            pid_of[role] = ids[sig]
        joints[j] = JointParts(j, pid_of["reducer"], pid_of["motor"], c.get("current_limit_a"))
    over_text = tuple(f"robot.parts.{k}={v!r}" for k, v in (overrides or {}).items())
    return finish_drivetrain(ResolvedDrivetrain(file, parts, joints, supply,
                                                overrides=over_text))


def finish_drivetrain(dt: ResolvedDrivetrain) -> ResolvedDrivetrain:
    """Compute :attr:`ResolvedDrivetrain.values` and ``notes`` from the part tables."""
    sup = dt.supply
    values: dict[str, dict[str, float]] = {}
    notes: list[str] = []
    if sup is None:
        return ResolvedDrivetrain(dt.file, dt.parts, dt.joints, dt.supply, values, (),
                                  dt.overrides)
    factor = line_voltage_factor(sup["modulation"])
    lash_unsimulated: dict[str, list[str]] = {}
    red_cache: dict[str, tuple[float, dict[str, Any]]] = {}
    mot_cache: dict[str, dict[str, Any]] = {}
    for j, jp in dt.joints.items():
        if jp.reducer is None or jp.motor is None:
            continue
        rp, mp = dt.parts[jp.reducer], dt.parts[jp.motor]
        if jp.reducer not in red_cache:
            red_cache[jp.reducer] = (reducer_ratio(rp.table, rp.source),
                                     reducer_common(rp.table, rp.source))
            c = red_cache[jp.reducer][1]
            if 0 < c["efficiency_back"] < MIN_SIM_EFFICIENCY_BACK or c["efficiency_back"] == 0:
                raise InputError(rp.source, "efficiency_back",
                                 f"at least {MIN_SIM_EFFICIENCY_BACK} to simulate (a "
                                 "self-locking reducer cannot be back-driven, and the "
                                 "simulation drives every joint both ways)", c["efficiency_back"])
        if jp.motor not in mot_cache:
            mot_cache[jp.motor] = motor_sim_values(mp.table, mp.source)
        n, r = red_cache[jp.reducer]
        m = mot_cache[jp.motor]
        limit = sup["current_limit_a"] if jp.current_limit_a is None else jp.current_limit_a
        stiff = r["mesh_stiffness_nm_rad"]
        if r["backlash_rad"] > 0 and stiff <= 0:
            lash_unsimulated.setdefault(Path(rp.source).name, []).append(j)
        values[j] = {
            "gear_ratio": n,
            "rotor_inertia_kg_m2": m["rotor_inertia_kg_m2"] + r["input_inertia_kg_m2"]
            + r["output_inertia_kg_m2"] / n ** 2,
            "torque_constant_nm_a": m["back_emf_v_s_per_rad"],
            "current_limit_a": dc_equivalent_current_a(limit, sup["current_limit_convention"]),
            "phase_resistance_ohm": m["line_resistance_ohm"] / 2.0,
            "bus_voltage_v": sup["bus_voltage_v"] * factor,
            "friction_coulomb_nm": r["output_friction_torque_nm"] + n * r["input_drag_torque_nm"],
            "friction_viscous_nm_s_rad": r["viscous_drag_nm_s_rad"],
            "efficiency_forward": r["efficiency_forward"],
            "efficiency_back": r["efficiency_back"],
            "backlash_rad": r["backlash_rad"] if stiff > 0 else 0.0,
            "mesh_stiffness_nm_rad": stiff,
            "mesh_damping_nm_s_rad": r["mesh_damping_nm_s_rad"],
        }
    for src, js in lash_unsimulated.items():
        notes.append(f"backlash of {src} not simulated on {', '.join(js)}: the part gives no "
                     "mesh_stiffness_nm_rad (rigid mesh)")
    notes.append("motor drag (friction, no-load current, iron loss) is not in the simulated "
                 "joint; the motor check adds it to the current and heat")
    return ResolvedDrivetrain(dt.file, dt.parts, dt.joints, dt.supply, values, tuple(notes),
                              dt.overrides)


def drivetrain_from_toml(text: str, file: str) -> ResolvedDrivetrain:
    """A resolved drivetrain as a record stores it (:meth:`ResolvedDrivetrain.to_toml`); the
    simulated values are recomputed from the stored part tables and must agree."""
    try:
        doc = tomllib.loads(text)
        parts = {pid: PartTable(p["role"], p["source"], p["table"], tuple(p.get("changed", ())))
                 for pid, p in doc["part"].items()}
        joints = {j: JointParts(j, e["reducer"], e["motor"], e.get("current_limit_a"))
                  for j, e in doc["joint"].items()}
        stored = {j: dict(e["simulated"]) for j, e in doc["joint"].items()}
        supply = validate(doc["supply"], SUPPLY_SPEC, file=file, prefix="drivetrain.supply.")
        dt = finish_drivetrain(ResolvedDrivetrain(str(doc["file"]), parts, joints, supply,
                                                  overrides=tuple(doc.get("overrides", ()))))
    except (tomllib.TOMLDecodeError, KeyError, TypeError, AttributeError) as exc:
        raise InputError(file, "drivetrain_toml", "a drivetrain as gaitload stores it "
                         f"({type(exc).__name__}: {exc})") from None
    for j, vals in stored.items():
        for k in SIM_KEYS:
            a, b = vals.get(k), dt.values[j][k]
            if a is None or not math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-15):
                raise InputError(file, f"drivetrain_toml: joint.{j}.simulated.{k}",
                                 f"the value its parts give, {b!r}", a)
    return dt


def differences(simulated: Mapping[str, Mapping[str, float]], other: ResolvedDrivetrain,
                keys: Sequence[str] = SIM_KEYS, rel_tol: float = 1e-9
                ) -> list[tuple[str, str, float, float]]:
    """``(joint, key, simulated value, other's value)`` wherever ``other`` differs from what
    was simulated, for the joints both have and the ``keys`` given."""
    out = []
    for j, vals in simulated.items():
        if j not in other.values:
            continue
        for k in keys:
            if k not in vals:
                continue
            a, b = float(vals[k]), float(other.values[j][k])
            if not math.isclose(a, b, rel_tol=rel_tol, abs_tol=1e-15):
                out.append((j, k, a, b))
    return out
