"""The engine runner: one scenario becomes one HDF5 run record.

Takes a :class:`~sim.scenario.scenario_file.Scenario` and an output path; gives the record and
a :class:`~sim.engine.summary.RunResult`. The loop is explicit torque control at every fixed
step: ``tau = tau_ff + kp (q* - q) + kd (qd* - qd)``, with targets and feed-forward from the
segment controllers (:mod:`sim.scenario.segments`) refreshed every control period, clamped to
each actuator's envelope. The named parts of the loop live beside it, each changeable alone:

    world      (:mod:`.world`)      the engine, the robot and every engine trap handled
    clamp      (:mod:`.clamp`)      actuator envelope limits and saturation flags
    control    (this module)        the PD law between control updates, first-order hold
    disturb    (:mod:`.disturb`)    pushes and trips
    recording  (:mod:`.recording`)  histograms and exact statistics, sampled series
    health     (:mod:`.health`)     falls and divergence end the run with that status
    observe    (:mod:`.observe`)    the state the controllers see, events, run summary

The hot path stays on plain float lists with every engine call and helper bound to a local
name before the loop (no per-step attribute lookups, no numpy per step; see
``tests/bench/bench_stand.py`` and ``bench_trot.py`` for the cost of each part).
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path
from typing import Any

import numpy as np

from sim import JOINT_NAMES, LEGS, __version__
from sim.core.errors import Interrupted, SimulationFailure
from sim.drive.envelope import Envelope
from sim.engine.clamp import make_clamp
from sim.engine.disturb import make_disturbances
from sim.engine.health import CHECK_EVERY, make_health_check
from sim.engine.observe import make_measure, make_observer
from sim.engine.recording import BLOCK, StepRecorder
from sim.engine.summary import RunResult, RunSummary
from sim.engine.world import FOOT_LINKS, JOINT_INDICES, Engine, pb, quat_rotate
from sim.record import DEFAULT_LIFE_EXPONENTS, RecordWriter
from sim.robot.statics import StanceStatics
from sim.scenario.scenario_file import Scenario
from sim.scenario.segments import SegmentController, make_controller, stance_angles

__all__ = ["FOOT_LINKS", "JOINT_INDICES", "Engine", "RunResult", "RunSummary", "pb",
           "quat_rotate", "raise_for_status", "run"]


def _flat12(x: Any) -> list[float]:
    """A controller output (``[4, 3]`` array or flat list of 12) as a flat list."""
    return x if isinstance(x, list) else x.reshape(-1).tolist()


def _edges(scn: Scenario) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    rec = scn.data["record"]
    te, se = {}, {}
    for j in JOINT_NAMES:
        act = scn.model.actuators[j]
        tp = act.peak_torque_nm * 1.0001
        w0 = act.no_load_speed_rad_s * 1.5
        te[j] = np.linspace(-tp, tp, rec["torque_bins"] + 1)
        se[j] = np.linspace(-w0, w0, rec["speed_bins"] + 1)
    return te, se


def run(scn: Scenario, out_path: str | Path, progress: bool = False) -> RunResult:
    """Simulate ``scn`` into the record ``out_path``; return the outcome.

    A fall or divergence ends the run and is recorded with that status (the caller decides
    how to report it); Ctrl-C finishes the record marked ``interrupted`` and re-raises.
    """
    import time

    out_path = Path(out_path)
    eng = Engine(scn)
    try:
        return _run(scn, eng, out_path, progress, time.perf_counter)
    finally:
        eng.close()


def _place_robot(scn: Scenario, eng: Engine, statics: StanceStatics,
                 first: SegmentController) -> None:
    """Start pose: the first controller's angles (or the stance) with the feet on the ground
    (or ``start.drop_height_m`` above it)."""
    q0 = first.initial_angles() if hasattr(first, "initial_angles") else None
    q_init = stance_angles(scn.model) if q0 is None else q0
    feet_b = statics.kin.foot_positions(q_init)
    body_h = scn.model.data["body"]["size_m"][2]
    base_z = max(body_h / 2, float(-(feet_b[:, 2].min())) + statics.kin.foot_radius_m) + 5e-4
    base_z += scn.data.get("start", {}).get("drop_height_m", 0.0)  # a drop starts in the air
    eng.place(q_init, base_z)


def _record_attrs(scn: Scenario, eng: Engine, start_step: int) -> dict[str, Any]:
    d, dt = scn.data, eng.dt
    rec = d["record"]
    return {
        "tool_version": __version__, "scenario_toml": scn.to_toml(),
        "model_toml": scn.model.to_toml(), "time_step_s": dt,
        "drivetrain_toml": scn.model.drivetrain.to_toml() if scn.model.drivetrain else "",
        "drive_notes": list(scn.model.drivetrain.notes) if scn.model.drivetrain else [],
        "control_gains_json": json.dumps({j: g.to_json() for j, g in scn.gains.items()},
                                         sort_keys=True),
        "sample_period_s": dt * rec["decimation"],
        "decimation": rec["decimation"], "seed": d["seed"],
        "engine_version": f"pybullet {pb.getAPIVersion()}",
        "total_mass_kg": eng.total_mass_kg, "leg_names": list(LEGS),
        "series_written": rec["series"], "record_start_s": start_step * dt,
        "load_torque": "gearbox_torque_nm" if eng.drive.records else "torque_nm",
        "scenario_file": os.path.basename(scn.file),
        "world_frame": "ground frame: z normal to the ground, x up the slope",
        "planned_s": scn.duration_s,
    }


# segment kinds that hold a planned body height (posture changes and jumps move it on purpose)
HEIGHT_HELD_KINDS = ("stand", "walk", "trot", "bound", "pronk")


def _plan_base_z(scn: Scenario, statics: StanceStatics, seg: dict[str, Any]) -> float | None:
    """Planned height of the base frame origin in a segment that holds one, else None: the
    segment's stance hip height (or the model's) less the hips' height in the base frame."""
    if seg["kind"] not in HEIGHT_HELD_KINDS:
        return None
    h = seg.get("stance_height_m") or scn.model.data["stance"]["hip_height_m"]
    return float(h) - float(statics.kin.hip_m[:, 2].mean())


