"""Benchmark: the demo trot with complete dynamics against the plain settings, one process.

Plain script, run on demand (not collected by the tests):

    python tests/bench/bench_defaults.py [trot seconds] [repeats]

"plain": rigid ground, rotors off, written gains, targets held between updates (the defaults
today). "complete": rotor inertia (approximate), derived gains, a derived foot pad and the
command held to its last rate of change (docs/gaits.md "Complete dynamics"). Prints the median
run time of each and their ratio (goal: complete / plain <= 1.1).
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
COMPLETE = ["drive.rotor_inertia=approximate", "control.gains=derived", "ground.pad=true",
            "control.hold=command"]


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
    plain, complete = [], []
    for _ in range(repeats):  # interleaved, so machine load hits both alike
        plain.append(timed([], seconds))
        complete.append(timed(COMPLETE, seconds))
    p, c = statistics.median(plain), statistics.median(complete)
    print(f"trot {seconds:g} s, {repeats} runs each: plain {p:.2f} s, complete {c:.2f} s, "
          f"ratio complete/plain {c / p:.3f} (goal <= 1.1)")


if __name__ == "__main__":
    main()
