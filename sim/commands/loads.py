"""``gaitload loads``: reduce run records (or a usage mix) to duty spectra.

Parses the arguments, calls :func:`sim.loads.report.loads_report`, and prints a table (or the
JSON of :meth:`~sim.loads.report.LoadsReport.to_json` with ``--json``); ``--csv`` and
``--plot`` write :func:`sim.loads.tables.write_csv` and the figures of :mod:`sim.figures.loads`.
The quality screen of every record follows the table (``"quality"`` in the JSON); a record
that fails it gets its own ``QUALITY FLAGGED`` line (on stderr with ``--json``), and
``--strict`` makes that exit 1.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sim.core.atomic import output_batch
from sim.core.paths import check_output_dir
from sim.loads.report import (
    DEFAULT_EXPONENTS,
    JointLoads,
    LoadsReport,
    loads_report,
    with_cycle_matrices,
)
from sim.loads.series import DEFAULT_HOLD_SPEED_RAD_S, DEFAULT_HOLD_TORQUE_NM
from sim.loads.tables import write_csv

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
    parser.add_argument("--strict", action="store_true",
                        help="exit 1 when a record fails the quality screen")


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
    if report.quality is not None:
        lines.append(report.quality.to_text())
    return "\n".join(lines) + "\n"


def execute(args: argparse.Namespace) -> int:
    for option, folder in (("--csv", args.csv), ("--plot", args.plot)):
        if folder:
            check_output_dir(folder, option)
    report = loads_report(args.inputs, args.mix, args.joints,
                          tuple(args.exponent) if args.exponent else DEFAULT_EXPONENTS,
                          args.level, args.hold_speed, args.hold_torque, args.sn,
                          args.sn_cutoff, args.allow_failed)
    if args.csv or args.plot:  # one second pass over the torque for both
        report = with_cycle_matrices(report)
    written: list[Path] = []
    with output_batch():  # the CSV files and the figures, all or none
        if args.csv:
            written += write_csv(report, args.csv)
        if args.plot:
            written += write_plots(report, args.plot)
    if args.json:
        sys.stdout.write(report.to_json())
        for line in report.quality.flag_lines() if report.quality else []:
            print(line, file=sys.stderr)
    else:
        sys.stdout.write(_text(report))
        for p in written:
            sys.stdout.write(f"wrote {p}\n")
    flagged = report.quality is not None and report.quality.flagged
    return 1 if args.strict and flagged else 0
