"""Benchmark: the demo trot with today's defaults against the old defaults, one process.

Plain script, run on demand (not collected by the tests):

    python tests/bench/bench_defaults.py [trot seconds] [repeats]

"new": the defaults (exact rotor inertia, derived gains, a foot pad derived from the weight,
reducer losses). "old": the defaults before them: rotors off, the written gains kp = 150 N
m/rad and kd = 3 N m s/rad, the engine's rigid contact (reducer losses were on in both).
Runs are interleaved so machine load hits both alike; prints the median run time of each and
their ratio (goal: new / old <= 1.1; docs/dynamics.md gives the measured figure and why).
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from sim.engine.runner import run  # noqa: E402
from sim.scenario.scenario_file import load_scenario  # noqa: E402

TROT = ROOT / "scenarios" / "trot.toml"
OLD = ['drive.rotor_inertia="off"', "control.gains=written", "ground.pad=false"]


def timed(extra: list[str], seconds: float) -> float:
    scn = load_scenario(TROT, [f"segment.1.duration_s={seconds}", *extra])
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        res = run(scn, Path(tmp) / "t.h5")
        dt = time.perf_counter() - t0
    assert res.status == "completed", res.detail
    return dt


def main() -> None:
    seconds = float(sys.argv[1]) if len(sys.argv) > 1 else 10.0
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    old, new = [], []
    for _ in range(repeats):
        old.append(timed(OLD, seconds))
        new.append(timed([], seconds))
    o, n = statistics.median(old), statistics.median(new)
    print(f"trot {seconds:g} s, {repeats} runs each: old defaults {o:.2f} s, new defaults "
          f"{n:.2f} s, ratio new/old {n / o:.3f} (goal <= 1.1)")


if __name__ == "__main__":
    main()
