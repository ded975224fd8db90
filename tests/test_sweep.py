"""Design sweeps: parallel determinism, resuming, failed cases, validation, physics trend.

Outside references used here:
- Planar two-link statics, tau = J^T f (Craig, *Introduction to Robotics: Mechanics and
  Control*, 3rd ed., ch. 5 "Jacobians: velocities and static forces" (from memory)): a leg of
  equal links l holding a vertical foot force F with the foot under the hip at hip-foot height
  h needs tau_knee = F sqrt(l^2 - h^2/4) at the knee (massless links), the knee sitting
  sqrt(l^2 - h^2/4) to the side of the hip-foot line. The weight of the shank (COM at mid-link)
  and foot below the knee is subtracted with the same lever arms.
- Latin hypercube sampling (McKay, Beckman & Conover, Technometrics 21(2), 1979): with n
  samples every one of the n equal strata of every dimension holds exactly one sample.
- Reflected inertia through an ideal reducer, J = N^2 J_rotor (textbook gear kinematics,
  energy balance of an ideal gear pair).
- Pareto dominance (a point is on the front when no other point is at least as good in both
  objectives and better in one): checked as a property with hypothesis.
"""

from __future__ import annotations

import itertools
import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sim import LEGS
from sim.commands.cli import main
from sim.commands.cli_provider import register_cli_provider
from sim.core.errors import InputError
from sim.record import open_record
from sim.sweeps.cases import resolve_cases
from sim.sweeps.executors import run_sweep
from sim.sweeps.metrics import evaluate_metric, parse_metric
from sim.sweeps.providers import PROVIDERS, CaseContext, MetricProvider, register_provider
from sim.sweeps.ranking import pareto_front, write_outputs
from sim.sweeps.spec import load_sweep

from .conftest import MODELS, SCENARIOS

G = 9.80665
LENGTHS_M = (0.18, 0.20, 0.22, 0.24)
KNEES = [f"run.joints.{leg}_knee.rms_torque_nm" for leg in LEGS]
SHORT = '["segment.0.duration_s=0.7", "record.start_s=0.4"]'


def write_sweep(folder: Path, body: str, name: str = "sweep.toml",
                metrics: list[str] | None = None, rank: str = KNEES[0]) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    ms = metrics if metrics is not None else [*KNEES, "run.joints.*_knee.peak_torque_nm:max"]
    text = (f'scenario = "{SCENARIOS / "stand.toml"}"\nset = {SHORT}\n'
            f"metrics = {json.dumps(ms)}\n{body}\n")
    if "[rank]" not in body:
        text += f'[rank]\nmetric = "{rank}"\ngoal = "min"\n'
    path = folder / name
    path.write_text(text)
    return path


def lengths_body(lengths=LENGTHS_M) -> str:
    vals = ", ".join(f"[{x}, {x}]" for x in lengths)
    return ('[[param]]\nkeys = ["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]\n'
            f"values = [{vals}]\n")


@pytest.fixture(scope="module")
def lengths_run(tmp_path_factory):
    """The 4-case equal-link sweep, run once with one worker."""
    tmp = tmp_path_factory.mktemp("lengths")
    sweep = load_sweep(write_sweep(tmp, lengths_body()))
    result = run_sweep(sweep, tmp / "out1", workers=1)
    write_outputs(result)
    return sweep, result


def _outputs(result) -> dict[str, bytes]:
    out = {p.name: p.read_bytes() for p in (result.out_dir / "results.csv",
                                           result.out_dir / "summary.json")}
    for c in result.cases:
        out[c.key] = result.record_path(c.index).read_bytes()
    return out


# --- same results with 1 worker, 2 workers and a Dask cluster --------------------------------

def test_one_worker_two_workers_and_dask_give_identical_tables(lengths_run, tmp_path):
    sweep, r1 = lengths_run
    assert [c.status for c in r1.cases] == ["completed"] * 4
    r2 = run_sweep(sweep, tmp_path / "out2", workers=2)
    write_outputs(r2)
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        r3 = run_sweep(sweep, tmp_path / "out3", cluster=cluster.scheduler_address)
    write_outputs(r3)
    assert r2.n_run == r3.n_run == 4
    a, b, c = _outputs(r1), _outputs(r2), _outputs(r3)
    assert a.keys() == b.keys() == c.keys()
    for k in a:  # tables, summaries and every record, byte for byte
        assert a[k] == b[k] == c[k], k


