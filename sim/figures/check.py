"""Figures of the check results (matplotlib, imported lazily; files written atomically).

SVG output is made reproducible: fixed hash salt and no date in the metadata, so the same
inputs give the same bytes.
"""

from __future__ import annotations

from pathlib import Path

from sim.checks.report import CheckReport
from sim.core.atomic import save_figure_atomic
from sim.figures.common import stamp


def plot_utilisation(report: CheckReport, path: str | Path, section: str = "reducer") -> Path:
    """Bar chart of each joint's limits (utilisation = demand / capacity; 1 is the limit)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    rows = [(j, secs[section]) for j, secs in report.joints.items() if section in secs]
    names = sorted({lim.name for _, s in rows for lim in s.limits})
    with plt.rc_context({"svg.hashsalt": "gaitload", "svg.fonttype": "none"}):
        fig, ax = plt.subplots(figsize=(max(6.0, 0.6 * len(rows) + 2), 4.0))
        width = 0.8 / max(1, len(names))
        for k, name in enumerate(names):
            xs, ys = [], []
            for i, (_, sec) in enumerate(rows):
                for lim in sec.limits:
                    if lim.name == name:
                        xs.append(i - 0.4 + width * (k + 0.5))
                        ys.append(min(lim.utilisation, 5.0))
            ax.bar(xs, ys, width, label=name)
        ax.axhline(1.0, color="black", lw=1.0, ls="--")
        ax.set_xticks(range(len(rows)), [j for j, _ in rows], rotation=45, ha="right")
        ax.set_ylabel("utilisation (demand / capacity, clipped at 5)")
        ax.set_title(f"{section} limits per joint (estimates)")
        ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.0, 1.0))
        fig.tight_layout()
        stamp(fig)
        p = save_figure_atomic(fig, path, format="svg", metadata={"Date": None})
        plt.close(fig)
    return p
