"""``gaitload check RECORD_OR_MIX [--drivetrain FILE [--what-if]]``: parts against the duty.

Parses the arguments, calls :func:`sim.checks.drivetrain_check.check_drivetrain` (the duty of
a run record or a usage mix against the drivetrain's reducer and motor parts and its supply)
and prints a table (or JSON with ``--json``) with the quality screen of the duty's records;
a record that fails the screen gets its own ``QUALITY FLAGGED`` line (stderr with ``--json``).
Exit code 0 when every joint passes, 1 when any fails (or, with ``--strict``, when a record
is flagged), 2 on bad input (nothing is written then).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sim.checks.drivetrain_check import check_drivetrain, write_disc_profiles
from sim.checks.reducer import CheckSettings
from sim.checks.report import exit_code, render_table, to_json, what_if_lines
from sim.core.atomic import output_batch
from sim.core.config import check_option_number
from sim.core.errors import InputError
from sim.core.paths import check_output_dir

HELP = "check reducers, motors and supply against the spectra"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("duty", metavar="RECORD_OR_MIX",
                        help="a run record (.h5) or a usage mix (.toml)")
    parser.add_argument("--drivetrain", metavar="FILE",
                        help="drivetrain file to check against (default: the drivetrain the "
                             "record was simulated with, which it stores); one that differs "
                             "from the simulated one needs --what-if")
    parser.add_argument("--what-if", action="store_true",
                        help="accept a --drivetrain that differs from the simulated one; every "
                             "output then says what differs and that the duty was not "
                             "re-simulated")
    parser.add_argument("--json", action="store_true", help="print only JSON on stdout")
    parser.add_argument("--plot", metavar="DIR",
                        help="write figures and cycloid disc profiles (CSV, SVG) to DIR")
    parser.add_argument("--required-life-h", type=float, default=1000.0,
                        help="required life in hours of use (default 1000)")
    parser.add_argument("--safety-factor", type=float, default=1.5,
                        help="on material allowables and bearing static safety (default 1.5)")
    parser.add_argument("--reliability", type=float, default=90.0,
                        help="bearing reliability in %% for the ISO 281 a1 factor (default 90)")
    parser.add_argument("--allow-failed", action="store_true",
                        help="accept a record whose run fell or diverged")
    parser.add_argument("--mission-h", type=float, default=None,
                        help="also judge winding temperature over a mission of this many hours "
                             "from cold (default: continuous running, periodic steady state)")
    parser.add_argument("--strict", action="store_true",
                        help="exit 1 when a duty record fails the quality screen")


def settings_from_args(args: argparse.Namespace) -> CheckSettings:
    check_option_number(args.required_life_h, "--required-life-h", 0.0, 1e15,
                        "a life in hours of use", lo_open=True)
    check_option_number(args.safety_factor, "--safety-factor", 1.0, 100.0, "a safety factor")
    if not 90.0 <= args.reliability < 100.0:
        raise InputError("--reliability", None, "a percentage in [90, 100)", args.reliability)
    if args.mission_h is not None:
        check_option_number(args.mission_h, "--mission-h", 0.0, 1e6, "a mission in hours",
                            lo_open=True)
    return CheckSettings(args.required_life_h, args.safety_factor, args.reliability)


def execute(args: argparse.Namespace) -> int:
    if args.plot:
        check_output_dir(args.plot, "--plot")
    if args.what_if and not args.drivetrain:
        raise InputError("--what-if", None, "a --drivetrain FILE to compare with the simulated "
                         "drivetrain")
    result = check_drivetrain(args.duty, args.drivetrain, settings_from_args(args),
                              args.mission_h, args.allow_failed, args.what_if)
    if args.plot:
        from sim.figures.check import plot_utilisation
        from sim.figures.common import banner

        out = Path(args.plot)
        text = ("WHAT-IF: drivetrain differs from the simulated one; duty NOT re-simulated ("
                + ", ".join(sorted({d["key"] for d in result.report.what_if})) + ")"
                if result.report.what_if else None)
        with output_batch(), banner(text):  # every figure and profile, or none
            plot_utilisation(result.report, out / "reducer_utilisation.svg")
            write_disc_profiles(result.drivetrain, out)
            if result.motors is not None:
                from sim.figures.motor import plot_all

                plot_all(result.motors, out)
    if args.json:
        print(to_json(result.report), end="")
        for line in what_if_lines(result.report):
            print(line, file=sys.stderr)
        for line in result.quality.flag_lines() if result.quality else []:
            print(line, file=sys.stderr)
    else:
        print(render_table(result.report), end="")
    flagged = result.quality is not None and result.quality.flagged
    return max(exit_code(result.report), 1 if args.strict and flagged else 0)
