"""``gaitload check RECORD_OR_MIX --drivetrain FILE``: reducers against the duty spectra.

Reads the duty (a run record or a usage mix, see :func:`load_duties`), loads the
drivetrain, checks each joint's reducer and prints a table
(or JSON with ``--json``). Exit code 0 when every joint passes, 1 when any fails, 2 on bad
input (nothing is written then). Further sections (motor, supply) are added to the same
report with :func:`sim.checks.report.add_section`.
"""

from __future__ import annotations

import argparse
import math
from collections.abc import Callable, Sequence
from dataclasses import replace
from pathlib import Path

import numpy as np

from sim.checks.drivetrain_file import Drivetrain, load_drivetrain
from sim.checks.reducer import (
    NOT_MODELLED,
    CheckSettings,
    JointDuty,
    check_reducer,
    count_excursions,
)
from sim.checks.report import (
    CheckReport,
    Section,
    add_not_modelled,
    add_section,
    exit_code,
    render_table,
    to_json,
)
from sim.core.errors import InputError
from sim.loads.mix import resolve_usage
from sim.loads.series import load_series_name, series_unavailable_reason
from sim.loads.spectra import spectrum_from_record, usage_spectra
from sim.record import open_record

HELP = "check reducers, motors and supply against the spectra"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("duty", metavar="RECORD_OR_MIX",
                        help="a run record (.h5) or a usage mix (.toml)")
    parser.add_argument("--drivetrain", required=True, metavar="FILE",
                        help="drivetrain file assigning reducer (and motor) parts to joints")
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


def settings_from_args(args: argparse.Namespace) -> CheckSettings:
    if not (args.required_life_h > 0 and math.isfinite(args.required_life_h)):
        raise InputError("--required-life-h", None, "a positive number of hours",
                         args.required_life_h)
    if not (args.safety_factor >= 1.0 and math.isfinite(args.safety_factor)):
        raise InputError("--safety-factor", None, "a number >= 1", args.safety_factor)
    if not 90.0 <= args.reliability < 100.0:
        raise InputError("--reliability", None, "a percentage in [90, 100)", args.reliability)
    return CheckSettings(args.required_life_h, args.safety_factor, args.reliability)


# ---- duty input ---------------------------------------------------------------------------

def _event_counter(records: Sequence[tuple[Path, float]], joint: str
                   ) -> Callable[[float], float]:
    """Excursions of |load torque| above a threshold, summed over ``(record, weight)`` pairs.

    The load torque is the reducer output torque the spectra follow (``load_torque``)."""
    def count(threshold_nm: float) -> float:
        total = 0.0
        for path, weight in records:
            n_rec, above = 0, False
            with open_record(path) as rec:
                for _, (tau,) in rec.iter_chunks([load_series_name(rec, joint)]):
                    n, above = count_excursions(np.abs(tau), threshold_nm, above)
                    n_rec += n
            total += weight * n_rec
        return total
    return count


def load_duties(path: str | Path, joints: Sequence[str], allow_failed: bool = False
                ) -> dict[str, JointDuty]:
    """Per-joint duties from a record or a usage mix, with peak-event counting where every
    record holds the time series (events of a mix: weighted like its spectra, per day)."""
    p = Path(path)
    if p.suffix.lower() == ".toml":
        mix = resolve_usage(p)
        spectra = usage_spectra(mix, joints, allow_failed=allow_failed)
        pairs = [(e.path, e.weight) for e in mix.entries]
        countable = set(spectra)  # joints whose series every record of the mix holds
        for rec_path, _ in pairs:
            with open_record(rec_path) as rec:
                countable = {j for j in countable if series_unavailable_reason(rec, [j]) is None}
        return {j: JointDuty(s, _event_counter(pairs, j) if j in countable else None)
                for j, s in spectra.items()}
    with open_record(p) as rec:
        rec.require_completed(allow_failed)
        present = [j for j in joints if j in rec.joint_names]
        if not present:
            raise InputError(str(p), None, "a record holding the drivetrain's joints: "
                             + ", ".join(joints), ", ".join(rec.joint_names))
        return {j: JointDuty(spectrum_from_record(rec, j),
                             _event_counter([(p, 1.0)], j)
                             if series_unavailable_reason(rec, [j]) is None else None)
                for j in present}


# ---- the check ----------------------------------------------------------------------------

def build_report(drivetrain: Drivetrain, duties: dict[str, JointDuty],
                 settings: CheckSettings, inputs: dict | None = None) -> CheckReport:
    """The reducer section of every joint that has both a reducer and a duty."""
    report = CheckReport(inputs={**(inputs or {}),
                                 "required_life_h": settings.required_life_h,
                                 "safety_factor": settings.safety_factor,
                                 "reliability_pct": settings.reliability_pct})
    for joint, drive in drivetrain.joints.items():
        if drive.reducer is None or joint not in duties:
            continue
        report = add_section(report, joint, check_reducer(drive.reducer, duties[joint],
                                                          settings))
    extra = ["series decimation may hide short torque peaks when counting peak events"]
    return add_not_modelled(report, [*NOT_MODELLED, *extra])


