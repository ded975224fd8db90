"""Benchmark (run on demand, not in CI): exact thermal integration by prefix scan versus a
plain per-sample Python loop over the same exact maps, and a full motor check of a long record.

    /tmp/venv/bin/python tests/bench/bench_motor_thermal.py
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from sim import JOINT_NAMES
from sim.checks import thermal as th
from sim.checks.motor import check_motors
from sim.checks.motor_part import load_motor_part
from sim.checks.supply import Supply
from tests.synthetic import write_synthetic_record


def main() -> None:
    net = th.ThermalNetwork(45.0, 180.0, 0.6, 1.25)
    rng = np.random.default_rng(0)
    n, nm = 100_000, 12  # twelve motors stacked [motor, sample], as the check does
    beta = rng.uniform(0, 0.02, (nm, n))
    pw, ph = rng.uniform(0, 60, (nm, n)), rng.uniform(0, 5, (nm, n))
    maps = th.step_maps(net, 1e-3, beta, pw, ph)
    t0 = time.perf_counter()
    last = []
    for i in range(nm):
        x = [0.0, 0.0]
        m00, m01, m10, m11, v0, v1 = (a[i].tolist() for a in maps)
        for k in range(n):
            x = [m00[k] * x[0] + m01[k] * x[1] + v0[k], m10[k] * x[0] + m11[k] * x[1] + v1[k]]
        last.append(x[0])
    t_loop = time.perf_counter() - t0
    t0 = time.perf_counter()
    tw, _ = th.apply_map(th.prefix_maps(maps), np.asarray(0.0), np.asarray(0.0))
    t_scan = time.perf_counter() - t0
    assert np.allclose(tw[:, -1], last, rtol=1e-9)
    print(f"{nm} motors x {n} samples: python loop {t_loop:.3f} s, blocked scan "
          f"{t_scan:.3f} s, loop/scan ratio {t_loop / t_scan:.1f}")
    n = n * nm

    motor = load_motor_part(Path(__file__).resolve().parents[2] / "models/parts/motor_demo.toml")
    sup = Supply(bus_voltage_v=24.0, current_limit_a=30.0, inverter_efficiency=0.95,
                 regeneration_absorbed=True, cell_count=6, cell_internal_resistance_ohm=0.004)
    with tempfile.TemporaryDirectory() as d:
        dur = 60.0
        sig = {j: (lambda t: 8.0 * np.sin(2 * np.pi * 2 * t) ** 2) for j in JOINT_NAMES}
        spd = {j: (lambda t: 10.0 * np.cos(2 * np.pi * 2 * t)) for j in JOINT_NAMES}
        p = write_synthetic_record(Path(d) / "long.h5", dur, 1e-3, torque_nm=sig,
                                   speed_rad_s=spd, block=20000)
        drives = {j: (motor, 9.0, 0.9, 0.85) for j in JOINT_NAMES}
        t0 = time.perf_counter()
        check_motors(p, drives, sup, mission_s=3600.0)
        t_check = time.perf_counter() - t0
    samples = int(dur / 1e-3) * len(JOINT_NAMES)
    print(f"full check, 12 joints x {dur:.0f} s at 1 kHz ({samples} joint samples, 1 h mission): "
          f"{t_check:.2f} s; per joint sample vs python loop per sample: "
          f"{(t_check / samples) / (t_loop / n):.3f}")


if __name__ == "__main__":
    main()
