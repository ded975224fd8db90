"""``gaitload run SCENARIO.toml [-o OUT.h5] [--set KEY=VALUE ...] [--json] [--strict]``.

Simulates the scenario (:func:`sim.engine.runner.run`), screens the record
(:func:`sim.loads.quality.screen_records`) and prints the per-joint figures and the screen; a
record that fails the screen gets its own ``QUALITY FLAGGED`` line (on stderr with
``--json``). Exit 3 when the robot fell or diverged, else 1 with ``--strict`` when the record
is flagged, else 0.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

HELP = "simulate a scenario and write an HDF5 run record"

CAUTION = ("Results are estimates from a rigid-body simulation: manufacturer ratings, local "
           "codes and licensed engineering practice take precedence.")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("scenario", help="scenario file (scenarios/*.toml)")
    p.add_argument("-o", "--output", metavar="OUT.h5",
                   help="run record to write (default: <scenario name>.h5 here)")
    p.add_argument("--set", dest="overrides", action="append", default=[], metavar="KEY=VALUE",
                   help="override a scenario key (ground.friction=0.5) or a model key under "
                        "robot. (robot.leg.thigh_length_m=0.24); repeatable")
    p.add_argument("--json", action="store_true", help="print only a JSON summary on stdout")
    p.add_argument("--strict", action="store_true",
                   help="exit 1 when the record fails the quality screen (or, with "
                        "--dt-study, when a figure changes beyond the limit)")
    p.add_argument("--dt-study", action="store_true",
                   help="also run at half the time step (record <OUT>_half_step.h5) and report "
                        "per joint the change in peak, RMS and equivalent torque "
                        "(sim/sweeps/timestep.py)")


def format_table(result) -> str:
    lines = [f"{'joint':<9} {'peak N m':>9} {'RMS N m':>9} {'peak rad/s':>11} {'saturated s':>12}"]
    for j, v in result.joints.items():
        lines.append(f"{j:<9} {v['peak_torque_nm']:>9.3f} {v['rms_torque_nm']:>9.3f} "
                     f"{v['peak_speed_rad_s']:>11.3f} {v['saturated_s']:>12.3f}")
    return "\n".join(lines)


def drive_summary(scn: Any) -> dict[str, Any]:
    """What the run simulated of its drivetrain: the file, the scenario's drive options and
    what the simulation leaves out (the record stores the same)."""
    dt = scn.model.drivetrain
    drive = scn.data["drive"]
    return {"file": dt.file, "rotor_inertia": drive["rotor_inertia"],
            "losses": bool(drive["losses"]), "not_simulated": list(dt.notes),
            "overrides": list(dt.overrides)}


def _dt_study(args: argparse.Namespace, out: Path) -> int:
    from sim.sweeps.timestep import step_study

    study = step_study(args.scenario, args.overrides, out, progress=not args.json)
    if args.json:
        print(json.dumps(study.to_json(), indent=2, allow_nan=False))
    else:
        print(study.to_text())
        print(CAUTION)
    if any(s in ("fell", "diverged") for s in study.status):
        print(f"gaitload run: a step-study run did not complete ({', '.join(study.status)}); "
              "records kept for inspection", file=sys.stderr)
        return 3
    for j, f, c in study.flagged if args.json else []:
        print(f"STEP STUDY FLAGGED {j} {f} {100 * c:+.1f}%", file=sys.stderr)
    return 1 if args.strict and study.flagged else 0


def execute(args: argparse.Namespace) -> int:
    from sim.core.paths import check_output_file
    from sim.scenario.scenario_file import load_scenario

    out = Path(args.output) if args.output else Path(Path(args.scenario).stem + ".h5")
    check_output_file(args.output or out, "-o")
    scn = load_scenario(args.scenario, args.overrides)  # bad input fails before any output
    from sim.engine.runner import run

    if args.dt_study:
        return _dt_study(args, out)
    result = run(scn, out, progress=not args.json)
    from sim.loads.quality import screen_records

    screen = screen_records([result.record])
    if args.json:
        print(json.dumps({**result.to_json(), "quality": screen.to_json(),
                          "drivetrain": drive_summary(scn)}, indent=2, allow_nan=False))
        for line in screen.flag_lines():
            print(line, file=sys.stderr)
    else:
        reached = scn.duration_s if result.simulated_s is None else result.simulated_s
        print(f"record: {result.record}  status: {result.status}  "
              f"mass: {result.total_mass_kg:.2f} kg  simulated: {reached:.6g} s of "
              f"{scn.duration_s:g} s planned")
        d = drive_summary(scn)
        print(f"drivetrain: {d['file']}  rotor inertia: {d['rotor_inertia']}  "
              f"reducer losses: {'on' if d['losses'] else 'off'}")
        for note in d["not_simulated"]:
            print(f"  not simulated: {note}")
        print(format_table(result))
        print(screen.to_text())
        print(CAUTION)
    if result.status in ("fell", "diverged"):
        print(f"gaitload run: the robot {result.status}: {result.detail}; record kept for "
              f"inspection, not a valid duty cycle", file=sys.stderr)
        return 3
    return 1 if args.strict and screen.flagged else 0
