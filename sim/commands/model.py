"""``gaitload model MODEL.toml [--urdf OUT.urdf] [--scale-to-mass KG -o OUT.toml]``: validate a
model, write its URDF, or write a robot of another size scaled from it (with its drivetrain and
parts, :mod:`sim.robot.scaling`)."""

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
    p.add_argument("--scale-to-mass", type=float, metavar="KG",
                   help="write a robot scaled to about this total mass (3 to 60 kg), with its "
                        "drivetrain and parts beside it (needs -o)")
    p.add_argument("-o", "--output", metavar="OUT.toml",
                   help="model file to write with --scale-to-mass")


def write_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically (see :mod:`sim.core.atomic`)."""
    return write_text_atomic(path, text)


def execute(args: argparse.Namespace) -> int:
    if args.urdf:
        check_output_file(args.urdf, "--urdf")
    over = dict(parse_override(t) for t in args.overrides)
    model = load_model(args.model, over)
    if args.scale_to_mass is not None:
        return _scale(args, model)
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


def _scale(args: argparse.Namespace, model: Any) -> int:
    from sim.core.errors import InputError
    from sim.robot.scaling import scale_model

    if not args.output:
        raise InputError("-o", None, "an output model file with --scale-to-mass")
    out = Path(args.output)
    if out.suffix != ".toml":
        raise InputError("-o", None, "a .toml file name", str(out))
    files = scale_model(model.data, model.total_mass_kg, args.scale_to_mass, out.stem,
                        out.stem)
    base = out.parent
    for rel, text in sorted(files.items(), key=lambda kv: kv[0] == out.name):  # model last
        write_atomic(base / rel, text)
    made = load_model(out)
    print(f"{made.name}: {made.total_mass_kg:.3f} kg written to {out} (drivetrain "
          f"{out.stem}_drivetrain.toml, parts in {out.stem}_parts/); peak output torque "
          + ", ".join(f"{k} {made.actuators[f'fl_{k}'].peak_torque_nm:.1f} N m"
                      for k in ("abad", "hip", "knee")))
    return 0
