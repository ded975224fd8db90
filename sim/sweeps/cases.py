"""Cases of a sweep: resolution, keys, the worker function and the stored results.

Takes a :class:`~.spec.Sweep` and gives its resolved :class:`Case` list: each case is
*resolved* in this process (scenario and model validated, so bad inputs are found before
anything runs) into the resolved scenario and model TOML texts. Its key is the SHA-256 of the
canonical JSON of those texts, the drivetrain file content and the metric list. A case runs in
a separate process (:func:`run_case`, on a local process pool or a Dask worker; see
:mod:`.executors`), so engine state never leaks between the sweep and its cases. Outputs per
case, written atomically::

    <DIR>/cases/<key>/record.h5      the run record
    <DIR>/cases/<key>/result.json    status, reason, metrics, resolved inputs

A rerun resumes: a case whose ``result.json`` exists with a final status
(:func:`load_case_result`) is not run again. Failed cases (``fell``, ``diverged``,
``bad_input``, ``infeasible``, ``error``) stay in the table with their reason and are never
ranked.
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import os
import tempfile
import time
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from sim.core.atomic import write_bytes_atomic
from sim.core.config import dump_toml
from sim.core.errors import GaitloadError, InputError
from sim.sweeps.metrics import compute_metrics
from sim.sweeps.providers import CaseContext
from sim.sweeps.spec import Sweep

# 2: with the quality screen of the record; 3: resolved drivetrain inputs; 4: with the SHA-256
# of the record's bytes, checked before the case is reused (a truncated or edited record is
# rerun, not reused)
CASE_FORMAT = "gaitload sweep case 4"
RECORD_NAME = "record.h5"
FINAL_STATUSES = ("completed", "fell", "diverged", "bad_input", "infeasible")
FAILED_STATUSES = ("fell", "diverged", "bad_input", "infeasible", "error")


@dataclass(frozen=True)
class Case:
    """One resolved case: parameter values, key, and the spec a worker runs (or an error)."""

    index: int
    params: dict[str, Any]
    key: str
    spec: dict[str, Any] | None
    error: str | None = None


def toml_value(v: Any) -> str:
    """A value as TOML text for a ``KEY=VALUE`` override."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} as a TOML value")


