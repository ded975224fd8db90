"""Design sweeps: many resolved cases of one base scenario, run in parallel, ranked by a metric.

A sweep file (``scenarios/sweep_*.toml``) names a base scenario (a single stand or a mission
of several segments), optional fixed ``--set`` overrides, an optional drivetrain file, the
parameters to vary and the metrics to tabulate::

    scenario = "stand.toml"                       # relative to the sweep file
    set = ["segment.0.duration_s=2.0"]            # applied to every case
    metrics = ["run.joints.*_knee.peak_torque_nm:max"]
    [rank]
    metric = "run.joints.*_knee.peak_torque_nm:max"
    goal = "min"
    [[param]]
    keys = ["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]   # varied together
    values = [[0.20, 0.24], [0.22, 0.22]]
    [[param]]
    key = "robot.actuator.knee.gear_ratio"
    start = 5.0
    stop = 11.0
    step = 2.0                                    # or num = 4

Without a ``[sample]`` table the parameters span a full grid (cartesian product, the last
parameter varying fastest). With ``[sample] count = N, seed = S`` the cases are N points of a
Latin hypercube (``scipy.stats.qmc.LatinHypercube``; McKay, Beckman & Conover, Technometrics
21(2), 1979) over the parameter ranges; a value-list parameter is sampled by index.

Each case is *resolved* in this process (scenario and model validated, so bad inputs are found
before anything runs) into the resolved scenario and model TOML texts. Its key is the SHA-256 of
the canonical JSON of those texts, the drivetrain file content and the metric list. A case runs
in a separate process (:func:`run_case`: a local process pool started with ``forkserver`` or
``spawn``, or a worker of a ``dask.distributed`` scheduler), so engine state never leaks
between the sweep and its cases. Outputs per case, written atomically::

    <DIR>/cases/<key>/record.h5      the run record
    <DIR>/cases/<key>/result.json    status, reason, metrics, resolved inputs

A rerun resumes: a case whose ``result.json`` exists with a final status is not run again.
Failed cases (``fell``, ``diverged``, ``bad_input``, ``infeasible``, ``error``) stay in the
table with their reason and are never ranked.

Metrics are dotted paths into the JSON produced by a *metric provider*, optionally with an
aggregate over a pattern: ``run.joints.fl_knee.peak_torque_nm`` or
``run.joints.*_knee.peak_torque_nm:max``. Providers: ``run.`` (the run summary,
``RunResult.to_json()``), ``model.`` (figures of the resolved actuators), and ``loads.`` /
``check.`` (the JSON of ``gaitload loads`` / ``gaitload check``, called in-process). Add more
with :func:`register_provider` or :func:`register_cli_provider`.
"""

from __future__ import annotations

import copy
import csv
import hashlib
import io
import itertools
import json
import math
import os
import sys
import tempfile
import time
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from pathlib import Path
from typing import Any

import numpy as np

from sim import JOINT_KINDS, JOINT_NAMES
from sim.core.atomic import write_bytes_atomic
from sim.core.config import Field, dump_toml, load_toml, validate
from sim.core.errors import GaitloadError, InputError

CASE_FORMAT = "gaitload sweep case 1"
AGGREGATES = ("max", "min", "mean", "sum")
FINAL_STATUSES = ("completed", "fell", "diverged", "bad_input", "infeasible")
FAILED_STATUSES = ("fell", "diverged", "bad_input", "infeasible", "error")
CAUTION = ("Results are estimates from a rigid-body simulation of an idealised robot: "
           "manufacturer ratings, local codes and licensed engineering practice take precedence.")
NOT_MODELLED = ("Not modelled unless the scenario's [drive] table or the model's actuator "
                "tables turn them on: rotor inertia, reducer friction, backlash and mesh "
                "compliance. Not modelled: structural compliance of the links, sensor noise and "
                "delay, motor heating in the run itself (see the check command).")

SWEEP_SPEC: dict[str, Any] = {
    "description": Field(str, "free text", default=""),
    "scenario": Field(str, "base scenario (or mission) file, relative to this sweep file",
                      required=True),
    "set": Field(list, "fixed KEY=VALUE overrides applied to every case (as --set)",
                 default=[], item=str),
    "drivetrain": Field(str, "drivetrain file, relative to this file (for check. metrics)",
                        default=""),
    "metrics": Field(list, "metric paths to tabulate, e.g. run.joints.*_knee.peak_torque_nm:max",
                     required=True, item=str),
    "constraints": Field(list, "conditions a good design meets, e.g. "
                         "'run.joints.*_knee.saturated_s:max <= 0'", default=[], item=str),
    "rank": {
        "metric": Field(str, "metric that ranks the completed cases", required=True),
        "goal": Field(str, "whether lower or higher is better", default="min",
                      choices=("min", "max")),
    },
    "pareto": {
        "x": Field(str, "first metric of the Pareto front plot", default=""),
        "y": Field(str, "second metric of the Pareto front plot", default=""),
        "x_goal": Field(str, "goal of x", default="min", choices=("min", "max")),
        "y_goal": Field(str, "goal of y", default="min", choices=("min", "max")),
    },
    "sample": {
        "count": Field(int, "number of Latin hypercube samples (omit [sample] for a grid)",
                       default=None, min=1),
        "seed": Field(int, "seed of the Latin hypercube", default=0, min=0),
    },
    "param": Field(list, "parameters to vary, each a [[param]] table", required=True, item=dict),
}

PARAM_SPEC: dict[str, Any] = {
    "name": Field(str, "label of the parameter", default=""),
    "key": Field(str, "one --set key (robot. prefix for model keys), or 'drivetrain'",
                 default=""),
    "keys": Field(list, "several --set keys varied together", default=[], item=str),
    "values": Field(list, "values to take (a list per case when keys are linked)", default=None),
    "start": Field(object, "first value of a range (a list for linked keys)", default=None),
    "stop": Field(object, "last value of a range, included (a list for linked keys)",
                  default=None),
    "num": Field(int, "number of evenly spaced values from start to stop", default=None),
    "step": Field(object, "spacing of the values from start to stop", default=None),
}


