"""A robot of another size from a model: geometric similarity, for trying the tool on robots
other than the demo.

With the mass ratio ``r = m / m0`` every length scales by ``s = r^(1/3)`` (same density and
shape) and every mass by ``r``; the joint torque a pose needs then scales by
``m g L ~ r^(4/3)`` (similarity laws of legged animals and machines, e.g. Alexander,
*Principles of Animal Locomotion*, 2003; from memory). The drivetrain of the new robot is the
quick one (a generic rated reducer and a motor given by kV, resistance and inertia), sized so
that its peak output torque follows the same ``r^(4/3)``:

- ratio 10, bus 24 V (kept);
- motor torque constant and driver current limit each times ``sqrt(t)``, ``t = r^(4/3)``
  (so their product, the peak torque, times ``t``; the no-load joint speed falls as
  ``1/sqrt(t)``, about as fast as the joint speeds of a slower-stepping larger robot);
- rotor inertia times ``t^(5/3)`` (motor mass ~ torque, radius ~ torque^(1/3));
- winding resistance times ``k^2 / t`` (motor constant squared ~ motor size);
- the reducer's rating point times ``t``.

All of it is a rough starting point (common practice for first sizing), not a design. The
numbers of the result are invented, like the demo's.
"""

from __future__ import annotations

import copy
import math
from typing import Any

from sim.core.config import dump_toml
from sim.core.errors import InputError

MASS_RANGE_KG = (3.0, 60.0)
REF_KT_NM_A = 32.2289 / 300.0  # the demo knee's peak torque over ratio 10 and 30 A

_LENGTHS = {"body": ("size_m",), "hips": ("x_m", "y_m", "z_m"),
            "leg": ("abad_offset_m", "thigh_length_m", "thigh_radius_m", "shank_length_m",
                    "shank_radius_m", "foot_radius_m"),
            "stance": ("hip_height_m", "foot_x_m", "foot_y_m")}
_MASSES = {"body": ("mass_kg",), "leg": ("thigh_mass_kg", "shank_mass_kg", "foot_mass_kg")}


def scaled_actuators(torque_scale: float) -> dict[str, dict[str, Any]]:
    """The motor, reducer and supply values of the scaled robot (module docstring), one
    function so the sizing rule lives in one place."""
    t = torque_scale
    k = REF_KT_NM_A * math.sqrt(t)
    return {
        "motor": {"kind": "motor", "name": "scaled quick motor (invented)",
                  "speed_constant_rpm_per_v": round(60.0 / (2.0 * math.pi * k), 6),
                  "phase_resistance_ohm_20c": round(0.16 * (k / REF_KT_NM_A) ** 2 / t, 6),
                  "rotor_inertia_kg_m2": float(f"{6.5e-5 * t ** (5.0 / 3.0):.6g}")},
        "reducer": {"kind": "rated", "name": "scaled generic reducer (invented)",
                    "ratio": 10.0, "efficiency_forward": 0.9, "efficiency_back": 0.85,
                    "input_inertia_kg_m2": float(f"{2.0e-6 * t ** (5.0 / 3.0):.6g}"),
                    "input_drag_torque_nm": float(f"{0.005 * t:.6g}"),
                    "rated_torque_nm": float(f"{12.0 * t:.6g}"),
                    "rated_speed_rad_s": 10.0, "rated_life_h": 5000.0,
                    "life_exponent": 3.333,
                    "momentary_peak_torque_nm": float(f"{40.0 * t:.6g}")},
        "supply": {"bus_voltage_v": 24.0,
                   "current_limit_a": float(f"{30.0 * math.sqrt(t):.6g}"),
                   "inverter_efficiency": 0.95, "regeneration_absorbed": True,
                   "cell_count": 6, "cell_internal_resistance_ohm": 0.004},
    }


def scale_model(data: dict[str, Any], from_mass_kg: float, to_mass_kg: float, name: str,
                stem: str, file: str = "--scale-to-mass") -> dict[str, str]:
    """The files of a robot scaled from model ``data`` (of total mass ``from_mass_kg``) to
    ``to_mass_kg``: ``{relative path: TOML text}`` for the model (``<stem>.toml``), its
    drivetrain (``<stem>_drivetrain.toml``) and parts (``<stem>_parts/*.toml``)."""
    lo, hi = MASS_RANGE_KG
    if not lo <= to_mass_kg <= hi:
        raise InputError(file, None, f"a total mass from {lo:g} to {hi:g} kg", to_mass_kg)
    r = to_mass_kg / from_mass_kg
    s = r ** (1.0 / 3.0)
    out = copy.deepcopy(data)
    for table, keys in _LENGTHS.items():
        for key in keys:
            v = out[table][key]
            out[table][key] = [round(x * s, 6) for x in v] if isinstance(v, list) \
                else round(v * s, 6)
    for table, keys in _MASSES.items():
        for key in keys:
            out[table][key] = round(out[table][key] * r, 6)
    for act in out["actuator"].values():
        if "mass_kg" in act:
            act["mass_kg"] = round(act["mass_kg"] * r, 6)
        for key in ("housing_radius_m", "housing_length_m"):
            if key in act:
                act[key] = round(act[key] * s, 6)
    out["name"] = name
    out["description"] = (f"invented robot scaled from {data['name']} to about "
                          f"{to_mass_kg:g} kg (sim/robot/scaling.py)")
    out["drivetrain"] = f"{stem}_drivetrain.toml"
    parts = scaled_actuators(r ** (4.0 / 3.0))
    head = ("# INVENTED FOR THE DEMO: written by gaitload model --scale-to-mass "
            f"{to_mass_kg:g}; a rough first sizing by similarity (sim/robot/scaling.py).\n")
    drive = {"joint": [{"match": "*", "reducer": f"{stem}_parts/reducer.toml",
                        "motor": f"{stem}_parts/motor.toml"}], "supply": parts["supply"]}
    return {f"{stem}.toml": head + dump_toml(out),
            f"{stem}_drivetrain.toml": head + dump_toml(drive),
            f"{stem}_parts/reducer.toml": head + dump_toml(parts["reducer"]),
            f"{stem}_parts/motor.toml": head + dump_toml(parts["motor"])}
