"""``gaitload loads``: reduce run records (or a usage mix) to duty spectra."""

from __future__ import annotations

import argparse
import csv
import io
import json
import sys
from pathlib import Path
from typing import Any

import numpy as np

from sim.core.atomic import write_text_atomic
from sim.core.errors import InputError
from sim.loads.mix import UsageMix, mix_of_records, resolve_usage
from sim.loads.rainflow import BasquinCurve
from sim.loads.report import (
    DEFAULT_EXPONENTS,
    JointLoads,
    LoadsReport,
    duty_loads,
    with_cycle_matrices,
)
from sim.loads.series import DEFAULT_HOLD_SPEED_RAD_S, DEFAULT_HOLD_TORQUE_NM
from sim.loads.spectra import parse_exponent

HELP = "reduce run records to duty spectra"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("inputs", nargs="*", metavar="RECORD.h5",
                        help="run records, taken one after the other (or one mix .toml)")
    parser.add_argument("--mix", metavar="MIX.toml", help="usage mix: records with hours per "
                        "day or shares, and events per day")
    parser.add_argument("--joints", metavar="PATTERN",
                        help="joint names or fnmatch patterns, comma-separated (e.g. '*_knee')")
    parser.add_argument("--exponent", action="append", metavar="P",
                        help="exponent of the equivalent torque, repeatable (default 3 and "
                             "3.333); fractions like 10/3 allowed; JSON keys as written")
    parser.add_argument("--level", action="append", type=float, metavar="NM",
                        help="torque level (N m) for exceedance counts, repeatable "
                             "(default 50, 75 and 90 %% of each joint's peak)")
    parser.add_argument("--hold-speed", type=float, default=DEFAULT_HOLD_SPEED_RAD_S,
                        metavar="RAD_S", help="|speed| at or below which the joint is held "
                        f"(default {DEFAULT_HOLD_SPEED_RAD_S})")
    parser.add_argument("--hold-torque", type=float, default=DEFAULT_HOLD_TORQUE_NM,
                        metavar="NM", help="|torque| at or above which a held joint is under "
                        f"load (default {DEFAULT_HOLD_TORQUE_NM})")
    parser.add_argument("--sn", nargs=3, type=float, metavar=("RANGE_NM", "CYCLES", "K"),
                        help="Basquin S-N line for Miner damage: torque range RANGE_NM is "
                             "allowed CYCLES cycles, slope exponent K")
    parser.add_argument("--sn-cutoff", type=float, default=0.0, metavar="RANGE_NM",
                        help="torque range at or below which cycles do no damage (default 0)")
    parser.add_argument("--csv", metavar="DIR", help="write one CSV per joint (and a summary)")
    parser.add_argument("--plot", metavar="DIR", help="write PNG figures per joint")
    parser.add_argument("--json", action="store_true", help="print only JSON on stdout")
    parser.add_argument("--allow-failed", action="store_true",
                        help="read records whose run did not complete")


def _mix_from_args(args: argparse.Namespace) -> UsageMix:
    if args.mix and args.inputs:
        raise InputError(None, "--mix", "either records or --mix MIX.toml, not both")
    if args.mix:
        return resolve_usage(args.mix)
    if not args.inputs:
        raise InputError(None, "RECORD.h5", "at least one run record or --mix MIX.toml")
    if len(args.inputs) == 1:
        return resolve_usage(args.inputs[0])
    for p in args.inputs:
        if Path(p).suffix.lower() == ".toml":
            raise InputError(p, None, "a run record (give a mix file alone or with --mix)")
    return mix_of_records(args.inputs)


def _write_text(path: Path, text: str) -> None:
    write_text_atomic(path, text)


