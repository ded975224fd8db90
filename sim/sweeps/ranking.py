"""Ranking and outputs of a sweep: the table of cases, the winner, the Pareto front.

Takes the outcome of every case (:class:`CaseResult`) and gives the :class:`SweepResult`:
ranked cases best first (completed, feasible, finite rank metric; ties in case order), the
non-dominated front of the two ``[pareto]`` metrics, the table (CSV, pandas) and the JSON
summary, written atomically by :func:`write_outputs`, and a short terminal table
(:func:`format_table`).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sim.core.atomic import write_bytes_atomic
from sim.sweeps.cases import Case, json_bytes
from sim.sweeps.spec import Sweep

CAUTION = ("Results are estimates from a rigid-body simulation of an idealised robot: "
           "manufacturer ratings, local codes and licensed engineering practice take precedence.")
NOT_MODELLED = ("Not modelled unless the scenario's [drive] table or the model's actuator "
                "tables turn them on: rotor inertia, reducer friction, backlash and mesh "
                "compliance. Not modelled: structural compliance of the links, sensor noise and "
                "delay, motor heating in the run itself (see the check command).")


@dataclass(frozen=True)
class CaseResult:
    """Outcome of one case as it appears in the table."""

    index: int
    key: str
    status: str
    reason: str
    params: dict[str, Any]
    metrics: dict[str, float | None]
    flagged: bool = False  # the record failed the quality screen (sim.loads.quality)
    quality: str = ""  # why, in short


@dataclass(frozen=True)
class SweepResult:
    """All cases of a sweep, in case order, with the ranking.

    ``ranked`` lists case indices of ranked (completed, feasible, finite) cases, best first:
    the cases whose records pass the quality screen, then the flagged ones (marked).
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
        return ["rank", "case", "key", "status", "reason", "quality", *self.sweep.keys,
                *self.sweep.metrics]

    def rows(self) -> list[dict[str, Any]]:
        """Table rows: ranked cases best first, then the unranked ones in case order."""
        rank = {i: r + 1 for r, i in enumerate(self.ranked)}
        order = list(self.ranked) + [c.index for c in self.cases if c.index not in rank]
        out = []
        for i in order:
            c = self.cases[i]
            row: dict[str, Any] = {"rank": rank.get(i), "case": c.index, "key": c.key[:16],
                                   "status": c.status, "reason": c.reason,
                                   "quality": ("flagged: " + c.quality) if c.flagged else ""}
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
        idx = [i for i in self.ranked if not self.cases[i].flagged
               and is_finite_number(self.cases[i].metrics.get(x))
               and is_finite_number(self.cases[i].metrics.get(y))]
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
            return {"case": i, "key": c.key, "params": c.params, "value": c.metrics[s.rank_metric],
                    "flagged": c.flagged}

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
            "n_flagged": sum(1 for c in self.cases if c.flagged),
            "winner": winner, "runner_up": runner, "margin": margin,
            "pareto": None if s.pareto is None else {
                "x": s.pareto[0], "y": s.pareto[1], "x_goal": s.pareto[2],
                "y_goal": s.pareto[3], "front": self.pareto_indices()},
            "cases": self.rows(),
            "caution": CAUTION, "not_modelled": NOT_MODELLED,
        }


def is_finite_number(v: Any) -> bool:
    """True for an int or float that is finite (a metric that can be ranked)."""
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


def case_result(case: Case, doc: Mapping[str, Any], sweep: Sweep) -> CaseResult:
    """A case's row from its stored result: a completed case that breaks a constraint becomes
    ``infeasible`` with the broken conditions as its reason."""
    status, reason = doc["status"], doc.get("reason", "")
    metrics = {m: doc.get("metrics", {}).get(m) for m in sweep.metrics}
    q = doc.get("quality") or {}
    if status == "completed":
        broken = [k.text for k in sweep.constraints
                  if not (is_finite_number(metrics[k.metric])
                          and k.holds(float(metrics[k.metric])))]
        if broken:
            status, reason = "infeasible", "violates " + "; ".join(broken)
    return CaseResult(case.index, case.key, status, reason, dict(case.params), metrics,
                      bool(q.get("flagged", False)), "; ".join(q.get("reasons", ())))


def rank_cases(cases: Sequence[CaseResult], metric: str, goal: str) -> tuple[int, ...]:
    """Indices of completed cases with a finite ``metric``, best first (ties: case order):
    the cases that pass the quality screen first, then the flagged ones, each group by the
    metric (a flagged case's figures may be inflated or thinned by what the screen found)."""
    ok = [c for c in cases
          if c.status == "completed" and is_finite_number(c.metrics.get(metric))]
    sign = 1.0 if goal == "min" else -1.0
    return tuple(c.index for c in sorted(ok, key=lambda c: (
        c.flagged, sign * float(c.metrics[metric] or 0.0), c.index)))



def write_outputs(result: SweepResult) -> tuple[Path, Path]:
    """Write ``results.csv`` and ``summary.json`` into the output folder (atomically)."""
    csv_path = result.out_dir / "results.csv"
    json_path = result.out_dir / "summary.json"
    write_bytes_atomic(csv_path, result.to_csv().encode())
    write_bytes_atomic(json_path, json_bytes(result.summary()))
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
        r = "" if row["rank"] is None else f"{row['rank']}{'*' if row['quality'] else ''}"
        lines.append(f"{r!s:>4} {row['case']:>4} {row['status']:<10} " + " ".join(cells))
    if len(result.cases) > limit:
        lines.append(f"... {len(result.cases) - limit} more in results.csv")
    if any(c.flagged for c in result.cases):
        lines.append("* flagged by the quality screen, ranked after the clean cases")
    return "\n".join(lines)
