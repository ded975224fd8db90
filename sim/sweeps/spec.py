"""Sweep files: the base scenario, the parameters to vary, the metrics, constraints and rank.

Takes a sweep file (``scenarios/sweep_*.toml``) and gives a validated :class:`Sweep` whose
:meth:`Sweep.assignments` are the parameter values of every case, in case order::

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
    key = "robot.parts.knee.reducer.ratio"
    start = 5.0
    stop = 11.0
    step = 2.0                                    # or num = 4

Without a ``[sample]`` table the parameters span a full grid (cartesian product, the last
parameter varying fastest). With ``[sample] count = N, seed = S`` the cases are N points of a
Latin hypercube (``scipy.stats.qmc.LatinHypercube``; McKay, Beckman & Conover, Technometrics
21(2), 1979) over the parameter ranges; a value-list parameter is sampled by index.

Every error is an :class:`~sim.core.errors.InputError` naming the file and key: the base
scenario is loaded with the fixed overrides, every varied key must exist in the scenario or its
model, and every metric is validated against its provider (:mod:`.metrics`), so nothing runs
before the whole sweep is known to be valid.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim import JOINT_KINDS, JOINT_NAMES
from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError
from sim.core.paths import label_problem
from sim.sweeps.metrics import Constraint, parse_constraint, parse_metric
from sim.sweeps.providers import PROVIDERS

SWEEP_SPEC: dict[str, Any] = {
    "description": Field(str, "free text", default=""),
    "scenario": Field(str, "base scenario (or mission) file, relative to this sweep file",
                      required=True),
    "set": Field(list, "fixed KEY=VALUE overrides applied to every case (as --set)",
                 default=[], item=str),
    "drivetrain": Field(str, "drivetrain file, relative to this file: simulated in every case "
                        "instead of the model's (and so checked)",
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
    "name": Field(str, "label of the parameter", default="", check=label_problem),
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
    """The ``i``-th ``[[param]]`` table: its keys and its levels or range (``lhs``: sampled)."""
    pre = f"param.{i}."
    v = validate(raw, PARAM_SPEC, file, pre)
    if bool(v["key"]) == bool(v["keys"]):
        raise InputError(file, pre + "key", "either key = \"...\" or keys = [...] (not both)")
    keys = (v["key"],) if v["key"] else tuple(v["keys"])
    if len(set(keys)) != len(keys):
        raise InputError(file, pre + "keys", "distinct keys", list(keys))
    name = v["name"] or "+".join(keys)
    has_range = v["start"] is not None or v["stop"] is not None
    if (v["values"] is None) == (not has_range):
        raise InputError(file, pre + "values", "either values = [...] or a range start, stop "
                         "(not both)")
    if v["values"] is not None:
        if v["num"] is not None or v["step"] is not None:
            raise InputError(file, pre + "num", "num or step only with start and stop")
        return Param(name, keys, _value_levels(v["values"], len(keys), file, pre))
    return _range_param(v, name, keys, file, pre, lhs)


def _value_levels(vals: list[Any], n: int, file: str, pre: str) -> tuple[tuple[Any, ...], ...]:
    """The levels of ``values = [...]``: one tuple of ``n`` plain values per level."""
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
    return tuple(levels)


def _range_param(v: Mapping[str, Any], name: str, keys: tuple[str, ...], file: str, pre: str,
                 lhs: bool) -> Param:
    """A ``start``/``stop`` parameter: bounds of a Latin hypercube (``lhs``), or levels by
    ``num`` or ``step`` for a grid."""
    n = len(keys)
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
    if key == "robot.drivetrain":
        return
    if key.startswith("robot.parts."):
        # a part value, part file or current limit (sim.parts.drivetrain); the value itself is
        # validated when the case is resolved, with the part file it lands in
        from sim.parts.drivetrain import split_overrides

        try:
            split_overrides({key[len("robot.parts."):]: 0.0})
        except InputError as exc:
            raise InputError(file, where, exc.expected, key) from None
        return
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

