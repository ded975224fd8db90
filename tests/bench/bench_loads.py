"""Benchmark: ``gaitload loads`` on 1 kHz, 12-joint records of two lengths.

Run on demand (not collected by pytest): ``python tests/bench/bench_loads.py [HOURS HOURS]``
(default 0.25 and 1 h). The records are generated here into ``tests/bench/_out`` (not in git)
by ``tests/synthetic.py``; a second record with foot contact flags (``tests/loads_records.py``)
exercises the stance/swing split as well. Each ``loads`` run is a child process that reports
its own peak memory (``VmHWM``); the time baseline is one plain chunked read of the same
series in the same run. Prints times, the ratio to the baseline, the peak memory of each
length and the ratio of the peaks (about 1 when memory does not grow with the record), and
the time of ``--csv`` (a second pass over the torque for the cycle matrix) on the longer one.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
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


# the child reports its own peak (VmHWM, Linux): its rusage peak would include the parent's
# resident memory at the time of exec, which here holds a record just read
_CHILD = ("import sys\nfrom sim.commands.cli import main\nrc = main(sys.argv[1:])\n"
          "try:\n    hwm = [s for s in open('/proc/self/status') if s.startswith('VmHWM')]\n"
          "except OSError:\n    hwm = []\nsys.stderr.write(hwm[0] if hwm else '')\n"
          "sys.exit(rc)\n")


def _child_peak_mib(args: list[str]) -> tuple[float, float, str]:
    """Run ``gaitload ARGS`` in a child; its wall time (s), its peak RSS (MiB), its stdout."""
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        t0 = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-c", _CHILD, *args], stdout=out, stderr=err,
                                cwd=ROOT)
        _, status, usage = os.wait4(proc.pid, 0)
        dt = time.perf_counter() - t0
        proc.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        text = err.read()
        if proc.returncode:
            raise RuntimeError(f"gaitload {' '.join(args)} failed:\n{text}")
        hwm = [ln.split()[1] for ln in text.splitlines() if ln.startswith("VmHWM")]
        peak = int(hwm[0]) / 1024.0 if hwm else usage.ru_maxrss / 1024.0
        out.seek(0)
        return dt, peak, out.read()


def _records(hours: float) -> dict[str, Path]:
    OUT.mkdir(parents=True, exist_ok=True)
    dur = hours * 3600.0
    p = OUT / f"synthetic_{hours:g}h.h5"
    if not p.exists():
        t0 = time.perf_counter()
        write_synthetic_record(p, dur, 0.001,
                               torque_nm={j: _torque(k) for k, j in enumerate(JOINT_NAMES)},
                               speed_rad_s={j: _speed(k) for k, j in enumerate(JOINT_NAMES)},
                               block=100_000)
        print(f"generated {p.name} in {time.perf_counter() - t0:.1f} s")
    q = OUT / f"contact_{hours:g}h.h5"
    if not q.exists():
        t0 = time.perf_counter()
        write_record(q, dur, 0.001, {j: _torque(k) for k, j in enumerate(JOINT_NAMES)},
                     {j: _speed(k) for k, j in enumerate(JOINT_NAMES)},
                     contact={leg: _contact(k) for k, leg in enumerate(LEGS)},
                     joints=JOINT_NAMES, block=100_000)
        print(f"generated {q.name} in {time.perf_counter() - t0:.1f} s")
    return {"synthetic.py (no contact flags)": p, "with contact flags": q}


def _read_s(p: Path) -> tuple[float, int, int]:
    """Time of one plain chunked read of the series ``loads`` reads; samples; series."""
    with open_record(p) as rec:
        names = [f"joints/{j}/{q}" for j in rec.joint_names for q in ("torque_nm",
                                                                       "speed_rad_s")]
        names += [f"feet/{leg}/contact" for leg in LEGS if rec.has(f"feet/{leg}/contact")]
        t0 = time.perf_counter()
        for _ in rec.iter_chunks(names):
            pass
        return time.perf_counter() - t0, rec.n_samples, len(names)


def main(hours: tuple[float, float] = (0.25, 1.0)) -> int:
    ok = True
    recs = {h: _records(h) for h in hours}
    for label in recs[hours[0]]:
        peaks = []
        for h in hours:
            p = recs[h][label]
            t_read, n, n_series = _read_s(p)
            t_loads, peak, out = _child_peak_mib(["loads", str(p), "--json", "--sn", "10",
                                                  "1e6", "5"])
            peaks.append(peak)
            cyc = json.loads(out)["joints"]["fl_knee"]["rainflow"]["cycles"]
            raw_mib = n * 8 * n_series / 2**20
            print(f"[{label}, {h:g} h] {n} samples x {n_series} series ({raw_mib:.0f} MiB raw)")
            print(f"  chunked read only (baseline): {t_read:6.2f} s")
            print(f"  gaitload loads --json --sn  : {t_loads:6.2f} s  (x{t_loads / t_read:.2f} "
                  f"the baseline{'; limit 10 s' if h <= 1.0 else ''})  peak RSS {peak:.0f} MiB;"
                  f" fl_knee {cyc:.0f} cycles")
            if h <= 1.0:
                ok &= t_loads < 10.0
        with tempfile.TemporaryDirectory() as d:
            t_csv, peak_csv, _ = _child_peak_mib(["loads", str(recs[hours[1]][label]), "--csv",
                                                  d])
        print(f"  gaitload loads --csv ({hours[1]:g} h) : {t_csv:6.2f} s (second pass for the "
              f"cycle matrix)  peak RSS {peak_csv:.0f} MiB")
        ratio = peaks[1] / peaks[0]
        print(f"  peak RSS {hours[1]:g} h / {hours[0]:g} h: {ratio:.3f} (record {hours[1] / hours[0]:g}x "
              "longer)")
        ok &= ratio < 1.1
    return 0 if ok else 1


if __name__ == "__main__":
    args = [float(a) for a in sys.argv[1:]]
    if len(args) not in (0, 2):
        sys.exit("usage: bench_loads.py [HOURS HOURS]")
    sys.exit(main((args[0], args[1]) if args else (0.25, 1.0)))
