"""Benchmark: a 30 s trot of the demo robot with full recording (every step in the series).

Prints the real-time factor on one core and its ratio to bare ``stepSimulation`` of the same
model measured in the same process (the robot standing on its feet, no Python work between
steps). Run on demand, not in CI:

    python tests/bench/bench_trot.py [--duration 30] [--speed 0.6]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))


def bare_steps_per_s(scn, n: int = 5000) -> float:
    """Steps per second of bare stepping of the scenario's robot standing on its feet."""
    from sim.engine.runner import Engine, pb
    from sim.scenario.segments import stance_angles

    eng = Engine(scn)
    try:
        q = stance_angles(scn.model)
        eng.place(q, scn.model.data["stance"]["hip_height_m"] + 5e-4)
        c = eng.cid
        for _ in range(500):  # settle onto the feet
            pb.stepSimulation(physicsClientId=c)
        t0 = time.perf_counter()
        for _ in range(n):
            pb.stepSimulation(physicsClientId=c)
        return n / (time.perf_counter() - t0)
    finally:
        eng.close()


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--duration", type=float, default=30.0, help="trot duration, s")
    ap.add_argument("--speed", type=float, default=0.6, help="trot speed, m/s")
    a = ap.parse_args(argv)
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    scn = load_scenario(ROOT / "scenarios" / "trot.toml",
                        [f"segment.1.duration_s={a.duration}", f"segment.1.speed_m_s={a.speed}",
                         "record.start_s=0", "record.decimation=1", "record.series=true"])
    bare = bare_steps_per_s(scn)
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        res = run(scn, Path(tmp) / "trot.h5")
        wall = time.perf_counter() - t0
        size_mb = (Path(tmp) / "trot.h5").stat().st_size / 1e6
    n_steps = round(scn.duration_s / scn.time_step_s)
    loop = res.steps_per_s
    print(f"trot {a.speed} m/s, {scn.duration_s:g} s simulated at dt = {scn.time_step_s * 1e3:g} ms, "
          f"status {res.status}")
    print(f"bare stepSimulation           : {bare:8.0f} steps/s  (RTF {bare * scn.time_step_s:5.1f})")
    print(f"run loop (control + recording): {loop:8.0f} steps/s  (RTF {loop * scn.time_step_s:5.1f})")
    print(f"whole run incl. setup, write  : {n_steps / wall:8.0f} steps/s  "
          f"(RTF {scn.duration_s / wall:5.1f}), record {size_mb:.1f} MB")
    print(f"ratio run loop / bare stepping: {loop / bare:.3f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
