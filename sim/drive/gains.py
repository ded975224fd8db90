"""Joint PD gains from the robot: stiffness and damping per joint from the inertia it moves,
a target bandwidth and damping ratio, capped by what the explicit time step can integrate.

Takes a model, its joint angles in the nominal stance, the time step ``h`` and the control
period ``T``; gives :class:`JointGain` per joint (:func:`derive_gains`). The formulas, their
sources and measured figures are in ``docs/control.md``.

**Continuous design.** A joint of inertia ``J`` under ``tau = kp e + kd de/dt`` is a
second-order system with ``w_n = sqrt(kp / J)`` and ``zeta = kd / (2 sqrt(kp J))``, so

    kp = J w_n^2,    kd = 2 zeta J w_n.

``J`` is the joint's diagonal entry of the joint-space mass matrix in the nominal stance
(base and other joints held; :func:`sim.drive.backdrive.mass_matrix`), plus the reflected
rotor inertia ``N^2 J_r`` when the simulation has rotors (``J_r`` includes the reducer's
input-side inertia, as the drivetrain resolves it).

**Discrete limit.** The engine integrates semi-implicit (symplectic) Euler, ``v+ = v + h a``,
``q+ = q + h v+`` (measured to 1e-16 for this engine), and the PD torque is computed from the
state at the start of every step. For ``J qdd = -kp q - kd qd`` one step maps ``(q, h v)`` by

    [[1 - a, 1 - b], [-a, 1 - b]],   a = h^2 kp / J,   b = h kd / J,

with characteristic polynomial ``z^2 - (2 - a - b) z + (1 - b)``. By the Jury criterion for a
second-order polynomial ``z^2 + c1 z + c0`` (roots inside the unit circle iff ``|c0| < 1``,
``1 + c1 + c0 > 0`` and ``1 - c1 + c0 > 0``; E. I. Jury, *Theory and Application of the
z-Transform Method*, Wiley 1964; from memory) the step is stable iff

    0 < b < 2   and   a + 2 b < 4        (with kp = 0: kd h / J < 2).

Stable is not enough for a clean duty cycle: a root on the negative real axis makes the
torque alternate in sign from step to step (period-two chatter). Both roots have a positive
real part iff ``b <= 1`` and ``a + b < 2`` (real roots: positive sum ``2 - a - b`` and product
``1 - b >= 0``; complex roots: real part ``(2 - a - b) / 2``). The derived gains keep a margin
inside that region, ``b <= m`` and ``a + b <= 2 m`` with ``m`` = :data:`STEP_MARGIN`, for the
*apparent* inertia ``J_app = 1 / (H_leg^-1)_ii`` (the inertia the joint feels with the other
joints of its leg free, the base held, which is at most ``J``; for a joint with an elastic
reducer mesh, the motor side ``N^2 J_r`` alone). When the bandwidth asked for breaks that, the
natural frequency is lowered, at the same damping ratio, to the largest that keeps it.

**Control period.** Targets and feed-forward change every control period ``T`` (first-order
hold between). The natural frequency is kept below a tenth of the target update rate,
``w_n <= 2 pi / (10 T)`` (a digital controller samples about ten times its closed-loop
bandwidth: common practice; Franklin, Powell & Workman, *Digital Control of Dynamic
Systems*, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sim import JOINT_NAMES
from sim.drive.backdrive import mass_matrix
from sim.robot.model import RobotModel

DEFAULT_BANDWIDTH_HZ = 20.0
DEFAULT_DAMPING_RATIO = 1.0
STEP_MARGIN = 0.5  # share of the alternation-free region of the explicit step that is used
SAMPLES_PER_PERIOD = 10.0  # target updates per period of the natural frequency, at least


@dataclass(frozen=True)
class JointGain:
    """The PD gains of one joint and how they were found (SI)."""

    joint: str
    kp_nm_rad: float
    kd_nm_s_rad: float
    inertia_kg_m2: float  # J: links in the nominal stance (+ N^2 J_r with rotors)
    apparent_inertia_kg_m2: float  # J_app: the same with the leg's other joints free
    natural_frequency_hz: float  # of kp and kd on J
    damping_ratio: float  # of kp and kd on J
    limited_by: str  # "bandwidth", "time step" or "control period"; "scenario" when written
    source: str  # "derived" or "scenario"

    def step_numbers(self, h: float) -> tuple[float, float]:
        """``(a, b) = (h^2 kp / J_app, h kd / J_app)`` of the explicit step (docstring)."""
        j = self.apparent_inertia_kg_m2
        return h * h * self.kp_nm_rad / j, h * self.kd_nm_s_rad / j

    def to_json(self) -> dict[str, float | str]:
        return dict(self.__dict__)


def step_matrix(kp: float, kd: float, inertia: float, h: float) -> np.ndarray:
    """One explicit step of ``J qdd = -kp q - kd qd`` on ``(q, h qd)`` (module docstring)."""
    a, b = h * h * kp / inertia, h * kd / inertia
    return np.array([[1.0 - a, 1.0 - b], [-a, 1.0 - b]])


def step_is_stable(kp: float, kd: float, inertia: float, h: float) -> bool:
    """Jury: ``0 < b < 2`` and ``a + 2 b < 4`` (kp, kd > 0)."""
    a, b = h * h * kp / inertia, h * kd / inertia
    return 0.0 < b < 2.0 and a + 2.0 * b < 4.0


def step_is_alternation_free(kp: float, kd: float, inertia: float, h: float) -> bool:
    """Both roots with a positive real part: ``b <= 1`` and ``a + b < 2``."""
    a, b = h * h * kp / inertia, h * kd / inertia
    return b <= 1.0 and a + b < 2.0


def largest_step_frequency_rad_s(h: float, ratio: float, zeta: float,
                                 margin: float = STEP_MARGIN) -> float:
    """Largest ``w_n`` with ``kp = J w^2``, ``kd = 2 zeta J w`` inside the margin on
    ``J_app = J / ratio``: ``b = 2 zeta r x <= m`` and ``a + b = r x^2 + 2 zeta r x <= 2 m``
    with ``x = h w``, ``r = ratio``."""
    r, m = ratio, margin
    x_b = m / (2.0 * zeta * r) if zeta > 0 else math.inf
    x_ab = -zeta + math.sqrt(zeta * zeta + 2.0 * m / r)
    return min(x_b, x_ab) / h


def joint_inertias(model: RobotModel, q_stance: np.ndarray, rotors: bool
                   ) -> tuple[dict[str, float], dict[str, float]]:
    """``(J, J_app)`` per joint in the stance ``q[4, 3]`` (module docstring), kg m^2."""
    H, _ = mass_matrix(model, q_stance, armature=rotors)
    J, J_app = {}, {}
    for k in range(4):
        i0 = 6 + 3 * k
        block = H[i0:i0 + 3, i0:i0 + 3]
        app = 1.0 / np.diag(np.linalg.inv(block))
        for i in range(3):
            j = JOINT_NAMES[3 * k + i]
            J[j] = float(block[i, i])
            J_app[j] = float(app[i])
            a = model.actuators[j]
            if a.compliant_mesh:  # the PD drives the motor side of the mesh
                J_app[j] = min(J_app[j], a.reflected_inertia_kg_m2)
    return J, J_app


def derive_gains(model: RobotModel, q_stance: np.ndarray, time_step_s: float,
                 control_period_s: float, bandwidth_hz: float = DEFAULT_BANDWIDTH_HZ,
                 damping_ratio: float = DEFAULT_DAMPING_RATIO, rotors: bool = True
                 ) -> dict[str, JointGain]:
    """Per joint, the gains for ``bandwidth_hz`` and ``damping_ratio`` on the inertia the
    joint moves, lowered where the time step or the control period needs it."""
    J, J_app = joint_inertias(model, q_stance, rotors)
    w_target = 2.0 * math.pi * bandwidth_hz
    w_period = 2.0 * math.pi / (SAMPLES_PER_PERIOD * control_period_s)
    out = {}
    for j in JOINT_NAMES:
        w_step = largest_step_frequency_rad_s(time_step_s, J[j] / J_app[j], damping_ratio)
        w, why = w_target, "bandwidth"
        if w_period < w:
            w, why = w_period, "control period"
        if w_step < w:
            w, why = w_step, "time step"
        out[j] = JointGain(j, J[j] * w * w, 2.0 * damping_ratio * J[j] * w, J[j], J_app[j],
                           w / (2.0 * math.pi), damping_ratio, why, "derived")
    return out


def written_gain(base: JointGain, kp_nm_rad: float | None, kd_nm_s_rad: float | None
                 ) -> JointGain:
    """``base`` with the gains a scenario writes (either or both; the other stays derived),
    and the natural frequency and damping ratio they give on ``J``."""
    kp = base.kp_nm_rad if kp_nm_rad is None else float(kp_nm_rad)
    kd = base.kd_nm_s_rad if kd_nm_s_rad is None else float(kd_nm_s_rad)
    J = base.inertia_kg_m2
    wn = math.sqrt(kp / J)
    zeta = kd / (2.0 * math.sqrt(kp * J)) if kp > 0 else math.inf
    if kp_nm_rad is not None and kd_nm_s_rad is not None:
        source, why = "scenario", "scenario"
    else:
        source = "scenario kp, derived kd" if kp_nm_rad is not None else \
            "derived kp, scenario kd"
        why = base.limited_by
    return JointGain(base.joint, kp, kd, J, base.apparent_inertia_kg_m2, wn / (2.0 * math.pi),
                     zeta, why, source)


def record_attrs(gains: dict[str, JointGain], bandwidth_hz: float, damping_ratio: float,
                 rotors: bool) -> tuple[dict[str, float | str | bool],
                                        dict[str, dict[str, float | str]]]:
    """What a record keeps of the gains: the targets (group ``/control``) and per joint the
    gains, inertias and where they came from (``/control/<joint>``)."""
    head: dict[str, float | str | bool] = {
        "bandwidth_hz": bandwidth_hz, "damping_ratio": damping_ratio,
        "step_margin": STEP_MARGIN, "samples_per_period": SAMPLES_PER_PERIOD,
        "rotor_inertia_included": rotors,
        "derived_joints": sum(g.source == "derived" for g in gains.values()),
        "method": "kp = J w^2, kd = 2 zeta J w on the joint's inertia in the nominal stance; "
                  "w capped by the explicit step (docs/control.md)"}
    return head, {j: g.to_json() for j, g in gains.items()}
