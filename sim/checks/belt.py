"""Timing-belt stages (one or more in series) from pulley teeth, pitch and centre distance.

Open-drive geometry (Shigley ch. 17, from memory), pitch diameters d < D, centre distance C:

    d = z p / pi                         pitch diameter
    beta = asin((D - d)/(2 C))           wrap on the small pulley theta_s = pi - 2 beta
    L = 2 C cos beta + pi (D + d)/2 + beta (D - d)     exact pitch length
    span = C cos beta                    free span between tangent points
    TIM = z_s theta_s / (2 pi)           teeth in mesh on the small pulley

Effective pull from torque: ``F_e = 2 T / d`` on either pulley of a stage. Capacity: the
belt maker's allowable effective pull for the belt width (user data), derated in proportion
when fewer whole teeth than the minimum (6, common practice) are in mesh, divided by the
safety factor; with a pretension given, the slack side must stay taut: ``F_e <= 2 F_pre``.

Not modelled: belt fatigue life, tooth jump under dynamic load, pulley shaft bearings and
deflection, stretch and elasticity (stiffness of the joint).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from scipy.optimize import brentq

from sim.checks.reducer_part import (
    COMMON_SPEC,
    CheckSettings,
    JointDuty,
    ReducerPart,
    check_stated_ratio,
    common_values,
)
from sim.checks.report import Limit
from sim.core.config import Field, validate
from sim.core.errors import InputError
from sim.parts.ratios import stage_chain_ratio


def pitch_diameter_m(teeth: int, pitch_m: float) -> float:
    """Pitch diameter of a toothed pulley, ``z p / pi`` (m)."""
    return teeth * pitch_m / math.pi


def wrap_angle_small_rad(d_small_m: float, d_large_m: float, centre_distance_m: float) -> float:
    """Wrap angle on the small pulley of an open drive, ``pi - 2 asin((D-d)/(2C))`` (rad)."""
    return math.pi - 2.0 * math.asin((d_large_m - d_small_m) / (2.0 * centre_distance_m))


def pitch_length_m(d_small_m: float, d_large_m: float, centre_distance_m: float) -> float:
    """Exact pitch length of an open belt (m)."""
    beta = math.asin((d_large_m - d_small_m) / (2.0 * centre_distance_m))
    return 2.0 * centre_distance_m * math.cos(beta) + math.pi * (d_large_m + d_small_m) / 2.0 \
        + beta * (d_large_m - d_small_m)


def pitch_length_approx_m(d_small_m: float, d_large_m: float, centre_distance_m: float
                          ) -> float:
    """Common approximation ``2C + pi (D+d)/2 + (D-d)^2/(4C)`` (Shigley ch. 17)."""
    c = centre_distance_m
    return 2 * c + math.pi * (d_large_m + d_small_m) / 2 + (d_large_m - d_small_m) ** 2 / (4 * c)


def centre_distance_m(length_m: float, d_small_m: float, d_large_m: float) -> float:
    """Inverse of :func:`pitch_length_m`: the centre distance for a belt of pitch length L."""
    c_min = 0.5 * (d_large_m - d_small_m) * (1 + 1e-12) + 1e-12
    if pitch_length_m(d_small_m, d_large_m, c_min) >= length_m:
        raise ValueError("belt too short for these pulleys")
    return float(brentq(lambda c: pitch_length_m(d_small_m, d_large_m, c) - length_m, c_min,
                        length_m, xtol=1e-15, rtol=1e-14))


def span_length_m(d_small_m: float, d_large_m: float, centre_distance_m: float) -> float:
    """Free span length between the tangent points, ``C cos beta`` (m)."""
    beta = math.asin((d_large_m - d_small_m) / (2.0 * centre_distance_m))
    return centre_distance_m * math.cos(beta)


def teeth_in_mesh(small_teeth: int, wrap_rad: float) -> float:
    """Teeth in mesh on the small pulley, ``z_s theta_s / (2 pi)`` (not rounded)."""
    return small_teeth * wrap_rad / (2.0 * math.pi)


def effective_pull_n(torque_nm: float, pitch_diameter_m_: float) -> float:
    """Effective (transmitted) pull ``F_e = 2 T / d`` (N)."""
    return 2.0 * abs(torque_nm) / pitch_diameter_m_


STAGE_SPEC: dict[str, Any] = {
    "driver_teeth": Field(int, required=True, min=6),
    "driven_teeth": Field(int, required=True, min=6),
    "pitch_m": Field(float, "belt tooth pitch", required=True, min=0.0, min_inclusive=False),
    "centre_distance_m": Field(float, required=True, min=0.0, min_inclusive=False),
    "width_m": Field(float, "belt width", required=True, min=0.0, min_inclusive=False),
    "rated_pull_n": Field(float, "belt maker's allowable effective pull at this width",
                          required=True, min=0.0, min_inclusive=False),
    "pretension_n": Field(float, "installed span tension", min=0.0, min_inclusive=False),
    "min_teeth_in_mesh": Field(int, "common practice 6", default=6, min=1),
}


@dataclass(frozen=True)
class BeltStageGeometry:
    """One belt stage; ``driven`` turns slower when ``driven_teeth > driver_teeth``."""

    driver_teeth: int
    driven_teeth: int
    pitch_m: float
    centre_distance_m: float
    width_m: float
    rated_pull_n: float
    pretension_n: float | None
    min_teeth_in_mesh: int

    @property
    def ratio(self) -> float:
        return self.driven_teeth / self.driver_teeth

    @property
    def diameters_m(self) -> tuple[float, float]:
        """Pitch diameters ``(driver, driven)``."""
        return (pitch_diameter_m(self.driver_teeth, self.pitch_m),
                pitch_diameter_m(self.driven_teeth, self.pitch_m))

    def _small_large(self) -> tuple[float, float, int]:
        a, b = self.diameters_m
        return min(a, b), max(a, b), min(self.driver_teeth, self.driven_teeth)

    @property
    def teeth_in_mesh(self) -> float:
        d, big, z = self._small_large()
        return teeth_in_mesh(z, wrap_angle_small_rad(d, big, self.centre_distance_m))

    @property
    def pitch_length_m(self) -> float:
        d, big, _ = self._small_large()
        return pitch_length_m(d, big, self.centre_distance_m)

    @property
    def span_length_m(self) -> float:
        d, big, _ = self._small_large()
        return span_length_m(d, big, self.centre_distance_m)

    def capacity_n(self, safety_factor: float) -> float:
        """Allowable effective pull after the teeth-in-mesh derating and safety factor (N)."""
        whole = math.floor(self.teeth_in_mesh + 1e-9)
        derate = min(1.0, whole / self.min_teeth_in_mesh)
        return self.rated_pull_n * derate / safety_factor


@dataclass(frozen=True, kw_only=True)
class BeltDrive(ReducerPart):
    """Timing-belt stages in series, motor on the first driver, joint on the last driven."""

    stages: tuple[BeltStageGeometry, ...]

    def stage_torques_nm(self, output_torque_nm: float) -> list[float]:
        """Torque on each stage's driven pulley for an output torque (ideal, lossless)."""
        out = []
        downstream = 1.0
        for st in reversed(self.stages):
            out.append(abs(output_torque_nm) / downstream)
            downstream *= st.ratio
        return out[::-1]

    def pulls_n(self, output_torque_nm: float) -> list[float]:
        """Effective pull of each stage (N)."""
        return [effective_pull_n(t, st.diameters_m[1])
                for t, st in zip(self.stage_torques_nm(output_torque_nm), self.stages,
                                 strict=True)]

    def limits(self, duty: JointDuty, settings: CheckSettings) -> list[Limit]:
        peak = duty.spectrum.peak_torque_nm
        out: list[Limit] = []
        for k, (st, pull) in enumerate(zip(self.stages, self.pulls_n(peak), strict=True), 1):
            cap = st.capacity_n(settings.safety_factor)
            use = pull / cap
            geo = {"effective_pull_n": pull, "allowable_pull_n": cap,
                   "teeth_in_mesh": st.teeth_in_mesh, "pitch_length_m": st.pitch_length_m,
                   "span_length_m": st.span_length_m}
            out.append(Limit(f"belt stage {k} pull", "peak", use,
                             allowable_peak_torque_nm=peak / use if use > 0 else math.inf,
                             detail=geo))
            if st.pretension_n is not None:
                use = pull / (2.0 * st.pretension_n)
                out.append(Limit(f"belt stage {k} slack side", "peak", use,
                                 allowable_peak_torque_nm=peak / use if use > 0 else math.inf,
                                 detail={"slack_side_tension_n": st.pretension_n - pull / 2}))
        return out

    def extra_values(self, duty: JointDuty) -> dict[str, Any]:
        return {"stage_ratios": [st.ratio for st in self.stages],
                "teeth_in_mesh": [st.teeth_in_mesh for st in self.stages],
                "pitch_length_m": [st.pitch_length_m for st in self.stages],
                "span_length_m": [st.span_length_m for st in self.stages],
                "peak_effective_pull_n": self.pulls_n(duty.spectrum.peak_torque_nm)}

    def notes(self) -> list[str]:
        out = ["belt: fatigue life of belts not modelled (strength at the peak only)"]
        for k, st in enumerate(self.stages, 1):
            if st.teeth_in_mesh < st.min_teeth_in_mesh:
                out.append(f"belt stage {k}: {st.teeth_in_mesh:.2f} teeth in mesh, below "
                           f"{st.min_teeth_in_mesh}; capacity derated")
        return out


