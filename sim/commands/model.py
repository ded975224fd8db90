"""``gaitload model MODEL.toml --urdf OUT.urdf``: validate a model and write its URDF;
``gaitload model [MODEL.toml] --scale-to-mass KG -o OUT.toml``: write a robot scaled from it
(default the demo robot) to another total mass (:mod:`sim.robot.scaling`)."""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

from sim.core.atomic import write_text_atomic
from sim.core.config import parse_override
from sim.core.errors import InputError
from sim.core.paths import check_output_file
from sim.robot.model import load_model
from sim.robot.urdf import build_urdf

HELP = "check a robot model file and write its URDF"

DEMO_MODEL = Path(__file__).resolve().parents[2] / "models" / "fennec.toml"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", nargs="?", default=None,
                   help="robot model file (models/*.toml); with --scale-to-mass the robot to "
                        "scale (default: the demo robot models/fennec.toml)")
    p.add_argument("--scale-to-mass", dest="scale_to_mass", type=float, metavar="KG",
                   help="write a robot scaled from MODEL to this total mass (3 to 60 kg): "
                        "lengths ~ m^(1/3), masses ~ m, actuators for dynamic similarity; "
                        "needs -o")
    p.add_argument("-o", "--output", metavar="OUT.toml",
                   help="with --scale-to-mass: the new model file; its drivetrain "
                        "(OUT_drivetrain.toml) and parts (OUT_parts/) are written beside it")
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
    if args.scale_to_mass is not None:
        return _scale(args, over)
    if args.output:
        raise InputError("command line", "-o", "--scale-to-mass with -o (a model is written "
                         "only when scaled; --urdf writes the URDF)")
    if args.model is None:
        raise InputError("command line", "MODEL", "a robot model file")
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


def _scale(args: argparse.Namespace, over: dict[str, Any]) -> int:
    from sim.robot.scaling import check_target_mass, scale_robot, write_scaled

    check_target_mass(args.scale_to_mass)
    if not args.output:
        raise InputError("command line", "-o", "an output model file (-o OUT.toml) with "
                         "--scale-to-mass")
    out = check_output_file(args.output, "-o")
    if out.suffix != ".toml":
        raise InputError("command line", "-o", "a model file name ending in .toml", str(out))
    source = load_model(args.model or DEMO_MODEL, over)
    robot = scale_robot(source, args.scale_to_mass, out.stem)
    paths = write_scaled(robot, out.parent)
    if args.urdf:
        write_atomic(args.urdf, build_urdf(load_model(out)))
    info = {"model": str(out), "source": source.name, "total_mass_kg": args.scale_to_mass,
            "mass_ratio": robot.mass_ratio, "length_ratio": robot.mass_ratio ** (1 / 3),
            "files": [str(p) for p in paths],
            "actuators": {k: {**a.__dict__, "peak_torque_nm": a.peak_torque_nm}
                          for k, a in robot.actuators.items()}}
    if args.json:
        print(json.dumps(info, indent=2))
    else:
        print(f"{out}: {source.name} scaled to {args.scale_to_mass:g} kg (masses x "
              f"{robot.mass_ratio:.4g}, lengths x {robot.mass_ratio ** (1 / 3):.4g}); peak "
              "output torque " + ", ".join(f"{k} {a.peak_torque_nm:.1f} N m"
                                           for k, a in robot.actuators.items()))
        print(f"wrote {len(paths)} files: the model, {out.stem}_drivetrain.toml and "
              f"{out.stem}_parts/ (invented parts; replace the reducer ratings with yours)")
    return 0