class _Loop:
    """The per-run set-up of the stepping loop: everything bound once, before any step."""

    def __init__(self, scn: Scenario, eng: Engine, rec: StepRecorder, statics: StanceStatics,
                 events: dict[str, list[list[float]]]):
        d = scn.data
        self.scn, self.eng, self.rec = scn, eng, rec
        self.dt = eng.dt
        self.clamp = make_clamp([Envelope.of(scn.model.actuators[j]) for j in JOINT_NAMES])
        # per joint: derived from the robot unless the scenario writes them (sim/drive/gains.py)
        self.kp = [scn.gains[j].kp_nm_rad for j in JOINT_NAMES]
        self.kd = [scn.gains[j].kd_nm_s_rad for j in JOINT_NAMES]
        self.dec = d["record"]["decimation"]
        self.series = d["record"]["series"]
        self.start_step = round(d["record"]["start_s"] / self.dt)
        self.health = make_health_check(eng, d["limits"],
                                        scn.model.data["stance"]["hip_height_m"], self.dt)
        self.measure = make_measure(eng, self.dt)
        self.observe = make_observer(eng, statics.kin.foot_radius_m, events)
        self.disturb = make_disturbances(eng, d, self.dt, events)
        self.update_period_s = d["control"]["update_period_s"]
        self.i_global = 0
        self.last_contact: list[float] = []
        self.contact_at = -1  # step index at which last_contact describes the contacts
        self.bar: Any = None
        self.status, self.detail = "completed", ""

    def segment(self, seg: dict[str, Any], ctrl: SegmentController, nsteps: int,
                seg_sum: RunSummary) -> None:
        """Step one segment; sets ``status`` and ``detail`` when the run ends early."""
        eng, rec, dt = self.eng, self.rec, self.dt
        r, c, J = eng.robot, eng.cid, JOINT_INDICES
        drv = eng.drive
        drv_step, drv_rec, drv_mesh = drv.per_step, drv.records, bool(drv.mesh)
        getJS, setJ, step = pb.getJointStates, pb.setJointMotorControlArray, pb.stepSimulation
        getBase, getVel = pb.getBasePositionAndOrientation, pb.getBaseVelocity
        TQ = pb.TORQUE_CONTROL
        clamp, health, measure, observe = self.clamp, self.health, self.measure, self.observe
        disturb = self.disturb
        keep, sample_row = rec.keep_fn(), rec.sample_fn()
        foot_forces = eng.foot_forces
        series, dec, start_step = self.series, self.dec, self.start_step
        bar = self.bar
        name, needs_standing = seg["name"], ctrl.needs_standing
        upd_every = max(round(self.update_period_s / dt), round(ctrl.min_update_period_s / dt), 1)
        # segment start: gains of the segment, then the controller's start hook
        KPs, KDs = ctrl.gains(self.kp, self.kd) if hasattr(ctrl, "gains") else (self.kp, self.kd)
        i_global = self.i_global
        if hasattr(ctrl, "start"):
            ctrl.start(measure(i_global))
        plan = [1.0] * 4
        upd_i = 0
        dtu = upd_every * dt
        f_ext = [0.0, 0.0, 0.0]
        last_contact, contact_at = self.last_contact, self.contact_at
        # control: tc_j = pd0_j + pd1_j lag - kp_j q_j - kd_j qd_j with
        # pd0 = ff + kp q* + kd qd* at the last update and pd1 its rate of change over the
        # last update period (kp qd* at a segment's first update), fixed between updates
        pd0 = [0.0] * 12
        pd1 = [0.0] * 12
        prev0: list[float] | None = None  # the last update's command, for the hold
        hold_command = self.scn.data["control"]["hold"] == "command"
        try:
            for i in range(nsteps):
                st = getJS(r, J, physicsClientId=c)
                q = [s[0] for s in st]
                qd = [s[1] for s in st]
                sample = (series and i_global >= start_step
                          and (i_global - start_step) % dec == 0)
                upd = i % upd_every == 0
                if sample or upd:  # the base state at the start of this step
                    pos, orn = getBase(r, physicsClientId=c)
                    v, om = getVel(r, physicsClientId=c)
                if upd:
                    # contact flags of the last step, kept if that step was sampled
                    state = measure(i_global, q, qd, (pos, orn, v, om),
                                    last_contact if contact_at == i_global else None)
                    a_, b_, c_ = ctrl.update(i * dt, state)
                    qdes, qddes, ff = _flat12(a_), _flat12(b_), _flat12(c_)
                    new0 = [f + kp * x + kd * v for f, kp, x, kd, v
                            in zip(ff, KPs, qdes, KDs, qddes, strict=True)]
                    if prev0 is None or upd_every == 1 or not hold_command:
                        pd1 = [kp * v for kp, v in zip(KPs, qddes, strict=True)]
                    else:  # the whole command follows its last change (first-order hold):
                        # holding kd qd* and the feed-forward between updates made the
                        # torque step at every update, a ripple at the update rate
                        pd1 = [(x - y) / dtu for x, y in zip(new0, prev0, strict=True)]
                    pd0 = prev0 = new0
                    plan = [1.0 if f else 0.0 for f in ctrl.planned_stance()]
                    upd_i = i
                    if i_global >= start_step:
                        observe(state, ctrl, seg_sum, dtu)
                # between updates the command follows its last rate of change
                lag = (i - upd_i) * dt
                tc = [a + b * lag - kp * x - kd * v for a, b, kp, kd, x, v
                      in zip(pd0, pd1, KPs, KDs, q, qd, strict=True)]
                tau, sat = clamp(tc, qd)
                # at the joints: tau, or the mesh torque where backlash is simulated
                tj = drv.transmit(tau, q, qd) if drv_mesh else tau
                setJ(r, J, TQ, forces=tj, physicsClientId=c)
                if disturb is not None:
                    f_ext = disturb(i_global, plan)
                if drv_step:
                    drv.before_step(tj, qd)  # efficiency losses follow the torque
                step(physicsClientId=c)
                if i_global >= start_step:
                    if drv_rec:  # load at the reducer output differs from N tau_m
                        gb = drv.gearbox_torque(tj, qd)
                        n_kept = keep(gb + qd + sat + tau)
                    else:
                        n_kept = keep(tau + qd + sat + tau)
                    if sample:
                        # joint and base state at the start of the step (base COM; the
                        # frame origin is computed at flush), torques and contact forces
                        # over the step
                        fv, contact = foot_forces()
                        last_contact, contact_at = contact, i_global + 1
                        sample_row([i_global * dt, *q, *qd, *tau, *tc, *sat, *pos, *orn,
                                    *v, *om, *fv, *contact, *plan], f_ext)
                        if drv_rec:
                            drv.keep(gb)
                    if n_kept == BLOCK:
                        rec.flush()
                i_global += 1
                if i_global % CHECK_EVERY == 0:
                    status, detail = health(i_global, qd, needs_standing, name)
                    if status != "completed":
                        self.status, self.detail = status, detail
                        break
                    if bar is not None and i_global % 1000 == 0:
                        bar.update(1000)
        finally:
            self.i_global = i_global
            self.last_contact, self.contact_at = last_contact, contact_at