def case_key(inputs: Mapping[str, Any]) -> str:
    """SHA-256 of the canonical JSON (sorted keys, no spaces) of a case's resolved inputs."""
    text = json.dumps(inputs, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(text.encode()).hexdigest()


def resolve_cases(sweep: Sweep) -> list[Case]:
    """Resolve every case (validating scenario and model) in case order.

    A case whose inputs are rejected is kept with status ``bad_input``; if every case is
    rejected the first error is raised, since the sweep file itself is then at fault.
    """
    from sim.scenario.scenario_file import load_scenario

    base_dir = Path(sweep.file).parent
    cases = []
    first_error: InputError | None = None
    for i, assign in enumerate(sweep.assignments()):
        overrides = list(sweep.fixed) + [f"{k}={toml_value(v)}" for k, v in assign.items()
                                         if k != "drivetrain"]
        dt = sweep.drivetrain
        if "drivetrain" in assign:
            dt = (base_dir / assign["drivetrain"]).resolve()
        if dt is not None:  # the drivetrain simulated (and checked: the record stores it)
            overrides.append(f"robot.drivetrain={toml_value(str(dt))}")
        try:
            scn = load_scenario(sweep.scenario, overrides)
        except InputError as exc:
            first_error = first_error or exc
            key = case_key({"bad_input": overrides, "scenario": str(sweep.scenario)})
            cases.append(Case(i, assign, key, None, str(exc)))
            continue
        sdata = copy.deepcopy(scn.data)
        sdata["robot"] = "model.toml"
        sdata["segment"] = [dict(s) for s in scn.segments]
        mdata = copy.deepcopy(scn.model.data)
        mdata["drivetrain"] = "drivetrain.toml"  # the resolved drivetrain, parts inside
        assert scn.model.drivetrain is not None
        inputs = {"scenario_toml": dump_toml(sdata), "model_toml": dump_toml(mdata),
                  "drivetrain_toml": scn.model.drivetrain.to_toml(),
                  "metrics": list(sweep.metrics)}
        key = case_key(inputs)
        spec = dict(inputs, key=key)
        cases.append(Case(i, assign, key, spec))
    if cases and all(c.spec is None for c in cases) and first_error is not None:
        raise first_error
    return cases


def run_case(spec: Mapping[str, Any], out_dir: str | None = None) -> dict[str, Any]:
    """Run one resolved case in this process; return status, reason and metrics.

    Meant to run in a worker process (local pool or Dask worker). With ``out_dir`` the record
    is written to ``<out_dir>/cases/<key>/record.h5``; without it the record is written to a
    temporary folder and its bytes are returned as ``record_bytes``, so a worker needs no
    shared file system.
    """
    from sim.scenario.scenario_file import load_scenario

    key = spec["key"]
    out: dict[str, Any] = {"key": key, "status": "error", "reason": "", "metrics": {}}
    with tempfile.TemporaryDirectory(prefix="gaitload-case-") as tmp:
        t = Path(tmp)
        (t / "scenario.toml").write_text(spec["scenario_toml"])
        (t / "model.toml").write_text(spec["model_toml"])
        (t / "drivetrain.toml").write_text(spec["drivetrain_toml"])
        try:
            scn = load_scenario(t / "scenario.toml")
        except InputError as exc:
            out.update(status="bad_input", reason=str(exc))
            return out
        if out_dir is not None:
            rec = Path(out_dir) / "cases" / key / "record.h5"
            rec.parent.mkdir(parents=True, exist_ok=True)
        else:
            rec = t / "record.h5"
        from sim.engine.runner import run

        try:
            res = run(scn, rec)
        except GaitloadError as exc:
            out.update(status="error", reason=str(exc))
            return out
        except Exception as exc:  # any failure of one case fails that case, not the sweep
            out.update(status="error", reason=f"the simulation raised {exc!r}")
            return out
        out.update(status=res.status, reason=res.detail)
        if res.status == "completed":
            from sim.loads.quality import screen_record

            scr = screen_record(rec)
            out["quality"] = {"flagged": scr.flagged, "reasons": scr.reasons(compact=True)}
            doc = dict(res.to_json())
            doc["total_mass_kg"] = res.total_mass_kg
            ctx = CaseContext(rec, doc, spec["scenario_toml"], spec["model_toml"],
                              spec["drivetrain_toml"])
            try:
                out["metrics"] = compute_metrics(spec["metrics"], ctx)
            except GaitloadError as exc:
                out.update(status="error", reason=str(exc))
            except Exception as exc:  # a metric provider's failure fails this case only
                out.update(status="error", reason=f"computing the metrics raised {exc!r}")
        if out_dir is None and rec.is_file():
            out["record_bytes"] = rec.read_bytes()
    out["pid"] = os.getpid()
    out["process_cpu_s"] = time.process_time()  # cumulative CPU of this worker process
    return out


def json_bytes(doc: Any) -> bytes:
    """The UTF-8 JSON text (indent 2, a final newline) of :func:`jsonable` ``(doc)``."""
    return (json.dumps(jsonable(doc), indent=2, sort_keys=False, allow_nan=False)
            + "\n").encode()


def jsonable(x: Any) -> Any:
    """``x`` with numpy scalars made Python numbers and non-finite floats made None."""
    if isinstance(x, float) and not math.isfinite(x):
        return None
    if isinstance(x, Mapping):
        return {str(k): jsonable(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [jsonable(v) for v in x]
    if isinstance(x, np.generic):
        return x.item()
    return x


def load_case_result(out_dir: Path, key: str) -> dict[str, Any] | None:
    """The stored result of case ``key`` if it is final and complete, else None."""
    d = out_dir / "cases" / key
    try:
        doc = json.loads((d / "result.json").read_text())
    except (OSError, ValueError):
        return None
    if not isinstance(doc, dict) or doc.get("format") != CASE_FORMAT or doc.get("key") != key:
        return None
    if doc.get("status") not in FINAL_STATUSES or not _well_formed(doc):
        return None
    if doc.get("record") is not None:
        # only the case's own record, unchanged since it was stored
        if doc["record"] != RECORD_NAME or not (d / RECORD_NAME).is_file():
            return None
        if doc.get("record_sha256") != file_sha256(d / RECORD_NAME):
            return None
    return doc


def _well_formed(doc: Mapping[str, Any]) -> bool:
    """The fields the ranking reads have the types it expects (an edited file is rerun)."""
    metrics, q = doc.get("metrics"), doc.get("quality")
    if not isinstance(doc.get("reason", ""), str) or not isinstance(metrics, dict):
        return False
    if not all(v is None or (isinstance(v, int | float) and not isinstance(v, bool))
               for v in metrics.values()):
        return False
    if q is not None and not (isinstance(q, dict) and isinstance(q.get("flagged", False), bool)
                              and isinstance(q.get("reasons", []), list)
                              and all(isinstance(r, str) for r in q.get("reasons", []))):
        return False
    return True


def file_sha256(path: Path) -> str | None:
    """SHA-256 (hex) of the bytes of ``path``, or None if it cannot be read."""
    h = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                h.update(block)
    except OSError:
        return None
    return h.hexdigest()


def store_case(out_dir: Path, case: Case, res: Mapping[str, Any]) -> dict[str, Any]:
    """Write a case's record (if shipped back) and its result.json; return the stored doc."""
    d = out_dir / "cases" / case.key
    if "record_bytes" in res:
        write_bytes_atomic(d / RECORD_NAME, res["record_bytes"])
    has_record = (d / RECORD_NAME).is_file() and res["status"] not in ("bad_input",)
    doc = {"format": CASE_FORMAT, "key": case.key, "status": res["status"],
           "reason": res.get("reason", ""), "params": case.params,
           "metrics": res.get("metrics", {}), "record": RECORD_NAME if has_record else None,
           "record_sha256": file_sha256(d / RECORD_NAME) if has_record else None,
           "quality": res.get("quality"),
           "inputs": None if case.spec is None else {
               k: case.spec[k] for k in ("scenario_toml", "model_toml",
                                         "drivetrain_toml", "metrics")}}
    write_bytes_atomic(d / "result.json", json_bytes(doc))
    return doc

