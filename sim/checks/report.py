"""Per-joint check results shared by every check section (reducer, motor, supply, ...).

A check produces, for one joint, a :class:`Section` (verdict, governing limit, values and the
:class:`Limit` s behind them). Sections are gathered in a :class:`CheckReport`; a further check
adds its own section with one call::

    report = add_section(report, "fl_knee", motor_section)

and the JSON becomes ``{"joints": {"fl_knee": {"reducer": {...}, "motor": {...}}}, ...}``.
The terminal table shows, per joint and section, the columns each section names.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

CAUTIONS: tuple[str, ...] = (
    "Results are estimates from a simulated duty and simplified models.",
    "The maker's ratings, physical tests, local codes and licensed engineering judgment "
    "take precedence over these numbers.",
)

PASS, FAIL = "pass", "fail"


@dataclass(frozen=True)
class Limit:
    """One element checked against one limit.

    kind: ``"life"`` (hours of use until the damage sum reaches 1) or ``"peak"`` (strength at
    the largest torque). utilisation: demand over capacity (required life / life, or peak
    torque / allowable peak torque); above 1 the limit fails.
    detail: further numbers for the JSON (stresses in Pa, loads in N, ...).
    """

    name: str
    kind: str
    utilisation: float
    life_h: float | None = None
    allowable_peak_torque_nm: float | None = None
    detail: Mapping[str, Any] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        return self.utilisation <= 1.0

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"name": self.name, "kind": self.kind,
                               "utilisation": self.utilisation,
                               "verdict": PASS if self.passed else FAIL}
        if self.life_h is not None:
            out["life_h"] = self.life_h
        if self.allowable_peak_torque_nm is not None:
            out["allowable_peak_torque_nm"] = self.allowable_peak_torque_nm
        out.update(self.detail)
        return out


@dataclass(frozen=True)
class Section:
    """The result of one check (``name``, e.g. ``"reducer"``) for one joint.

    values: JSON-able numbers and strings, in display order.
    columns: ``(key, label, format)`` of the values shown in the terminal table.
    """

    name: str
    verdict: str
    governing: str
    values: Mapping[str, Any]
    columns: tuple[tuple[str, str, str], ...] = ()
    limits: tuple[Limit, ...] = ()
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        out = dict(self.values)
        out["governing"] = self.governing
        out["verdict"] = self.verdict
        if self.limits:
            out["limits"] = [lim.to_dict() for lim in self.limits]
        if self.notes:
            out["notes"] = list(self.notes)
        return out


def section_from_limits(name: str, limits: Sequence[Limit], values: Mapping[str, Any],
                        columns: tuple[tuple[str, str, str], ...] = (),
                        notes: Sequence[str] = ()) -> Section:
    """A section whose verdict and governing limit follow from its limits (largest use)."""
    if limits:
        gov = max(limits, key=lambda lim: lim.utilisation)
        verdict = PASS if all(lim.passed for lim in limits) else FAIL
        governing = gov.name
    else:
        verdict, governing = PASS, "none"
    return Section(name, verdict, governing, dict(values), columns, tuple(limits), tuple(notes))


@dataclass(frozen=True)
class CheckReport:
    """Sections per joint plus the inputs, cautions and what is not modelled."""

    joints: Mapping[str, Mapping[str, Section]] = field(default_factory=dict)
    inputs: Mapping[str, Any] = field(default_factory=dict)
    not_modelled: tuple[str, ...] = ()
    cautions: tuple[str, ...] = CAUTIONS
    supply: Mapping[str, Any] = field(default_factory=dict)  # whole-robot supply figures
    supply_text: tuple[str, ...] = ()  # lines shown under the tables
    # the quality screen of the duty's records (sim.loads.quality.ScreenSet.to_json), its text
    quality: Mapping[str, Any] | None = None
    quality_text: str = ""
    # a what-if check: what the checked drivetrain changes against the simulated one,
    # [{"joint", "key", "simulated", "checked", "record"}]; empty when they agree
    what_if: tuple[Mapping[str, Any], ...] = ()


WHAT_IF_NOTE = ("WHAT-IF: the drivetrain checked differs from the one the duty was simulated "
                "with; the duty was NOT re-simulated, so loads that depend on the changed values "
                "(peak torques, saturation, inertia effects) are those of the simulated "
                "drivetrain")


def what_if_lines(report: CheckReport, limit: int = 12) -> list[str]:
    """The what-if banner and its differences as text lines (none when not a what-if)."""
    if not report.what_if:
        return []
    lines = [WHAT_IF_NOTE + ":"]
    for d in report.what_if[:limit]:
        lines.append(f"  {d['joint']} {d['key']}: simulated {d['simulated']:.6g}, checked "
                     f"{d['checked']:.6g}")
    if len(report.what_if) > limit:
        lines.append(f"  ... and {len(report.what_if) - limit} more differences (JSON: what_if)")
    return lines


def add_section(report: CheckReport, joint: str, section: Section) -> CheckReport:
    """A new report with ``section`` added under ``joint`` (replacing one of the same name)."""
    joints = {j: dict(s) for j, s in report.joints.items()}
    joints.setdefault(joint, {})[section.name] = section
    return replace(report, joints=joints)


def add_not_modelled(report: CheckReport, items: Sequence[str]) -> CheckReport:
    """A new report with further "not modelled" items (kept once, in order)."""
    seen = list(report.not_modelled)
    seen += [i for i in items if i not in seen]
    return replace(report, not_modelled=tuple(seen))


def exit_code(report: CheckReport) -> int:
    """0 when every section of every joint passes, else 1."""
    ok = all(s.verdict == PASS for secs in report.joints.values() for s in secs.values())
    return 0 if ok else 1


def _finite(v: Any) -> Any:
    """JSON has no infinity: unlimited values become ``null`` (documented)."""
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if isinstance(v, Mapping):
        return {k: _finite(x) for k, x in v.items()}
    if isinstance(v, list | tuple):
        return [_finite(x) for x in v]
    return v


def to_json_dict(report: CheckReport) -> dict[str, Any]:
    """The report as plain JSON types; infinite lives and ratios are ``null``."""
    data = {
        "joints": {j: {name: sec.to_dict() for name, sec in secs.items()}
                   for j, secs in report.joints.items()},
        "verdict": PASS if exit_code(report) == 0 else FAIL,
        "inputs": dict(report.inputs),
        **({"supply": dict(report.supply)} if report.supply else {}),
        "not_modelled": list(report.not_modelled),
        "cautions": list(report.cautions),
        **({"quality": dict(report.quality)} if report.quality is not None else {}),
        **({"what_if": {"note": WHAT_IF_NOTE, "differences": [dict(d) for d in report.what_if]}}
           if report.what_if else {}),
    }
    return _finite(data)


def to_json(report: CheckReport) -> str:
    """Deterministic JSON text (sorted keys at the top level, strict: no NaN or Infinity)."""
    return json.dumps(to_json_dict(report), indent=2, allow_nan=False) + "\n"


def _fmt(v: Any, fmt: str) -> str:
    if v is None:
        return "-"
    if isinstance(v, float):
        if math.isinf(v):
            return "unlimited"
        return format(v, fmt)
    return str(v)


def render_table(report: CheckReport) -> str:
    """A plain-text table: one row per joint and section, then the notes and cautions."""
    lines: list[str] = what_if_lines(report)
    if lines:
        lines.append("")
    names = sorted({n for secs in report.joints.values() for n in secs})
    for name in names:
        rows = [(j, secs[name]) for j, secs in report.joints.items() if name in secs]
        cols = rows[0][1].columns
        header = ["joint", *[label for _, label, _ in cols], "governing", "verdict"]
        body = [[j, *[_fmt(s.values.get(k), f) for k, _, f in cols], s.governing, s.verdict]
                for j, s in rows]
        widths = [max(len(r[i]) for r in [header, *body]) for i in range(len(header))]
        lines.append(f"[{name}]")
        lines.append("  ".join(h.ljust(w) for h, w in zip(header, widths, strict=True)))
        for r in body:
            lines.append("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)))
        notes = sorted({n for _, s in rows for n in s.notes})
        for n in notes:
            lines.append(f"  note: {n}")
        lines.append("")
    if report.supply_text:
        lines.append("[supply]")
        lines.extend(report.supply_text)
        lines.append("")
    if report.not_modelled:
        lines.append("Not modelled: " + "; ".join(report.not_modelled) + ".")
    if report.quality_text:
        lines.append(report.quality_text)
    lines.extend(report.cautions)
    overall = "PASS" if exit_code(report) == 0 else "FAIL"
    lines.append(f"Overall: {overall}" + (" (WHAT-IF: duty not re-simulated)"
                                          if report.what_if else ""))
    return "\n".join(lines) + "\n"