# --- resuming --------------------------------------------------------------------------------

def test_interrupted_sweep_rerun_completes_only_the_missing_cases(lengths_run, tmp_path,
                                                                    capsys):
    _, full = lengths_run
    # a first attempt that got through two cases only, then died after writing the record of
    # the second case but before its result file
    part = write_sweep(tmp_path, lengths_body(LENGTHS_M[:2]), "part.toml")
    out = tmp_path / "out"
    assert main(["sweep", str(part), "-o", str(out), "--workers", "1", "--no-plots",
                 "--json"]) == 0
    capsys.readouterr()
    keys = [c.key for c in full.cases]
    (out / "cases" / keys[1] / "result.json").unlink()
    assert (out / "cases" / keys[1] / "record.h5").is_file()
    kept = (out / "cases" / keys[0] / "result.json").stat().st_mtime_ns
    whole = write_sweep(tmp_path, lengths_body(), "whole.toml")
    assert main(["sweep", str(whole), "-o", str(out), "--workers", "2", "--no-plots",
                 "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert (doc["cases_run"], doc["cases_reused"]) == (3, 1)
    assert (out / "cases" / keys[0] / "result.json").stat().st_mtime_ns == kept
    # the resumed table equals the one of the uninterrupted sweep
    assert (out / "results.csv").read_text() == (full.out_dir / "results.csv").read_text()
    assert main(["sweep", str(whole), "-o", str(out), "--no-plots", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["cases_run"] == 0


def test_changed_inputs_get_a_new_key_and_equal_inputs_the_same(tmp_path):
    a = load_sweep(write_sweep(tmp_path / "a", lengths_body((0.2,))))
    # the same resolved case written differently: the default friction stated explicitly
    b_text = write_sweep(tmp_path / "b", lengths_body((0.2,))).read_text().replace(
        SHORT, SHORT[:-1] + ', "ground.friction=0.8"]')
    (tmp_path / "b" / "sweep.toml").write_text(b_text)
    b = load_sweep(tmp_path / "b" / "sweep.toml")
    c = load_sweep(write_sweep(tmp_path / "c", lengths_body((0.2000001,))))
    ka, kb, kc = (resolve_cases(s)[0].key for s in (a, b, c))
    assert ka == kb
    assert ka != kc
    assert len(ka) == 64 and int(ka, 16) >= 0


# --- physics ---------------------------------------------------------------------------------

def test_standing_knee_torque_grows_with_segment_length_and_matches_closed_form(lengths_run):
    _sweep, result = lengths_run
    import tomllib

    model = tomllib.loads((MODELS / "fennec.toml").read_text())
    lg, stance = model["leg"], model["stance"]
    h = stance["hip_height_m"] - lg["foot_radius_m"]  # hip axis to foot centre, foot under hip
    assert stance["foot_x_m"] == 0.0 and stance["foot_y_m"] == 0.0
    by_len = {}
    for case in result.cases:
        length = case.params["robot.leg.thigh_length_m"]
        assert case.params["robot.leg.shank_length_m"] == length
        with open_record(result.record_path(case.index)) as rec:
            for leg, metric in zip(LEGS, KNEES, strict=True):
                F = float(rec.read(f"feet/{leg}/force_n")[:, 2].mean())  # measured, ground on foot
                d = math.sqrt(length ** 2 - h ** 2 / 4)  # knee offset from the hip-foot line
                closed = (F - lg["foot_mass_kg"] * G - lg["shank_mass_kg"] * G / 2) * d
                assert case.metrics[metric] == pytest.approx(closed, rel=0.01), (length, leg)
        by_len[length] = case.metrics["run.joints.*_knee.peak_torque_nm:max"]
    peaks = [by_len[x] for x in LENGTHS_M]
    assert all(b > a for a, b in itertools.pairwise(peaks)), peaks
    # the growth follows the lever arm sqrt(l^2 - h^2/4): 0.24 m legs need ~1.7x the 0.18 m
    ratio = math.sqrt(0.24 ** 2 - h ** 2 / 4) / math.sqrt(0.18 ** 2 - h ** 2 / 4)
    assert peaks[-1] / peaks[0] == pytest.approx(ratio, rel=0.05)


def test_ranking_and_winner_of_completed_cases_follow_the_closed_form(lengths_run):
    # four completed cases ranked by the front-left knee RMS torque, goal "min": by the lever
    # arm sqrt(l^2 - h^2/4) of the closed form above the knee torque grows with the segment
    # length, so by hand the ranking is 0.18, 0.20, 0.22, 0.24 m, the winner the shortest legs
    # and the margin the runner-up's value less the winner's
    _sweep, result = lengths_run
    by_len = {c.params["robot.leg.thigh_length_m"]: c.index for c in result.cases}
    hand = tuple(by_len[x] for x in sorted(LENGTHS_M))
    assert result.ranked == hand
    s = result.summary()
    assert s["n_ranked"] == 4
    win, run_up = result.cases[hand[0]], result.cases[hand[1]]
    assert s["winner"]["case"] == hand[0] and s["runner_up"]["case"] == hand[1]
    assert s["winner"]["params"]["robot.leg.thigh_length_m"] == min(LENGTHS_M)
    assert s["winner"]["value"] == win.metrics[KNEES[0]]
    d = run_up.metrics[KNEES[0]] - win.metrics[KNEES[0]]
    assert d > 0
    assert s["margin"]["abs"] == pytest.approx(d, rel=1e-12)
    assert s["margin"]["rel"] == pytest.approx(d / win.metrics[KNEES[0]], rel=1e-12)
    assert [r["rank"] for r in result.rows()] == [1, 2, 3, 4]
    assert [r["case"] for r in result.rows()] == list(hand)


def _case(i, value, status="completed", flagged=False):
    from sim.sweeps.ranking import CaseResult

    return CaseResult(i, f"k{i}", status, "", {}, {"m": value}, flagged)


def test_rank_cases_by_hand_min_max_flagged_ties_and_unrankable():
    from sim.sweeps.ranking import rank_cases

    cases = [_case(0, 3.0), _case(1, 1.0), _case(2, 2.0), _case(3, 1.0), _case(4, 0.5,
             flagged=True), _case(5, 0.1, "fell"), _case(6, float("nan")), _case(7, None),
             _case(8, 0.2, "infeasible"), _case(9, 9.0, flagged=True)]
    # min: clean cases by value (ties in case order), then the flagged ones by value
    assert rank_cases(cases, "m", "min") == (1, 3, 2, 0, 4, 9)
    # max: the same groups, largest first
    assert rank_cases(cases, "m", "max") == (0, 2, 1, 3, 9, 4)


# --- failed cases ----------------------------------------------------------------------------

def test_failed_and_infeasible_cases_are_listed_and_never_ranked(tmp_path, capsys):
    body = ('constraints = ["run.joints.*_knee.peak_torque_nm:max <= 8"]\n'
            '[[param]]\nkeys = ["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]\n'
            "values = [[0.22, 0.22], [0.10, 0.10]]\n"  # 0.20 m legs cannot reach 0.28 m
            '[[param]]\nkey = "payload.mass_kg"\nvalues = [0.0, 10.0, 120.0]\n')
    path = write_sweep(tmp_path, body, metrics=["run.joints.*_knee.peak_torque_nm:max"],
                       rank="run.joints.*_knee.peak_torque_nm:max")
    out = tmp_path / "out"
    assert main(["sweep", str(path), "-o", str(out), "--workers", "2", "--no-plots",
                 "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    rows = {r["case"]: r for r in doc["cases"]}
    assert len(rows) == 6
    assert rows[0]["status"] == "completed" and rows[0]["rank"] == 1
    assert rows[1]["status"] == "infeasible" and "<= 8" in rows[1]["reason"]
    assert rows[2]["status"] == "fell" and "below" in rows[2]["reason"]
    for i in (3, 4, 5):
        assert rows[i]["status"] == "bad_input" and "hip_height_m" in rows[i]["reason"]
    assert [r["rank"] for r in doc["cases"]][1:] == [None] * 5
    assert doc["winner"]["case"] == 0 and doc["runner_up"] is None
    assert doc["counts"] == {"bad_input": 3, "completed": 1, "fell": 1, "infeasible": 1}
    assert "licensed engineering practice" in doc["caution"]
    csv_lines = (out / "results.csv").read_text().splitlines()
    assert len(csv_lines) == 7 and csv_lines[1].startswith("1,0,")


# --- bad sweep files -------------------------------------------------------------------------

BAD = {
    "unknown top-level key": ("metrix = []\n" + lengths_body(), "metrix"),
    "unknown param key": ('[[param]]\nkey = "payload.mass_kg"\nvaluez = [1.0]\n', "valuez"),
    "misspelt scenario key": ('[[param]]\nkey = "robot.leg.thigh_lenght_m"\nvalues = [0.2]\n',
                              "param.0.key"),
    "empty value list": ('[[param]]\nkey = "payload.mass_kg"\nvalues = []\n', "param.0.values"),
    "empty num range": ('[[param]]\nkey = "payload.mass_kg"\nstart = 0.0\nstop = 1.0\nnum = 0\n',
                        "param.0.num"),
    "step away from stop": ('[[param]]\nkey = "payload.mass_kg"\nstart = 1.0\nstop = 0.0\n'
                            "step = 0.5\n", "param.0.step"),
    "sample count zero": ("[sample]\ncount = 0\n" + '[[param]]\nkey = "payload.mass_kg"\n'
                          "start = 0.0\nstop = 1.0\n", "sample.count"),
    "bad fixed override": ('set = ["ground.frction=0.5"]\n' + lengths_body(), "ground.frction"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_sweep_files_are_rejected_before_any_case_runs(case, tmp_path, capsys):
    body, key = BAD[case]
    path = write_sweep(tmp_path, body)
    if body.startswith("set ="):  # replace the fixed overrides rather than add a second list
        text = path.read_text().replace(f"set = {SHORT}\n", "")
        path.write_text(text)
    out = tmp_path / "out"
    assert main(["sweep", str(path), "-o", str(out), "--no-plots"]) == 2
    err = capsys.readouterr().err
    assert key in err and "expected" in err
    assert not out.exists()


@pytest.mark.parametrize("metric,why", [
    ("run.joints.fl_knee.peak_torq_nm", "peak_torq_nm"),
    ("runn.joints.fl_knee.peak_torque_nm", "known provider"),
    ("run.joints.*_elbow.peak_torque_nm:max", "matches none"),
    ("run.joints.*_knee.peak_torque_nm", "aggregate"),
    ("run.joints.fl_knee.peak_torque_nm:median", "aggregate"),
    ("run.joints.fl_knee", "ends at a number"),
])
def test_metrics_that_do_not_exist_are_rejected(metric, why, tmp_path, capsys):
    path = write_sweep(tmp_path, lengths_body(), metrics=[metric])
    out = tmp_path / "out"
    assert main(["sweep", str(path), "-o", str(out), "--no-plots"]) == 2
    err = capsys.readouterr().err
    assert why in err and "metrics[0]" in err and str(path) in err
    assert not out.exists()


def test_a_metric_of_a_missing_command_names_the_metric(monkeypatch, tmp_path):
    monkeypatch.setitem(PROVIDERS, "nosuch", PROVIDERS["run"])  # placeholder, replaced below
    register_cli_provider("nosuch", lambda ctx: ["nosuchcmd", "--json"], {"x": float},
                          "nosuchcmd")
    with pytest.raises(InputError) as exc:
        parse_metric("nosuch.x", "s.toml", "metrics[0]")
    msg = str(exc.value)
    assert "nosuch.x" in msg and "gaitload nosuchcmd" in msg and "s.toml" in msg


# --- metric providers ------------------------------------------------------------------------

RUN_DOC = {"status": "completed", "total_mass_kg": 15.46,
           "joints": {f"{leg}_{k}": {"peak_torque_nm": 1.0 + i, "rms_torque_nm": 0.5 * i,
                                      "peak_speed_rad_s": 0.0, "saturated_s": 0.0}
                      for i, (leg, k) in enumerate((lg, k) for lg in LEGS
                                                   for k in ("abad", "hip", "knee"))}}


def test_run_provider_paths_patterns_and_aggregates():
    ev = lambda text: evaluate_metric(parse_metric(text), RUN_DOC)  # noqa: E731
    assert ev("run.joints.fl_knee.peak_torque_nm") == 3.0
    knees = [RUN_DOC["joints"][f"{leg}_knee"]["peak_torque_nm"] for leg in LEGS]
    assert ev("run.joints.*_knee.peak_torque_nm:max") == max(knees) == 12.0
    assert ev("run.joints.*_knee.peak_torque_nm:min") == min(knees)
    assert ev("run.joints.*_knee.peak_torque_nm:mean") == pytest.approx(np.mean(knees))
    assert ev("run.joints.*.rms_torque_nm:sum") == pytest.approx(0.5 * sum(range(12)))
    assert ev("run.joints.[fh]l_hip.peak_torque_nm:max") == 8.0
    assert ev("run.total_mass_kg") == 15.46


def test_a_registered_provider_is_validated_and_evaluated(monkeypatch):
    monkeypatch.setitem(PROVIDERS, "geo", PROVIDERS["run"])
    register_provider(MetricProvider("geo", lambda ctx: {"legs": {"fl": {"len_m": 0.4}}},
                                     {"legs": {"*": {"len_m": float}}}))
    mp = parse_metric("geo.legs.fl.len_m")
    assert evaluate_metric(mp, PROVIDERS["geo"].produce(None)) == 0.4  # type: ignore[arg-type]
    with pytest.raises(InputError, match="len_mm"):
        parse_metric("geo.legs.fl.len_mm")


def test_cli_provider_runs_a_command_in_process_and_reads_its_json(monkeypatch, tmp_path):
    model_file = tmp_path / "m.toml"
    model_file.write_text((MODELS / "fennec.toml").read_text().replace(
        'drivetrain = "drivetrain_demo.toml"', f'drivetrain = "{MODELS / "drivetrain_demo.toml"}"'))
    monkeypatch.setitem(PROVIDERS, "mdl", PROVIDERS["run"])
    register_cli_provider("mdl", lambda ctx: ["model", str(model_file), "--json"],
                          {"total_mass_kg": float, "peak_torque_nm": {"*": float}}, "model")
    ctx = CaseContext(tmp_path / "none.h5", {}, "", "", None)
    doc = PROVIDERS["mdl"].produce(ctx)
    # demo knee: ratio 9 x current limit 30 A x Kt (I_max Kt N at the output), Kt from the
    # demo motor's kV: 60 / (2 pi 80) N m/A
    assert evaluate_metric(parse_metric("mdl.peak_torque_nm.knee"), doc) == pytest.approx(
        9 * 30 * 60 / (2 * math.pi * 80), rel=1e-12)


def test_model_provider_gives_reflected_inertia_n_squared_j():
    from sim.robot.model import load_model
    from sim.sweeps.providers import _model_provider

    text = (MODELS / "fennec.toml").read_text()
    drive = load_model(MODELS / "fennec.toml").drivetrain.to_toml()
    doc = _model_provider(CaseContext(Path("x"), {}, "", text, drive))
    ev = evaluate_metric(parse_metric("model.actuators.fl_knee.reflected_inertia_kg_m2"), doc)
    # by hand from the demo parts: N^2 (J_rotor + J_in) + J_out, N = 9
    assert ev == pytest.approx(9 ** 2 * (6.5e-5 + 3.0e-6) + 2.0e-5, rel=1e-12)


def test_the_fork_server_preloads_modules_that_exist():
    # multiprocessing skips a preload name that does not import without a word
    import importlib

    from sim.sweeps.executors import FORKSERVER_PRELOAD

    assert FORKSERVER_PRELOAD
    for name in FORKSERVER_PRELOAD:
        assert importlib.import_module(name).__name__ == name


# --- grids and samples -----------------------------------------------------------------------

def test_grid_is_the_cartesian_product_in_file_order(tmp_path):
    body = ('[[param]]\nkey = "payload.mass_kg"\nstart = 0.0\nstop = 1.0\nstep = 0.5\n'
            '[[param]]\nkey = "ground.friction"\nstart = 0.6\nstop = 0.9\nnum = 4\n')
    s = load_sweep(write_sweep(tmp_path, body))
    a = s.assignments()
    assert len(a) == 12
    assert [x["payload.mass_kg"] for x in a[:4]] == [0.0] * 4
    assert [x["ground.friction"] for x in a[:4]] == [0.6, 0.7, 0.8, 0.9]
    assert a[-1] == {"payload.mass_kg": 1.0, "ground.friction": 0.9}


@settings(max_examples=25, deadline=None)
@given(n=st.integers(1, 40), seed=st.integers(0, 2 ** 16))
def test_latin_hypercube_puts_one_sample_in_every_stratum(n, seed, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("lhs")
    body = (f"[sample]\ncount = {n}\nseed = {seed}\n"
            '[[param]]\nkey = "payload.mass_kg"\nstart = 0.0\nstop = 2.0\n'
            '[[param]]\nkeys = ["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]\n'
            "start = [0.20, 0.24]\nstop = [0.24, 0.20]\n")
    s = load_sweep(write_sweep(tmp, body))
    a = s.assignments()
    assert len(a) == n
    for key, lo, hi in (("payload.mass_kg", 0.0, 2.0), ("robot.leg.thigh_length_m", 0.2, 0.24)):
        u = np.array([(x[key] - lo) / (hi - lo) for x in a])
        strata = np.floor(np.clip(u * n, 0, n - 1e-9)).astype(int)
        assert sorted(strata.tolist()) == list(range(n))
    for x in a:  # linked keys stay on their line: thigh + shank = 0.44 m
        assert x["robot.leg.thigh_length_m"] + x["robot.leg.shank_length_m"] == pytest.approx(0.44)
    assert s.assignments() == a  # same seed, same cases


# --- Pareto front ----------------------------------------------------------------------------

def test_pareto_front_on_a_small_example():
    pts = np.array([[1.0, 5.0], [2.0, 3.0], [3.0, 4.0], [4.0, 1.0], [2.0, 3.0]])
    assert pareto_front(pts, ("min", "min")).tolist() == [True, True, False, True, True]
    assert pareto_front(pts, ("max", "max")).tolist() == [True, False, True, True, False]


@settings(max_examples=50, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 6), st.integers(0, 6)), min_size=1, max_size=25),
       st.sampled_from(["min", "max"]), st.sampled_from(["min", "max"]))
def test_pareto_front_is_exactly_the_non_dominated_set(points, gx, gy):
    p = np.array(points, float)
    mask = pareto_front(p, (gx, gy))
    s = p * np.array([1.0 if gx == "min" else -1.0, 1.0 if gy == "min" else -1.0])

    def dominated(i):
        return any(np.all(s[j] <= s[i]) and np.any(s[j] < s[i]) for j in range(len(s)))

    for i in range(len(p)):
        assert mask[i] == (not dominated(i))
    assert mask.any()


# --- plots -----------------------------------------------------------------------------------

def test_plots_are_written_and_show_the_cases(lengths_run, tmp_path, monkeypatch):
    from matplotlib.image import imread

    from sim.figures import common
    from sim.figures.sweep import plot_metrics, plot_pareto

    figs = []
    real = common.save_figure_atomic
    monkeypatch.setattr(common, "save_figure_atomic",
                        lambda fig, path, **kw: (figs.append(fig), real(fig, path, **kw))[1])
    _, result = lengths_run
    f = plot_metrics(result, tmp_path / "metrics.png")
    assert f is not None
    img = imread(f)
    assert img.shape[0] > 300 and img[..., :3].std() > 0.05  # a real image, not blank
    assert plot_pareto(result, tmp_path / "pareto.png") is None  # no [pareto] table
    assert sorted(p.name for p in tmp_path.iterdir()) == ["metrics.png"]
    # one panel per metric (rows) against the one varied numeric key (the thigh length; the
    # shank length varies with it), each showing every ranked case at (length, metric)
    (fig,) = figs
    metrics = list(result.sweep.metrics)
    keys = [a.get_xlabel() for a in fig.axes if a.get_xlabel()]
    assert len(fig.axes) == len(metrics) * len(keys) and len(keys) == 2
    for r, m in enumerate(metrics):
        for c_, k in enumerate(["robot.leg.thigh_length_m", "robot.leg.shank_length_m"]):
            ax = fig.axes[r * 2 + c_]
            (dots,) = [ln for ln in ax.get_lines() if ln.get_label() == "ranked"]
            want = sorted((c.params[k], c.metrics[m]) for c in result.cases)
            np.testing.assert_array_equal(dots.get_xdata(), [x for x, _ in want])
            np.testing.assert_array_equal(dots.get_ydata(), [y for _, y in want])
