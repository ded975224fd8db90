"""CSV tables of a loads report: time at level per joint, rainflow cycle matrices, a summary.

Takes a :class:`~sim.loads.report.LoadsReport` and gives the CSV files of ``gaitload loads
--csv DIR`` (:func:`write_csv`), written atomically; numbers with full precision (``repr``).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

import numpy as np

from sim.core.atomic import write_text_atomic
from sim.loads.report import LoadsReport, with_cycle_matrices


def _csv_text(header: list[str], rows: list[list[Any]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow([repr(float(v)) if isinstance(v, float | np.floating) else v for v in r])
    return buf.getvalue()


def write_csv(report: LoadsReport, directory: str | Path) -> list[Path]:
    """``<joint>.csv`` (time at level per non-empty bin), ``<joint>_rainflow.csv`` (cycle
    matrix, when series exist) and ``summary.csv``; returns the paths written. Counts the
    cycle matrices first if the report lacks them (:func:`sim.loads.report.with_cycle_matrices`)."""
    d = Path(directory)
    out = []
    report = with_cycle_matrices(report)
    for j, jl in report.joints.items():
        sp = jl.spectrum
        tm = sp.bin_mean_torque_nm("time")
        st = jl.series.stance if jl.series else None
        sw = jl.series.swing if jl.series else None
        te, se = sp.torque_edges_nm, sp.speed_edges_rad_s
        rows = []
        for it, iw in zip(*np.nonzero(sp.time_s > 0), strict=True):
            row = [te[it], te[it + 1], se[iw], se[iw + 1], sp.time_s[it, iw],
                   sp.revolutions[it, iw], tm[it, iw]]
            row += ([st.time_s[it, iw], sw.time_s[it, iw]] if st is not None and sw is not None
                    else ["", ""])
            rows.append(row)
        header = ["torque_lo_nm", "torque_hi_nm", "speed_lo_rad_s", "speed_hi_rad_s",
                  "time_s", "revolutions", "mean_torque_nm", "stance_time_s", "swing_time_s"]
        p = d / f"{j}.csv"
        write_text_atomic(p, _csv_text(header, rows))
        out.append(p)
        cm = jl.cycle_matrix
        if cm is not None:
            re_, me, m = cm.range_edges, cm.mean_edges, cm.counts
            rrows = [[re_[a], re_[a + 1], me[b], me[b + 1], m[a, b]]
                     for a, b in zip(*np.nonzero(m > 0), strict=True)]
            p = d / f"{j}_rainflow.csv"
            write_text_atomic(p, _csv_text(["range_lo_nm", "range_hi_nm", "mean_lo_nm",
                                            "mean_hi_nm", "cycles"], rrows))
            out.append(p)
    exps = next(iter(report.joints.values())).exponents if report.joints else ()
    header = ["joint", "hours", "peak_torque_nm", "rms_torque_nm", "mean_abs_speed_rad_s",
              *[f"equivalent_torque_nm_p{k}" for k in exps], "hold_time_s", "cycles",
              "damage_per_day"]
    rows = []
    for j, jl in report.joints.items():
        dct = jl.to_dict()
        rows.append([j, dct["hours"], dct["peak_torque_nm"], dct["rms_torque_nm"],
                     dct["mean_abs_speed_rad_s"], *[dct["equivalent_torque_nm"][k] for k in exps],
                     dct["hold"]["time_s"] if dct["hold"] else "",
                     dct["rainflow"]["cycles"] if dct["rainflow"] else "",
                     "" if not dct["rainflow"] or dct["rainflow"]["damage_per_day"] is None
                     else dct["rainflow"]["damage_per_day"]])
    p = d / "summary.csv"
    write_text_atomic(p, _csv_text(header, rows))
    out.append(p)
    return out
