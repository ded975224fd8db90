"""What a run gives back besides its record: the :class:`RunResult` (status, record path,
per-joint figures, locomotion summary) and the :class:`RunSummary` accumulator of locomotion
figures over the recorded span of a segment or a run.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any


@dataclass
class RunResult:
    """Outcome of one run: status, where the record is, and per-joint figures."""

    status: str
    detail: str
    record: Path
    joints: dict[str, dict[str, float]] = field(default_factory=dict)
    total_mass_kg: float = 0.0
    steps_per_s: float = 0.0
    # locomotion figures over the recorded span (see RunSummary); per segment in ``segments``
    summary: dict[str, float | None] = field(default_factory=dict)
    segments: list[dict[str, Any]] = field(default_factory=list)
    simulated_s: float | None = None  # time the run reached (below planned_s if it ended early)
    planned_s: float | None = None

    def to_json(self) -> dict[str, Any]:
        return {"status": self.status, "detail": self.detail, "record": str(self.record),
                "simulated_s": self.simulated_s, "planned_s": self.planned_s,
                "joints": self.joints, "summary": self.summary, "segments": self.segments}


# a lift-off this soon after a touchdown is a bounce (common practice: several control
# periods, well below the shortest planned stance of the shipped gaits, 0.15 s)
BOUNCE_WINDOW_S = 0.02


class RunSummary:
    """Locomotion figures accumulated over the recorded span of one segment (or a run).

    mean forward speed (along the body heading) achieved and commanded, body tilt RMS (angle
    between body z and ground normal), slip distance of the stance feet (horizontal speed of
    the material contact point, v_foot + omega x (-r n), integrated while in contact), positive
    joint work (sum of max(tau qd, 0) dt over the joints) and the mechanical cost of transport
    positive work / (m g d), d the net horizontal displacement of the base (the dimensionless
    specific resistance of Gabrielli and von Karman, 1950, from memory, here with mechanical
    joint work in place of the energy drawn).

    The quality screen's locomotion parts (:meth:`screen_figures`) are accumulated beside
    them at each control update: the base travel under each stance foot (horizontal base
    speed times the update period, per foot in contact), touchdowns and touchdown bounces
    (lift-off within ``BOUNCE_WINDOW_S`` of the touchdown), and, in segments that hold a
    planned height (``plan_base_z_m`` set), the error of the base height against it.
    """

    def __init__(self, plan_base_z_m: float | None = None) -> None:
        self.time_s = 0.0
        self.fwd = 0.0
        self.cmd = 0.0
        self.tilt2 = 0.0
        self.slip_m = 0.0
        self.work_j = 0.0
        self.p0: list[float] | None = None
        self.p1: list[float] | None = None
        self.plan_base_z_m = plan_base_z_m
        self.stance_travel_m = 0.0
        self.touchdowns = 0
        self.bounces = 0
        self.h_time_s = 0.0
        self.h_err_m_s = 0.0
        self.h_err2_m2_s = 0.0
        self.h_err_max_m = 0.0
        self.h_plan_m_s = 0.0

    def add(self, other: RunSummary) -> None:
        self.time_s += other.time_s
        self.fwd += other.fwd
        self.cmd += other.cmd
        self.tilt2 += other.tilt2
        self.slip_m += other.slip_m
        self.work_j += other.work_j
        self.stance_travel_m += other.stance_travel_m
        self.touchdowns += other.touchdowns
        self.bounces += other.bounces
        self.h_time_s += other.h_time_s
        self.h_err_m_s += other.h_err_m_s
        self.h_err2_m2_s += other.h_err2_m2_s
        self.h_err_max_m = max(self.h_err_max_m, other.h_err_max_m)
        self.h_plan_m_s += other.h_plan_m_s
        if other.p0 is not None:
            self.p0 = self.p0 or other.p0
            self.p1 = other.p1

    def figures(self, weight_n: float) -> dict[str, float | None]:
        t = self.time_s
        d = 0.0
        if self.p0 is not None and self.p1 is not None:
            d = math.hypot(self.p1[0] - self.p0[0], self.p1[1] - self.p0[1])
        return {
            "mean_forward_speed_m_s": self.fwd / t if t > 0 else None,
            "commanded_forward_speed_m_s": self.cmd / t if t > 0 else None,
            "tilt_rms_rad": math.sqrt(self.tilt2 / t) if t > 0 else None,
            "slip_distance_m": self.slip_m,
            "positive_work_j": self.work_j,
            "distance_m": d,
            "cost_of_transport": self.work_j / (weight_n * d) if d > 0.05 else None,
        }

    def screen_figures(self) -> dict[str, float]:
        """The locomotion part of the quality screen (stored as ``/quality`` attributes)."""
        ht = self.h_time_s
        return {
            "observed_s": self.time_s,
            "slip_m": self.slip_m,
            "stance_travel_m": self.stance_travel_m,
            "touchdowns": float(self.touchdowns),
            "bounces": float(self.bounces),
            "bounce_window_s": BOUNCE_WINDOW_S,
            "height_screened_s": ht,
            "height_error_mean_m": self.h_err_m_s / ht if ht > 0 else 0.0,
            "height_error_rms_m": math.sqrt(self.h_err2_m2_s / ht) if ht > 0 else 0.0,
            "height_error_max_m": self.h_err_max_m,
            "height_plan_mean_m": self.h_plan_m_s / ht if ht > 0 else 0.0,
        }