def _run(scn: Scenario, eng: Engine, out_path: Path, progress: bool, clock) -> RunResult:
    d = scn.data
    dt = eng.dt
    statics = StanceStatics(scn.model, d["payload"]["mass_kg"], d["payload"]["position_m"])
    segs = list(scn.segments)
    seg_steps = [round(s["duration_s"] / dt) for s in segs]
    ctrls: list[SegmentController] = [make_controller(s, scn.model, statics) for s in segs]
    _place_robot(scn, eng, statics, ctrls[0])
    start_step = round(d["record"]["start_s"] / dt)
    te, se = _edges(scn)
    attrs = _record_attrs(scn, eng, start_step)
    seg_table: list[tuple[str, str, float, float]] = []
    seg_sums: list[RunSummary] = []
    events: dict[str, list[list[float]]] = {"touchdown": [[], [], [], []],
                                            "liftoff": [[], [], [], []]}
    exps = (*DEFAULT_LIFE_EXPONENTS, *d["record"].get("life_exponents", ()))
    with RecordWriter(out_path, JOINT_NAMES, te, se, attrs, life_exponents=exps) as w:
        rec = StepRecorder(w, eng, d["record"]["series"], bool(d.get("push")), dt,
                           d["record"]["decimation"])
        if rec.step_series:
            w.put_attrs("steps", {"period_s": dt, "start_s": start_step * dt})
        loop = _Loop(scn, eng, rec, statics, events)
        if progress and sys.stderr.isatty():
            from tqdm import tqdm
            loop.bar = tqdm(total=sum(seg_steps), unit="step", unit_scale=True,
                            desc="simulating", file=sys.stderr, leave=False)
        t0 = clock()
        try:
            for seg, ctrl, nsteps in zip(segs, ctrls, seg_steps, strict=True):
                seg_start = loop.i_global
                seg_sum = RunSummary(_plan_base_z(scn, statics, seg))
                seg_sums.append(seg_sum)
                rec.summary = seg_sum
                loop.segment(seg, ctrl, nsteps, seg_sum)
                seg_table.append((seg["name"], seg["kind"], seg_start * dt, loop.i_global * dt))
                rec.flush()  # so the positive work is booked to this segment
                if loop.status != "completed":
                    break
        except KeyboardInterrupt:
            rec.flush()
            w.put("segments/name", [s[0] for s in seg_table] or [""])
            at = f"interrupted at t = {loop.i_global * dt:.3f} s"
            partial = w.finish("interrupted", at, simulated_s=loop.i_global * dt)
            kept = (f"; the record already at {out_path} was left in place"
                    if not w.replaced_existing else "")
            raise Interrupted(f"run {at}; partial record (status 'interrupted') written to "
                              f"{partial}{kept}") from None
        finally:
            if loop.bar is not None:
                loop.bar.close()
        elapsed = clock() - t0
        rec.flush()
        path, seg_figs, run_figs = _finish(w, eng, loop, seg_table, seg_sums, events)
    return RunResult(loop.status, loop.detail, path, _joint_figures(path), eng.total_mass_kg,
                     loop.i_global / elapsed if elapsed > 0 else 0.0, run_figs,
                     [{"name": n, "kind": k, "start_s": a, "end_s": b, **f}
                      for (n, k, a, b), f in zip(seg_table, seg_figs, strict=True)],
                     simulated_s=loop.i_global * dt, planned_s=scn.duration_s)


