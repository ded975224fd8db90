"""Benchmark: ``gaitload loads`` on a 1 h, 1 kHz, 12-joint record.

Run on demand (not collected by pytest): ``python tests/bench/bench_loads.py [hours]``.
The record is generated here into ``tests/bench/_out`` (not in git) by
``tests/synthetic.py``; a second record with foot contact flags (``tests/loads_records.py``)
exercises the stance/swing split as well. Each ``loads`` run is a child process so its peak
memory can be read; the baseline is one plain chunked read of the same series in the same
run. Prints times, the ratio to the baseline and peak memory against the record's raw size.
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from sim import JOINT_NAMES, LEGS  # noqa: E402
from sim.record import open_record  # noqa: E402
from tests.loads_records import write_record  # noqa: E402
from tests.synthetic import write_synthetic_record  # noqa: E402

OUT = Path(__file__).resolve().parent / "_out"
RNG = np.random.default_rng(7)


def _torque(k: int):
    f = 2.0 + 0.1 * k
    return lambda t: (8 * np.sin(2 * np.pi * f * t) + 3 * np.sin(6 * np.pi * f * t + k)
                      + 0.05 * RNG.standard_normal(t.size))


def _speed(k: int):
    f = 2.0 + 0.1 * k
    return lambda t: 6 * np.cos(2 * np.pi * f * t)


def _contact(k: int):
    return lambda t: (np.sin(2 * np.pi * 2.0 * t + k) > -0.2).astype(np.int8)


def _child_peak_mib(cmd: list[str]) -> tuple[float, float, str]:
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t0 = time.perf_counter()
    res = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT, check=True)
    dt = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return dt, max(peak, before) / 1024.0, res.stdout


def main(hours: float = 1.0) -> int:
    OUT.mkdir(parents=True, exist_ok=True)
    dur = hours * 3600.0
    records = {}
    p = OUT / f"synthetic_{hours:g}h.h5"
    if not p.exists():
        t0 = time.perf_counter()
        write_synthetic_record(p, dur, 0.001,
                               torque_nm={j: _torque(k) for k, j in enumerate(JOINT_NAMES)},
                               speed_rad_s={j: _speed(k) for k, j in enumerate(JOINT_NAMES)},
                               block=100_000)
        print(f"generated {p.name} in {time.perf_counter() - t0:.1f} s")
    records["synthetic.py (no contact flags)"] = p
    p = OUT / f"contact_{hours:g}h.h5"
    if not p.exists():
        t0 = time.perf_counter()
        write_record(p, dur, 0.001, {j: _torque(k) for k, j in enumerate(JOINT_NAMES)},
                     {j: _speed(k) for k, j in enumerate(JOINT_NAMES)},
                     contact={leg: _contact(k) for k, leg in enumerate(LEGS)},
                     joints=JOINT_NAMES, block=100_000)
        print(f"generated {p.name} in {time.perf_counter() - t0:.1f} s")
    records["with contact flags"] = p
    ok = True
    for label, p in records.items():
        with open_record(p) as rec:
            names = [f"joints/{j}/{q}" for j in rec.joint_names for q in ("torque_nm",
                                                                           "speed_rad_s")]
            names += [f"feet/{leg}/contact" for leg in LEGS if rec.has(f"feet/{leg}/contact")]
            n = rec.n_samples
            t0 = time.perf_counter()
            for _ in rec.iter_chunks(names):
                pass
            t_read = time.perf_counter() - t0
        raw_mib = n * 8 * len(names) / 2**20
        cmd = [sys.executable, "-m", "sim", "loads", str(p), "--json", "--sn", "10", "1e6", "5"]
        t_loads, peak, out = _child_peak_mib(cmd)
        d = json.loads(out)
        cyc = d["joints"]["fl_knee"]["rainflow"]["cycles"]
        print(f"[{label}] {n} samples x {len(names)} series ({raw_mib:.0f} MiB raw)")
        print(f"  chunked read only (baseline): {t_read:6.2f} s")
        print(f"  gaitload loads              : {t_loads:6.2f} s  (x{t_loads / t_read:.2f} the "
              f"baseline; limit 10 s)  peak RSS {peak:.0f} MiB; fl_knee {cyc:.0f} cycles")
        ok &= t_loads < 10.0
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0))
