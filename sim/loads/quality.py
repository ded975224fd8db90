"""The quality screen of a run record: what the run measured about itself while it ran
(``/quality`` and ``/summary`` of :mod:`sim.record`), judged against stated thresholds.

Takes a run record (or its path); gives a :class:`QualityScreen`: one :class:`Finding` per
check and subject (a joint or the run), whether any failed (``flagged``), a JSON form and a
text form whose failures the commands print on their own line; :func:`screen_records` gives
the :class:`ScreenSet` of the records behind one result (a usage mix).

What the screen looks for, and why it matters for a duty cycle:

* **Torque chatter**, per joint, from every step of the load torque: the share of its RMS
  above the control bandwidth (RMS of the torque less its zero-phase low-pass at 100 Hz,
  over the RMS of the torque) and how often the step-to-step change reverses sign. Chatter
  at the step rate adds rainflow cycles, raises the RMS (motor heating) and the peaks.
* **Time saturated**, per joint: the clamp held the torque at the actuator envelope, so the
  motion was not the one planned.
* **Foot slip** against the base travel under the stance feet, and **touchdown bounces**
  (a lift-off within a short window after a touchdown): both change the impacts and the
  stance loads.
* **Base height** far from the plan (a sagging or crouching robot carries other torques).
* **A run that ended early** (fell, diverged, interrupted, or shorter than planned): its
  record is not the planned duty cycle.
* **Histogram overflow**: time outside the torque x speed bins is counted in the edge bins.

Thresholds (:data:`THRESHOLDS`) carry their basis. None of them is a published limit: they
are marked common practice and were set from the shipped demo scenarios (whose screen
figures are listed in ``docs/loads.md``) and from runs made to chatter. The 100 Hz cut-off is
a tenth of the 1 kHz step rate, the usual ratio of sampling rate to closed-loop bandwidth of
a digital controller (Franklin, Powell and Workman, Digital Control of Dynamic Systems,
from memory).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim.record import RunRecord, open_record

COMMON = "common practice (no published limit; set from the shipped demo scenarios)"


@dataclass(frozen=True)
class Threshold:
    """A limit of the screen: ``value`` in ``unit``, with its ``basis``."""

    value: float
    unit: str
    basis: str
    text: str


THRESHOLDS: dict[str, Threshold] = {
    "high_frequency_share": Threshold(
        0.15, "share of RMS", COMMON + "; hip and knee joints",
        "share of a hip or knee torque's RMS above the cut-off"),
    "high_frequency_share_abad": Threshold(
        0.30, "share of RMS", COMMON + "; ab/ad torques are small and their touchdown "
        "transients weigh more in the share (demo trot: up to 0.16)",
        "share of an ab/ad torque's RMS above the cut-off"),
    "reversals_per_step": Threshold(
        0.8, "reversals per step", COMMON + "; period-two chatter reverses at every step, "
        "white noise at 2/3 of them, the demo gaits at 0.5-0.7",
        "reversals of the step-to-step torque change per step"),
    "saturated_share": Threshold(
        0.10, "share of time", COMMON, "share of the recorded time a joint was saturated"),
    "slip_share": Threshold(
        0.20, "slip / base travel", COMMON + "; above a slip of 0.05 m",
        "stance-foot slip over the base travel under the stance feet"),
    "bounce_share": Threshold(
        0.05, "bounces / touchdowns", COMMON + "; above one bounce",
        "share of touchdowns followed by a lift-off within the bounce window"),
    "height_error_share": Threshold(
        0.10, "mean error / planned height", COMMON,
        "mean base height error over the planned height"),
    "overflow_share": Threshold(
        0.01, "share of time", COMMON, "share of the time outside the histogram bins"),
    "step_change": Threshold(
        0.10, "relative change", "common practice (step halving: halve the integration step, "
        "compare, trust a figure that changes little)",
        "change of a joint's peak, RMS or equivalent torque when the time step is halved "
        "(gaitload run --dt-study)"),
}
SLIP_FLOOR_M = 0.05  # slips below this are not judged (a standing robot travels ~0 m)


@dataclass(frozen=True)
class Finding:
    """One judged figure: ``value`` against ``limit`` (``passed`` True when within it)."""

    check: str
    subject: str
    value: float | None
    limit: float | None
    passed: bool
    detail: str = ""



@dataclass(frozen=True)
class QualityScreen:
    """The screen of one record (see the module docstring)."""

    record: str
    screened: bool
    findings: tuple[Finding, ...]
    joints: dict[str, dict[str, float | None]] = field(default_factory=dict)
    run: dict[str, Any] = field(default_factory=dict)

    @property
    def failures(self) -> tuple[Finding, ...]:
        return tuple(f for f in self.findings if not f.passed)

    @property
    def flagged(self) -> bool:
        return bool(self.failures)

    def reasons(self, compact: bool = False) -> list[str]:
        """The failures grouped by check and limit, one text each; ``compact`` names at most
        three subjects (else their count and the worst)."""
        groups: dict[tuple[str, float | None], list[Finding]] = {}
        for f in self.failures:
            groups.setdefault((f.check, f.limit), []).append(f)
        out = []
        for (check, limit), fs in groups.items():
            judged = [f for f in fs if f.value is not None and limit is not None]
            if judged and limit is not None:
                if compact and len(judged) > 3:
                    worst = max(judged, key=lambda f: f.value or 0.0)
                    who = f"{len(judged)} joints, worst {worst.subject} {worst.value:.3g}"
                else:
                    who = ", ".join(f"{f.subject} {f.value:.3g}" for f in judged)
                out.append(f"{check} > {limit:.3g}: {who}")
            out += [f.detail or check for f in fs if f not in judged]
        return out

    def flag_line(self) -> str | None:
        """The one line a command prints for a record that fails the screen, else None."""
        if not self.flagged:
            return None
        return f"QUALITY FLAGGED {self.record}: " + "; ".join(self.reasons(compact=True))

    def to_json(self) -> dict[str, Any]:
        return {
            "record": self.record, "screened": self.screened, "flagged": self.flagged,
            "failed": self.reasons(),
            "joints": {j: {k: _json_num(v) for k, v in f.items()}
                       for j, f in self.joints.items()},
            "run": {k: _json_num(v) for k, v in self.run.items()},
        }

    def to_text(self) -> str:
        head = (f"quality screen of {self.record}: "
                + ("FLAGGED" if self.flagged else "passed" if self.screened else "not screened"))
        r = self.run
        lines = [head]
        if self.screened:
            hf = [float(x) for v in self.joints.values()
                  if (x := v.get("torque_high_frequency_share")) is not None]
            rv = [float(v["torque_reversals_per_step"] or 0.0) for v in self.joints.values()]
            sat = [float(v["saturated_share"] or 0.0) for v in self.joints.values()]
            lines.append(
                f"  torque above {r.get('chatter_cutoff_hz', math.nan):g} Hz: max "
                f"{max(hf) if hf else math.nan:.3f} of RMS; reversals max "
                f"{max(rv):.2f} per step; saturated max {max(sat):.3f} of the time")
            slip = r["slip_share"]
            lines.append(
                f"  slip {r.get('slip_m', 0.0):.3f} m ("
                f"{'-' if slip is None else format(slip, '.3f')} of the stance travel); "
                f"bounces {r.get('bounces', 0.0):.0f} of {r.get('touchdowns', 0.0):.0f} "
                f"touchdowns; base height error mean {1e3 * r.get('height_error_mean_m', 0.0):.1f}"
                f" mm, max {1e3 * r.get('height_error_max_m', 0.0):.1f} mm")
        lines += [f"  - {r}" for r in self.reasons()]
        return "\n".join(lines)


def _json_num(v: Any) -> Any:
    """JSON has no NaN or infinity: such figures become null."""
    return None if isinstance(v, float) and not math.isfinite(v) else v


def thresholds_json() -> dict[str, dict[str, Any]]:
    """The thresholds with their units and basis, as in the commands' JSON."""
    return {k: {"value": t.value, "unit": t.unit, "basis": t.basis, "meaning": t.text}
            for k, t in THRESHOLDS.items()}


