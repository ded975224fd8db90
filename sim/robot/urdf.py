"""Procedural URDF (an open standard) for a :class:`~sim.robot.model.RobotModel`.

Links in order: ``base``, then for each leg fl, fr, hl, hr: ``<leg>_abad_link`` (joint
``<leg>_abad``, axis x), ``<leg>_thigh`` (``<leg>_hip``, axis y), ``<leg>_shank``
(``<leg>_knee``, axis y), ``<leg>_foot`` (fixed), and optionally ``payload`` (fixed to base).
So revolute joint ``4 k + i`` is joint ``i`` of leg ``k`` in pybullet's numbering and the foot
of leg ``k`` is link ``4 k + 3``. Every inertial block comes from closed-form solids
(:mod:`sim.robot.inertia`). Collision shapes: base box and feet only (legs pass through the ground
when lying; that keeps contacts where loads are meant to enter).

Motor rotors (``rotors=``, see :mod:`sim.drive.dynamics` and ``docs/dynamics.md``):

- ``"off"``: no rotor inertia (the rigid joint model).
- ``"approximate"``: the reflected inertia N^2 J_r is added to the joint's child link about
  the joint axis (through the link's centre of mass, so the inertia about the joint axis grows
  by exactly N^2 J_r). This gets the joint's own diagonal term right; it also (wrongly) makes
  the added inertia turn with the child link's absolute rotation, so every ancestor joint and
  the floating base feel it too.
- ``"exact"``: one extra link per joint, ``<joint>_rotor``, appended after all other links
  (the numbering above is unchanged): a child of the joint's *parent* link on a continuous
  joint ``<joint>_rotor_spin`` coaxial with the actuated joint, mass ``ROTOR_MASS_KG`` on the
  axis, inertia J_r about the axis and J_r / 2 about the two others (a thin disc). The runner
  couples each rotor to its joint with a gear constraint so that qd_rotor = N qd_joint.

Joints listed in ``motor_side=`` (those with an elastic reducer mesh, possibly with backlash)
get no rotor in the URDF whatever ``rotors`` says: :mod:`sim.drive.dynamics` simulates their rotor as
the motor side of the mesh, outside the engine.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence

import numpy as np

from sim import LEGS
from sim.robot.inertia import MassProps, box, combine
from sim.robot.model import RobotModel

ROTORS = ("off", "approximate", "exact")
ROTOR_MASS_KG = 1e-4  # a rotor's own mass is part of the actuator mass; this only keeps it valid
_AXES = {"abad": (0, "1 0 0"), "hip": (1, "0 1 0"), "knee": (1, "0 1 0")}


def _with_armature(mp: MassProps, axis: int, add_kg_m2: float) -> MassProps:
    """``mp`` with a disc of axial inertia ``add_kg_m2`` about body axis ``axis`` (0 x, 1 y).

    The disc's transverse inertia (half the axial one) is added too: adding to one axis only
    breaks the triangle inequality of a thin link's inertia, and the engine then zeroes it.
    """
    if add_kg_m2 == 0.0:
        return mp
    inertia = mp.inertia_kg_m2 + np.eye(3) * (add_kg_m2 / 2)
    inertia[axis, axis] += add_kg_m2 / 2
    return MassProps(mp.mass_kg, mp.com_m, inertia)


def rotor_link_name(joint: str) -> str:
    return f"{joint}_rotor"


def rotor_joint_name(joint: str) -> str:
    return f"{joint}_rotor_spin"


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
               payload_size_m: Sequence[float] = (0.2, 0.15, 0.05), rotors: str = "off",
               motor_side: Collection[str] = ()) -> str:
    """URDF text for ``model`` (with an optional payload box fixed to the base).

    ``rotors`` is one of :data:`ROTORS`; joints in ``motor_side`` get no rotor (see the
    module docstring).
    """
    if rotors not in ROTORS:
        raise ValueError(f"rotors must be one of {ROTORS}, got {rotors!r}")
    arm = {j: (model.actuators[j].reflected_inertia_kg_m2
               if rotors == "approximate" and j not in motor_side else 0.0)
           for j in model.actuators}
    rotor_rows: list[str] = []
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
        abad_mp = _with_armature(model.abad_link(leg), 0, arm[f"{leg}_abad"])
        thigh_mp = _with_armature(model.thigh_link(leg), 1, arm[f"{leg}_hip"])
        shank_mp = _with_armature(model.shank_link(), 1, arm[f"{leg}_knee"])
        if rotors == "exact":
            parents: dict[str, tuple[str, list[float]]] = {
                "abad": ("base", [float(v) for v in hip]),
                "hip": (f"{leg}_abad_link", [0.0, side * lg["abad_offset_m"], 0.0]),
                "knee": (f"{leg}_thigh", [0.0, 0.0, -l1])}
            for kind, (parent, xyz) in parents.items():
                if f"{leg}_{kind}" in motor_side:
                    continue
                rotor_rows.append(_rotor(f"{leg}_{kind}", parent, xyz, _AXES[kind][1],
                                         acts[kind].rotor_inertia_kg_m2, _AXES[kind][0]))
        out.append(f'<link name="{leg}_abad_link">{_inertial(abad_mp)}</link>')
        out.append(_joint(f"{leg}_abad", "base", f"{leg}_abad_link", hip, "1 0 0", lo_a, hi_a,
                          acts["abad"].peak_torque_nm))
        out.append(f'<link name="{leg}_thigh">{_inertial(thigh_mp)}'
                   f'<visual><origin xyz="0 0 {-l1 / 2:.9g}"/><geometry><cylinder '
                   f'radius="{lg["thigh_radius_m"]:.9g}" length="{l1:.9g}"/></geometry></visual>'
                   '</link>')
        out.append(_joint(f"{leg}_hip", f"{leg}_abad_link", f"{leg}_thigh",
                          (0.0, side * lg["abad_offset_m"], 0.0), "0 1 0", lo_h, hi_h,
                          acts["hip"].peak_torque_nm))
        out.append(f'<link name="{leg}_shank">{_inertial(shank_mp)}'
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
    out.extend(rotor_rows)
    out.append("</robot>\n")
    return "\n".join(out)


def _joint(name: str, parent: str, child: str, xyz: Sequence[float] | np.ndarray, axis: str,
           lo: float, hi: float, effort: float) -> str:
    return (f'<joint name="{name}" type="revolute"><parent link="{parent}"/><child link="{child}"/>'
            f'<origin xyz="{_v(xyz)}" rpy="0 0 0"/><axis xyz="{axis}"/>'
            f'<limit lower="{lo:.9g}" upper="{hi:.9g}" effort="{effort:.9g}" velocity="1000"/>'
            '<dynamics damping="0" friction="0"/></joint>')


def _rotor(joint: str, parent: str, xyz: Sequence[float], axis: str,
           j_rotor: float, axis_index: int) -> str:
    """Rotor link and its continuous joint, coaxial with ``joint``, on ``parent``."""
    # a thin disc about its diameters, raised by 1e-6 so that the 9-digit text still meets
    # the triangle inequality Ixx + Iyy >= Izz: pybullet sets an inertia that does not to
    # zero ("Bad inertia tensor properties"), which silently dropped some rotors
    diag = [j_rotor / 2 * (1.0 + 1e-6)] * 3
    diag[axis_index] = j_rotor
    diag = [max(d, 1e-12) for d in diag]
    mp = MassProps(ROTOR_MASS_KG, np.zeros(3), np.diag(diag))
    return (f'<link name="{rotor_link_name(joint)}">{_inertial(mp)}</link>\n'
            f'<joint name="{rotor_joint_name(joint)}" type="continuous"><parent link="{parent}"/>'
            f'<child link="{rotor_link_name(joint)}"/><origin xyz="{_v(xyz)}" rpy="0 0 0"/>'
            f'<axis xyz="{axis}"/><limit effort="0" velocity="10000"/>'
            '<dynamics damping="0" friction="0"/></joint>')
