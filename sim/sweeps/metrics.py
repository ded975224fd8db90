"""Metric paths and constraints of a sweep: parsing, validation and evaluation.

A metric is a dotted path into the document of a metric provider (:mod:`.providers`),
optionally with an aggregate over a pattern: ``run.joints.fl_knee.peak_torque_nm`` or
``run.joints.*_knee.peak_torque_nm:max``. Takes metric and constraint texts (validated against
the provider schemas, every error an :class:`~sim.core.errors.InputError` naming the file and
key) and a case's provider documents; gives :class:`MetricPath`, :class:`Constraint` and the
numbers of one case (:func:`compute_metrics`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fnmatch import fnmatchcase
from typing import Any

import numpy as np

from sim import JOINT_NAMES
from sim.core.errors import GaitloadError, InputError
from sim.sweeps.providers import ANY, JOINT, NUM, PROVIDERS, CaseContext

AGGREGATES = ("max", "min", "mean", "sum")


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

