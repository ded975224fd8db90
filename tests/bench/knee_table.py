"""Peak knee torque at stand-up and in trot for three thigh/shank length ratios.

The demo robot's legs keep their total length (thigh + shank = 0.44 m) and the stance keeps
its hip height (0.30 m); only the split between thigh and shank changes. For each ratio the
script runs ``scenarios/stand_up.toml`` and ``scenarios/trot.toml`` (0.6 m/s, 8 s, first 3 s
left out) and prints a Markdown table of the largest |knee torque| over the four knees.
Produces the table in docs/gaits.md:

    python tests/bench/knee_table.py
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

TOTAL_M = 0.44
RATIOS = (0.8, 1.0, 1.25)  # thigh / shank


def peak_knee_nm(scenario: str, overrides: list[str], out: Path) -> float:
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    res = run(load_scenario(ROOT / "scenarios" / scenario, overrides), out)
    if res.status != "completed":
        raise SystemExit(f"{scenario} {overrides}: {res.status} ({res.detail})")
    return max(v["peak_torque_nm"] for j, v in res.joints.items() if j.endswith("_knee"))


def main() -> int:
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for ratio in RATIOS:
            l1 = round(TOTAL_M * ratio / (1 + ratio), 4)
            legs = [f"robot.leg.thigh_length_m={l1}",
                    f"robot.leg.shank_length_m={round(TOTAL_M - l1, 4)}"]
            up = peak_knee_nm("stand_up.toml", [*legs, "record.series=false"],
                              Path(tmp) / "up.h5")
            trot = peak_knee_nm("trot.toml", [*legs, "segment.1.duration_s=8",
                                              "segment.1.speed_m_s=0.6", "record.series=false"],
                                Path(tmp) / "trot.h5")
            rows.append((ratio, l1, TOTAL_M - l1, up, trot))
    print("| thigh/shank | thigh m | shank m | peak knee, stand-up N m | peak knee, trot "
          "0.6 m/s N m |")
    print("|---|---|---|---|---|")
    for ratio, l1, l2, up, trot in rows:
        print(f"| {ratio:.2f} | {l1:.4f} | {l2:.4f} | {up:.1f} | {trot:.1f} |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
