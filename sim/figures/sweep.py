"""Figures of a sweep (matplotlib, Agg backend, imported only when plots are written).

- ``metrics.png``: each metric (rows) against each varied numeric parameter (columns); ranked
  cases as filled dots, completed but unranked ones (infeasible) as hollow dots, failed cases
  as crosses on the bottom edge of each panel.
- ``pareto.png``: the two ``[pareto]`` metrics of the ranked cases with the non-dominated
  front drawn through.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from sim.sweeps.ranking import SweepResult


def _num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _figure(w_in: float, h_in: float) -> Any:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(w_in, h_in), dpi=100)
    FigureCanvasAgg(fig)
    return fig


def _save(fig: Any, path: Path) -> Path:
    from sim.figures.common import save_png

    return save_png(fig, path)


def varied_numeric_keys(result: SweepResult) -> list[str]:
    """Parameter keys that take more than one numeric value over the cases."""
    out = []
    for k in result.sweep.keys:
        vals = {c.params.get(k) for c in result.cases}
        if len(vals) > 1 and all(_num(v) for v in vals):
            out.append(k)
    return out


def plot_metrics(result: SweepResult, path: Path) -> Path | None:
    """Each metric against each varied numeric parameter; returns the file or None."""
    keys = varied_numeric_keys(result)
    metrics = list(result.sweep.metrics)
    if not keys or not metrics:
        return None
    fig = _figure(3.2 * len(keys) + 0.8, 2.4 * len(metrics) + 0.6)
    ranked = set(result.ranked)
    for r, m in enumerate(metrics):
        for c_, k in enumerate(keys):
            ax = fig.add_subplot(len(metrics), len(keys), r * len(keys) + c_ + 1)
            good = [(c.params[k], c.metrics[m]) for c in result.cases
                    if c.index in ranked and _num(c.metrics.get(m))]
            other = [(c.params[k], c.metrics[m]) for c in result.cases
                     if c.index not in ranked and _num(c.metrics.get(m))]
            failed = [c.params[k] for c in result.cases if not _num(c.metrics.get(m))]
            if good:
                xs, ys = zip(*sorted(good), strict=True)
                ax.plot(xs, ys, "o", color="tab:blue", label="ranked")
            if other:
                xs, ys = zip(*sorted(other), strict=True)
                ax.plot(xs, ys, "o", mfc="none", color="tab:orange", label="unranked")
            if failed:
                lo = ax.get_ylim()[0] if (good or other) else 0.0
                ax.plot(failed, [lo] * len(failed), "x", color="tab:red", label="failed")
            if r == len(metrics) - 1:
                ax.set_xlabel(k, fontsize=7)
            if c_ == 0:
                ax.set_ylabel(m, fontsize=7)
            ax.tick_params(labelsize=7)
            ax.grid(True, alpha=0.3)
    fig.suptitle(f"{Path(result.sweep.file).name}: metrics against parameters "
                 "(estimates; see caution in summary.json)", fontsize=8)
    fig.tight_layout()
    return _save(fig, path)


def plot_pareto(result: SweepResult, path: Path) -> Path | None:
    """The two ``[pareto]`` metrics of the ranked cases, front highlighted."""
    if result.sweep.pareto is None:
        return None
    x, y, gx, gy = result.sweep.pareto
    pts = [(c.metrics[x], c.metrics[y], c.index) for c in result.cases
           if c.index in set(result.ranked) and _num(c.metrics.get(x)) and _num(c.metrics.get(y))]
    if not pts:
        return None
    front = set(result.pareto_indices())
    fig = _figure(5.0, 4.0)
    ax = fig.add_subplot(1, 1, 1)
    ax.plot([p[0] for p in pts], [p[1] for p in pts], "o", color="0.6", label="cases")
    fp = sorted((p for p in pts if p[2] in front), key=lambda p: (p[0], p[1]))
    ax.plot([p[0] for p in fp], [p[1] for p in fp], "o-", color="tab:red", label="Pareto front")
    for p in fp:
        ax.annotate(str(p[2]), (p[0], p[1]), fontsize=7, xytext=(3, 3),
                    textcoords="offset points")
    ax.set_xlabel(f"{x} ({gx})", fontsize=7)
    ax.set_ylabel(f"{y} ({gy})", fontsize=7)
    ax.tick_params(labelsize=7)
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    return _save(fig, path)


def write_plots(result: SweepResult, folder: Path) -> list[Path]:
    """Write ``metrics.png`` and (with ``[pareto]``) ``pareto.png``; return the files."""
    out = [plot_metrics(result, folder / "metrics.png"), plot_pareto(result, folder / "pareto.png")]
    return [p for p in out if p is not None]