# --------------------------------------------------------------------------------------------
# metric providers


@dataclass(frozen=True)
class CaseContext:
    """What a metric provider may look at: one completed case."""

    record_path: Path
    run: Mapping[str, Any]  # RunResult.to_json() plus total_mass_kg
    scenario_toml: str
    model_toml: str
    drivetrain: str | None  # absolute path of the drivetrain file, if any


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
    import tomllib

    from sim.robot.model import model_from_data

    m = model_from_data(tomllib.loads(ctx.model_toml), "resolved model")
    acts = {}
    for j, a in m.actuators.items():
        acts[j] = {"gear_ratio": a.gear_ratio, "peak_torque_nm": a.peak_torque_nm,
                   "no_load_speed_rad_s": a.no_load_speed_rad_s,
                   # rotor inertia seen at the joint through an ideal reducer: N^2 J_rotor
                   "reflected_inertia_kg_m2": a.gear_ratio ** 2 * a.rotor_inertia_kg_m2}
    return {"total_mass_kg": m.total_mass_kg, "actuators": acts}


def _backdrive_provider(ctx: CaseContext) -> Mapping[str, Any]:
    import tomllib

    from sim.drive.backdrive import report
    from sim.robot.model import model_from_data
    from sim.scenario.segments import stance_angles

    m = model_from_data(tomllib.loads(ctx.model_toml), "resolved model")
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


def register_cli_provider(name: str, argv: Callable[[CaseContext], list[str]],
                          schema: Mapping[str, Any], command: str, doc: str = "",
                          needs_drivetrain: bool = False,
                          ok_codes: tuple[int, ...] = (0,)) -> MetricProvider:
    """Register a provider that runs ``gaitload <command> ... --json`` in-process.

    ``argv(ctx)`` builds the argument list for :func:`sim.commands.cli.main` (it must include
    ``--json``); stdout is captured and parsed as JSON. The provider is unavailable while the
    module ``sim.commands.<command>`` does not exist, and a metric that needs it is then
    rejected before any case runs, naming the metric.
    """
    module = f"sim.commands.{command}"

    def available() -> str | None:
        import importlib.util

        try:
            found = importlib.util.find_spec(module) is not None
        except (ImportError, ValueError):
            found = False
        return None if found else (f"the 'gaitload {command}' command, which this installation "
                                   f"does not have (no module {module})")

    def produce(ctx: CaseContext) -> Mapping[str, Any]:
        from contextlib import redirect_stderr, redirect_stdout

        from sim.commands.cli import main

        why = available()
        if why:
            raise GaitloadError(f"metric provider '{name}.' needs {why}")
        args = argv(ctx)
        out, err = io.StringIO(), io.StringIO()
        with redirect_stdout(out), redirect_stderr(err):
            code = main(args)
        if code not in ok_codes:
            raise GaitloadError(f"metric provider '{name}.': 'gaitload {' '.join(args)}' exited "
                                f"with {code}: {err.getvalue().strip()[-400:]}")
        try:
            doc = json.loads(out.getvalue())
        except json.JSONDecodeError as exc:
            raise GaitloadError(f"metric provider '{name}.': 'gaitload {command} --json' "
                                f"printed no JSON ({exc})") from None
        if not isinstance(doc, dict):
            raise GaitloadError(f"metric provider '{name}.': expected a JSON object")
        return doc

    return register_provider(MetricProvider(name, produce, schema, doc, needs_drivetrain,
                                            available))


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
register_cli_provider("loads", lambda ctx: ["loads", str(ctx.record_path), "--json"],
                      LOADS_SCHEMA, "loads", "duty spectra of the record (gaitload loads)")
register_cli_provider("check", lambda ctx: ["check", str(ctx.record_path), "--drivetrain",
                                            str(ctx.drivetrain), "--json"],
                      CHECK_SCHEMA, "check", "reducer, motor and supply checks (gaitload check)",
                      needs_drivetrain=True, ok_codes=(0, 1))  # 1: a part failed, still figures
register_provider(MetricProvider("backdrive", _backdrive_provider, BACKDRIVE_SCHEMA,
                                 "back-drivability of the resolved model (sim.drive.backdrive)"))


@dataclass(frozen=True)
class MetricPath:
    """A parsed metric: provider name, path parts (fnmatch patterns allowed), aggregate."""

    text: str
    provider: str
    parts: tuple[str, ...]
    aggregate: str | None


def parse_metric(text: str, file: str | None = None, key: str = "metrics") -> MetricPath:
    """Parse and validate ``provider.a.b[:agg]`` against the provider's schema.

    Raises :class:`InputError` (naming ``file`` and ``key``) for an unknown provider, a path
    the provider does not produce, a pattern matching no joint, a provider that is not
    available here, or a pattern that matches several numbers without an aggregate.
    """
    path, _, agg = text.partition(":")
    if agg and agg not in AGGREGATES:
        raise InputError(file, key, "an aggregate after ':' of " + ", ".join(AGGREGATES), text)
    parts = tuple(path.strip().split("."))
    known = ", ".join(f"{p}." for p in sorted(PROVIDERS))
    if len(parts) < 2 or any(not p for p in parts):
        raise InputError(file, key, f"a dotted metric path starting with a provider ({known})",
                         text)
    prov = PROVIDERS.get(parts[0])
    if prov is None:
        raise InputError(file, key, f"a metric of a known provider ({known})", text)
    why = prov.available()
    if why:
        raise InputError(file, key, f"a metric whose provider is available: metric '{text}' "
                         f"needs {why}")
    n_match = _check_schema(prov.schema, parts[1:], text, file, key)
    if n_match > 1 and not agg:
        raise InputError(file, key, "an aggregate (:max, :min, :mean or :sum) for a pattern "
                         f"that matches {n_match} numbers", text)
    return MetricPath(text, parts[0], parts[1:], agg or None)


