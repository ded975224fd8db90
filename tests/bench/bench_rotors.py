"""Benchmark: engine steps per second with motor rotors exact / approximate / off.

Same model (demo robot standing), same process, same run; plain script, run on demand:

    python tests/bench/bench_rotors.py [seconds]

Prints for each mode the bare loop rate (explicit PD in Python + stepSimulation) and the full
runner rate (recording every step), each as a ratio to the rotor-free rate measured here.
Variants tried for the exact mode: fewer solver iterations (numSolverIterations = 10).
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from sim.engine.runner import JOINT_INDICES, Engine, pb, run  # noqa: E402
from sim.scenario.scenario_file import load_scenario  # noqa: E402

STAND = ROOT / "scenarios" / "stand.toml"


def bare_loop(mode: str, steps: int, iterations: int | None = None) -> float:
    scn = load_scenario(STAND, [f"drive.rotor_inertia={mode}"])
    eng = Engine(scn)
    try:
        from sim.scenario.segments import stance_angles

        q0 = stance_angles(scn.model)
        eng.place(q0, 0.3 + 5e-4)
        if iterations:
            pb.setPhysicsEngineParameter(numSolverIterations=iterations, physicsClientId=eng.cid)
        qs = q0.reshape(-1).tolist()
        r, c, J = eng.robot, eng.cid, JOINT_INDICES
        for _ in range(500):  # settle
            pb.stepSimulation(physicsClientId=c)
        t0 = time.perf_counter()
        for _ in range(steps):
            st = pb.getJointStates(r, J, physicsClientId=c)
            tau = [150.0 * (qs[j] - st[j][0]) - 3.0 * st[j][1] for j in range(12)]
            pb.setJointMotorControlArray(r, J, pb.TORQUE_CONTROL, forces=tau, physicsClientId=c)
            pb.stepSimulation(physicsClientId=c)
        return steps / (time.perf_counter() - t0)
    finally:
        eng.close()


def full_run(mode: str, seconds: float) -> float:
    scn = load_scenario(STAND, [f"drive.rotor_inertia={mode}", f"segment.0.duration_s={seconds}",
                                "record.start_s=0"])
    with tempfile.TemporaryDirectory() as tmp:
        return run(scn, Path(tmp) / "b.h5").steps_per_s


def main() -> None:
    seconds = float(sys.argv[1]) if len(sys.argv) > 1 else 3.0
    steps = int(seconds * 1000)
    rows = []
    for label, fn in [
        ("bare off", lambda: bare_loop("off", steps)),
        ("bare approximate", lambda: bare_loop("approximate", steps)),
        ("bare exact", lambda: bare_loop("exact", steps)),
        ("bare exact, 10 solver iterations", lambda: bare_loop("exact", steps, 10)),
        ("bare off, 10 solver iterations", lambda: bare_loop("off", steps, 10)),
        ("run off", lambda: full_run("off", seconds)),
        ("run approximate", lambda: full_run("approximate", seconds)),
        ("run exact", lambda: full_run("exact", seconds)),
    ]:
        rows.append((label, statistics.median(fn() for _ in range(3))))
    base = {"bare": rows[0][1], "run": rows[5][1]}
    print(f"{'variant':36s} {'steps/s':>9s} {'vs off':>7s}")
    for label, rate in rows:
        print(f"{label:36s} {rate:9.0f} {rate / base[label.split()[0]]:7.2f}")


if __name__ == "__main__":
    main()
