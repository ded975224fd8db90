"""The duty a check reads: per-joint duties from a run record or a usage mix.

Takes a run record (``.h5``) or a usage mix (``.toml``, :mod:`sim.loads.mix`) and the joints
of a drivetrain, and gives a :class:`~sim.checks.reducer_part.JointDuty` per joint
(:func:`load_duties`): its duty spectrum (:mod:`sim.loads.spectra`) and, where every record
holds the time series, a counter of momentary-peak events (:func:`peak_event_counter`:
excursions of the load torque above a threshold). The motor check reads the duty records
themselves (:func:`motor_duty_source`).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from sim.checks.reducer import JointDuty, count_excursions
from sim.core.errors import InputError
from sim.loads.mix import resolve_usage
from sim.loads.series import load_series_name, series_unavailable_reason
from sim.loads.spectra import spectrum_from_record, usage_spectra
from sim.record import open_record


def peak_event_counter(records: Sequence[tuple[Path, float]], joint: str
                       ) -> Callable[[float], float]:
    """``count(threshold_nm)``: excursions of |load torque| of ``joint`` above a threshold,
    summed over ``(record, weight)`` pairs; each call reads the series again, chunk by chunk.

    The load torque is the reducer output torque the spectra follow (``load_torque``)."""
    def count(threshold_nm: float) -> float:
        total = 0.0
        for path, weight in records:
            n_rec, above = 0, False
            with open_record(path) as rec:
                for _, (tau,) in rec.iter_chunks([load_series_name(rec, joint)]):
                    n, above = count_excursions(np.abs(tau), threshold_nm, above)
                    n_rec += n
            total += weight * n_rec
        return total
    return count


def load_duties(path: str | Path, joints: Sequence[str], allow_failed: bool = False
                ) -> dict[str, JointDuty]:
    """Per-joint duties from a record or a usage mix, with peak-event counting where every
    record holds the time series (events of a mix: weighted like its spectra, per day)."""
    p = Path(path)
    if p.suffix.lower() == ".toml":
        mix = resolve_usage(p)
        spectra = usage_spectra(mix, joints, allow_failed=allow_failed)
        pairs = [(e.path, e.weight) for e in mix.entries]
        countable = set(spectra)  # joints whose series every record of the mix holds
        for rec_path, _ in pairs:
            with open_record(rec_path) as rec:
                countable = {j for j in countable if series_unavailable_reason(rec, [j]) is None}
        return {j: JointDuty(s, peak_event_counter(pairs, j) if j in countable else None)
                for j, s in spectra.items()}
    with open_record(p) as rec:
        rec.require_completed(allow_failed)
        present = [j for j in joints if j in rec.joint_names]
        if not present:
            raise InputError(str(p), None, "a record holding the drivetrain's joints: "
                             + ", ".join(joints), ", ".join(rec.joint_names))
        return {j: JointDuty(spectrum_from_record(rec, j),
                             peak_event_counter([(p, 1.0)], j)
                             if series_unavailable_reason(rec, [j]) is None else None)
                for j in present}


def duty_records(path: str | Path) -> list[Path]:
    """The records behind a duty: the record itself, or every record of a usage mix."""
    p = Path(path)
    if p.suffix.lower() != ".toml":
        return [p]
    return [Path(e.path) for e in resolve_usage(p).entries]


def motor_duty_source(path: Path) -> str | list[tuple[str, float]]:
    """A record path, or ``[(record, hours_per_day), ...]`` of a usage mix's duties."""
    if path.suffix.lower() != ".toml":
        return str(path)
    duties = [(str(e.path), e.hours_per_day) for e in resolve_usage(path).entries
              if e.kind == "duty"]
    if not duties:
        raise InputError(str(path), "duty", "at least one duty record for the motor check")
    return duties
