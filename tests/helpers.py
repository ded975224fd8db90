"""Small helpers shared by several test modules."""

from __future__ import annotations

import os
import tempfile
from typing import Any

import numpy as np


def held_elements(obj: Any, seen: set[int] | None = None) -> int:
    """Number of array elements reachable from ``obj`` (attributes, lists, tuples, dicts)."""
    seen = set() if seen is None else seen
    if id(obj) in seen:
        return 0
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        return obj.size
    if isinstance(obj, dict):
        return sum(held_elements(v, seen) for v in obj.values())
    if isinstance(obj, list | tuple):
        return sum(held_elements(v, seen) for v in obj)
    if hasattr(obj, "__dict__"):
        return held_elements(vars(obj), seen)
    return 0


def load_test_robot(pb: Any, cid: int, urdf: str, fixed: bool = True) -> int:
    """Load ``urdf`` (text) into engine world ``cid`` with inertia from the file, link damping
    zeroed and the joint-speed clamp raised (the engine traps the runner also avoids)."""
    with tempfile.TemporaryDirectory() as tmp:
        fn = os.path.join(tmp, "r.urdf")
        with open(fn, "w") as fh:
            fh.write(urdf)
        flags = pb.URDF_USE_INERTIA_FROM_FILE | pb.URDF_MAINTAIN_LINK_ORDER
        r = pb.loadURDF(fn, [0, 0, 1], flags=flags, useFixedBase=fixed, physicsClientId=cid)
    for link in range(-1, pb.getNumJoints(r, physicsClientId=cid)):
        pb.changeDynamics(r, link, linearDamping=0.0, angularDamping=0.0, physicsClientId=cid)
    pb.changeDynamics(r, -1, maxJointVelocity=1e4, physicsClientId=cid)
    return int(r)


# ---- the demo robot's drivetrain changed for a test ------------------------------------------

# the actuator keys of older model files and the part keys they became (sim.parts.drivetrain)
_PART_KEY = {"friction_coulomb_nm": "reducer.output_friction_torque_nm",
             "friction_viscous_nm_s_rad": "reducer.viscous_drag_nm_s_rad",
             "efficiency_forward": "reducer.efficiency_forward",
             "efficiency_back": "reducer.efficiency_back",
             "backlash_rad": "reducer.backlash_rad",
             "mesh_stiffness_nm_rad": "reducer.mesh_stiffness_nm_rad",
             "mesh_damping_nm_s_rad": "reducer.mesh_damping_nm_s_rad",
             "rotor_inertia_kg_m2": "motor.rotor_inertia_kg_m2",
             "gear_ratio": "reducer.ratio",
             "current_limit_a": "current_limit_a"}

GENERIC_REDUCER = "parts/reducer_rated_generic.toml"  # relative to the demo drivetrain


def ideal_reducers(kinds: tuple[str, ...] = ("abad", "hip", "knee")) -> dict[str, Any]:
    """Part overrides (keys after ``robot.``) that make the reducers of ``kinds`` ideal: no
    losses, no inertia of their own, so the rotor is the motor's 6.5e-5 kg m^2 alone."""
    out: dict[str, Any] = {}
    for k in kinds:
        out.update({f"parts.{k}.reducer.efficiency_forward": 1.0,
                    f"parts.{k}.reducer.efficiency_back": 1.0,
                    f"parts.{k}.reducer.input_drag_torque_nm": 0.0,
                    f"parts.{k}.reducer.input_inertia_kg_m2": 0.0,
                    f"parts.{k}.reducer.output_inertia_kg_m2": 0.0})
    return out


def drive_overrides(values: dict[str, Any], ideal: bool = True) -> dict[str, Any]:
    """``{"knee.friction_coulomb_nm": 0.5, ...}`` (joint kind or joint, then an actuator value
    as the simulation uses it) as part overrides on the demo drivetrain, on top of ideal
    reducers; a ratio swaps the reducer for the generic rated one."""
    out = ideal_reducers() if ideal else {}
    for key, v in values.items():
        who, name = key.split(".")
        if name == "gear_ratio":
            out[f"parts.{who}.reducer_file"] = GENERIC_REDUCER
            if ideal:
                out.update({f"parts.{who}.reducer.{k}": x for k, x in (
                    ("efficiency_forward", 1.0), ("efficiency_back", 1.0),
                    ("input_drag_torque_nm", 0.0), ("input_inertia_kg_m2", 0.0))})
        out[f"parts.{who}.{_PART_KEY[name]}"] = v
    return out


def drive_set_args(values: dict[str, Any], ideal: bool = True) -> list[str]:
    """The same as ``--set robot.<key>=<value>`` arguments."""
    return [f"robot.{k}={v!r}" if isinstance(v, str) else f"robot.{k}={v}"
            for k, v in drive_overrides(values, ideal).items()]
