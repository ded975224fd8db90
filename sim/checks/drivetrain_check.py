"""The drivetrain check: every joint's reducer, motor and the supply against its duty.

Takes a duty (a run record or a usage mix, :mod:`.duty_input`), a drivetrain file
(:mod:`.drivetrain_file`) and the check settings, and gives the check report
(:func:`check_drivetrain`): a ``reducer`` section per joint with a reducer and a duty
(:mod:`.reducer`), a ``motor`` section per joint with a motor (:mod:`.motor`) and the
whole-robot supply figures, and the quality screen of the duty's records
(:mod:`sim.loads.quality`), gathered as :class:`~.report.CheckReport` (JSON with
:func:`~.report.to_json`). This is ``gaitload check`` as a function; the cycloid disc profiles
of its ``--plot`` are :func:`write_disc_profiles`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

from sim.checks.drivetrain_file import (
    Drivetrain,
    drivetrain_from_resolved,
    drivetrain_of_record,
    load_drivetrain,
    simulated_values,
    used_keys,
)
from sim.checks.duty_input import duty_records, load_duties, motor_duty_source
from sim.checks.motor import MotorReport, check_motors
from sim.checks.motor_duty import Drive
from sim.checks.reducer import NOT_MODELLED, CheckSettings, JointDuty, check_reducer
from sim.checks.report import CheckReport, Section, add_not_modelled, add_section
from sim.checks.supply import load_supply
from sim.core.errors import InputError
from sim.loads.quality import ScreenSet, screen_records
from sim.parts.drivetrain import differences, reducer_ratio
from sim.record import open_record


def drivetrain_for_duty(duty: str | Path, drivetrain: str | Path | None = None,
                        what_if: bool = False) -> tuple[Drivetrain, list[dict]]:
    """The drivetrain to check a duty against, and what it changes against the simulation.

    Without ``drivetrain``: the one the duty's records were simulated with (every record of a
    mix must agree). With one: it must agree with every record in every value the simulation
    used (:func:`sim.checks.drivetrain_file.used_keys`), else an input error names the joint,
    the key and both values; ``what_if`` accepts the differences and returns them, so the
    report can say what differs and that the duty was not re-simulated."""
    records = duty_records(duty)
    sims = []
    stored = None
    for path in records:
        with open_record(path) as rec:
            values, _ = simulated_values(rec)
            sims.append((path, values, used_keys(rec)))
            if stored is None:
                stored = drivetrain_of_record(rec)
    if drivetrain is None:
        if stored is None:
            raise InputError(str(records[0]), "drivetrain_toml",
                             "a record that stores the drivetrain it was simulated with "
                             "(records from before: give --drivetrain FILE)")
        dt = drivetrain_from_resolved(stored)
        label = f"the drivetrain stored in {records[0]}"
    else:
        dt = load_drivetrain(drivetrain)
        label = str(drivetrain)
    found: list[dict] = []
    for path, values, keys in sims:
        diffs = differences(values, dt.resolved, keys)
        for j, jd in dt.joints.items():  # a reducer-only joint: its ratio still counts
            if j in values and j not in dt.resolved.values and jd.reducer is not None:
                src = dt.resolved.part(j, "reducer")
                n = reducer_ratio(src.table, src.source)
                if abs(n - values[j]["gear_ratio"]) > 1e-9 * n:
                    diffs.append((j, "gear_ratio", values[j]["gear_ratio"], n))
        for j, k, a, b in diffs:
            found.append({"joint": j, "key": k, "simulated": a, "checked": b,
                          "record": str(path)})
    if found and not what_if:
        d = found[0]
        where = (dt.resolved.value_source(d["joint"], d["key"])
                 if d["joint"] in dt.resolved.values else label)
        more = f" (and {len(found) - 1} more differences)" if len(found) > 1 else ""
        raise InputError(label, f"{d['joint']} {d['key']}",
                         f"the value {d['record']} was simulated with, {d['simulated']:.6g} "
                         f"(checked: {d['checked']:.6g}, from {where}){more}; check against "
                         "the record's own drivetrain (leave out --drivetrain), re-simulate "
                         "with --set robot.drivetrain=FILE, or ask for a what-if with "
                         "--what-if", d["checked"])
    return dt, found


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
    extra = ["peak events shorter than one simulation step (events are counted on the "
             "every-step load torque)"]
    return add_not_modelled(report, [*NOT_MODELLED, *extra])


MOTOR_COLUMNS = (("winding_peak_c", "winding peak C", ".1f"),
                 ("winding_limit_c", "limit C", ".0f"),
                 ("rms_torque_ratio", "rms/continuous", ".2f"),
                 ("peak_torque_ratio", "peak/rating", ".2f"),
                 ("outside_envelope_s", "outside envelope s", ".3f"))


def add_motor_checks(report: CheckReport, drivetrain: Drivetrain, duty: Path,
                     mission_h: float | None, allow_failed: bool
                     ) -> tuple[CheckReport, MotorReport | None]:
    """Add a ``motor`` section per joint with a motor, and the whole-robot supply figures;
    returns the report and the motor check behind it (None when no joint has a motor)."""
    with_motor = {j: d for j, d in drivetrain.joints.items()
                  if d.motor is not None and d.reducer is not None}
    quick = sorted(j for j, d in with_motor.items() if d.motor.thermal is None)  # type: ignore[union-attr]
    with_motor = {j: d for j, d in with_motor.items() if j not in quick}
    if quick:
        report = add_not_modelled(report, [
            "motor of " + ", ".join(quick) + " not checked: its part file gives no thermal "
            "network (a quick motor; add the four thermal keys and a winding limit, "
            "docs/motor.md)"])
    if not with_motor:
        return report, None
    if not drivetrain.supply:
        raise InputError(drivetrain.file, "supply",
                         "a [supply] table when motors are assigned")
    supply = load_supply(dict(drivetrain.supply), drivetrain.file)
    drives = {}
    for j, d in with_motor.items():
        assert d.motor is not None and d.reducer is not None
        red = d.reducer
        # the reducer's inertia at the motor shaft: input side plus the output stage / N^2
        # (the same sum the simulation's rotor carries, sim.parts.drivetrain)
        drives[j] = Drive(d.motor, red.ratio, red.efficiency_forward, red.efficiency_back,
                          red.input_inertia_kg_m2 + red.output_inertia_kg_m2 / red.ratio ** 2,
                          d.current_limit_a)
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


@dataclass(frozen=True)
class DrivetrainCheck:
    """Result of :func:`check_drivetrain`: the drivetrain read, the report (reducer and motor
    sections, supply) and the motor check behind the motor sections (None without motors)."""

    drivetrain: Drivetrain
    report: CheckReport
    motors: MotorReport | None
    quality: ScreenSet | None = None  # the quality screen of the duty's records


def check_drivetrain(duty: str | Path, drivetrain: str | Path | None = None,
                     settings: CheckSettings | None = None, mission_h: float | None = None,
                     allow_failed: bool = False, what_if: bool = False) -> DrivetrainCheck:
    """Check the parts of ``drivetrain`` (a drivetrain file; default: the one the duty was
    simulated with) against ``duty`` (a run record or a usage mix), as ``gaitload check`` does.
    A drivetrain that differs from the simulated one is refused unless ``what_if``
    (:func:`drivetrain_for_duty`); the report then lists the differences.

    ``mission_h``: also judge the winding temperature over a mission of this many hours from
    cold (default: continuous running, periodic steady state). ``allow_failed``: accept a
    record whose run fell or diverged. Bad input raises :class:`~sim.core.errors.InputError`.
    """
    settings = CheckSettings() if settings is None else settings
    dt, changed = drivetrain_for_duty(duty, drivetrain, what_if)
    duties = load_duties(duty, list(dt.joints), allow_failed)
    source = str(drivetrain) if drivetrain is not None else "as simulated (stored in the record)"
    report = build_report(dt, duties, settings,
                          {"duty": str(duty), "drivetrain": source,
                           "drivetrain_file": dt.file})
    report = replace(report, what_if=tuple(changed))
    if not report.joints:
        raise InputError(str(drivetrain or duty), "joint",
                         "at least one joint with a reducer and a duty")
    report, motors = add_motor_checks(report, dt, Path(duty), mission_h, allow_failed)
    screen = screen_records(duty_records(duty))
    report = replace(report, quality=screen.to_json(), quality_text=screen.to_text())
    return DrivetrainCheck(dt, report, motors, screen)


def write_disc_profiles(drivetrain: Drivetrain, out_dir: str | Path) -> list[Path]:
    """The disc profile (CSV and SVG) of every cycloid part of ``drivetrain``, once per part
    file: ``<part stem>_disc_profile.csv`` and ``.svg`` in ``out_dir``."""
    from sim.checks.cycloid import CycloidStage, write_profile_csv, write_profile_svg

    written = []
    seen: set[str] = set()
    for drive in drivetrain.joints.values():
        part = drive.reducer
        if isinstance(part, CycloidStage) and part.file not in seen:
            seen.add(part.file)
            stem = Path(part.file).stem
            written.append(write_profile_csv(part, Path(out_dir) / f"{stem}_disc_profile.csv"))
            written.append(write_profile_svg(part, Path(out_dir) / f"{stem}_disc_profile.svg"))
    return written
