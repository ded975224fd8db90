"""Faults and files from other people: signals, killed processes, planted symlinks, crafted
records, partial outputs. gaitload's own contract (README, "Commands" and "Threat model");
each test fails if the protection it names is removed.

The signal tests run ``python -m sim`` in a subprocess of its own session (as a terminal's
foreground job would be), signal it once it is writing, and then look at the folder and at
every process of that session.
"""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import h5py
import numpy as np
import pytest

from sim.commands.cli import COMMANDS, build_parser, main
from sim.core import atomic
from sim.core.atomic import create_temp, output_batch, remove_stale_temps, write_text_atomic
from sim.record import open_record

from .conftest import MODELS, ROOT, SCENARIOS
from .synthetic import write_synthetic_record


# -- help ----------------------------------------------------------------------------------
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_every_subcommand_help_lists_its_options(command, capsys):
    import argparse
    import importlib

    assert main([command, "--help"]) == 0
    out = capsys.readouterr().out
    p = argparse.ArgumentParser()
    importlib.import_module(COMMANDS[command][0]).add_arguments(p)
    options = [s for a in p._actions for s in a.option_strings if s.startswith("--")]
    assert options and all(o in out for o in options), (options, out)
    assert main(["--help"]) == 0 and command in capsys.readouterr().out
    assert build_parser().prog == "gaitload"


def test_unknown_command_is_exit_2_not_a_traceback(capsys):
    assert main(["frobnicate"]) == 2
    assert "invalid choice" in capsys.readouterr().err


# -- temporary files ------------------------------------------------------------------------
def test_a_planted_symlink_is_never_followed(tmp_path, monkeypatch):
    victim = tmp_path / "victim.txt"
    victim.write_text("precious\n")
    target = tmp_path / "out.csv"
    # the first name the generator offers is taken by a symlink to the victim
    names = iter(["planted", "second", "third"])
    monkeypatch.setattr(tempfile, "_get_candidate_names", lambda: names)
    planted = tmp_path / f".out.csv.{atomic._HOST}-{os.getpid()}-planted.tmp"
    planted.symlink_to(victim)
    write_text_atomic(target, "a,b\n")
    assert victim.read_text() == "precious\n"
    assert target.read_text() == "a,b\n" and not target.is_symlink()
    assert planted.is_symlink()  # left alone: it is not ours and its process (we) still runs


def test_a_record_never_writes_through_a_planted_name(tmp_path):
    victim = tmp_path / "victim.h5"
    victim.write_bytes(b"precious")
    out = tmp_path / "r.h5"
    # the name the writer used before (predictable: .<name>.<pid>.tmp) and a stale-looking one
    (tmp_path / f".r.h5.{os.getpid()}.tmp").symlink_to(victim)
    write_synthetic_record(out, 0.05, 0.001, joints=["fl_knee"])
    assert victim.read_bytes() == b"precious"
    with open_record(out) as rec:
        assert rec.status == "completed"