def _check_schema(schema: Any, parts: Sequence[str], text: str, file: str | None,
                  key: str) -> int:
    """Walk ``parts`` through ``schema``; return how many numbers the path can match."""
    if schema is ANY:
        return 1
    if schema is NUM:
        if parts:
            raise InputError(file, key, f"a metric path that ends at a number; "
                             f"'{parts[0]}' goes beyond one", text)
        return 1
    if not parts:
        inner = ", ".join(k for k in schema if k not in (JOINT, ANY))
        raise InputError(file, key, f"a metric path that ends at a number, not at a table "
                         f"(continue with one of: {inner or 'a key'})", text)
    head, rest = parts[0], parts[1:]
    if JOINT in schema:
        joints = [j for j in JOINT_NAMES if fnmatchcase(j, head)]
        if not joints:
            raise InputError(file, key, f"a joint name or pattern matching joints ({head!r} "
                             f"matches none of {', '.join(JOINT_NAMES)})", text)
        return len(joints) * _check_schema(schema[JOINT], rest, text, file, key)
    names = [k for k in schema if k not in (ANY,) and fnmatchcase(k, head)]
    if not names:
        if ANY in schema:
            return _check_schema(schema[ANY], rest, text, file, key)
        known = ", ".join(k for k in schema if k != ANY)
        raise InputError(file, key, f"a metric the provider produces ('{head}' is not one of: "
                         f"{known})", text)
    return sum(_check_schema(schema[n], rest, text, file, key) for n in names)


class MetricError(GaitloadError):
    """A metric could not be evaluated on a case's documents."""


def evaluate_metric(metric: MetricPath, doc: Mapping[str, Any]) -> float:
    """The number (or aggregate over matched numbers) at ``metric`` in a provider's ``doc``."""
    values: list[float] = []

    def walk(node: Any, parts: Sequence[str]) -> None:
        if not parts:
            if isinstance(node, bool) or not isinstance(node, int | float):
                raise MetricError(f"metric '{metric.text}': expected a number, found "
                                  f"{type(node).__name__}")
            values.append(float(node))
            return
        if not isinstance(node, Mapping):
            raise MetricError(f"metric '{metric.text}': '{parts[0]}' goes beyond a number")
        keys = [k for k in node if fnmatchcase(str(k), parts[0])]
        if not keys:
            raise MetricError(f"metric '{metric.text}': no '{parts[0]}' in the "
                              f"'{metric.provider}' results")
        for k in keys:
            walk(node[k], parts[1:])

    walk(doc, metric.parts)
    if len(values) > 1 and metric.aggregate is None:
        raise MetricError(f"metric '{metric.text}' matches {len(values)} numbers; add an "
                          f"aggregate such as :max")
    arr = np.array(values)
    agg = metric.aggregate or "max"
    if agg == "min":
        return float(arr.min())
    if agg == "mean":
        return float(arr.mean())
    if agg == "sum":
        return float(arr.sum())
    return float(arr.max())


def compute_metrics(metrics: Sequence[str], ctx: CaseContext) -> dict[str, float]:
    """Evaluate every metric on one case; each provider's document is produced once."""
    docs: dict[str, Mapping[str, Any]] = {}
    out = {}
    for text in metrics:
        mp = parse_metric(text)
        if mp.provider not in docs:
            docs[mp.provider] = PROVIDERS[mp.provider].produce(ctx)
        out[text] = evaluate_metric(mp, docs[mp.provider])
    return out


@dataclass(frozen=True)
class Constraint:
    """``metric <= limit`` or ``metric >= limit``: a condition a good design meets."""

    metric: str
    op: str
    limit: float

    def holds(self, value: float) -> bool:
        return value <= self.limit if self.op == "<=" else value >= self.limit

    @property
    def text(self) -> str:
        return f"{self.metric} {self.op} {self.limit:g}"


def parse_constraint(text: str, file: str | None, key: str) -> Constraint:
    for op in ("<=", ">="):
        if op in text:
            left, right = text.split(op, 1)
            try:
                limit = float(right)
            except ValueError:
                break
            if not math.isfinite(limit):
                break
            parse_metric(left.strip(), file, key)
            return Constraint(left.strip(), op, limit)
    raise InputError(file, key, "a condition 'METRIC <= NUMBER' or 'METRIC >= NUMBER'", text)


# --------------------------------------------------------------------------------------------
# sweep files


@dataclass(frozen=True)
class Param:
    """One varied parameter: one key, or several keys varied together.

    ``values`` holds one tuple per level (one entry per key), or is None for a continuous
    range ``start..stop`` that only a Latin hypercube samples. ``integer``: the range is of
    integers.
    """

    name: str
    keys: tuple[str, ...]
    values: tuple[tuple[Any, ...], ...] | None
    start: tuple[float, ...] = ()
    stop: tuple[float, ...] = ()
    integer: bool = False


