"""``gaitload demo [DIR]``: the whole job on the invented demo robot, end to end.

Runs the demo scenarios into run records, writes a usage mix of them (hours per day of each
activity), reduces the mix to duty spectra (``gaitload loads``) and checks the demo drivetrain
against it (``gaitload check``), printing each equivalent command line as it goes.
"""

from __future__ import annotations

import argparse
import json
import shlex
from pathlib import Path

from sim.core.errors import InputError
from sim.core.paths import check_output_dir

HELP = "run the demo set on the invented demo robot"

ROOT = Path(__file__).resolve().parents[2]
# (scenario file under scenarios/, mix entry kind, hours per day or occurrences per day)
DEMO_SET: list[tuple[str, str, float]] = [
    ("stand.toml", "duty", 6.0),       # standing watch, hours per day
    ("walk.toml", "duty", 1.0),        # careful walking
    ("trot.toml", "duty", 1.5),        # patrol at 0.6 m/s
    ("stand_up.toml", "event", 20.0),  # stand-ups per day
    ("sit_down.toml", "event", 20.0),  # sit-downs per day
]


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("directory", nargs="?", default="gaitload-demo",
                   help="where to write the demo results (default: ./gaitload-demo)")


def _mix_text(entries: list[tuple[str, str, float]]) -> str:
    lines = ["# Usage mix of the demo robot: INVENTED FOR THE DEMO (a day of office patrol).",
             "# Written by `gaitload demo`; record paths are relative to this file.", ""]
    for name, kind, amount in entries:
        stem = Path(name).stem
        if kind == "duty":
            lines += ["[[duty]]", f'name = "{stem}"', f'record = "{stem}.h5"',
                      f"hours_per_day = {amount!r}", ""]
        else:
            lines += ["[[event]]", f'name = "{stem}"', f'record = "{stem}.h5"',
                      f"per_day = {amount!r}", ""]
    return "\n".join(lines)


def _say(argv: list[str]) -> None:
    print("$ gaitload " + " ".join(shlex.quote(a) for a in argv))


def execute(args: argparse.Namespace) -> int:
    from sim.commands.cli import main
    from sim.commands.model import write_atomic
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    scen_dir = ROOT / "scenarios"
    if not scen_dir.is_dir():
        raise InputError(str(scen_dir), None,
                         "the scenarios/ folder of a gaitload source checkout "
                         "(install with: pip install -e .)")
    out = check_output_dir(args.directory, "DIR")
    out.mkdir(parents=True, exist_ok=True)
    summary: dict[str, dict] = {}
    for name, _, _ in DEMO_SET:
        scn = load_scenario(scen_dir / name)
        rec = out / (Path(name).stem + ".h5")
        _say(["run", str(scen_dir / name), "-o", str(rec)])
        res = run(scn, rec, progress=True)
        summary[name] = res.to_json()
        if res.status != "completed":
            print(f"  {res.status}: {res.detail}")
            raise InputError(str(scen_dir / name), None, "a demo scenario that completes",
                             res.status)
        knee = max(v["peak_torque_nm"] for j, v in res.joints.items() if j.endswith("knee"))
        print(f"  completed: peak knee torque {knee:.2f} N m -> {rec}")
    mix = write_atomic(out / "usage_mix.toml", _mix_text(DEMO_SET))
    write_atomic(out / "runs.json", json.dumps(summary, indent=2) + "\n")
    loads_argv = ["loads", "--mix", str(mix), "--csv", str(out / "loads"), "--plot",
                  str(out / "loads")]
    _say(loads_argv)
    code = main(loads_argv)
    if code != 0:
        return code
    check_argv = ["check", str(mix), "--drivetrain", str(ROOT / "models/drivetrain_demo.toml"),
                  "--plot", str(out / "check")]
    _say(check_argv)
    check_code = main(check_argv)
    print(f"\ndemo results are in {out.resolve()}: run records (*.h5), usage_mix.toml, "
          "loads/ (CSV and plots), check/ (figures).")
    print("Results are estimates; manufacturer ratings, local codes and licensed engineering "
          "practice take precedence.")
    return 0 if check_code in (0, 1) else check_code
