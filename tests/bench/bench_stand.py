"""Benchmark: the full stand loop with recording against bare stepping of the same model.

Run on demand (not in CI):  python tests/bench/bench_stand.py [--seconds 20]

Prints steps per second of `sim.engine.runner.run` on a stand (full-rate series, decimated series,
histogram-only; the whole `run()` call and its stepping loop alone) and of bare
`stepSimulation` of the same model in the same process (the time
spent inside the engine step during an identical run), and the ratio of each to the bare
rate. Then peak memory of 10 s vs 100 s histogram-only runs, each in a fresh process.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))


def bare_rate(seconds: float) -> float:
    """Engine-only rate: time spent inside stepSimulation during the same stand run.

    The same model goes through exactly the same states as in the full loop, so the ratio
    isolates the cost of everything gaitload does around the engine step.
    """
    import sim.engine.runner as runner

    real = runner.pb.stepSimulation
    spent = [0.0, 0]

    def timed_step(*a, **k):
        t0 = time.perf_counter()
        out = real(*a, **k)
        spent[0] += time.perf_counter() - t0
        spent[1] += 1
        return out

    runner.pb.stepSimulation = timed_step
    try:
        loop_rate(seconds, ["record.series=false"])
    finally:
        runner.pb.stepSimulation = real
    return spent[1] / spent[0]


def loop_rate(seconds: float, overrides: list[str], whole: bool = True) -> float:
    """Steps per second of one stand run: of the whole ``run()`` call (engine start, URDF,
    record set-up and closing included) or, with ``whole=False``, of its stepping loop alone
    (recording and flushes inside the loop included; the runner's own clock)."""
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    scn = load_scenario(ROOT / "scenarios/stand.toml",
                        [f"segment.0.duration_s={seconds}", "record.start_s=0", *overrides])
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        res = run(scn, Path(tmp) / "b.h5")
        dt = time.perf_counter() - t0
    assert res.status == "completed"
    return round(seconds / scn.time_step_s) / dt if whole else res.steps_per_s


MEM_CHILD = r"""
import resource, sys, tempfile
sys.path.insert(0, sys.argv[2])
from pathlib import Path
from sim.engine.runner import run
from sim.scenario.scenario_file import load_scenario
scn = load_scenario(Path(sys.argv[2]) / "scenarios/stand.toml",
                    [f"segment.0.duration_s={sys.argv[1]}", "record.start_s=0",
                     "record.series=false"])
with tempfile.TemporaryDirectory() as tmp:
    run(scn, Path(tmp) / "m.h5")
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def peak_memory_kib(seconds: float) -> int:
    out = subprocess.run([sys.executable, "-c", MEM_CHILD, str(seconds), str(ROOT)],
                         capture_output=True, text=True, check=True).stdout
    return int(out.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seconds", type=float, default=20.0)
    a = ap.parse_args()
    bare = bare_rate(a.seconds)
    rows = {"bare stepSimulation": bare}
    for label, over in (("full loop, series every step", []),
                        ("full loop, series every 10th step", ["record.decimation=10"]),
                        ("full loop, histograms only", ["record.series=false"])):
        rows[label] = loop_rate(a.seconds, over)
        rows[label.replace("full loop", "loop alone")] = loop_rate(a.seconds, over, whole=False)
    for k, v in rows.items():
        print(f"{k:<38} {v:9.0f} steps/s   ratio to bare {v / bare:5.2f}")
    m10, m100 = peak_memory_kib(10), peak_memory_kib(100)
    print(f"peak RSS, histogram-only: 10 s {m10 / 1024:.1f} MiB, 100 s {m100 / 1024:.1f} MiB, "
          f"ratio {m100 / m10:.3f}")
    print(json.dumps({"steps_per_s": rows, "peak_rss_kib": {"10s": m10, "100s": m100}}))


if __name__ == "__main__":
    main()
