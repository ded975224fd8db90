"""The drivetrain as the checks use it: the reducer and motor parts of each joint, loaded.

The file format, the overrides and what the simulation takes from the parts are in
:mod:`sim.parts.drivetrain`, which reads a drivetrain once for both the simulation and the
checks. Here the part tables of a resolved drivetrain become check parts: a
:class:`~sim.checks.reducer_part.ReducerPart` of its kind and a
:class:`~sim.checks.motor_part.MotorPart`, each built once however many joints share it.

A drivetrain comes from a file (:func:`load_drivetrain`; a file for the checks alone may
leave joints without a motor or without a reducer, and the supply out) or from a run record,
which stores the drivetrain it was simulated with (:func:`drivetrain_of_record`).
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim import JOINT_NAMES
from sim.checks.motor_part import MotorPart, motor_from_table
from sim.checks.reducer import ReducerPart, reducer_from_table
from sim.core.errors import InputError
from sim.parts.drivetrain import (
    SIM_KEYS,
    ResolvedDrivetrain,
    drivetrain_from_toml,
    resolve_drivetrain,
)
from sim.record import RunRecord


@dataclass(frozen=True)
class JointDrive:
    """What drives one joint: the reducer and motor parts (loaded), the files they came from,
    and the joint's driver current limit (DC-equivalent A; None = the supply's)."""

    joint: str
    reducer: ReducerPart | None
    reducer_source: str | None
    motor: MotorPart | None
    motor_source: str | None
    current_limit_a: float | None = None


@dataclass(frozen=True)
class Drivetrain:
    """A drivetrain for the checks. ``supply`` is the validated ``[supply]`` table (or None);
    ``resolved`` is the drivetrain as :mod:`sim.parts.drivetrain` resolved it."""

    file: str
    joints: Mapping[str, JointDrive]
    supply: Mapping[str, Any] | None
    unassigned: tuple[str, ...]
    resolved: ResolvedDrivetrain


def drivetrain_from_resolved(rd: ResolvedDrivetrain) -> Drivetrain:
    """Check parts for every joint of ``rd`` (each part table validated once)."""
    built: dict[str, Any] = {}

    def part(pid: str | None) -> Any:
        if pid is None:
            return None
        if pid not in built:
            p = rd.parts[pid]
            label = p.source if not p.changed else f"{p.source} (with {', '.join(p.changed)})"
            build = reducer_from_table if p.role == "reducer" else motor_from_table
            built[pid] = build(dict(p.table), label)
        return built[pid]

    joints = {}
    for j, jp in rd.joints.items():
        limit = rd.values[j]["current_limit_a"] if j in rd.values else None
        joints[j] = JointDrive(j, part(jp.reducer),
                               None if jp.reducer is None else rd.parts[jp.reducer].source,
                               part(jp.motor),
                               None if jp.motor is None else rd.parts[jp.motor].source,
                               limit if jp.current_limit_a is not None else None)
    unassigned = tuple(j for j in JOINT_NAMES if j not in joints)
    return Drivetrain(rd.file, joints, rd.supply, unassigned, rd)


def load_drivetrain(path: str | Path, joint_names: Sequence[str] = JOINT_NAMES,
                    overrides: Mapping[str, Any] | None = None) -> Drivetrain:
    """Read a drivetrain file and its parts for the checks (joints may lack parts)."""
    return drivetrain_from_resolved(resolve_drivetrain(path, overrides, joint_names,
                                                       complete=False))


# ---- the drivetrain a record was simulated with ---------------------------------------------

# defaults of the actuator tables of model files from before the drivetrain held the parts
_OLD_ACTUATOR_DEFAULTS = {"friction_coulomb_nm": 0.0, "friction_viscous_nm_s_rad": 0.0,
                          "efficiency_forward": 1.0, "efficiency_back": 1.0,
                          "backlash_rad": 0.0, "mesh_stiffness_nm_rad": 0.0,
                          "mesh_damping_nm_s_rad": 0.0}


def drivetrain_of_record(rec: RunRecord) -> ResolvedDrivetrain | None:
    """The drivetrain a record stores (``drivetrain_toml``), or None for a record from before
    records stored it."""
    text = rec.attrs.get("drivetrain_toml")
    if not text:
        return None
    return drivetrain_from_toml(str(text), str(rec.path))


def simulated_values(rec: RunRecord) -> tuple[dict[str, dict[str, float]], bool]:
    """What the record's simulation used per joint (:data:`SIM_KEYS`), and whether it came
    from a stored drivetrain (True) or from the actuator tables of an older record's model
    (False; its rotor inertia is then the motor rotor alone)."""
    rd = drivetrain_of_record(rec)
    if rd is not None:
        return {j: dict(v) for j, v in rd.values.items()}, True
    try:
        table = tomllib.loads(str(rec.attrs.get("model_toml", ""))).get("actuator", {})
    except tomllib.TOMLDecodeError:
        raise InputError(str(rec.path), "model_toml", "the model as gaitload stores it") \
            from None
    out: dict[str, dict[str, float]] = {}
    for j in JOINT_NAMES:
        vals: dict[str, Any] = dict(_OLD_ACTUATOR_DEFAULTS)
        for key in (j.split("_")[1], j):
            sub = table.get(key)
            if isinstance(sub, dict):
                vals.update({k: v for k, v in sub.items() if k in SIM_KEYS})
        if all(k in vals for k in SIM_KEYS):
            out[j] = {k: float(vals[k]) for k in SIM_KEYS}
    return out, False


def used_keys(rec: RunRecord) -> tuple[str, ...]:
    """The simulated values the record's run depended on: rotor inertia only when rotors (or
    an elastic mesh) were simulated, friction and efficiency only with losses on."""
    try:
        drive = tomllib.loads(str(rec.attrs.get("scenario_toml", ""))).get("drive", {})
    except tomllib.TOMLDecodeError:
        drive = {}
    rotors = drive.get("rotor_inertia", "off") != "off"
    losses = bool(drive.get("losses", True))
    skip = set()
    if not rotors:
        skip.add("rotor_inertia_kg_m2")
    if not losses:
        skip |= {"friction_coulomb_nm", "friction_viscous_nm_s_rad", "efficiency_forward",
                 "efficiency_back"}
    return tuple(k for k in SIM_KEYS if k not in skip)