@dataclass(frozen=True)
class Sweep:
    """A validated sweep file."""

    file: str
    description: str
    scenario: Path
    fixed: tuple[str, ...]
    drivetrain: Path | None
    params: tuple[Param, ...]
    metrics: tuple[str, ...]
    constraints: tuple[Constraint, ...]
    rank_metric: str
    rank_goal: str
    pareto: tuple[str, str, str, str] | None
    sample_count: int | None
    sample_seed: int

    @property
    def keys(self) -> tuple[str, ...]:
        return tuple(k for p in self.params for k in p.keys)

    def assignments(self) -> list[dict[str, Any]]:
        """Parameter values of every case, in case order: ``[{key: value}]``."""
        if self.sample_count is None:
            levels = [p.values or () for p in self.params]
            out = []
            for combo in itertools.product(*levels):
                out.append({k: v for p, lv in zip(self.params, combo, strict=True)
                            for k, v in zip(p.keys, lv, strict=True)})
            return out
        from scipy.stats import qmc

        u = qmc.LatinHypercube(d=len(self.params), rng=self.sample_seed).random(
            self.sample_count)
        out = []
        for row in u:
            case: dict[str, Any] = {}
            for p, x in zip(self.params, row, strict=True):
                case.update(zip(p.keys, _sample_level(p, float(x)), strict=True))
            out.append(case)
        return out


def _sample_level(p: Param, x: float) -> tuple[Any, ...]:
    """Map ``x`` in [0, 1) to one level of ``p`` (a value by index, or a point of the range)."""
    if p.values is not None:
        return p.values[min(int(x * len(p.values)), len(p.values) - 1)]
    if p.integer:
        return tuple(int(min(a + math.floor(x * (abs(b - a) + 1)), max(a, b))) if b >= a
                     else int(max(a - math.floor(x * (a - b + 1)), b))
                     for a, b in zip(p.start, p.stop, strict=True))
    return tuple(_tidy(a + x * (b - a)) for a, b in zip(p.start, p.stop, strict=True))


def _tidy(v: float) -> float:
    """Round a generated value to 12 significant digits (0.16, not 0.16000000000000003)."""
    return float(f"{v:.12g}")


def _is_num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _param(raw: Any, i: int, file: str, lhs: bool) -> Param:
    pre = f"param.{i}."
    v = validate(raw, PARAM_SPEC, file, pre)
    if bool(v["key"]) == bool(v["keys"]):
        raise InputError(file, pre + "key", "either key = \"...\" or keys = [...] (not both)")
    keys = (v["key"],) if v["key"] else tuple(v["keys"])
    if len(set(keys)) != len(keys):
        raise InputError(file, pre + "keys", "distinct keys", list(keys))
    name = v["name"] or "+".join(keys)
    n = len(keys)
    has_range = v["start"] is not None or v["stop"] is not None
    if (v["values"] is None) == (not has_range):
        raise InputError(file, pre + "values", "either values = [...] or a range start, stop "
                         "(not both)")
    if v["values"] is not None:
        if v["num"] is not None or v["step"] is not None:
            raise InputError(file, pre + "num", "num or step only with start and stop")
        vals = v["values"]
        if not vals:
            raise InputError(file, pre + "values", "a non-empty list of values (empty range)",
                             vals)
        levels = []
        for k, item in enumerate(vals):
            level = tuple(item) if n > 1 and isinstance(item, list) else (item,)
            if len(level) != n:
                raise InputError(file, f"{pre}values[{k}]",
                                 f"a list of {n} values, one per key of keys", item)
            for x in level:
                if isinstance(x, dict | list) or (isinstance(x, float) and not math.isfinite(x)):
                    raise InputError(file, f"{pre}values[{k}]", "plain values (numbers, "
                                     "strings, true/false)", item)
            levels.append(level)
        return Param(name, keys, tuple(levels))
    # a range
    start, stop, num, step = v["start"], v["stop"], v["num"], v["step"]
    if start is None or stop is None:
        raise InputError(file, pre + ("stop" if stop is None else "start"),
                         "both start and stop for a range")

    def vec(x: Any, what: str) -> tuple[Any, ...]:
        xs = x if isinstance(x, list) else [x]
        if len(xs) != n or not all(_is_num(e) for e in xs):
            raise InputError(file, pre + what, "a number" if n == 1 else
                             f"a list of {n} numbers, one per key", x)
        return tuple(xs)

    a, b = vec(start, "start"), vec(stop, "stop")
    integer = all(isinstance(e, int) for e in a + b) and (step is None or isinstance(step, int))
    if lhs:
        if num is not None or step is not None:
            raise InputError(file, pre + ("num" if num is not None else "step"),
                             "no num or step in a Latin hypercube sample (start and stop are "
                             "the bounds)")
        if any(x == y for x, y in zip(a, b, strict=True)):
            raise InputError(file, pre + "stop", "a stop different from start (empty range)")
        return Param(name, keys, None, tuple(float(x) if not integer else x for x in a),
                     tuple(float(x) if not integer else x for x in b), integer)
    if (num is None) == (step is None):
        raise InputError(file, pre + "num", "exactly one of num or step with start and stop")
    if num is not None:
        if num < 1:
            raise InputError(file, pre + "num", "a count of at least 1 (empty range)", num)
        if num == 1:
            levels = [tuple(a)]
        else:
            levels = [tuple(_tidy(x + (y - x) * k / (num - 1)) for x, y in zip(a, b, strict=True))
                      for k in range(num)]
        return Param(name, keys, tuple(levels))
    if n > 1:
        raise InputError(file, pre + "step", "num (not step) for linked keys")
    if not _is_num(step) or step == 0:
        raise InputError(file, pre + "step", "a non-zero number", step)
    count = math.floor((b[0] - a[0]) / step + 1e-9) + 1
    if count < 1:
        raise InputError(file, pre + "step", f"a step leading from start {a[0]} to stop {b[0]} "
                         "(empty range)", step)
    levels = [((a[0] + k * step) if integer else _tidy(a[0] + k * step),) for k in range(count)]
    return Param(name, keys, tuple(levels))


