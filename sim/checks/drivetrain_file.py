"""Drivetrain files: which reducer and motor drive which joint.

Format (TOML; paths relative to the drivetrain file)::

    [[joint]]
    match = "*_knee"                          # a joint name or fnmatch pattern
    reducer = "parts/reducer_knee_belt.toml"  # a reducer part file (any kind)
    motor = "parts/motor_demo.toml"           # optional; read by the motor check

    [supply]                                  # optional; validated by the supply check

Entries are applied in order and later entries win, joint by joint, for the keys they give
(so a later ``match = "fl_knee"`` with only ``motor`` keeps the earlier reducer). A pattern
that matches no joint, a missing part file and an unknown key are input errors naming the
file and key. Each reducer part file is read once however many joints share it.
"""

from __future__ import annotations

import fnmatch
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim import JOINT_NAMES
from sim.checks.reducer import ReducerPart, load_reducer_part
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError

SPEC = {
    "joint": Field(list, "[[joint]] tables with match, reducer, motor", required=True,
                   item=dict),
    "supply": Field(dict, "the supply table (checked by the supply check)"),
}

JOINT_SPEC = {
    "match": Field(str, "a joint name or fnmatch pattern such as '*_knee'", required=True),
    "reducer": Field(str, "path of a reducer part file, relative to this file"),
    "motor": Field(str, "path of a motor part file, relative to this file"),
}


@dataclass(frozen=True)
class JointDrive:
    """What drives one joint: the reducer part (loaded), its path, and the motor part path."""

    joint: str
    reducer: ReducerPart | None
    reducer_path: Path | None
    motor_path: Path | None


@dataclass(frozen=True)
class Drivetrain:
    """A loaded drivetrain file. ``supply`` is the raw ``[supply]`` table (or None)."""

    file: str
    joints: Mapping[str, JointDrive]
    supply: Mapping[str, Any] | None
    unassigned: tuple[str, ...]


def _part_path(base: Path, rel: str, file: str, key: str) -> Path:
    p = (base / rel).resolve() if not Path(rel).is_absolute() else Path(rel)
    if not p.is_file():
        raise InputError(file, key, "an existing part file (path relative to the drivetrain "
                         "file)", rel)
    return p


def load_drivetrain(path: str | Path, joint_names: Sequence[str] = JOINT_NAMES) -> Drivetrain:
    """Read a drivetrain file and the reducer parts it names, for the joints ``joint_names``."""
    file = str(path)
    base = Path(path).resolve().parent
    data = validate(load_toml(path, "drivetrain file"), SPEC, file=file)
    if not data["joint"]:
        raise InputError(file, "joint", "at least one [[joint]] table")
    chosen: dict[str, dict[str, Path]] = {}
    for i, table in enumerate(data["joint"]):
        key = f"joint[{i}]"
        entry = validate(table, JOINT_SPEC, file=file, prefix=key + ".")
        if entry["reducer"] is None and entry["motor"] is None:
            raise InputError(file, key, "a reducer or a motor (or both) for the matched joints")
        pattern = entry["match"]
        hits = [j for j in joint_names if fnmatch.fnmatchcase(j, pattern)]
        if not hits:
            raise InputError(file, key + ".match",
                             "a joint name or pattern matching one of " + ", ".join(joint_names),
                             pattern)
        paths = {k: _part_path(base, entry[k], file, f"{key}.{k}")
                 for k in ("reducer", "motor") if entry[k] is not None}
        for j in hits:
            chosen.setdefault(j, {}).update(paths)
    parts: dict[Path, ReducerPart] = {}
    joints: dict[str, JointDrive] = {}
    for j in joint_names:
        if j not in chosen:
            continue
        rp = chosen[j].get("reducer")
        if rp is not None and rp not in parts:
            parts[rp] = load_reducer_part(rp)
        joints[j] = JointDrive(j, parts[rp] if rp is not None else None, rp,
                               chosen[j].get("motor"))
    unassigned = tuple(j for j in joint_names if j not in joints)
    return Drivetrain(file, joints, data["supply"], unassigned)
