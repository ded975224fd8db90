"""Disturbances of a run: external pushes on the body and trips (a swing foot held fast).

Scenario tables (validated here, applied by the runner, :mod:`sim.engine.runner`):

``[[push]]``: a constant force on the base link for a time window. The force is given in the
world (ground) frame and applied every simulation step of ``[start_s, start_s + duration_s)``
at the base centre of mass plus ``point_m`` (a world-frame offset; a non-zero offset adds the
moment ``point_m x force_n``). Several pushes may overlap; their forces add. The applied total
is recorded as ``/base/external_force_n`` [sample, 3].

``[[trip]]``: from ``start_s`` on, the first time the leg ``leg`` has been in its planned swing
for ``after_liftoff_s``, its foot centre is tied to the world point where it is at that
instant by a point-to-point constraint (the foot stops mid-swing, as when caught by a root or
a cable), for ``duration_s``, then released. The constraint carries at most ``max_force_n``;
beyond that the foot is dragged along (a snag that gives way). Catch and release times are
recorded as ``/events/trip_start/<leg>`` and ``/events/trip_end/<leg>`` (s).
"""

from __future__ import annotations

from typing import Any

from sim import LEGS
from sim.core.config import Field, validate
from sim.core.errors import InputError

PUSH_SPEC: dict[str, Any] = {
    "start_s": Field(float, "time the push begins, from the start of the run", required=True,
                     min=0.0),
    "duration_s": Field(float, "duration of the push", required=True, min=0.0,
                        min_inclusive=False),
    "force_n": Field(list, "force on the body, world frame [fx, fy, fz]", required=True,
                     item=float, length=3),
    "point_m": Field(list, "point of application relative to the base centre of mass, world "
                     "frame", default=[0.0, 0.0, 0.0], item=float, length=3),
}

TRIP_SPEC: dict[str, Any] = {
    "leg": Field(str, "leg whose foot is caught", required=True, choices=LEGS),
    "start_s": Field(float, "earliest time of the catch, from the start of the run",
                     required=True, min=0.0),
    "after_liftoff_s": Field(float, "the foot is caught once its leg has been this long in "
                             "swing (mid-swing)", default=0.04, min=0.0),
    "duration_s": Field(float, "how long the foot is held", default=0.1, min=0.0,
                        min_inclusive=False),
    "max_force_n": Field(float, "largest force the catch can hold", default=2000.0, min=0.0,
                         min_inclusive=False),
}


def validate_disturbances(tables: list[Any], spec: dict[str, Any], key: str,
                          file: str) -> list[dict[str, Any]]:
    """Validate a list of ``[[push]]`` or ``[[trip]]`` tables (``key`` names the list)."""
    out = []
    for i, t in enumerate(tables):
        if not isinstance(t, dict):
            raise InputError(file, f"{key}.{i}", "a table", t)
        out.append(validate(t, spec, file, f"{key}.{i}."))
    return out
