"""``gaitload model MODEL.toml --urdf OUT.urdf``: validate a model and write its URDF."""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

from sim.core.atomic import write_text_atomic
from sim.core.config import parse_override
from sim.core.paths import check_output_file
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf

HELP = "check a robot model file and write its URDF"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", help="robot model file (models/*.toml)")
    p.add_argument("--urdf", metavar="OUT.urdf", help="write the generated URDF here")
    p.add_argument("--set", dest="overrides", action="append", default=[], metavar="KEY=VALUE",
                   help="override a model key, e.g. leg.thigh_length_m=0.24")
    p.add_argument("--json", action="store_true", help="print mass properties as JSON")


def write_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically (see :mod:`sim.core.atomic`)."""
    return write_text_atomic(path, text)


def execute(args: argparse.Namespace) -> int:
    if args.urdf:
        check_output_file(args.urdf, "--urdf")
    over = dict(parse_override(t) for t in args.overrides)
    model = load_model(args.model, over)
    info: dict[str, Any] = {"model": model.name, "total_mass_kg": model.total_mass_kg,
                            "peak_torque_nm": {k: model.actuators[f"fl_{k}"].peak_torque_nm
                                               for k in ("abad", "hip", "knee")}}
    from sim.drive.backdrive import report
    from sim.scenario.segments import stance_angles

    info["backdrive"] = report(model, stance_angles(model))  # sim/drive/backdrive.py
    if args.urdf:
        write_atomic(args.urdf, build_urdf(model))
        info["urdf"] = str(args.urdf)
    if args.json:
        print(json.dumps(info, indent=2))
    else:
        print(f"{model.name}: {model.total_mass_kg:.3f} kg; peak output torque "
              + ", ".join(f"{k} {v:.1f} N m" for k, v in info["peak_torque_nm"].items()))
        if args.urdf:
            print(f"URDF written to {args.urdf}")
    return 0
