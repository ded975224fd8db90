"""Usage mixes: how many hours a day the robot spends in each recorded activity.

A usage mix turns run records into one *day of use*: each record stands for a duty (standing,
walking, trotting) done so many hours per day, or for one occurrence of a discrete event
(a stand-up) done so many times per day. Spectra scaled by the mix (see
:func:`sim.loads.spectra.usage_spectra`) let later checks give life in hours or days of real use.

Mix file (TOML; every key checked, unknown keys are errors)::

    # usage mix of the demo robot (invented for the demo)
    description = "office patrol"      # optional
    hours_per_day = 8.0                # optional; needed only when entries give `share`
    [[duty]]
    record = "runs/trot.h5"            # run record, relative to this file
    hours_per_day = 2.0                # hours per day in this duty ...
    # share = 0.25                     # ... or share of the top-level hours_per_day
    name = "trot"                      # optional label (default: record file stem)
    [[event]]
    name = "stand_up"
    per_day = 20                       # occurrences per day
    record = "runs/stand_up.h5"        # optional: a record holding ONE occurrence

All entries give hours, or all give shares (shares add up to 1). An event without a record is
counted (``events_per_day``) for checks that need it but adds nothing to the spectra.

A plain record path is also a "mix": the record stands for itself (weight 1), and one "day"
is then one pass of the record (``UsageMix.daily`` is False).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError
from sim.core.paths import LABEL_RULE, label_problem
from sim.record import RunRecord, open_record

TOP_SPEC = {
    "description": Field(str, default=""),
    "hours_per_day": Field(float, min=0.0, max=24.0, min_inclusive=False,
                           doc="hours of duty per day, for entries that give a share"),
    "duty": Field(list, item=dict, default=[]),
    "event": Field(list, item=dict, default=[]),
}
DUTY_SPEC = {
    "record": Field(str, required=True, doc="run record path, relative to the mix file"),
    "hours_per_day": Field(float, min=0.0, max=24.0, doc="hours per day in this duty"),
    "share": Field(float, min=0.0, max=1.0, doc="share of the top-level hours_per_day"),
    "name": Field(str, check=label_problem),
}
EVENT_SPEC = {
    "name": Field(str, required=True, check=label_problem),
    "per_day": Field(float, required=True, min=0.0, doc="occurrences per day"),
    "record": Field(str, doc="run record of one occurrence, relative to the mix file"),
}

SHARE_TOLERANCE = 1e-6


@dataclass(frozen=True)
class MixEntry:
    """One record of a mix and the weight that turns it into its part of a day.

    weight: factor applied to the record's spectra and counts (dimensionless): for a duty,
        hours_per_day * 3600 / duration_s; for an event, per_day; for a lone record, 1.
    duration_s: time covered by the record's every-step statistics (s).
    hours_per_day: hours of use per day this entry stands for (= weight * duration_s / 3600).
    per_day: occurrences per day for events, None for duties.
    """

    name: str
    path: Path
    kind: str  # "duty" or "event"
    duration_s: float
    weight: float
    hours_per_day: float
    per_day: float | None = None

    def open(self) -> RunRecord:
        """Open the record (for checks that need the time series, e.g. thermal)."""
        return open_record(self.path)


@dataclass(frozen=True)
class UsageMix:
    """Records and weights that make up one day of use.

    source: the mix file or record the mix came from.
    entries: the records with their weights (duties first, then events with records).
    events_per_day: occurrences per day of every named event (with or without a record).
    daily: True for a mix file (a real day); False when records stand for themselves, then a
        "day" is one pass of the records.
    """

    source: Path
    entries: tuple[MixEntry, ...]
    events_per_day: dict[str, float] = field(default_factory=dict)
    daily: bool = True
    description: str = ""

    @property
    def use_s_per_day(self) -> float:
        """Seconds of use per day covered by the entries (sum of weight * duration_s)."""
        return float(sum(e.weight * e.duration_s for e in self.entries))

    @property
    def use_hours_per_day(self) -> float:
        return self.use_s_per_day / 3600.0


def _open_checked(path: Path, file: str, key: str) -> float:
    if not path.is_file():
        raise InputError(file, key, "an existing run record (no such file)", str(path))
    with open_record(path) as rec:
        dur = rec.duration_s
    if not dur > 0:
        raise InputError(str(path), "duration_s", "a record covering some time", dur)
    return dur


def mix_of_records(paths: Sequence[str | Path]) -> UsageMix:
    """Records taken one after the other, each once (weight 1); ``daily`` is False."""
    if not paths:
        raise InputError(None, "records", "at least one run record or mix file (none given)")
    entries = []
    for p in paths:
        path = Path(p)
        if not path.is_file():
            raise InputError(str(path), None, "an existing run record (no such file)")
        with open_record(path) as rec:
            dur = rec.duration_s
        entries.append(MixEntry(path.stem, path, "duty", dur, 1.0, dur / 3600.0))
    return UsageMix(Path(paths[0]), tuple(entries), {}, daily=False)


def load_mix(path: str | Path) -> UsageMix:
    """Read and check a usage-mix TOML file; every record named must exist and be readable."""
    p = Path(path)
    fname = str(p)
    top = validate(load_toml(p, "usage-mix file"), TOP_SPEC, file=p)
    base = p.parent
    duties = [validate(d, DUTY_SPEC, file=p, prefix=f"duty[{i}].")
              for i, d in enumerate(top["duty"])]
    events = [validate(e, EVENT_SPEC, file=p, prefix=f"event[{i}].")
              for i, e in enumerate(top["event"])]
    if not duties and not any(e["record"] for e in events):
        raise InputError(fname, "duty", "at least one [[duty]] entry or [[event]] with a "
                         "record (the mix is empty)")
    uses_share = [d["share"] is not None for d in duties]
    for i, d in enumerate(duties):
        if (d["share"] is None) == (d["hours_per_day"] is None):
            raise InputError(fname, f"duty[{i}]", "exactly one of hours_per_day or share")
    if any(uses_share) and not all(uses_share):
        raise InputError(fname, "duty", "all entries giving hours_per_day, or all giving share")
    if any(uses_share):
        if top["hours_per_day"] is None:
            raise InputError(fname, "hours_per_day",
                             "a top-level hours_per_day when entries give a share")
        total = sum(d["share"] for d in duties)
        if abs(total - 1.0) > SHARE_TOLERANCE:
            raise InputError(fname, "duty", "shares adding up to 1", round(total, 9))
        hours = [d["share"] * top["hours_per_day"] for d in duties]
    else:
        if top["hours_per_day"] is not None and duties:
            raise InputError(fname, "hours_per_day", "no top-level hours_per_day when the "
                             "entries give hours_per_day themselves (it is used with share)")
        hours = [d["hours_per_day"] for d in duties]
    entries: list[MixEntry] = []
    for i, (d, h) in enumerate(zip(duties, hours, strict=True)):
        rp = base / d["record"]
        if not d["name"] and label_problem(rp.stem):
            raise InputError(fname, f"duty[{i}].name", "a name, since the record's file name is "
                             f"not {LABEL_RULE}", rp.stem[:100])
        dur = _open_checked(rp, fname, f"duty[{i}].record")
        entries.append(MixEntry(d["name"] or rp.stem, rp, "duty", dur, h * 3600.0 / dur, h))
    counts: dict[str, float] = {}
    for i, e in enumerate(events):
        if e["name"] in counts:
            raise InputError(fname, f"event[{i}].name", "event names used once", e["name"])
        counts[e["name"]] = e["per_day"]
        if e["record"]:
            rp = base / e["record"]
            dur = _open_checked(rp, fname, f"event[{i}].record")
            entries.append(MixEntry(e["name"], rp, "event", dur, e["per_day"],
                                    e["per_day"] * dur / 3600.0, e["per_day"]))
    mix = UsageMix(p, tuple(entries), counts, daily=True, description=top["description"])
    total_h = mix.use_hours_per_day
    if not total_h > 0:
        raise InputError(fname, "hours_per_day", "some hours of use per day (all are zero)")
    if total_h > 24.0 + 1e-9 or not math.isfinite(total_h):
        raise InputError(fname, "hours_per_day", "at most 24 hours of use per day in total "
                         "(duties plus event records)", round(total_h, 6))
    return mix


def resolve_usage(path: str | Path) -> UsageMix:
    """A usage mix from a mix file (``.toml``) or from a single run record.

    For a record the record stands for itself (weight 1, ``daily`` False); for a mix file
    the entries are weighted to one day of use. Raises :class:`sim.core.errors.InputError` for a
    missing file, a bad key or value, or an unreadable record.
    """
    p = Path(path)
    if p.suffix.lower() == ".toml":
        return load_mix(p)
    return mix_of_records([p])


def usage_from_inputs(records: Sequence[str | Path] = (), mix: str | Path | None = None
                      ) -> UsageMix:
    """The usage mix of ``gaitload loads`` inputs: run records taken one after the other, one
    mix file given alone (as the only record or as ``mix``), or ``mix`` without records.

    Errors name the command's arguments (``RECORD.h5``, ``--mix``), which these stand for.
    """
    if mix and records:
        raise InputError(None, "--mix", "either records or --mix MIX.toml, not both")
    if mix:
        return resolve_usage(mix)
    if not records:
        raise InputError(None, "RECORD.h5", "at least one run record or --mix MIX.toml")
    if len(records) == 1:
        return resolve_usage(records[0])
    for p in records:
        if Path(p).suffix.lower() == ".toml":
            raise InputError(str(p), None, "a run record (give a mix file alone or with --mix)")
    return mix_of_records(records)
