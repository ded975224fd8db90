"""Time-step study: the same scenario at its step and at half of it, joint by joint.

A run's figures should not depend on the step that computed them. Step halving is the usual
check of that (common practice in the numerical integration of ODEs: halve the step, compare,
and trust the result when the change is small); here the change of each joint's peak torque,
RMS torque and equivalent torque (revolution-weighted, p = 10/3, exact from the record's power
sums) between the scenario's ``time_step_s`` and half of it. A change beyond
``STEP_CHANGE_LIMIT`` = 10 % (common practice) flags the joint: its duty is not converged in
the step, and a check built on it is uncertain by about that much.

The control update period stays as the scenario gives it, so only the integration step
changes. The quality screen can take the study: :meth:`StepStudy.screen` is the screen of the
record at the scenario's step with a finding per joint and figure judged against the same 10 %
(:func:`sim.loads.quality.with_step_changes`), so a duty not converged in the step is flagged
like one that chatters.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sim import JOINT_NAMES

STEP_CHANGE_LIMIT = 0.10
EXPONENT = 10.0 / 3.0
FIGURES = ("peak_torque_nm", "rms_torque_nm", "equivalent_torque_nm")


@dataclass(frozen=True)
class StepStudy:
    """Figures per joint at the step and at half of it, and their relative changes."""

    time_step_s: float
    records: tuple[str, str]
    status: tuple[str, str]
    at_step: dict[str, dict[str, float]] = field(default_factory=dict)
    at_half: dict[str, dict[str, float]] = field(default_factory=dict)

    def change(self, joint: str, figure: str) -> float:
        """``(value at the step - value at half the step) / value at half the step``."""
        a, b = self.at_step[joint][figure], self.at_half[joint][figure]
        return (a - b) / b if b else (0.0 if a == b else float("inf"))

    @property
    def flagged(self) -> list[tuple[str, str, float]]:
        return [(j, f, self.change(j, f)) for j in self.at_step for f in FIGURES
                if abs(self.change(j, f)) > STEP_CHANGE_LIMIT]

    def screen(self) -> Any:
        """The quality screen of the record at the step, with the study's changes judged
        (:func:`sim.loads.quality.with_step_changes`)."""
        from sim.loads.quality import screen_record, with_step_changes

        changes = {(j, f): self.change(j, f) for j in self.at_step for f in FIGURES}
        return with_step_changes(screen_record(self.records[0]), changes)

    def to_json(self) -> dict[str, Any]:
        return {"time_step_s": self.time_step_s, "half_step_s": self.time_step_s / 2,
                "records": list(self.records), "status": list(self.status),
                "limit": STEP_CHANGE_LIMIT, "exponent": EXPONENT,
                "joints": {j: {f: {"at_step": self.at_step[j][f],
                                   "at_half_step": self.at_half[j][f],
                                   "change": self.change(j, f)} for f in FIGURES}
                           for j in self.at_step},
                "flagged": [{"joint": j, "figure": f, "change": c} for j, f, c in self.flagged]}

    def to_text(self) -> str:
        lines = [f"time-step study: {self.time_step_s:g} s against {self.time_step_s / 2:g} s "
                 f"(change = at step / at half step - 1; limit {STEP_CHANGE_LIMIT:.0%})",
                 f"{'joint':<9} {'peak N m':>17} {'RMS N m':>17} {'T_eq N m (p 10/3)':>19}"]
        for j in self.at_step:
            cells = []
            for f in FIGURES:
                cells.append(f"{self.at_step[j][f]:7.2f} {100 * self.change(j, f):+6.1f}%")
            lines.append(f"{j:<9} {cells[0]:>17} {cells[1]:>17} {cells[2]:>19}")
        if self.flagged:
            worst = max(self.flagged, key=lambda x: abs(x[2]))
            lines.append(f"STEP STUDY FLAGGED: {len(self.flagged)} figures change by more than "
                         f"{STEP_CHANGE_LIMIT:.0%} at half the step (worst {worst[0]} "
                         f"{worst[1]} {100 * worst[2]:+.1f}%): the duty is not converged in "
                         "the step")
        else:
            lines.append("step study: every figure within the limit")
        return "\n".join(lines)


def _figures(path: Path) -> dict[str, dict[str, float]]:
    from sim.loads.spectra import equivalent_torque_nm, rms_torque_nm, spectrum_from_record
    from sim.record import open_record

    out = {}
    with open_record(path) as rec:
        for j in JOINT_NAMES:
            spec = spectrum_from_record(rec, j)
            out[j] = {"peak_torque_nm": float(spec.peak_torque_nm),
                      "rms_torque_nm": float(rms_torque_nm(spec)),
                      "equivalent_torque_nm": float(equivalent_torque_nm(spec, EXPONENT))}
    return out


def step_study(scenario: str | Path, overrides: list[str], output: str | Path,
               progress: bool = False) -> StepStudy:
    """Run ``scenario`` at its step (record ``output``) and at half of it (record
    ``<output stem>_half_step.h5`` beside it) and compare them joint by joint."""
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    out = Path(output)
    half_out = out.with_name(out.stem + "_half_step.h5")
    scn = load_scenario(scenario, overrides)
    dt = scn.time_step_s
    half = load_scenario(scenario, [*overrides, f"time_step_s={dt / 2!r}"])
    res = run(scn, out, progress=progress)
    res_half = run(half, half_out, progress=progress)
    study = StepStudy(dt, (str(out), str(half_out)), (res.status, res_half.status))
    if res.status != "completed" or res_half.status != "completed":
        return study
    return StepStudy(dt, study.records, study.status, _figures(out), _figures(half_out))