@dataclass(frozen=True)
class ScreenSet:
    """The screens of the records behind one result (a record, or the records of a mix)."""

    screens: tuple[QualityScreen, ...]

    @property
    def flagged(self) -> bool:
        return any(s.flagged for s in self.screens)

    def flag_lines(self) -> list[str]:
        """One line per record that fails the screen."""
        return [line for s in self.screens if (line := s.flag_line()) is not None]

    def to_json(self) -> dict[str, Any]:
        return {"flagged": self.flagged, "records": [s.to_json() for s in self.screens],
                "thresholds": thresholds_json()}

    def to_text(self) -> str:
        """Each record's screen, then each failing record's flag line on its own line."""
        return "\n".join([*(s.to_text() for s in self.screens), *self.flag_lines()])


def _num(x: Any) -> float | None:
    v = float(x)
    return None if not math.isfinite(v) else v


def _judge(findings: list[Finding], check: str, subject: str, value: float | None,
           key: str, detail: str = "") -> None:
    lim = THRESHOLDS[key].value
    findings.append(Finding(check, subject, value, lim,
                            value is None or value <= lim, detail))


def screen_record(source: str | Path | RunRecord) -> QualityScreen:
    """Screen one record (a path or an open :class:`RunRecord`)."""
    if isinstance(source, RunRecord):
        return _screen(source)
    with open_record(source) as rec:
        return _screen(rec)