def load_sweep(path: str | Path) -> Sweep:
    """Read and validate a sweep file; every error is an :class:`InputError` (exit 2).

    Besides the file itself this loads the base scenario with the fixed overrides, checks that
    every varied key exists in the scenario or its model, and validates every metric path
    against the providers, so nothing runs before the whole sweep is known to be valid.
    """
    from sim.robot.model import ACTUATOR_SPEC
    from sim.scenario.scenario_file import load_scenario

    path = Path(path)
    fname = str(path)
    data = load_toml(path, "sweep file")
    v = validate(data, SWEEP_SPEC, path)
    lhs = v["sample"]["count"] is not None
    if "sample" in data and not lhs:
        raise InputError(fname, "sample.count", "a sample count (an integer >= 1) in [sample]")
    if not v["param"]:
        raise InputError(fname, "param", "at least one [[param]]")
    params = tuple(_param(raw, i, fname, lhs) for i, raw in enumerate(v["param"]))
    seen: set[str] = set()
    for i, p in enumerate(params):
        for k in p.keys:
            if k in seen:
                raise InputError(fname, f"param.{i}.key", "a key varied by one [[param]] only",
                                 k)
            seen.add(k)
    scenario = (path.parent / v["scenario"]).resolve()
    base = load_scenario(scenario, v["set"])
    for i, p in enumerate(params):
        for k in p.keys:
            _check_param_key(k, base, fname, f"param.{i}.key", ACTUATOR_SPEC)
    drivetrain = (path.parent / v["drivetrain"]).resolve() if v["drivetrain"] else None
    if drivetrain is not None and not drivetrain.is_file():
        raise InputError(fname, "drivetrain", "an existing drivetrain file", str(drivetrain))
    for i, p in enumerate(params):
        if "drivetrain" in p.keys:
            for lv in p.values or ():
                dv = lv[p.keys.index("drivetrain")]
                if not isinstance(dv, str) or not (path.parent / dv).is_file():
                    raise InputError(fname, f"param.{i}.values",
                                     "existing drivetrain files, relative to the sweep file", dv)
    if not v["metrics"]:
        raise InputError(fname, "metrics", "at least one metric")
    metrics: list[str] = []
    extra = [("rank.metric", v["rank"]["metric"])]
    if v["pareto"]["x"] or v["pareto"]["y"]:
        if not (v["pareto"]["x"] and v["pareto"]["y"]):
            raise InputError(fname, "pareto.y" if v["pareto"]["x"] else "pareto.x",
                             "both x and y metrics for a Pareto front")
        extra += [("pareto.x", v["pareto"]["x"]), ("pareto.y", v["pareto"]["y"])]
    listed = [(f"metrics[{k}]", m) for k, m in enumerate(v["metrics"])]
    has_dt = drivetrain is not None or "drivetrain" in seen
    for key, m in listed + extra:
        mp = parse_metric(m, fname, key)
        if PROVIDERS[mp.provider].needs_drivetrain and not has_dt:
            raise InputError(fname, "drivetrain", f"a drivetrain file: metric '{m}' needs one")
        if m not in metrics:
            metrics.append(m)
    constraints = tuple(parse_constraint(c, fname, f"constraints[{k}]")
                        for k, c in enumerate(v["constraints"]))
    for c in constraints:
        if c.metric not in metrics:
            metrics.append(c.metric)
    pareto = None
    if v["pareto"]["x"]:
        pa = v["pareto"]
        pareto = (pa["x"], pa["y"], pa["x_goal"], pa["y_goal"])
    return Sweep(fname, v["description"], scenario, tuple(v["set"]), drivetrain, params,
                 tuple(metrics), constraints, v["rank"]["metric"], v["rank"]["goal"], pareto,
                 v["sample"]["count"], v["sample"]["seed"])


def _check_param_key(key: str, base: Any, file: str, where: str,
                     actuator_spec: Mapping[str, Any]) -> None:
    """A varied key must name a value of the base scenario, or of its model under robot."""
    if key == "drivetrain":
        return
    expected = ("a key of the base scenario, or of its robot model under 'robot.' (as for "
                "--set), that names a value")
    if key.startswith("robot."):
        parts = key[len("robot."):].split(".")
        if (len(parts) == 3 and parts[0] == "actuator"
                and (parts[1] in JOINT_KINDS or parts[1] in JOINT_NAMES)
                and parts[2] in actuator_spec):
            return
        node: Any = base.model.data
    else:
        parts = key.split(".")
        node = dict(base.data)
        node["segment"] = [dict(s) for s in base.segments]
    for p in parts:
        if isinstance(node, dict) and p in node:
            node = node[p]
        elif isinstance(node, list) and p.isdigit() and int(p) < len(node):
            node = node[int(p)]
        else:
            raise InputError(file, where, expected, key)
    if isinstance(node, dict):
        raise InputError(file, where, expected + " (this one names a table)", key)


# --------------------------------------------------------------------------------------------
# cases


@dataclass(frozen=True)
class Case:
    """One resolved case: parameter values, key, and the spec a worker runs (or an error)."""

    index: int
    params: dict[str, Any]
    key: str
    spec: dict[str, Any] | None
    error: str | None = None


