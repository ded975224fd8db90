"""Metric providers of a sweep: named sources of the numbers a sweep tabulates.

Takes one completed case (:class:`CaseContext`: its record, run summary, resolved scenario and
model and drivetrain TOML) and gives a JSON-like document per provider; metric paths
``<provider>.a.b.c`` (:mod:`.metrics`) address its numbers. Each provider declares the shape
of its document (a *schema*) so metrics are validated before any case runs.

Built in: ``run.`` (the run summary, ``RunResult.to_json()``), ``model.`` (figures of the
resolved actuators), ``backdrive.`` (back-drive figures of the resolved model), and ``loads.``
/ ``check.`` (the JSON of ``gaitload loads`` / ``gaitload check``, from the library functions
behind those commands: :func:`sim.loads.report.loads_report`,
:func:`sim.checks.drivetrain_check.check_drivetrain`). Add more with :func:`register_provider`
(or, for a command that prints JSON, :func:`sim.commands.cli_provider.register_cli_provider`).
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim.core.errors import GaitloadError


@dataclass(frozen=True)
class CaseContext:
    """What a metric provider may look at: one completed case."""

    record_path: Path
    run: Mapping[str, Any]  # RunResult.to_json() plus total_mass_kg
    scenario_toml: str
    model_toml: str
    drivetrain_toml: str  # the resolved drivetrain (sim.parts.drivetrain), parts inside

    def model(self) -> Any:
        """The case's resolved robot model (:class:`sim.robot.model.RobotModel`)."""
        from sim.robot.model import model_from_texts

        return model_from_texts(self.model_toml, self.drivetrain_toml, "resolved model")


NUM = float  # a leaf of a provider schema: a number
JOINT = "<joint>"  # a schema level whose keys are joint names
ANY = "*"  # a schema level (or a leaf) that accepts any key


@dataclass(frozen=True)
class MetricProvider:
    """A named source of numbers for sweep metrics.

    ``produce(ctx)`` returns a JSON-like document; metric paths ``<name>.a.b.c`` address its
    numbers. ``schema`` describes the document for validation before any case runs: nested
    dicts whose leaves are ``float``; a key :data:`JOINT` stands for every joint name and a key
    :data:`ANY` accepts any name (validated only when the case runs). ``available()`` returns
    None or the reason the provider cannot be used in this installation.
    """

    name: str
    produce: Callable[[CaseContext], Mapping[str, Any]]
    schema: Mapping[str, Any]
    doc: str = ""
    needs_drivetrain: bool = False
    available: Callable[[], str | None] = field(default=lambda: None)


PROVIDERS: dict[str, MetricProvider] = {}


def register_provider(provider: MetricProvider) -> MetricProvider:
    """Add (or replace) a metric provider under its name; returns it."""
    if not provider.name.isidentifier():
        raise ValueError(f"provider name must be an identifier, got {provider.name!r}")
    PROVIDERS[provider.name] = provider
    return provider


def _run_provider(ctx: CaseContext) -> Mapping[str, Any]:
    return ctx.run


RUN_SCHEMA: dict[str, Any] = {
    "total_mass_kg": NUM,
    "joints": {JOINT: {"peak_torque_nm": NUM, "rms_torque_nm": NUM, "peak_speed_rad_s": NUM,
                       "saturated_s": NUM, "peak_gearbox_torque_nm": NUM,
                       "peak_motor_side_torque_nm": NUM}},
    # locomotion figures of the whole run (mean forward speed, tilt RMS, slip, cost of
    # transport, ...; see sim.engine.runner.RunSummary) and per segment
    "summary": {ANY: NUM},
    "segments": ANY,
}


def _model_provider(ctx: CaseContext) -> Mapping[str, Any]:
    m = ctx.model()
    acts = {}
    for j, a in m.actuators.items():
        acts[j] = {"gear_ratio": a.gear_ratio, "peak_torque_nm": a.peak_torque_nm,
                   "no_load_speed_rad_s": a.no_load_speed_rad_s,
                   # rotor and reducer inertia seen at the joint: N^2 (J_rotor + J_in) + J_out
                   "reflected_inertia_kg_m2": a.gear_ratio ** 2 * a.rotor_inertia_kg_m2}
    return {"total_mass_kg": m.total_mass_kg, "actuators": acts}