def test_stale_temporary_files_of_dead_processes_are_removed(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    pid = int(dead.stdout)
    stale = tmp_path / f".r.csv.{atomic._HOST}-{pid}-abc123.tmp"
    stale.write_text("half")
    other_host = tmp_path / f".r.csv.someotherhost-{pid}-abc123.tmp"
    other_host.write_text("half")
    alive = tmp_path / f".r.csv.{atomic._HOST}-1-abc123.tmp"  # pid 1 always runs
    alive.write_text("half")
    victim = tmp_path / "victim"
    victim.write_text("precious")
    link = tmp_path / f".r.csv.{atomic._HOST}-{pid}-lnk.tmp"
    link.symlink_to(victim)
    assert set(remove_stale_temps(tmp_path / "r.csv")) == {stale, link}
    assert other_host.exists() and alive.exists() and victim.read_text() == "precious"
    fd, tmp = create_temp(tmp_path / "r.csv")
    os.close(fd)
    assert tmp.name.startswith(f".r.csv.{atomic._HOST}-{os.getpid()}-")


def test_files_get_the_users_permissions(tmp_path):
    old = os.umask(0o027)
    try:
        p = write_text_atomic(tmp_path / "a.txt", "x")
        r = write_synthetic_record(tmp_path / "r.h5", 0.05, 0.001, joints=["fl_knee"])
    finally:
        os.umask(old)
    assert (p.stat().st_mode & 0o777) == 0o640
    assert (r.stat().st_mode & 0o777) == 0o640


def test_a_batch_writes_all_or_none(tmp_path):
    with pytest.raises(RuntimeError), output_batch():
        write_text_atomic(tmp_path / "a" / "one.csv", "1")
        write_text_atomic(tmp_path / "a" / "two.csv", "2")
        raise RuntimeError("the third output failed")
    assert list(tmp_path.iterdir()) == []
    with output_batch():
        write_text_atomic(tmp_path / "a" / "one.csv", "1")
        assert not (tmp_path / "a").exists()  # staged until the batch ends
    assert (tmp_path / "a" / "one.csv").read_text() == "1"


def test_loads_writes_no_csv_when_a_figure_fails(tmp_path, stand_record, monkeypatch):
    import sim.figures.loads as figs

    def broken(*a, **k):
        raise RuntimeError("disk full while rendering")

    monkeypatch.setattr(figs, "plot_load_duration", broken)
    with pytest.raises(RuntimeError):
        main(["loads", str(stand_record), "--csv", str(tmp_path / "csv"), "--plot",
              str(tmp_path / "plots")])
    assert list(tmp_path.iterdir()) == []


# -- crafted records ------------------------------------------------------------------------
@pytest.mark.parametrize("evil", ["..", "../../outside", "x/../../outside", "/tmp/abs",
                                  "fl_knee\n=cmd()", "C:\\x"])
def test_crafted_joint_names_cannot_write_outside_the_output_folder(tmp_path, stand_record,
                                                                    evil, capsys):
    bad = tmp_path / "in" / "bad.h5"
    bad.parent.mkdir()
    shutil.copyfile(stand_record, bad)
    with h5py.File(bad, "r+") as f:  # the joint's groups renamed too, so only names stop it
        names = [evil if n == "fl_knee" else n for n in f.attrs["joint_names"].astype(str)]
        f.attrs["joint_names"] = np.array(names, dtype=h5py.string_dtype())
        for top in ("joints", "histograms", "summary", "quality"):
            if f"{top}/fl_knee" in f and "/" not in evil:
                f.move(f"{top}/fl_knee", f"{top}/{evil}")
    before = {p for p in tmp_path.parent.rglob("*")}
    for cmd in (["loads", str(bad), "--csv", str(tmp_path / "out" / "a" / "b"), "--plot",
                 str(tmp_path / "out" / "a" / "b")],
                ["check", str(bad), "--drivetrain", str(MODELS / "drivetrain_demo.toml"),
                 "--plot", str(tmp_path / "out" / "a" / "b")]):
        assert main(cmd) == 2
        err = capsys.readouterr().err
        assert "joint_names" in err and "bad.h5" in err
    assert {p for p in tmp_path.parent.rglob("*")} == before


def test_a_record_holding_only_its_version_is_refused_by_every_reader(tmp_path, capsys):
    p = tmp_path / "v.h5"
    with h5py.File(p, "w") as f:
        f.attrs["format_version"] = 1
    for argv in (["loads", str(p)], ["check", str(p), "--drivetrain",
                                     str(MODELS / "drivetrain_demo.toml")]):
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert "v.h5" in err and "'status'" in err and "missing" in err


def test_a_reused_case_is_checked_against_its_record_hash(tmp_path):
    from sim.sweeps.executors import run_sweep
    from sim.sweeps.spec import load_sweep

    sw = tmp_path / "sw.toml"
    sw.write_text(f'scenario = "{SCENARIOS / "stand.toml"}"\n'
                  'set = ["segment.0.duration_s=0.4", "record.start_s=0.2"]\n'
                  'metrics = ["run.joints.fl_knee.rms_torque_nm"]\n'
                  '[rank]\nmetric = "run.joints.fl_knee.rms_torque_nm"\n'
                  '[[param]]\nkey = "payload.mass_kg"\nvalues = [0.0, 1.0]\n')
    sweep = load_sweep(sw)
    first = run_sweep(sweep, tmp_path / "out", workers=1)
    assert first.n_run == 2
    recs = sorted((tmp_path / "out" / "cases").glob("*/record.h5"))
    data = recs[0].read_bytes()
    recs[0].write_bytes(data[: len(data) // 2])  # truncated by a full disk, say
    again = run_sweep(sweep, tmp_path / "out", workers=1)
    assert (again.n_run, again.n_reused) == (1, 1)
    assert recs[0].read_bytes() == data  # rerun, same bytes
    assert run_sweep(sweep, tmp_path / "out", workers=1).n_run == 0


# -- signals and kill -9, in subprocesses -----------------------------------------------------
def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _start(argv: list[str], cwd: Path) -> subprocess.Popen:
    # a session of its own, SIGINT at its default (a background shell would ignore it)
    return subprocess.Popen([sys.executable, "-m", "sim", *argv], cwd=cwd, env=_env(),
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))


def _wait_for(pred, timeout_s: float = 60.0) -> None:
    t0 = time.monotonic()
    while not pred():
        if time.monotonic() - t0 > timeout_s:
            raise AssertionError("timed out")
        time.sleep(0.05)


def _temps(folder: Path) -> list[Path]:
    return [p for p in folder.rglob(".*.tmp")]


def _session_processes(sid: int) -> list[int]:
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                if os.getsid(int(d.name)) == sid:
                    state = (d / "stat").read_text().rsplit(")", 1)[1].split()[0]
                    if state not in ("Z", "X"):
                        out.append(int(d.name))
            except (OSError, IndexError):
                pass
    return out


def _send(proc: subprocess.Popen, how: str) -> None:
    if how == "ctrl-c":
        os.killpg(proc.pid, signal.SIGINT)  # as a terminal does: the whole foreground group
    elif how == "sigterm":
        os.kill(proc.pid, signal.SIGTERM)
    else:
        os.kill(proc.pid, signal.SIGKILL)


@pytest.fixture
def stand_scenario(tmp_path) -> Path:
    text = (SCENARIOS / "stand.toml").read_text().replace(
        'robot = "../models/fennec.toml"', f'robot = "{MODELS / "fennec.toml"}"')
    p = tmp_path / "st.toml"
    p.write_text(text)
    return p


@pytest.mark.parametrize("how", ["ctrl-c", "sigterm", "kill-9"])
def test_run_interrupted_keeps_the_completed_record(tmp_path, stand_scenario, how):
    rec = tmp_path / "r.h5"
    short = ["--set", "segment.0.duration_s=1.2", "--set", "record.start_s=0.2"]
    assert main(["run", str(stand_scenario), "-o", str(rec), "--json", *short]) == 0
    good = rec.read_bytes()
    proc = _start(["run", str(stand_scenario), "-o", str(rec), "--set",
                   "segment.0.duration_s=3000"], tmp_path)
    _wait_for(lambda: _temps(tmp_path))
    time.sleep(0.5)
    _send(proc, how)
    _, err = proc.communicate(timeout=60)
    assert rec.read_bytes() == good  # never replaced by the partial run
    if how == "kill-9":
        assert proc.returncode == -signal.SIGKILL
        assert _temps(tmp_path)  # nothing can clean up after kill -9 ...
        assert main(["run", str(stand_scenario), "-o", str(rec), "--json", *short]) == 0
        assert _temps(tmp_path) == []  # ... but the next run does
        return
    assert proc.returncode == 130, err
    partial = tmp_path / "r.interrupted.h5"
    assert "interrupted" in err and str(partial) in err and "left in place" in err
    with open_record(partial) as r:
        assert r.status == "interrupted" and r.attrs["simulated_s"] > 0
    assert _temps(tmp_path) == []
    assert _session_processes(proc.pid) == []


@pytest.mark.parametrize("how", ["ctrl-c", "sigterm", "kill-9"])
def test_killed_sweep_leaves_no_process_and_no_temporary_file(tmp_path, how):
    sw = tmp_path / "sw.toml"
    sw.write_text(f'scenario = "{SCENARIOS / "stand.toml"}"\n'
                  'set = ["segment.0.duration_s=3000", "record.start_s=0.2"]\n'
                  'metrics = ["run.joints.fl_knee.rms_torque_nm"]\n'
                  '[rank]\nmetric = "run.joints.fl_knee.rms_torque_nm"\n'
                  '[[param]]\nkey = "payload.mass_kg"\nvalues = [0.0, 1.0]\n')
    proc = _start(["sweep", str(sw), "-o", str(tmp_path / "out"), "--workers", "2",
                   "--no-plots"], tmp_path)
    _wait_for(lambda: len(_temps(tmp_path / "out")) == 2, 120.0)
    assert len(_session_processes(proc.pid)) >= 4  # sweep, fork server, tracker, 2 workers
    _send(proc, how)
    # communicate() returns at end of file: when no process is left holding the caller's
    # stdout and stderr (the terminal, for a user)
    _, err = proc.communicate(timeout=30)
    if how != "kill-9":
        assert proc.returncode == 130, err
        assert "0 of 2 cases" in err and "a rerun" in err
    _wait_for(lambda: not _session_processes(proc.pid), 10.0)
    assert _temps(tmp_path / "out") == []
    assert not list((tmp_path / "out").rglob("result.json"))


# -- honest outputs -------------------------------------------------------------------------
def test_allow_failed_outputs_say_the_robot_fell_and_when(tmp_path, capsys):
    import json

    p = write_synthetic_record(tmp_path / "f.h5", 0.4, 0.001, joints=["fl_knee"],
                               status="fell",
                               extra_attrs={"simulated_s": 0.4, "planned_s": 2.0})
    assert main(["loads", str(p)]) == 2  # refused without the option
    capsys.readouterr()
    assert main(["loads", str(p), "--allow-failed", "--json"]) == 0
    notes = json.loads(capsys.readouterr().out)["notes"]
    bad = [n for n in notes if "NOT A VALID DUTY CYCLE" in n]
    assert len(bad) == 1 and "fell" in bad[0] and "t = 0.400 s of the planned 2.000 s" in bad[0]
    assert main(["loads", str(p), "--allow-failed"]) == 0
    assert "NOT A VALID DUTY CYCLE" in capsys.readouterr().out


# -- Dask clusters --------------------------------------------------------------------------
def test_cluster_addresses_and_the_plain_tcp_warning():
    from sim.sweeps.cluster import parse_cluster_address, plain_tcp_warning

    assert str(parse_cluster_address("10.0.0.5:8786")) == "tcp://10.0.0.5:8786"
    assert str(parse_cluster_address("tls://[fd00::5]:8786")) == "tls://[fd00::5]:8786"
    assert "unencrypted" in plain_tcp_warning(parse_cluster_address("tcp://10.0.0.5:8786"))
    assert plain_tcp_warning(parse_cluster_address("tls://10.0.0.5:8786")) is None
    assert plain_tcp_warning(parse_cluster_address("tcp://127.0.0.1:8786")) is None
    assert plain_tcp_warning(parse_cluster_address("localhost:8786")) is None


def test_an_unreachable_scheduler_is_exit_2_and_writes_nothing(tmp_path, capsys):
    import socket

    with socket.socket() as s:  # a port on this machine that nothing listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    out = tmp_path / "o"
    assert main(["sweep", str(SCENARIOS / "sweep_ratio.toml"), "-o", str(out), "--cluster",
                 f"tcp://127.0.0.1:{port}"]) == 2
    err = capsys.readouterr().err
    assert "--cluster" in err and "reached" in err
    assert not out.exists()