def toml_value(v: Any) -> str:
    """A value as TOML text for a ``KEY=VALUE`` override."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} as a TOML value")


def case_key(inputs: Mapping[str, Any]) -> str:
    """SHA-256 of the canonical JSON (sorted keys, no spaces) of a case's resolved inputs."""
    text = json.dumps(inputs, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(text.encode()).hexdigest()


def resolve_cases(sweep: Sweep) -> list[Case]:
    """Resolve every case (validating scenario and model) in case order.

    A case whose inputs are rejected is kept with status ``bad_input``; if every case is
    rejected the first error is raised, since the sweep file itself is then at fault.
    """
    from sim.scenario.scenario_file import load_scenario

    base_dir = Path(sweep.file).parent
    cases = []
    first_error: InputError | None = None
    for i, assign in enumerate(sweep.assignments()):
        overrides = list(sweep.fixed) + [f"{k}={toml_value(v)}" for k, v in assign.items()
                                         if k != "drivetrain"]
        dt = sweep.drivetrain
        if "drivetrain" in assign:
            dt = (base_dir / assign["drivetrain"]).resolve()
        try:
            scn = load_scenario(sweep.scenario, overrides)
        except InputError as exc:
            first_error = first_error or exc
            key = case_key({"bad_input": overrides, "scenario": str(sweep.scenario)})
            cases.append(Case(i, assign, key, None, str(exc)))
            continue
        sdata = copy.deepcopy(scn.data)
        sdata["robot"] = "model.toml"
        sdata["segment"] = [dict(s) for s in scn.segments]
        inputs = {"scenario_toml": dump_toml(sdata), "model_toml": scn.model.to_toml(),
                  "drivetrain_text": dt.read_text() if dt else None,
                  "metrics": list(sweep.metrics)}
        key = case_key(inputs)
        spec = dict(inputs, key=key, drivetrain=str(dt) if dt else None)
        cases.append(Case(i, assign, key, spec))
    if cases and all(c.spec is None for c in cases) and first_error is not None:
        raise first_error
    return cases


def run_case(spec: Mapping[str, Any], out_dir: str | None = None) -> dict[str, Any]:
    """Run one resolved case in this process; return status, reason and metrics.

    Meant to run in a worker process (local pool or Dask worker). With ``out_dir`` the record
    is written to ``<out_dir>/cases/<key>/record.h5``; without it the record is written to a
    temporary folder and its bytes are returned as ``record_bytes``, so a worker needs no
    shared file system.
    """
    from sim.scenario.scenario_file import load_scenario

    key = spec["key"]
    out: dict[str, Any] = {"key": key, "status": "error", "reason": "", "metrics": {}}
    with tempfile.TemporaryDirectory(prefix="gaitload-case-") as tmp:
        t = Path(tmp)
        (t / "scenario.toml").write_text(spec["scenario_toml"])
        (t / "model.toml").write_text(spec["model_toml"])
        try:
            scn = load_scenario(t / "scenario.toml")
        except InputError as exc:
            out.update(status="bad_input", reason=str(exc))
            return out
        if out_dir is not None:
            rec = Path(out_dir) / "cases" / key / "record.h5"
            rec.parent.mkdir(parents=True, exist_ok=True)
        else:
            rec = t / "record.h5"
        from sim.engine.runner import run

        try:
            res = run(scn, rec)
        except GaitloadError as exc:
            out.update(status="error", reason=str(exc))
            return out
        out.update(status=res.status, reason=res.detail)
        if res.status == "completed":
            doc = dict(res.to_json())
            doc["total_mass_kg"] = res.total_mass_kg
            ctx = CaseContext(rec, doc, spec["scenario_toml"], spec["model_toml"],
                              spec.get("drivetrain"))
            try:
                out["metrics"] = compute_metrics(spec["metrics"], ctx)
            except GaitloadError as exc:
                out.update(status="error", reason=str(exc))
        if out_dir is None and rec.is_file():
            out["record_bytes"] = rec.read_bytes()
    out["pid"] = os.getpid()
    out["process_cpu_s"] = time.process_time()  # cumulative CPU of this worker process
    return out


def write_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder."""
    write_bytes_atomic(path, data)


def _json_bytes(doc: Any) -> bytes:
    return (json.dumps(_jsonable(doc), indent=2, sort_keys=False, allow_nan=False)
            + "\n").encode()


def _jsonable(x: Any) -> Any:
    if isinstance(x, float) and not math.isfinite(x):
        return None
    if isinstance(x, Mapping):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.generic):
        return x.item()
    return x


def load_case_result(out_dir: Path, key: str) -> dict[str, Any] | None:
    """The stored result of case ``key`` if it is final and complete, else None."""
    d = out_dir / "cases" / key
    try:
        doc = json.loads((d / "result.json").read_text())
    except (OSError, ValueError):
        return None
    if not isinstance(doc, dict) or doc.get("format") != CASE_FORMAT or doc.get("key") != key:
        return None
    if doc.get("status") not in FINAL_STATUSES:
        return None
    if doc.get("record") and not (d / doc["record"]).is_file():
        return None
    return doc


# --------------------------------------------------------------------------------------------
# running


@dataclass(frozen=True)
class CaseResult:
    """Outcome of one case as it appears in the table."""

    index: int
    key: str
    status: str
    reason: str
    params: dict[str, Any]
    metrics: dict[str, float | None]


@dataclass(frozen=True)
class SweepResult:
    """All cases of a sweep, in case order, with the ranking.

    ``ranked`` lists case indices of ranked (completed, feasible, finite) cases, best first.
    ``n_run`` / ``n_reused``: cases run now and cases taken from a previous run.
    ``worker_cpu_s``: per worker process (by pid) its CPU seconds since it started, as last
    reported (start-up, cases run now and any executor threads); in no output file.
    """

    sweep: Sweep
    out_dir: Path
    cases: tuple[CaseResult, ...]
    ranked: tuple[int, ...]
    n_run: int
    n_reused: int
    worker_cpu_s: dict[int, float] = field(default_factory=dict)

    def record_path(self, index: int) -> Path:
        return self.out_dir / "cases" / self.cases[index].key / "record.h5"

    @property
    def columns(self) -> list[str]:
        return ["rank", "case", "key", "status", "reason", *self.sweep.keys,
                *self.sweep.metrics]

    def rows(self) -> list[dict[str, Any]]:
        """Table rows: ranked cases best first, then the unranked ones in case order."""
        rank = {i: r + 1 for r, i in enumerate(self.ranked)}
        order = list(self.ranked) + [c.index for c in self.cases if c.index not in rank]
        out = []
        for i in order:
            c = self.cases[i]
            row: dict[str, Any] = {"rank": rank.get(i), "case": c.index, "key": c.key[:16],
                                   "status": c.status, "reason": c.reason}
            row.update({k: c.params.get(k) for k in self.sweep.keys})
            row.update({m: c.metrics.get(m) for m in self.sweep.metrics})
            out.append(row)
        return out

    def to_pandas(self) -> Any:
        import pandas as pd

        return pd.DataFrame(self.rows(), columns=self.columns)

    def to_csv(self) -> str:
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(self.columns)
        for row in self.rows():
            w.writerow(["" if row[c] is None else (repr(row[c]) if isinstance(row[c], float)
                                                   else row[c]) for c in self.columns])
        return buf.getvalue()

    def pareto_indices(self) -> list[int]:
        """Case indices on the Pareto front of the two ``[pareto]`` metrics (ranked cases)."""
        if self.sweep.pareto is None:
            return []
        x, y, gx, gy = self.sweep.pareto
        idx = [i for i in self.ranked if _finite(self.cases[i].metrics.get(x))
               and _finite(self.cases[i].metrics.get(y))]
        pts = np.array([[self.cases[i].metrics[x], self.cases[i].metrics[y]] for i in idx],
                       dtype=float).reshape(-1, 2)
        mask = pareto_front(pts, (gx, gy))
        return [i for i, m in zip(idx, mask, strict=True) if m]

    def summary(self) -> dict[str, Any]:
        """The JSON summary: ranking, winner, margin to the runner-up, counts, all rows."""
        s = self.sweep
        counts: dict[str, int] = {}
        for c in self.cases:
            counts[c.status] = counts.get(c.status, 0) + 1

        def entry(i: int) -> dict[str, Any]:
            c = self.cases[i]
            return {"case": i, "key": c.key, "params": c.params, "value": c.metrics[s.rank_metric]}

        winner = entry(self.ranked[0]) if self.ranked else None
        runner = entry(self.ranked[1]) if len(self.ranked) > 1 else None
        margin = None
        if winner and runner:
            d = abs(runner["value"] - winner["value"])
            margin = {"abs": d, "rel": d / abs(winner["value"]) if winner["value"] else None}
        return {
            "sweep": s.file, "description": s.description, "scenario": str(s.scenario),
            "rank": {"metric": s.rank_metric, "goal": s.rank_goal},
            "constraints": [c.text for c in s.constraints],
            "params": list(s.keys), "metrics": list(s.metrics),
            "mode": "grid" if s.sample_count is None else
                    f"latin hypercube, {s.sample_count} samples, seed {s.sample_seed}",
            "counts": dict(sorted(counts.items())), "n_cases": len(self.cases),
            "n_ranked": len(self.ranked),
            "winner": winner, "runner_up": runner, "margin": margin,
            "pareto": None if s.pareto is None else {
                "x": s.pareto[0], "y": s.pareto[1], "x_goal": s.pareto[2],
                "y_goal": s.pareto[3], "front": self.pareto_indices()},
            "cases": self.rows(),
            "caution": CAUTION, "not_modelled": NOT_MODELLED,
        }


def _finite(v: Any) -> bool:
    return isinstance(v, int | float) and math.isfinite(v)


def pareto_front(points: np.ndarray, goals: tuple[str, str]) -> np.ndarray:
    """Mask of the non-dominated rows of ``points[n, 2]`` for goals ``("min"|"max", ...)``.

    Row a dominates row b when a is at least as good in both columns and better in one.
    """
    p = np.asarray(points, float).reshape(-1, 2).copy()
    for k, g in enumerate(goals):
        if g == "max":
            p[:, k] = -p[:, k]
    n = len(p)
    mask = np.ones(n, bool)
    for i in range(n):
        better_eq = np.all(p <= p[i], axis=1)
        strictly = np.any(p < p[i], axis=1)
        if np.any(better_eq & strictly):
            mask[i] = False
    return mask


def rank_cases(cases: Sequence[CaseResult], metric: str, goal: str) -> tuple[int, ...]:
    """Indices of completed cases with a finite ``metric``, best first (ties: case order)."""
    ok = [c for c in cases if c.status == "completed" and _finite(c.metrics.get(metric))]
    sign = 1.0 if goal == "min" else -1.0
    return tuple(c.index for c in sorted(ok, key=lambda c: (sign * float(c.metrics[metric] or 0.0),
                                                            c.index)))


def available_cpus() -> int:
    """CPUs this process may use."""
    if hasattr(os, "sched_getaffinity"):
        return len(os.sched_getaffinity(0))
    return os.cpu_count() or 1


def _mp_context() -> Any:
    import multiprocessing as mp

    methods = mp.get_all_start_methods()
    if "forkserver" not in methods:
        return mp.get_context("spawn")
    ctx = mp.get_context("forkserver")
    # the fork server imports the engine and the case code once; workers forked from it start
    # at once and together, so the first cases do not queue behind one worker's imports
    ctx.set_forkserver_preload(["sim.sweeps.sweep", "sim.engine.runner"])
    return ctx


def _execute_local(specs: list[dict[str, Any]], out_dir: Path, workers: int,
                   done: Callable[[dict[str, Any]], None]) -> None:
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    with ProcessPoolExecutor(max_workers=max(1, min(workers, len(specs))),
                             mp_context=_mp_context()) as pool:
        futs = {pool.submit(run_case, s, str(out_dir)): s for s in specs}
        try:
            for f in as_completed(futs):
                try:
                    done(f.result())
                except BrokenProcessPool:
                    done({"key": futs[f]["key"], "status": "error", "metrics": {},
                          "reason": "the worker process died (out of memory or a crash)"})
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise


def _execute_dask(specs: list[dict[str, Any]], out_dir: Path, cluster: Any, shared: bool,
                  done: Callable[[dict[str, Any]], None]) -> None:
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise InputError("--cluster", None, "dask.distributed installed (pip install "
                         "'gaitload[cluster]')") from None
    own = not isinstance(cluster, Client)
    try:
        client = Client(cluster, timeout=10) if own else cluster
    except OSError as exc:
        raise GaitloadError(f"cannot reach the Dask scheduler at {cluster}: {exc}") from None
    try:
        target = str(out_dir) if shared else None
        futs = client.map(run_case, specs, out_dir=target, pure=False)
        for f in as_completed(futs):
            try:
                done(f.result())
            except Exception as exc:  # a worker lost or a task failed outside run_case
                spec = specs[futs.index(f)]
                done({"key": spec["key"], "status": "error", "metrics": {},
                      "reason": f"the Dask task failed: {exc!r}"})
            f.release()
    finally:
        if own:
            client.close()


def run_sweep(sweep: Sweep, out_dir: str | Path, workers: int | None = None,
              cluster: Any = None, shared_output: bool = False,
              progress: bool = False) -> SweepResult:
    """Run the missing cases of ``sweep`` into ``out_dir`` and rank all of them.

    ``workers``: local process pool size (default: the CPUs available). ``cluster``: a Dask
    scheduler address (or a ``dask.distributed.Client``) to run the cases there instead; with
    ``shared_output`` the workers write records straight into ``out_dir`` (a folder they all
    see at the same path), otherwise records come back to this process. Results do not depend
    on the executor, the worker count or the order in which cases finish.
    """
    out_dir = Path(out_dir)
    cases = resolve_cases(sweep)
    stored: dict[str, dict[str, Any]] = {}
    todo: dict[str, dict[str, Any]] = {}
    for c in cases:
        if c.key in stored or c.key in todo:
            continue
        prev = load_case_result(out_dir, c.key)
        if prev is not None:
            stored[c.key] = prev
        elif c.spec is None:
            stored[c.key] = _store(out_dir, c, {"key": c.key, "status": "bad_input",
                                                "reason": c.error or "", "metrics": {}})
        else:
            todo[c.key] = c.spec
    by_key = {c.key: c for c in cases}
    bar = None
    if progress and sys.stderr.isatty() and todo:
        from tqdm import tqdm

        bar = tqdm(total=len(todo), unit="case", desc="sweep", file=sys.stderr)

    cpu: dict[int, float] = {}

    def done(res: dict[str, Any]) -> None:
        if "pid" in res:
            cpu[res["pid"]] = max(cpu.get(res["pid"], 0.0), float(res["process_cpu_s"]))
        stored[res["key"]] = _store(out_dir, by_key[res["key"]], res)
        if bar is not None:
            bar.update(1)

    specs = list(todo.values())
    try:
        if specs:
            if cluster is not None:
                _execute_dask(specs, out_dir, cluster, shared_output, done)
            else:
                _execute_local(specs, out_dir, workers or available_cpus(), done)
    finally:
        if bar is not None:
            bar.close()
    results = []
    for c in cases:
        doc = stored[c.key]
        status, reason = doc["status"], doc.get("reason", "")
        metrics = {m: doc.get("metrics", {}).get(m) for m in sweep.metrics}
        if status == "completed":
            broken = [k.text for k in sweep.constraints
                      if not (_finite(metrics[k.metric]) and k.holds(float(metrics[k.metric])))]
            if broken:
                status, reason = "infeasible", "violates " + "; ".join(broken)
        results.append(CaseResult(c.index, c.key, status, reason, dict(c.params), metrics))
    ranked = rank_cases(results, sweep.rank_metric, sweep.rank_goal)
    return SweepResult(sweep, out_dir, tuple(results), ranked, len(specs),
                       len(cases) - len(specs), cpu)


def _store(out_dir: Path, case: Case, res: Mapping[str, Any]) -> dict[str, Any]:
    """Write a case's record (if shipped back) and its result.json; return the stored doc."""
    d = out_dir / "cases" / case.key
    if "record_bytes" in res:
        write_atomic(d / "record.h5", res["record_bytes"])
    has_record = (d / "record.h5").is_file() and res["status"] not in ("bad_input",)
    doc = {"format": CASE_FORMAT, "key": case.key, "status": res["status"],
           "reason": res.get("reason", ""), "params": case.params,
           "metrics": res.get("metrics", {}), "record": "record.h5" if has_record else None,
           "inputs": None if case.spec is None else {
               k: case.spec[k] for k in ("scenario_toml", "model_toml", "drivetrain",
                                         "metrics")}}
    write_atomic(d / "result.json", _json_bytes(doc))
    return doc


def write_outputs(result: SweepResult) -> tuple[Path, Path]:
    """Write ``results.csv`` and ``summary.json`` into the output folder (atomically)."""
    csv_path = result.out_dir / "results.csv"
    json_path = result.out_dir / "summary.json"
    write_atomic(csv_path, result.to_csv().encode())
    write_atomic(json_path, _json_bytes(result.summary()))
    return csv_path, json_path


def format_table(result: SweepResult, limit: int = 20, cols: Iterable[str] | None = None) -> str:
    """A short text table of the ranking for the terminal (best first, failed cases last)."""
    names = list(cols or [*result.sweep.keys, result.sweep.rank_metric])
    widths = [max(len(n), 10) for n in names]
    lines = ["rank case status     " + " ".join(f"{n:>{w}}" for n, w in zip(names, widths,
                                                                           strict=True))]
    for row in result.rows()[:limit]:
        cells = []
        for n, w in zip(names, widths, strict=True):
            v = row[n]
            cells.append(f"{v:>{w}.6g}" if isinstance(v, float) else
                         f"{'' if v is None else v!s:>{w}}")
        r = "" if row["rank"] is None else row["rank"]
        lines.append(f"{r!s:>4} {row['case']:>4} {row['status']:<10} " + " ".join(cells))
    if len(result.cases) > limit:
        lines.append(f"... {len(result.cases) - limit} more in results.csv")
    return "\n".join(lines)