def belt_from_table(data: Mapping[str, Any], file: str) -> BeltDrive:
    """Validate a ``kind = "belt"`` part file: common keys plus ``[[belt.stage]]`` tables."""
    v = validate(data, {**COMMON_SPEC, "belt": {"stage": Field(list, "one table per stage",
                                                               required=True, item=dict)}},
                 file=file)
    stages = []
    if not v["belt"]["stage"]:
        raise InputError(file, "belt.stage", "at least one [[belt.stage]] table")
    for i, table in enumerate(v["belt"]["stage"]):
        key = f"belt.stage[{i}]"
        g = validate(table, STAGE_SPEC, file=file, prefix=key + ".")
        st = BeltStageGeometry(**g)
        d, big = sorted(st.diameters_m)
        if st.centre_distance_m <= 0.5 * (d + big):
            raise InputError(file, key + ".centre_distance_m",
                             f"more than the sum of the pulley radii, {0.5 * (d + big):.6g} m "
                             "(pulleys overlap)", st.centre_distance_m)
        stages.append(st)
    ratio = stage_chain_ratio((st.driver_teeth, st.driven_teeth) for st in stages)
    check_stated_ratio(v, ratio, file)
    return BeltDrive(**common_values(v, file), ratio=ratio, stages=tuple(stages))
