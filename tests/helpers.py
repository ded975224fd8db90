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
