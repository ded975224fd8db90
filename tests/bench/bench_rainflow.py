"""Benchmark: rainflow counting of 10^7 samples against the reference package ``rainflow``.

Run on demand (not collected by pytest): ``python tests/bench/bench_rainflow.py [N]``.
Prints both times, the speed-up ratio and whether the counts are identical.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import rainflow

from sim.loads.rainflow import count_by_range, extract_cycles


def main(n: int = 10_000_000) -> int:
    rng = np.random.default_rng(20240601)
    t = np.arange(n) * 1e-3
    # a gait-like load (3 Hz with a harmonic) plus noise large enough to add small cycles
    x = 10 * np.sin(2 * np.pi * 3 * t) + 3 * np.sin(2 * np.pi * 9 * t + 0.4)
    x += rng.normal(scale=0.5, size=n)
    t0 = time.perf_counter()
    mine = count_by_range(extract_cycles(x))
    t_mine = time.perf_counter() - t0
    t0 = time.perf_counter()
    ref = rainflow.count_cycles(x)
    t_ref = time.perf_counter() - t0
    ref_r = np.array([r for r, _ in ref])
    ref_c = np.array([c for _, c in ref])
    same = np.array_equal(mine[0], ref_r) and np.array_equal(mine[1], ref_c)
    print(f"samples: {n}")
    print(f"sim.loads.rainflow : {t_mine:8.3f} s ({n / t_mine / 1e6:6.2f} M samples/s)")
    print(f"rainflow pkg : {t_ref:8.3f} s ({n / t_ref / 1e6:6.2f} M samples/s)")
    print(f"speed-up     : {t_ref / t_mine:8.1f} x   identical counts: {same} "
          f"({mine[0].size} distinct ranges, {mine[1].sum():.1f} cycles)")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000_000))
