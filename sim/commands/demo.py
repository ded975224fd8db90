"""``gaitload demo [DIR]``: run the demo set on the invented demo robot and say where it is."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from sim.errors import InputError

HELP = "run the demo set on the invented demo robot"

ROOT = Path(__file__).resolve().parents[2]
# scenario files of the demo set, run in this order (names relative to scenarios/)
DEMO_SCENARIOS = ["stand.toml"]


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("directory", nargs="?", default="gaitload-demo",
                   help="where to write the demo results (default: ./gaitload-demo)")


def execute(args: argparse.Namespace) -> int:
    from sim.runner import run
    from sim.scenario import load_scenario

    scen_dir = ROOT / "scenarios"
    if not scen_dir.is_dir():
        raise InputError(str(scen_dir), None,
                         "the scenarios/ folder of a gaitload source checkout "
                         "(install with: pip install -e .)")
    out = Path(args.directory)
    out.mkdir(parents=True, exist_ok=True)
    summary = {}
    for name in DEMO_SCENARIOS:
        scn = load_scenario(scen_dir / name)
        rec = out / (Path(name).stem + ".h5")
        print(f"running {name} ({scn.duration_s:g} s simulated) ...")
        res = run(scn, rec, progress=True)
        summary[name] = res.to_json()
        knee = max(v["peak_torque_nm"] for j, v in res.joints.items() if j.endswith("knee"))
        print(f"  {res.status}: peak knee torque {knee:.2f} N m -> {rec}")
    (out / "demo_summary.json").write_text(json.dumps(summary, indent=2) + "\n")
    print(f"demo results are in {out.resolve()} (run records *.h5, demo_summary.json)")
    print("Results are estimates; manufacturer ratings, local codes and licensed engineering "
          "practice take precedence.")
    return 0
