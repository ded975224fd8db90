"""Motor duty from a run record: joint torque and speed as motor operating points, chunk by chunk.

Takes a run record and the drives of the checked joints (:class:`Drive`: motor part, reducer
ratio, efficiencies and input inertia) and gives, per chunk of samples and for all motors at
once (``[motor, sample]`` arrays, :class:`MotorBank`), the electromagnetic torque, the motor
speed, the DC-equivalent current and the drag and kinetic power (:func:`duty_chunks`), and
the per-sample maps of the two-node thermal network (:func:`thermal_step_maps`). What the run
already simulated (rotor inertia, reducer losses; :func:`simulated_drive_effects`) is not
added again.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from sim.checks import thermal as th
from sim.checks.motor_part import MotorPart, motor_operating_points
from sim.record import RunRecord


@dataclass(frozen=True)
class Drive:
    """What drives one joint: motor, reducer ratio and efficiencies, reducer input inertia."""

    motor: MotorPart
    ratio: float
    efficiency_forward: float
    efficiency_back: float
    input_inertia_kg_m2: float = 0.0
    current_limit_a: float | None = None  # this joint's limit, DC-equivalent; None: supply's


def as_drive(x: Any) -> Drive:
    """A :class:`Drive`, or one from ``(motor, ratio, eta_f, eta_b[, input_inertia_kg_m2])``."""
    if isinstance(x, Drive):
        return x
    return Drive(*x)



class MotorBank:
    """Parameters of all checked motors stacked as ``[motor, 1]`` arrays."""

    def __init__(self, drives: Mapping[str, Drive], ambient_c: float | None):
        self.joints = list(drives)
        d = [drives[j] for j in self.joints]
        col = lambda xs: np.array(xs, float)[:, None]  # noqa: E731
        self.k = col([x.motor.back_emf_v_s_per_rad for x in d])
        self.r20 = col([float(x.motor.line_resistance_ohm(20.0)) for x in d])
        self.inertia = col([x.motor.rotor_inertia_kg_m2 + x.input_inertia_kg_m2 for x in d])
        self.rotor = col([x.motor.rotor_inertia_kg_m2 for x in d])
        self.ratio = col([x.ratio for x in d])
        self.eta_f = col([x.efficiency_forward for x in d])
        self.eta_b = col([x.efficiency_back for x in d])
        self.coulomb = col([x.motor.friction_torque_nm + x.motor.hysteresis_loss_w_s_per_rad
                            for x in d])
        self.viscous = col([x.motor.viscous_friction_nm_s_per_rad
                            + x.motor.eddy_loss_w_s2_per_rad2 for x in d])
        self.ambient = col([x.motor.ambient_temp_c if ambient_c is None else ambient_c
                            for x in d])
        self.limit = col([x.motor.max_winding_temp_c for x in d])
        nets = [x.motor.thermal for x in d]
        if any(n is None for n in nets):
            raise ValueError("every motor checked needs a thermal network (quick motors are "
                             "left out of the motor check)")
        self.net = th.ThermalNetwork(
            col([n.capacity_winding_j_per_k for n in nets if n is not None]),
            col([n.capacity_housing_j_per_k for n in nets if n is not None]),
            col([n.resistance_winding_housing_k_per_w for n in nets if n is not None]),
            col([n.resistance_housing_ambient_k_per_w for n in nets if n is not None]))


@dataclass
class DutyChunk:
    """One chunk of a record as motor quantities, ``[motor, rows]`` arrays (SI)."""

    start: int
    tau: np.ndarray        # [motor, rows] joint torque
    w: np.ndarray          # [motor, rows] joint speed
    t_em: np.ndarray       # electromagnetic torque at the motor
    w_m: np.ndarray        # motor speed
    current: np.ndarray    # DC-equivalent current T_em / k
    t_shaft: np.ndarray
    drag_w: np.ndarray     # friction + iron loss power (housing heat)
    kinetic_w: np.ndarray  # J alpha w
    speed_xy: np.ndarray | None  # [rows] horizontal base speed


def simulated_drive_effects(rec: RunRecord) -> tuple[bool, bool, bool]:
    """``(rotors, losses, whole_inertia)``: whether the run simulated motor rotors and reducer
    losses, and whether its rotors carried the reducer's inertia too (records that store
    their drivetrain: rotor + reducer input + output / N^2) or the motor rotor alone."""
    import tomllib

    from sim.checks.drivetrain_file import simulated_values

    if rec.attrs.get("load_torque", "torque_nm") != "gearbox_torque_nm":
        return False, False, False
    try:
        scn = tomllib.loads(str(rec.attrs.get("scenario_toml", "")))
    except tomllib.TOMLDecodeError:
        return False, False, False
    drive = scn.get("drive", {})
    rotors = drive.get("rotor_inertia", "off") != "off"
    values, whole = simulated_values(rec)
    losses = bool(drive.get("losses", True)) and any(
        v["friction_coulomb_nm"] > 0 or v["friction_viscous_nm_s_rad"] > 0
        or v["efficiency_forward"] < 1 or v["efficiency_back"] < 1 for v in values.values())
    return rotors, losses, whole


def duty_chunks(rec: RunRecord, bank: MotorBank, rows: int) -> Iterator[DutyChunk]:
    """The every-step duty series of ``rec`` (``/steps`` in a decimated record) in chunks of
    ``rows`` steps, as motor operating points."""
    names = [rec.duty_name(j, q) for j in bank.joints for q in ("torque_nm", "speed_rad_s")]
    # the base velocity rides along when it has the duty series' rows (not decimated)
    has_v = rec.has("base/velocity_m_s") and not rec.has_step_series
    if has_v:
        names.append("base/velocity_m_s")
    dt = rec.duty_period_s
    nj = len(bank.joints)
    rotors, losses, whole = simulated_drive_effects(rec)
    # what the simulation already contains is not added again: with rotors simulated, the
    # recorded torque_nm (motor torque x ratio) includes the rotor's inertia; with reducer
    # losses simulated, it includes the reducer's friction and efficiency
    eta_f = np.ones_like(bank.eta_f) if losses else bank.eta_f
    eta_b = np.ones_like(bank.eta_b) if losses else bank.eta_b
    inertia = (np.zeros_like(bank.inertia) if whole else bank.inertia - bank.rotor) \
        if rotors else bank.inertia
    prev: np.ndarray | None = None
    for start, arrays in rec.iter_chunks(names, rows):
        tau = np.stack(arrays[0:2 * nj:2])
        w = np.stack(arrays[1:2 * nj:2])
        t_sh, w_m = motor_operating_points(tau, w, bank.ratio, eta_f, eta_b)
        before = w_m[:, :1] if prev is None else prev
        alpha = np.diff(w_m, axis=1, prepend=before) / dt
        prev = w_m[:, -1:]
        drag_t = bank.coulomb * np.sign(w_m) + bank.viscous * w_m
        t_em = t_sh + drag_t + inertia * alpha
        speed_xy = None
        if has_v:
            v = arrays[-1]
            speed_xy = np.hypot(v[:, 0], v[:, 1])
        yield DutyChunk(start, tau, w, t_em, w_m, t_em / bank.k, t_sh, drag_t * w_m,
                     inertia * alpha * w_m, speed_xy)


def thermal_step_maps(bank: MotorBank, dt: float, c: DutyChunk) -> th.Maps:
    i2r = c.current ** 2 * bank.r20
    beta = i2r * th.COPPER_ALPHA_20C_PER_K
    pw = i2r * th.copper_resistance_ratio(bank.ambient)
    return th.step_maps(bank.net, dt, beta, pw, c.drag_w)



def envelope_nm_bank(bank: MotorBank, w_m: np.ndarray, line_v: np.ndarray, t_lim: np.ndarray,
                     r_hot: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`envelope_nm` for all motors at once (``[motor, sample]``)."""
    k = bank.k
    upper = np.minimum(t_lim, k * (line_v - k * w_m) / r_hot)
    lower = np.maximum(-t_lim, k * (-line_v - k * w_m) / r_hot)
    return lower, upper


def sampled_distance_m(rec: RunRecord, rows: int) -> float | None:
    """Horizontal distance travelled by the base: sum |v_xy| over the sampled base velocity
    times the sample period (None without base velocity)."""
    if not rec.has("base/velocity_m_s"):
        return None
    dt = float(rec.attrs["sample_period_s"])
    dist = 0.0
    for _, (v,) in rec.iter_chunks(["base/velocity_m_s"], rows):
        dist += float(np.hypot(v[:, 0], v[:, 1]).sum()) * dt
    return dist