def _finish(w: RecordWriter, eng: Engine, loop: _Loop,
            seg_table: list[tuple[str, str, float, float]], seg_sums: list[RunSummary],
            events: dict[str, list[list[float]]]
            ) -> tuple[Path, list[dict[str, float | None]], dict[str, float | None]]:
    """Segments, events and summary figures into the record, which is then closed."""
    w.put("segments/name", np.array([s[0] for s in seg_table]))
    w.put("segments/kind", np.array([s[1] for s in seg_table]))
    w.put("segments/start_s", np.array([s[2] for s in seg_table]), unit="s")
    w.put("segments/end_s", np.array([s[3] for s in seg_table]), unit="s")
    weight_n = eng.total_mass_kg * 9.80665
    seg_figs = [ss.figures(weight_n) for ss in seg_sums[:len(seg_table)]]
    for key in ("mean_forward_speed_m_s", "commanded_forward_speed_m_s", "tilt_rms_rad",
                "slip_distance_m", "positive_work_j"):
        w.put(f"segments/{key}", np.array([np.nan if f[key] is None else f[key]
                                           for f in seg_figs], float))
    for kind, per_leg in events.items():
        for k, leg in enumerate(LEGS):
            w.put(f"events/{kind}/{leg}", np.array(per_leg[k], float), unit="s")
    total = RunSummary()
    for ss in seg_sums:
        total.add(ss)
    run_figs = total.figures(weight_n)
    w.put_attrs("quality", {**total.screen_figures(), "simulated_s": loop.i_global * loop.dt,
                            "recorded_s": max(0, loop.i_global - loop.start_step) * loop.dt})
    path = w.finish(loop.status, loop.detail, simulated_s=loop.i_global * loop.dt,
                    **{f"summary_{k}": np.nan if v is None else v for k, v in run_figs.items()})
    return path, seg_figs, run_figs


def _joint_figures(path: Path) -> dict[str, dict[str, float]]:
    from sim.record import open_record

    joints: dict[str, dict[str, float]] = {}
    with open_record(path) as rec:
        for jn in JOINT_NAMES:
            sm = rec.summary(jn)
            joints[jn] = {"peak_torque_nm": sm.peak_torque_nm, "rms_torque_nm": sm.rms_torque_nm,
                          "peak_speed_rad_s": sm.peak_speed_rad_s, "saturated_s": sm.saturated_s}
            # the summary follows the load at the reducer output (every step); the motor side
            # (motor torque x ratio) differs when rotors or reducer losses are simulated
            joints[jn]["peak_gearbox_torque_nm"] = sm.peak_torque_nm
            joints[jn]["peak_motor_side_torque_nm"] = sm.peak_motor_side_torque_nm
    return joints


def raise_for_status(result: RunResult) -> RunResult:
    """Turn a fall or divergence into :class:`SimulationFailure` (exit code 3)."""
    if result.status in ("fell", "diverged"):
        raise SimulationFailure(result.status, result.detail, str(result.record))
    return result
