"""Procedural URDF (an open standard) for a :class:`~sim.model.RobotModel`.

Links in order: ``base``, then for each leg fl, fr, hl, hr: ``<leg>_abad_link`` (joint
``<leg>_abad``, axis x), ``<leg>_thigh`` (``<leg>_hip``, axis y), ``<leg>_shank``
(``<leg>_knee``, axis y), ``<leg>_foot`` (fixed), and optionally ``payload`` (fixed to base).
So revolute joint ``4 k + i`` is joint ``i`` of leg ``k`` in pybullet's numbering and the foot
of leg ``k`` is link ``4 k + 3``. Every inertial block comes from closed-form solids
(:mod:`sim.inertia`). Collision shapes: base box and feet only (legs pass through the ground
when lying; that keeps contacts where loads are meant to enter).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from sim import LEGS
from sim.inertia import MassProps, box, combine
from sim.model import RobotModel


def _v(x: Sequence[float] | np.ndarray) -> str:
    return " ".join(f"{float(v):.9g}" for v in x)


def _inertial(mp: MassProps) -> str:
    i = mp.inertia_kg_m2
    return (f'<inertial><origin xyz="{_v(mp.com_m)}" rpy="0 0 0"/><mass value="{mp.mass_kg:.9g}"/>'
            f'<inertia ixx="{i[0, 0]:.9g}" ixy="{i[0, 1]:.9g}" ixz="{i[0, 2]:.9g}" '
            f'iyy="{i[1, 1]:.9g}" iyz="{i[1, 2]:.9g}" izz="{i[2, 2]:.9g}"/></inertial>')


def base_mass_props(model: RobotModel) -> MassProps:
    return combine(model.base_parts())


def payload_mass_props(mass_kg: float, position_m: Sequence[float],
                       size_m: Sequence[float]) -> MassProps:
    return box(mass_kg, size_m, (0, 0, 0)).shifted(position_m)


def build_urdf(model: RobotModel, payload_kg: float = 0.0,
               payload_position_m: Sequence[float] = (0.0, 0.0, 0.0),
               payload_size_m: Sequence[float] = (0.2, 0.15, 0.05)) -> str:
    """URDF text for ``model`` (with an optional payload box fixed to the base)."""
    lg = model.leg
    body = model.data["body"]
    out = [f'<?xml version="1.0"?>\n<robot name="{model.name}">']
    base = base_mass_props(model)
    out.append(f'<link name="base">{_inertial(base)}'
               f'<visual><geometry><box size="{_v(body["size_m"])}"/></geometry></visual>'
               f'<collision><geometry><box size="{_v(body["size_m"])}"/></geometry></collision>'
               '</link>')
    l1, l2 = lg["thigh_length_m"], lg["shank_length_m"]
    for leg in LEGS:
        lo_a, hi_a = model.joint_range(f"{leg}_abad")
        lo_h, hi_h = model.joint_range(f"{leg}_hip")
        lo_k, hi_k = model.joint_range(f"{leg}_knee")
        acts = {k: model.actuators[f"{leg}_{k}"] for k in ("abad", "hip", "knee")}
        hip = model.hip_position_m(leg)
        side = model.side(leg)
        out.append(f'<link name="{leg}_abad_link">{_inertial(model.abad_link(leg))}</link>')
        out.append(_joint(f"{leg}_abad", "base", f"{leg}_abad_link", hip, "1 0 0", lo_a, hi_a,
                          acts["abad"].peak_torque_nm))
        out.append(f'<link name="{leg}_thigh">{_inertial(model.thigh_link(leg))}'
                   f'<visual><origin xyz="0 0 {-l1 / 2:.9g}"/><geometry><cylinder '
                   f'radius="{lg["thigh_radius_m"]:.9g}" length="{l1:.9g}"/></geometry></visual>'
                   '</link>')
        out.append(_joint(f"{leg}_hip", f"{leg}_abad_link", f"{leg}_thigh",
                          (0.0, side * lg["abad_offset_m"], 0.0), "0 1 0", lo_h, hi_h,
                          acts["hip"].peak_torque_nm))
        out.append(f'<link name="{leg}_shank">{_inertial(model.shank_link())}'
                   f'<visual><origin xyz="0 0 {-l2 / 2:.9g}"/><geometry><cylinder '
                   f'radius="{lg["shank_radius_m"]:.9g}" length="{l2:.9g}"/></geometry></visual>'
                   '</link>')
        out.append(_joint(f"{leg}_knee", f"{leg}_thigh", f"{leg}_shank", (0.0, 0.0, -l1),
                          "0 1 0", lo_k, hi_k, acts["knee"].peak_torque_nm))
        r = lg["foot_radius_m"]
        out.append(f'<link name="{leg}_foot">{_inertial(model.foot_link())}'
                   f'<visual><geometry><sphere radius="{r:.9g}"/></geometry></visual>'
                   f'<collision><geometry><sphere radius="{r:.9g}"/></geometry></collision>'
                   '</link>')
        out.append(f'<joint name="{leg}_foot_fixed" type="fixed"><parent link="{leg}_shank"/>'
                   f'<child link="{leg}_foot"/><origin xyz="0 0 {-l2:.9g}" rpy="0 0 0"/></joint>')
    if payload_kg > 0:
        mp = payload_mass_props(payload_kg, (0, 0, 0), payload_size_m)
        out.append(f'<link name="payload">{_inertial(mp)}'
                   f'<visual><geometry><box size="{_v(payload_size_m)}"/></geometry></visual>'
                   '</link>')
        out.append('<joint name="payload_fixed" type="fixed"><parent link="base"/>'
                   f'<child link="payload"/><origin xyz="{_v(payload_position_m)}" rpy="0 0 0"/>'
                   '</joint>')
    out.append("</robot>\n")
    return "\n".join(out)


def _joint(name: str, parent: str, child: str, xyz: Sequence[float] | np.ndarray, axis: str,
           lo: float, hi: float, effort: float) -> str:
    return (f'<joint name="{name}" type="revolute"><parent link="{parent}"/><child link="{child}"/>'
            f'<origin xyz="{_v(xyz)}" rpy="0 0 0"/><axis xyz="{axis}"/>'
            f'<limit lower="{lo:.9g}" upper="{hi:.9g}" effort="{effort:.9g}" velocity="1000"/>'
            '<dynamics damping="0" friction="0"/></joint>')
