"""Everything the loads command reports: all duty figures of each joint for one day of use.

Takes a usage mix (:mod:`sim.loads.mix`) and gives a :class:`LoadsReport`
(:func:`duty_loads`): per joint the day's histogram spectrum and the figures built on it
(:mod:`sim.loads.spectra`), the weighted series figures of the day (:mod:`sim.loads.series`)
with Miner damage on an S-N line, and notes saying which source each figure used. The cycle
matrix of the CSV and the plot spans the cycles found, so its edges are known only after a
first pass; :func:`with_cycle_matrices` counts the matrix in a second pass over the torque.
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim.core.config import check_option_number
from sim.loads.damage import (
    BasquinCurve,
    CycleMatrix,
    combine_matrices,
    combine_totals,
    cycle_matrix_edges,
)
from sim.loads.mix import UsageMix, usage_from_inputs
from sim.loads.quality import ScreenSet, screen_records
from sim.loads.series import (
    DEFAULT_HOLD_SPEED_RAD_S,
    DEFAULT_HOLD_TORQUE_NM,
    SERIES_CHUNK_ROWS,
    SeriesFigures,
    cycle_matrices,
    series_figures,
    series_unavailable_reason,
)
from sim.loads.spectra import (
    JointSpectrum,
    combine_spectra,
    equivalent_torque_detail,
    equivalent_torque_nm,
    mean_abs_speed_rad_s,
    parse_exponent,
    quadrant_split,
    rms_torque_nm,
    usage_spectra,
)
from sim.record import open_record

DEFAULT_EXPONENTS: tuple[str, ...] = ("3", "3.333")  # keys as in the documented JSON
DEFAULT_LEVEL_SHARES = (0.5, 0.75, 0.9)
CYCLE_MATRIX_BINS = 20  # range and mean bins of the cycle matrix (CSV, plot)


@dataclass(frozen=True)
class JointLoads:
    """All duty figures of one joint for one day of use of a mix (see :func:`duty_loads`).

    spectrum: the day's histogram spectrum. series: weighted series figures of the day, or
    None (``sources`` says why). damage_per_day: Miner damage of the day's rainflow cycles on
    the user's S-N line (None without a line or without series).
    cycle_matrix: the day's rainflow matrix (20 x 20 bins spanning the cycles), set by
    :func:`with_cycle_matrices`; None before that or without series.
    """

    joint: str
    spectrum: JointSpectrum
    exponents: tuple[str, ...]
    equivalent_torque_nm: dict[str, float]
    hold_speed_rad_s: float
    hold_torque_nm: float
    series: SeriesFigures | None
    sources: dict[str, str]
    damage_per_day: float | None = None

    @property
    def cycle_matrix(self) -> CycleMatrix | None:
        return None if self.series is None else self.series.rainflow.matrix

    @property
    def hours(self) -> float:
        return self.spectrum.duration_s / 3600.0

    def to_dict(self) -> dict[str, Any]:
        sp = self.spectrum
        hours = self.hours
        d: dict[str, Any] = {
            "hours": hours,
            "peak_torque_nm": sp.peak_torque_nm,
            "rms_torque_nm": rms_torque_nm(sp),
            "mean_abs_speed_rad_s": mean_abs_speed_rad_s(sp),
            "equivalent_torque_nm": dict(self.equivalent_torque_nm),
            "equivalent_torque_route": {
                k: {key: v for key, v in equivalent_torque_detail(sp, parse_exponent(k)).items()
                    if key != "value"} for k in self.exponents},
            "revolutions": float(sp.revolutions.sum()),
            "quadrants": quadrant_split(sp),
        }
        s = self.series
        if s is not None:
            d["hold"] = {"speed_below_rad_s": self.hold_speed_rad_s,
                         "torque_above_nm": self.hold_torque_nm,
                         "time_s": s.hold_time_s,
                         "share_of_time": s.hold_time_s / s.duration_s if s.duration_s else 0.0,
                         "rms_torque_nm": (math.sqrt(s.hold_torque_sq_time_nm2_s / s.hold_time_s)
                                           if s.hold_time_s > 0 else 0.0)}
            d["exceedances"] = [
                {"level_nm": lv, "count_per_hour": (n / hours if hours else 0.0),
                 "time_above_s_per_hour": (ta / hours if hours else 0.0)}
                for lv, n, ta in zip(s.levels_nm, s.upcrossings, s.time_above_s, strict=True)]
            phases = {}
            for name, ps in (("stance", s.stance), ("swing", s.swing)):
                if ps is not None:
                    phases[name] = {
                        "time_s": float(ps.time_s.sum()),
                        "revolutions": float(ps.revolutions.sum()),
                        "rms_torque_nm": rms_torque_nm(ps),
                        "peak_torque_nm": ps.peak_torque_nm,
                        "mean_abs_speed_rad_s": mean_abs_speed_rad_s(ps),
                        "equivalent_torque_nm": {k: equivalent_torque_nm(ps, parse_exponent(k))
                                                 for k in self.exponents},
                        "equivalent_torque_bias_bound": {
                            k: equivalent_torque_detail(ps, parse_exponent(k))["bias_bound"]
                            for k in self.exponents}}
            d["phases"] = phases or None
            c = s.rainflow
            d["rainflow"] = {"cycles": c.total,
                             "half_cycles_from_residue": c.residue,
                             "max_range_nm": c.max_range,
                             "damage_per_day": self.damage_per_day,
                             "life_days": (1.0 / self.damage_per_day
                                           if self.damage_per_day else None),
                             "life_hours": (hours / self.damage_per_day
                                            if self.damage_per_day else None)}
        else:
            d["hold"] = None
            d["exceedances"] = None
            d["phases"] = None
            d["rainflow"] = None
        d["sources"] = dict(self.sources)
        return d


def _weighted_series(parts: Sequence[tuple[SeriesFigures, float]],
                     names: Sequence[str]) -> SeriesFigures:
    f0 = parts[0][0]

    def opt_combine(key: str) -> JointSpectrum | None:
        specs = [(getattr(f, key), w) for f, w in parts]
        if any(s is None for s, _ in specs):
            return None
        return combine_spectra(specs, names)

    return SeriesFigures(
        f0.joint, sum(f.duration_s * w for f, w in parts), opt_combine("stance"),
        opt_combine("swing"), sum(f.hold_time_s * w for f, w in parts),
        sum(f.hold_torque_sq_time_nm2_s * w for f, w in parts), f0.levels_nm,
        tuple(float(sum(f.upcrossings[k] * w for f, w in parts)) for k in range(len(f0.levels_nm))),
        tuple(float(sum(f.time_above_s[k] * w for f, w in parts))
              for k in range(len(f0.levels_nm))),
        combine_totals([(f.rainflow, w) for f, w in parts]))


@dataclass(frozen=True)
class LoadsReport:
    """Result of :func:`duty_loads`: per-joint figures of one day of use plus notes."""

    mix: UsageMix
    joints: dict[str, JointLoads]
    notes: tuple[str, ...] = field(default_factory=tuple)
    sn_curve: BasquinCurve | None = None
    quality: ScreenSet | None = None  # the quality screen of every record of the mix

    def to_dict(self) -> dict[str, Any]:
        m = self.mix
        return {
            "joints": {j: jl.to_dict() for j, jl in self.joints.items()},
            "mix": {"source": str(m.source), "daily": m.daily,
                    "use_hours_per_day": m.use_hours_per_day,
                    "events_per_day": dict(m.events_per_day),
                    "entries": [{"name": e.name, "record": str(e.path), "kind": e.kind,
                                 "weight": e.weight, "hours_per_day": e.hours_per_day,
                                 "record_duration_s": e.duration_s} for e in m.entries]},
            "sn_curve": (None if self.sn_curve is None else
                         {"range_ref_nm": self.sn_curve.range_ref,
                          "cycles_ref": self.sn_curve.cycles_ref,
                          "exponent": self.sn_curve.exponent,
                          "cutoff_range_nm": self.sn_curve.cutoff_range}),
            "notes": list(self.notes),
            "quality": None if self.quality is None else self.quality.to_json(),
        }

    def to_json(self) -> str:
        """The JSON text of ``gaitload loads --json`` (:meth:`to_dict`, indent 2, a final
        newline)."""
        return json.dumps(self.to_dict(), indent=2, sort_keys=False, allow_nan=False) + "\n"


CAUTION = ("Results are estimates from simulated duty: manufacturer ratings, local codes and "
           "licensed engineering practice take precedence. Not modelled: wear, lubrication, "
           "temperature effects on materials, and loads outside the recorded runs.")


def duty_loads(mix: UsageMix, joints: str | Iterable[str] | None = None,
               exponents: Sequence[str] = DEFAULT_EXPONENTS,
               levels_nm: Sequence[float] | None = None,
               hold_speed_rad_s: float = DEFAULT_HOLD_SPEED_RAD_S,
               hold_torque_nm: float = DEFAULT_HOLD_TORQUE_NM,
               sn_curve: BasquinCurve | None = None, allow_failed: bool = False,
               rows: int = SERIES_CHUNK_ROWS) -> LoadsReport:
    """All figures of ``gaitload loads`` for one day of use of ``mix``.

    ``exponents`` are strings (``"3"``, ``"10/3"``) kept as the keys of the results.
    ``levels_nm``: exceedance levels; None uses 50, 75 and 90 % of each joint's peak torque.
    """
    exps = {k: parse_exponent(k) for k in exponents}
    curves = () if sn_curve is None else (sn_curve,)
    spectra = usage_spectra(mix, joints, allow_failed)
    names = list(spectra)
    notes = [CAUTION,
             "Rainflow: ASTM E1049-85 section 5.4.4 on each record separately; the residue of "
             "each record is counted as half cycles; counts are scaled by the entry weights.",
             _teq_note(spectra, exps)]
    if not mix.daily:
        notes.append("Records stand for themselves: 'per day' means one pass of the records.")
    notes += failed_run_notes([e.path for e in mix.entries])
    levels = {j: (tuple(levels_nm) if levels_nm is not None
                  else tuple(round(f * spectra[j].peak_torque_nm, 6)
                             for f in DEFAULT_LEVEL_SHARES)) for j in names}
    parts: dict[str, list[tuple[SeriesFigures, float]]] = {j: [] for j in names}
    reason = None
    for e in mix.entries:
        with open_record(e.path) as rec:
            reason = series_unavailable_reason(rec, names)
            if reason:
                break
            for j, f in series_figures(rec, names, levels, hold_speed_rad_s, hold_torque_nm,
                                       rows, curves).items():
                parts[j].append((f, e.weight))
    series_parts = None if reason else parts
    if reason:
        notes.append(reason)
    out: dict[str, JointLoads] = {}
    for j in names:
        sp = spectra[j]
        sources = {k: "histogram" for k in ("peak_torque_nm", "rms_torque_nm",
                                            "mean_abs_speed_rad_s", "equivalent_torque_nm",
                                            "revolutions", "quadrants", "time_at_level")}
        ser = None
        dmg = None
        if series_parts is not None:
            ser = _weighted_series(series_parts[j], [str(e.path) for e in mix.entries])
            for k in ("hold", "exceedances", "rainflow"):
                sources[k] = "series"
            sources["phases"] = ("series" if ser.stance is not None else
                                 "unavailable: no /feet/<leg>/contact flags in the record")
            if sn_curve is not None:
                dmg = ser.rainflow.miner_damage(sn_curve)
        else:
            for k in ("hold", "exceedances", "rainflow", "phases"):
                sources[k] = "unavailable: " + (reason or "no series")
        exact = all(equivalent_torque_detail(sp, p)["route"] == "exact" for p in exps.values())
        sources["equivalent_torque_nm"] = "exact power sums" if exact else "histogram"
        out[j] = JointLoads(j, sp, tuple(exponents),
                            {k: equivalent_torque_nm(sp, p) for k, p in exps.items()},
                            hold_speed_rad_s, hold_torque_nm, ser, sources, dmg)
    return LoadsReport(mix, out, tuple(notes), sn_curve,
                       screen_records([e.path for e in mix.entries]))


def _teq_note(spectra: dict[str, JointSpectrum], exps: dict[str, float]) -> str:
    """Which route each exponent's equivalent torque took, with the histogram route's bound."""
    exact, binned = [], []
    for k, p in exps.items():
        det = [equivalent_torque_detail(sp, p) for sp in spectra.values()]
        if det and all(d["route"] == "exact" for d in det):
            exact.append(k)
        else:
            bounds = [d["bias_bound"] for d in det if d["route"] != "exact"]
            worst = (None if any(b is None for b in bounds) or not bounds
                     else max(b for b in bounds if b is not None))
            binned.append(f"p = {k} from the bins, low by at most "
                          + ("(no bound for p < 1)" if worst is None
                             else f"{100 * worst:.3g} % (chord bound)"))
    parts = []
    if exact:
        parts.append("p = " + ", ".join(exact) + " exact from the every-step sums of "
                     "|T|^p |w| dt")
    parts += binned
    return ("Equivalent torque (revolution-weighted p-mean): " + "; ".join(parts) + ". The "
            "bins' in-bin means raised to p underestimate the mean of |T|^p (Jensen).")


def with_cycle_matrices(report: LoadsReport, bins: int = CYCLE_MATRIX_BINS,
                        rows: int = SERIES_CHUNK_ROWS) -> LoadsReport:
    """``report`` with the day's rainflow cycle matrix of every joint that has series figures
    (:attr:`JointLoads.cycle_matrix`): ``bins`` x ``bins`` bins, ranges from 0 to the largest
    range and means between the extreme cycle means over all records (as found by
    :func:`duty_loads`). The edges are known only once every cycle has been seen, so this
    reads the load torque of each record a second time; each record's matrix counts for its
    entry weight. Returns ``report`` itself when there is nothing to add.
    """
    todo = {j: jl for j, jl in report.joints.items()
            if jl.series is not None and jl.series.rainflow.matrix is None}
    if not todo:
        return report
    edges = {}
    for j, jl in todo.items():
        assert jl.series is not None
        r = jl.series.rainflow
        edges[j] = cycle_matrix_edges(r.max_range, r.mean_min, r.mean_max, bins)
    parts: dict[str, list[tuple[CycleMatrix, float]]] = {j: [] for j in todo}
    for e in report.mix.entries:
        with open_record(e.path) as rec:
            for j, m in cycle_matrices(rec, edges, rows).items():
                parts[j].append((m, e.weight))
    joints = dict(report.joints)
    for j, jl in todo.items():
        assert jl.series is not None
        r = dataclasses.replace(jl.series.rainflow, matrix=combine_matrices(parts[j]))
        joints[j] = dataclasses.replace(jl, series=dataclasses.replace(jl.series, rainflow=r))
    return dataclasses.replace(report, joints=joints)


def failed_run_notes(paths: Sequence[str | Path]) -> list[str]:
    """One note per record whose run did not complete (read with ``--allow-failed``): what
    happened, when, and how much of the planned run the record covers."""
    out = []
    for p in dict.fromkeys(str(x) for x in paths):
        with open_record(p) as rec:
            a = rec.attrs
            if a["status"] == "completed":
                continue
            reached = a.get("simulated_s")
            planned = a.get("planned_s")
            span = ("" if reached is None else f"; the run reached t = {float(reached):.3f} s"
                    + ("" if planned is None else f" of the planned {float(planned):.3f} s"))
            out.append(f"NOT A VALID DUTY CYCLE: {p}: the run {a['status']} "
                       f"({a.get('status_detail', '')}){span}; its figures describe only the "
                       "time before that")
    return out


def loads_report(records: Sequence[str | Path] = (), mix: str | Path | None = None,
                 joints: str | Iterable[str] | None = None,
                 exponents: Sequence[str] = DEFAULT_EXPONENTS,
                 levels_nm: Sequence[float] | None = None,
                 hold_speed_rad_s: float = DEFAULT_HOLD_SPEED_RAD_S,
                 hold_torque_nm: float = DEFAULT_HOLD_TORQUE_NM,
                 sn: Sequence[float] | None = None, sn_cutoff_nm: float = 0.0,
                 allow_failed: bool = False) -> LoadsReport:
    """What ``gaitload loads`` reports, from its inputs: run records or a usage mix
    (:func:`sim.loads.mix.usage_from_inputs`), the exponents of the equivalent torque, the
    exceedance levels, the hold thresholds and an optional Basquin S-N line ``sn = (range_nm,
    cycles, k)`` with its cut-off range for Miner damage (:func:`duty_loads`).

    Every bad input is an :class:`~sim.core.errors.InputError`, raised before any record is
    read; errors name the command's options, which these arguments stand for.
    """
    for e in exponents:
        parse_exponent(e)
    check_option_number(hold_speed_rad_s, "--hold-speed", 0.0, 1e4, "a joint speed in rad/s")
    check_option_number(hold_torque_nm, "--hold-torque", 0.0, 1e6, "a torque in N m")
    for lv in levels_nm or ():
        check_option_number(lv, "--level", -1e6, 1e6, "a torque level in N m")
    check_option_number(sn_cutoff_nm, "--sn-cutoff", 0.0, 1e7, "a torque range in N m")
    curve = None
    if sn:
        check_option_number(sn[0], "--sn RANGE_NM", 0.0, 1e7, "a torque range in N m",
                            lo_open=True)
        check_option_number(sn[1], "--sn CYCLES", 0.0, 1e15, "a number of cycles", lo_open=True)
        check_option_number(sn[2], "--sn K", 1.0, 50.0, "the slope exponent of the S-N line")
        curve = BasquinCurve(sn[0], sn[1], sn[2], sn_cutoff_nm)
    usage = usage_from_inputs(records, mix)
    return duty_loads(usage, joints, exponents, levels_nm, hold_speed_rad_s, hold_torque_nm,
                      curve, allow_failed)