def _csv_text(header: list[str], rows: list[list[Any]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow([repr(float(v)) if isinstance(v, float | np.floating) else v for v in r])
    return buf.getvalue()


def write_csv(report: LoadsReport, directory: str | Path) -> list[Path]:
    """``<joint>.csv`` (time at level per non-empty bin), ``<joint>_rainflow.csv`` (cycle
    matrix, when series exist) and ``summary.csv``; returns the paths written. Counts the
    cycle matrices first if the report lacks them (:func:`sim.loads.report.with_cycle_matrices`)."""
    d = Path(directory)
    out = []
    report = with_cycle_matrices(report)
    for j, jl in report.joints.items():
        sp = jl.spectrum
        tm = sp.bin_mean_torque_nm("time")
        st = jl.series.stance if jl.series else None
        sw = jl.series.swing if jl.series else None
        te, se = sp.torque_edges_nm, sp.speed_edges_rad_s
        rows = []
        for it, iw in zip(*np.nonzero(sp.time_s > 0), strict=True):
            row = [te[it], te[it + 1], se[iw], se[iw + 1], sp.time_s[it, iw],
                   sp.revolutions[it, iw], tm[it, iw]]
            row += ([st.time_s[it, iw], sw.time_s[it, iw]] if st is not None and sw is not None
                    else ["", ""])
            rows.append(row)
        header = ["torque_lo_nm", "torque_hi_nm", "speed_lo_rad_s", "speed_hi_rad_s",
                  "time_s", "revolutions", "mean_torque_nm", "stance_time_s", "swing_time_s"]
        p = d / f"{j}.csv"
        _write_text(p, _csv_text(header, rows))
        out.append(p)
        cm = jl.cycle_matrix
        if cm is not None:
            re_, me, m = cm.range_edges, cm.mean_edges, cm.counts
            rrows = [[re_[a], re_[a + 1], me[b], me[b + 1], m[a, b]]
                     for a, b in zip(*np.nonzero(m > 0), strict=True)]
            p = d / f"{j}_rainflow.csv"
            _write_text(p, _csv_text(["range_lo_nm", "range_hi_nm", "mean_lo_nm", "mean_hi_nm",
                                      "cycles"], rrows))
            out.append(p)
    exps = next(iter(report.joints.values())).exponents if report.joints else ()
    header = ["joint", "hours", "peak_torque_nm", "rms_torque_nm", "mean_abs_speed_rad_s",
              *[f"equivalent_torque_nm_p{k}" for k in exps], "hold_time_s", "cycles",
              "damage_per_day"]
    rows = []
    for j, jl in report.joints.items():
        dct = jl.to_dict()
        rows.append([j, dct["hours"], dct["peak_torque_nm"], dct["rms_torque_nm"],
                     dct["mean_abs_speed_rad_s"], *[dct["equivalent_torque_nm"][k] for k in exps],
                     dct["hold"]["time_s"] if dct["hold"] else "",
                     dct["rainflow"]["cycles"] if dct["rainflow"] else "",
                     "" if not dct["rainflow"] or dct["rainflow"]["damage_per_day"] is None
                     else dct["rainflow"]["damage_per_day"]])
    p = d / "summary.csv"
    _write_text(p, _csv_text(header, rows))
    out.append(p)
    return out


def write_plots(report: LoadsReport, directory: str | Path) -> list[Path]:
    from sim.figures.loads import plot_load_duration, plot_rainflow_matrix, plot_time_at_level

    d = Path(directory)
    out = []
    report = with_cycle_matrices(report)
    for j, jl in report.joints.items():
        out.append(plot_time_at_level(jl.spectrum, d / f"{j}_time_at_level.png"))
        out.append(plot_load_duration(jl.spectrum, d / f"{j}_load_duration.png"))
        if jl.cycle_matrix is not None:
            out.append(plot_rainflow_matrix(jl.cycle_matrix, j, d / f"{j}_rainflow.png"))
    return out


def _fmt(v: float | None, spec: str = ".3g") -> str:
    return "-" if v is None else format(v, spec)


def _text(report: LoadsReport) -> str:
    m = report.mix
    lines = [f"duty spectra of {m.source} ({'one day of use' if m.daily else 'one pass'}: "
             f"{m.use_hours_per_day:.4g} h of use)"]
    jl0: JointLoads | None = next(iter(report.joints.values()), None)
    exps = jl0.exponents if jl0 else ()
    head = ["joint", "peak Nm", "rms Nm", "mean|w| rad/s", *[f"Teq p={k}" for k in exps],
            "hold s", "cycles", "damage"]
    lines.append("  ".join(f"{h:>12}" for h in head))
    for j, jl in report.joints.items():
        d = jl.to_dict()
        row = [j, _fmt(d["peak_torque_nm"]), _fmt(d["rms_torque_nm"]),
               _fmt(d["mean_abs_speed_rad_s"]), *[_fmt(d["equivalent_torque_nm"][k]) for k in exps],
               _fmt(d["hold"]["time_s"] if d["hold"] else None),
               _fmt(d["rainflow"]["cycles"] if d["rainflow"] else None),
               _fmt(d["rainflow"]["damage_per_day"] if d["rainflow"] else None)]
        lines.append("  ".join(f"{c:>12}" for c in row))
    if jl0 is not None:
        lines.append("sources: " + ", ".join(f"{k}={v}" for k, v in jl0.sources.items()))
    lines += [f"note: {n}" for n in report.notes]
    return "\n".join(lines) + "\n"


def execute(args: argparse.Namespace) -> int:
    exponents = tuple(args.exponent) if args.exponent else DEFAULT_EXPONENTS
    for e in exponents:
        parse_exponent(e)
    if args.hold_speed < 0 or args.hold_torque < 0:
        raise InputError("--hold-speed/--hold-torque", None, "numbers >= 0")
    sn = None
    if args.sn:
        sn = BasquinCurve(args.sn[0], args.sn[1], args.sn[2], args.sn_cutoff)
    mix = _mix_from_args(args)
    report = duty_loads(mix, args.joints, exponents, args.level, args.hold_speed,
                        args.hold_torque, sn, args.allow_failed)
    if args.csv or args.plot:  # one second pass over the torque for both
        report = with_cycle_matrices(report)
    written: list[Path] = []
    if args.csv:
        written += write_csv(report, args.csv)
    if args.plot:
        written += write_plots(report, args.plot)
    if args.json:
        sys.stdout.write(json.dumps(report.to_dict(), indent=2, sort_keys=False) + "\n")
    else:
        sys.stdout.write(_text(report))
        for p in written:
            sys.stdout.write(f"wrote {p}\n")
    return 0