MOTOR_COLUMNS = (("winding_peak_c", "winding peak C", ".1f"),
                 ("winding_limit_c", "limit C", ".0f"),
                 ("rms_torque_ratio", "rms/continuous", ".2f"),
                 ("peak_torque_ratio", "peak/rating", ".2f"),
                 ("outside_envelope_s", "outside envelope s", ".3f"))


def motor_duty_source(path: Path) -> str | list[tuple[str, float]]:
    """A record path, or ``[(record, hours_per_day), ...]`` of a usage mix's duties."""
    if path.suffix.lower() != ".toml":
        return str(path)
    duties = [(str(e.path), e.hours_per_day) for e in resolve_usage(path).entries
              if e.kind == "duty"]
    if not duties:
        raise InputError(str(path), "duty", "at least one duty record for the motor check")
    return duties


def add_motor_checks(report: CheckReport, drivetrain: Drivetrain, duty: Path,
                     mission_h: float | None, allow_failed: bool):
    """Add a ``motor`` section per joint with a motor, and the whole-robot supply figures."""
    from sim.checks.motor import check_motors
    from sim.checks.motor_part import load_motor_part
    from sim.checks.supply import load_supply

    with_motor = {j: d for j, d in drivetrain.joints.items()
                  if d.motor_path is not None and d.reducer is not None}
    if not with_motor:
        return report, None
    if not drivetrain.supply:
        raise InputError(drivetrain.file, "supply",
                         "a [supply] table when motors are assigned")
    supply = load_supply(dict(drivetrain.supply), drivetrain.file)
    parts: dict[str, object] = {}
    drives = {}
    for j, d in with_motor.items():
        assert d.motor_path is not None and d.reducer is not None
        key = str(d.motor_path)
        if key not in parts:
            parts[key] = load_motor_part(d.motor_path)
        red = d.reducer
        drives[j] = (parts[key], red.ratio, red.efficiency_forward, red.efficiency_back,
                     red.input_inertia_kg_m2)
    if mission_h is not None and not (mission_h > 0 and math.isfinite(mission_h)):
        raise InputError("--mission-h", None, "a positive number of hours", mission_h)
    mrep = check_motors(motor_duty_source(duty), drives, supply,
                        mission_s=None if mission_h is None else mission_h * 3600.0,
                        allow_failed=allow_failed)
    for j in drives:
        js = mrep.joint_summary(j)
        reasons = js.get("fail_reasons") or []
        ratios = {"winding temperature": (js["winding_peak_c"] or math.inf)
                  / js["winding_limit_c"], "rms torque": js["rms_torque_ratio"],
                  "peak torque": js["peak_torque_ratio"]}
        governing = reasons[0] if reasons else max(ratios, key=lambda k: ratios[k])
        values = {k: v for k, v in js.items() if k not in ("verdict", "fail_reasons")}
        values["fail_reasons"] = list(reasons)
        report = add_section(report, j, Section("motor", js["verdict"], governing, values,
                                                MOTOR_COLUMNS))
    text = mrep.to_text().splitlines()
    blank = text.index("") if "" in text else len(text)
    report = replace(report, supply=mrep.supply_summary(),
                     supply_text=tuple(line for line in text[blank + 1:] if line))
    report = add_not_modelled(report, ["motor inductance and field weakening (steady-state "
                                       "envelope)", "driver switching losses beyond a fixed "
                                       "inverter efficiency"])
    return report, mrep


def write_plots(report: CheckReport, drivetrain: Drivetrain, out_dir: Path) -> list[Path]:
    from sim.checks.cycloid import CycloidStage, write_profile_csv, write_profile_svg
    from sim.figures.check import plot_utilisation

    written = [plot_utilisation(report, out_dir / "reducer_utilisation.svg")]
    seen: set[str] = set()
    for drive in drivetrain.joints.values():
        part = drive.reducer
        if isinstance(part, CycloidStage) and part.file not in seen:
            seen.add(part.file)
            stem = Path(part.file).stem
            written.append(write_profile_csv(part, out_dir / f"{stem}_disc_profile.csv"))
            written.append(write_profile_svg(part, out_dir / f"{stem}_disc_profile.svg"))
    return written


def execute(args: argparse.Namespace) -> int:
    settings = settings_from_args(args)
    drivetrain = load_drivetrain(args.drivetrain)
    duties = load_duties(args.duty, list(drivetrain.joints), args.allow_failed)
    report = build_report(drivetrain, duties, settings,
                          {"duty": str(args.duty), "drivetrain": str(args.drivetrain)})
    if not report.joints:
        raise InputError(str(args.drivetrain), "joint",
                         "at least one joint with a reducer and a duty")
    report, mrep = add_motor_checks(report, drivetrain, Path(args.duty), args.mission_h,
                                    args.allow_failed)
    if args.plot:
        write_plots(report, drivetrain, Path(args.plot))
        if mrep is not None:
            from sim.figures.motor import plot_all

            plot_all(mrep, Path(args.plot))
    if args.json:
        print(to_json(report), end="")
    else:
        print(render_table(report), end="")
    return exit_code(report)
