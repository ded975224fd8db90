"""What every reducer part is, whatever its kind: the keys common to all reducer part files,
the :class:`ReducerPart` base that each kind extends (rated, cycloidal, planetary, belt), the
settings and the duty a part is checked with, and helpers the kinds share.

Takes a validated part table; gives the common keyword arguments of a part. The kinds live in
their own modules and :mod:`sim.checks.reducer` dispatches to them by ``kind``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from sim.checks.report import Limit
from sim.core.errors import InputError
from sim.loads.spectra import JointSpectrum
from sim.parts.drivetrain import REDUCER_COMMON_SPEC, REDUCER_KINDS

KINDS = REDUCER_KINDS


@dataclass(frozen=True)
class CheckSettings:
    """What the user asks for: life in hours of use, safety factor on material allowables
    (and static bearing safety), and bearing reliability for the ISO 281 a1 factor."""

    required_life_h: float = 1000.0
    safety_factor: float = 1.5
    reliability_pct: float = 90.0


@dataclass(frozen=True)
class JointDuty:
    """A joint's duty: its spectrum and, when the time series is at hand, a counter of torque
    excursions above a threshold (``count_events(threshold_nm) -> events in the duty``; for a
    usage mix the weighted sum over its records, so possibly fractional)."""

    spectrum: JointSpectrum
    count_events: Callable[[float], float] | None = None

    @property
    def hours(self) -> float:
        return self.spectrum.duration_s / 3600.0

# ---- common part data ---------------------------------------------------------------------

COMMON_SPEC: dict[str, Any] = REDUCER_COMMON_SPEC  # one definition: sim.parts.drivetrain


@dataclass(frozen=True, kw_only=True)
class ReducerPart:
    """What every reducer part exposes (the motor check uses ratio, efficiencies, inertia)."""

    file: str
    kind: str
    name: str
    ratio: float
    efficiency_forward: float
    efficiency_back: float
    backlash_rad: float = 0.0
    input_inertia_kg_m2: float = 0.0
    output_inertia_kg_m2: float = 0.0
    input_drag_torque_nm: float = 0.0
    output_friction_torque_nm: float = 0.0

    def limits(self, duty: JointDuty, settings: CheckSettings) -> list[Limit]:
        raise NotImplementedError  # each kind provides its own

    def notes(self) -> list[str]:
        return []

    def extra_values(self, duty: JointDuty) -> dict[str, Any]:
        """Kind-specific numbers for the report (geometry, loads); none by default."""
        return {}


def common_values(v: Mapping[str, Any], file: str) -> dict[str, Any]:
    """The common keys of a validated part table, as keyword arguments of ReducerPart."""
    return {"file": file, "kind": v["kind"], "name": v["name"] or Path(file).stem,
            "efficiency_forward": v["efficiency_forward"],
            "efficiency_back": v["efficiency_back"], "backlash_rad": v["backlash_rad"],
            "input_inertia_kg_m2": v["input_inertia_kg_m2"],
            "output_inertia_kg_m2": v["output_inertia_kg_m2"],
            "input_drag_torque_nm": v["input_drag_torque_nm"],
            "output_friction_torque_nm": v["output_friction_torque_nm"]}


def check_stated_ratio(v: Mapping[str, Any], computed: float, file: str) -> None:
    """A geometry part may state its ratio for readability; it must match the geometry."""
    if v.get("ratio") is not None and not math.isclose(v["ratio"], computed, rel_tol=1e-6):
        raise InputError(file, "ratio", f"the ratio the geometry gives, {computed:.6g}",
                         v["ratio"])

def count_excursions(abs_torque_nm: np.ndarray, threshold_nm: float,
                     was_above: bool = False) -> tuple[int, bool]:
    """Number of times |T| rises above ``threshold_nm`` in a series ``[sample]``.

    ``was_above`` carries the state across chunks; returns ``(count, last_above)``.
    """
    above = np.asarray(abs_torque_nm) > threshold_nm
    if above.size == 0:
        return 0, was_above
    prev = np.concatenate(([was_above], above[:-1]))
    return int(np.count_nonzero(above & ~prev)), bool(above[-1])


def max_speed_rad_s(spec: JointSpectrum) -> float:
    """Upper bound of |speed| over the occupied speed bins (rad/s)."""
    occupied = spec.time_s.sum(axis=0) > 0
    if not occupied.any():
        return 0.0
    e = np.abs(spec.speed_edges_rad_s)
    upper = np.maximum(e[:-1], e[1:])
    return float(upper[occupied].max())