def _ended_early(rec: RunRecord, q: dict[str, Any] | None) -> Finding:
    a = rec.attrs
    status = str(a.get("status"))
    if status != "completed":
        return Finding("ended early", "run", None, None, False,
                       f"status {status}: {a.get('status_detail', '')}")
    planned = a.get("planned_s")
    sim_s = a.get("simulated_s")
    dt = float(a.get("time_step_s", 0.0))
    if planned is not None and sim_s is not None and float(sim_s) < float(planned) - dt:
        return Finding("ended early", "run", float(sim_s), float(planned), False,
                       f"simulated {float(sim_s):.3f} s of the planned {float(planned):.3f} s")
    return Finding("ended early", "run", None, None, True)


def _screen(rec: RunRecord) -> QualityScreen:
    name = str(rec.path)
    q = rec.group_attrs("quality")
    findings: list[Finding] = [_ended_early(rec, q)]
    if q is None:
        findings.append(Finding("not screened", "run", None, None, False,
                                f"format {rec.format_version} record: no quality screen (re-run "
                                "the scenario with this version of gaitload)"))
        return QualityScreen(name, False, tuple(findings))
    dt = float(rec.attrs["time_step_s"])
    joints: dict[str, dict[str, float | None]] = {}
    for j in rec.joint_names:
        qj = rec.group_attrs(f"quality/{j}") or {}
        sm = rec.summary(j)
        dur = sm.duration_s
        hf = _num(qj.get("torque_high_frequency_share", math.nan))
        rev_s = float(qj.get("torque_reversals_per_s", 0.0))
        over = float((rec.group_attrs(f"histograms/{j}") or {}).get("overflow_s", 0.0))
        fig = {"torque_high_frequency_share": hf, "torque_reversals_per_s": rev_s,
               "torque_reversals_per_step": rev_s * dt,
               "saturated_share": sm.saturated_s / dur if dur > 0 else 0.0,
               "overflow_share": over / dur if dur > 0 else 0.0}
        joints[j] = fig
        abad = j.endswith("_abad")
        _judge(findings, "chatter, torque RMS share above the cut-off", j, hf,
               "high_frequency_share_abad" if abad else "high_frequency_share")
        _judge(findings, "chatter, torque reversals per step", j,
               fig["torque_reversals_per_step"], "reversals_per_step")
        _judge(findings, "saturated share of time", j, fig["saturated_share"], "saturated_share")
        _judge(findings, "histogram overflow share of time", j, fig["overflow_share"], "overflow_share")
    run = _run_figures(rec, q)
    slip = run["slip_share"] if run.get("slip_m", 0.0) > SLIP_FLOOR_M else None
    _judge(findings, "foot slip share of the stance travel", "run", slip, "slip_share")
    bounce = run["bounce_share"] if run.get("bounces", 0.0) > 1 else None
    _judge(findings, "touchdown bounce share", "run", bounce, "bounce_share")
    _judge(findings, "base height error share of the plan", "run", run["height_error_share"],
           "height_error_share")
    return QualityScreen(name, True, tuple(findings), joints, run)


def _run_figures(rec: RunRecord, q: dict[str, Any]) -> dict[str, Any]:
    a = rec.attrs
    run: dict[str, Any] = {k: float(v) for k, v in q.items() if isinstance(v, int | float)}
    travel = run.get("stance_travel_m", 0.0)
    run["slip_share"] = run.get("slip_m", 0.0) / travel if travel > 0 else None
    td = run.get("touchdowns", 0.0)
    run["bounce_share"] = run.get("bounces", 0.0) / td if td > 0 else 0.0
    plan = run.get("height_plan_mean_m", 0.0)
    run["height_error_share"] = (abs(run.get("height_error_mean_m", 0.0)) / plan
                                 if plan > 0 and run.get("height_screened_s", 0.0) > 0 else None)
    run["status"] = str(a.get("status"))
    return run


def with_step_changes(screen: QualityScreen,
                      changes: Mapping[tuple[str, str], float]) -> QualityScreen:
    """``screen`` with the time-step study's findings added: ``changes[(joint, figure)]`` is
    the relative change of a figure (``peak_torque_nm``, ...) when the step is halved, judged
    against ``THRESHOLDS["step_change"]`` (the study itself: :mod:`sim.sweeps.timestep`)."""
    findings = list(screen.findings)
    for (joint, figure), change in changes.items():
        _judge(findings, f"step halving change of {figure}", joint, abs(change), "step_change")
    return QualityScreen(screen.record, screen.screened, tuple(findings), screen.joints,
                         screen.run)


def screen_records(paths: Sequence[str | Path]) -> ScreenSet:
    """The screens of ``paths``, in order (a record screened once however often it appears)."""
    seen: dict[str, QualityScreen] = {}
    for p in paths:
        if str(p) not in seen:
            seen[str(p)] = screen_record(p)
    return ScreenSet(tuple(seen.values()))