def _backdrive_provider(ctx: CaseContext) -> Mapping[str, Any]:
    from sim.drive.backdrive import report
    from sim.scenario.segments import stance_angles

    m = ctx.model()
    return report(m, stance_angles(m))


BACKDRIVE_SCHEMA: dict[str, Any] = {
    "joints": {JOINT: {"reflected_inertia_kg_m2": NUM, "breakaway_torque_nm": NUM,
                       "backdrive_torque_nm": NUM, ANY: ANY}},
    "impact_mitigation_factor": {ANY: NUM},
    "impact_mitigation_factor_without_rotors": {ANY: NUM},
    ANY: ANY,
}


MODEL_SCHEMA: dict[str, Any] = {
    "total_mass_kg": NUM,
    "actuators": {JOINT: {"gear_ratio": NUM, "peak_torque_nm": NUM, "no_load_speed_rad_s": NUM,
                          "reflected_inertia_kg_m2": NUM}},
}


def _json_document(name: str, text: Callable[[], str]) -> Mapping[str, Any]:
    """The JSON object printed by a command's ``--json``, parsed back: the same plain JSON
    types (non-finite numbers as the command writes them) as a reader of that output gets.
    Bad input is reported as the provider's error, which marks the case ``error``."""
    try:
        out = text()
    except GaitloadError as exc:
        raise GaitloadError(f"metric provider '{name}.': {exc}") from None
    doc = json.loads(out)
    if not isinstance(doc, dict):
        raise GaitloadError(f"metric provider '{name}.': expected a JSON object")
    return doc


def _loads_provider(ctx: CaseContext) -> Mapping[str, Any]:
    """``gaitload loads RECORD --json`` (defaults: exponents 3 and 3.333, no S-N line)."""
    from sim.loads.report import loads_report

    return _json_document("loads", lambda: loads_report([str(ctx.record_path)]).to_json())


def _check_provider(ctx: CaseContext) -> Mapping[str, Any]:
    """``gaitload check RECORD --json`` (default settings; the drivetrain the record was
    simulated with); a failed part still gives its figures."""
    from sim.checks.drivetrain_check import check_drivetrain
    from sim.checks.report import to_json

    return _json_document("check", lambda: to_json(
        check_drivetrain(str(ctx.record_path)).report))


# JSON shapes of the loads and check commands (documented interfaces; ANY levels are checked
# when the case runs, because those commands may add fields)
LOADS_SCHEMA: dict[str, Any] = {
    "joints": {JOINT: {"peak_torque_nm": NUM, "rms_torque_nm": NUM,
                       "equivalent_torque_nm": {ANY: NUM}, ANY: ANY}},
    ANY: ANY,
}
CHECK_SCHEMA: dict[str, Any] = {
    "joints": {JOINT: {"reducer": {"life_h": NUM, ANY: ANY},
                       "motor": {"winding_peak_c": NUM, ANY: ANY}, ANY: ANY}},
    "supply": {ANY: ANY},
    ANY: ANY,
}

register_provider(MetricProvider("run", _run_provider, RUN_SCHEMA,
                                 "the run summary (gaitload run --json) plus total_mass_kg"))
register_provider(MetricProvider("model", _model_provider, MODEL_SCHEMA,
                                 "figures of the resolved actuators (no simulation needed)"))
register_provider(MetricProvider("loads", _loads_provider, LOADS_SCHEMA,
                                 "duty spectra of the record (gaitload loads)"))
register_provider(MetricProvider("check", _check_provider, CHECK_SCHEMA,
                                 "reducer, motor and supply checks (gaitload check)"))
register_provider(MetricProvider("backdrive", _backdrive_provider, BACKDRIVE_SCHEMA,
                                 "back-drivability of the resolved model (sim.drive.backdrive)"))

