"""Benchmark: a 16-case sweep with 1 and 2 local workers and on a local Dask cluster.

Run on demand (not part of the test suite):

    python tests/bench/bench_sweep.py [--repeat 3] [--duration-s 5.0]

Prints the speed-up of 2 workers over 1 (goal >= 1.8x on 2 free cores) and the overhead of the
Dask path over the local pool with the same number of workers (goal <= 10 %), both measured in
this run, plus the load average so figures taken on a shared machine can be judged. The Dask
cluster (2 worker processes, 1 thread each) is started before the timed run, as an existing
scheduler would be; every timed run starts from an empty output folder, so each includes its
workers' imports and engine start-up.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
OUT = Path(__file__).resolve().parent / "_out" / "sweep"


def sweep_file(duration_s: float) -> Path:
    OUT.mkdir(parents=True, exist_ok=True)
    path = OUT / "bench16.toml"
    start = duration_s / 2
    path.write_text(
        f'scenario = "{ROOT / "scenarios" / "stand.toml"}"\n'
        f'set = ["segment.0.duration_s={duration_s}", "record.start_s={start}"]\n'
        'metrics = ["run.joints.*_knee.peak_torque_nm:max", "run.joints.*_hip.rms_torque_nm:max"]\n'
        '[rank]\nmetric = "run.joints.*_knee.peak_torque_nm:max"\n'
        '[[param]]\nkeys = ["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]\n'
        "values = [[0.18, 0.18], [0.20, 0.20], [0.22, 0.22], [0.24, 0.24]]\n"
        '[[param]]\nkey = "payload.mass_kg"\nvalues = [0.0, 2.0, 4.0, 6.0]\n')
    return path


def _cpu() -> tuple[int, float]:
    return os.getpid(), time.process_time()


def timed(label: str, fn, client=None) -> tuple[float, float, object]:
    """Wall time and an estimate for idle cores: this process's CPU + the busiest worker's.

    Worker CPU is counted from the start of the timed run: fresh pool workers start at zero;
    for the long-lived Dask workers their CPU before the run is subtracted.
    """
    base = dict(client.run(_cpu).values()) if client is not None else {}
    load0 = os.getloadavg()[0]
    t0, c0 = time.perf_counter(), time.process_time()
    res = fn()
    dt, parent = time.perf_counter() - t0, time.process_time() - c0
    for pid in res.worker_cpu_s:
        res.worker_cpu_s[pid] -= base.get(pid, 0.0)
    busiest = max(res.worker_cpu_s.values())
    est = parent + busiest
    print(f"  {label:<28} wall {dt:6.2f} s | idle-core estimate {est:6.2f} s (client CPU "
          f"{parent:.2f} s + busiest worker CPU {busiest:.2f} s of "
          f"{sum(res.worker_cpu_s.values()):.2f} s in {len(res.worker_cpu_s)}) | 1-min load "
          f"{load0:.2f} -> {os.getloadavg()[0]:.2f}")
    return dt, est, res


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=3,
                    help="interleaved runs per variant; the best (least disturbed) is kept")
    ap.add_argument("--duration-s", type=float, default=5.0, help="simulated seconds per case")
    a = ap.parse_args()

    from distributed import Client, LocalCluster

    from sim.sweeps.executors import run_sweep
    from sim.sweeps.ranking import write_outputs
    from sim.sweeps.spec import load_sweep

    sweep = load_sweep(sweep_file(a.duration_s))
    print(f"16-case sweep, {a.duration_s:g} s stand per case, {os.cpu_count()} CPUs, "
          f"load average {os.getloadavg()}")

    def fresh(name: str) -> Path:
        d = OUT / name
        shutil.rmtree(d, ignore_errors=True)
        return d

    best: dict[str, float] = {}
    times: dict[str, list[float]] = {}
    ests: dict[str, list[float]] = {}
    tables: dict[str, str] = {}
    t0 = time.perf_counter()
    import dask

    # the Dask worker's statistical profiler samples every thread 100 times a second and
    # contends for the interpreter lock with the case; off, as docs/sweep.md advises
    dask.config.set({"distributed.worker.profile.enabled": False})
    cluster = LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                           dashboard_address=None)
    print(f"  (Dask LocalCluster started in {time.perf_counter() - t0:.2f} s, not timed below)")
    client = Client(cluster)
    try:
        for rep in range(a.repeat):
            print(f"run {rep + 1}/{a.repeat}")
            for label, kw in (("local pool, 1 worker", {"workers": 1}),
                              ("local pool, 2 workers", {"workers": 2}),
                              ("Dask LocalCluster, 2 workers",
                               {"cluster": client})):
                d = fresh(label.replace(" ", "_").replace(",", ""))
                dt, est, res = timed(label, lambda d=d, kw=kw: run_sweep(sweep, d, **kw),
                                     client if "cluster" in kw else None)
                ests.setdefault(label, []).append(est)
                write_outputs(res)  # type: ignore[arg-type]
                tables[label] = (d / "results.csv").read_text()
                best[label] = min(best.get(label, float("inf")), dt)
                times.setdefault(label, []).append(dt)
    finally:
        client.close()
        cluster.close()
    same = len(set(tables.values())) == 1
    for label, ts in times.items():
        print(f"  {label:<28} best {min(ts):6.2f} s, all " + ", ".join(f"{t:.2f}" for t in ts))
    t1 = best["local pool, 1 worker"]
    t2 = best["local pool, 2 workers"]
    td = best["Dask LocalCluster, 2 workers"]
    print(f"speed-up 2 workers / 1 worker: {t1 / t2:.2f}x (goal >= 1.8x)")
    print(f"Dask overhead over the local pool (2 workers): {100 * (td / t2 - 1):+.1f} % "
          "(goal <= 10 %)")
    e1, e2, ed = (min(ests[k]) for k in ("local pool, 1 worker", "local pool, 2 workers",
                                          "Dask LocalCluster, 2 workers"))
    print("CPU-time estimates for idle cores (client CPU + busiest worker's CPU; robust to "
          "other load, blind to waiting):")
    print(f"  speed-up 2 workers / 1 worker: {e1 / e2:.2f}x; Dask overhead over the local "
          f"pool: {100 * (ed / e2 - 1):+.1f} %")
    print(f"tables identical across the three: {same}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())
