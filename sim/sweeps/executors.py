"""Running a sweep: the missing cases on a local process pool or on Dask, then the ranking.

Takes a :class:`~.spec.Sweep` and an output folder and gives the :class:`~.ranking.SweepResult`
(:func:`run_sweep`). Cases already stored with a final status are reused (:mod:`.cases`);
the others run in worker processes, each through :func:`~.cases.run_case`: a local
``concurrent.futures`` pool started with ``forkserver`` (``spawn`` where that does not exist),
or the workers of a ``dask.distributed`` scheduler. Results do not depend on the executor, the
worker count or the order in which cases finish.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from sim.core.errors import InputError, Interrupted
from sim.sweeps.cases import load_case_result, resolve_cases, run_case, store_case
from sim.sweeps.ranking import SweepResult, case_result, rank_cases
from sim.sweeps.spec import Sweep

# the fork server imports the engine and the case code once; workers forked from it start at
# once and together, so the first cases do not queue behind one worker's imports. Module names
# (a name that does not import is skipped silently by multiprocessing; tests/test_sweep.py
# imports each); run_case's module imports the metrics and providers it needs.
FORKSERVER_PRELOAD: tuple[str, ...] = (run_case.__module__, "sim.engine.runner")


def available_cpus() -> int:
    """CPUs this process may use."""
    if hasattr(os, "sched_getaffinity"):
        return len(os.sched_getaffinity(0))
    return os.cpu_count() or 1


def _mp_context() -> Any:
    import multiprocessing as mp

    methods = mp.get_all_start_methods()
    if "forkserver" not in methods:
        return mp.get_context("spawn")
    ctx = mp.get_context("forkserver")
    ctx.set_forkserver_preload(list(FORKSERVER_PRELOAD))
    return ctx


# how often a worker looks whether the sweep that started it still runs
WATCH_PERIOD_S = 0.5


def _stop_worker(*_: object) -> None:
    """End this worker now, removing its temporary files first (no half record is left)."""
    from sim.core.atomic import remove_own_temps

    remove_own_temps()
    os._exit(143)


def _watch_sweep(pid: int) -> None:
    import time

    from sim.core.atomic import process_alive

    while process_alive(pid):
        time.sleep(WATCH_PERIOD_S)
    _stop_worker()


def init_worker(sweep_pid: int) -> None:
    """Set up a local worker process: Ctrl-C in the terminal reaches every process of the
    group, so a worker ignores SIGINT and leaves stopping to the sweep; SIGTERM (sent by the
    sweep when it is interrupted) ends it at once without leftovers; and a watcher thread
    ends it within :data:`WATCH_PERIOD_S` of the sweep's death (``kill -9``), so no worker
    keeps running, and the fork server and resource tracker, which live as long as a worker
    holds their pipes, end with it."""
    import signal
    import threading

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, _stop_worker)
    threading.Thread(target=_watch_sweep, args=(sweep_pid,), name="gaitload-sweep-watch",
                     daemon=True).start()


def _execute_local(specs: list[dict[str, Any]], out_dir: Path, workers: int,
                   done: Callable[[dict[str, Any]], None]) -> None:
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    with ProcessPoolExecutor(max_workers=max(1, min(workers, len(specs))),
                             mp_context=_mp_context(), initializer=init_worker,
                             initargs=(os.getpid(),)) as pool:
        futs = {pool.submit(run_case, s, str(out_dir)): s for s in specs}
        try:
            for f in as_completed(futs):
                try:
                    done(f.result())
                except BrokenProcessPool:
                    done({"key": futs[f]["key"], "status": "error", "metrics": {},
                          "reason": "the worker process died (out of memory or a crash)"})
                except Exception as exc:  # raised outside run_case's own handling
                    done({"key": futs[f]["key"], "status": "error", "metrics": {},
                          "reason": f"the case raised {exc!r}"})
        except BaseException:
            # interrupted (Ctrl-C, SIGTERM) or failed: stop the running cases now rather
            # than wait for them; each worker removes its temporary files as it ends
            for proc in list(getattr(pool, "_processes", {}).values()):
                if proc.is_alive():
                    proc.terminate()
            pool.shutdown(wait=True, cancel_futures=True)
            raise


def _execute_dask(specs: list[dict[str, Any]], out_dir: Path, cluster: Any, shared: bool,
                  done: Callable[[dict[str, Any]], None], security: Any = None) -> None:
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise InputError("--cluster", None, "dask.distributed installed (pip install "
                         "'gaitload[cluster]')") from None
    own = not isinstance(cluster, Client)
    try:
        client = (Client(str(cluster), timeout=10, security=security) if own else cluster)
    except (OSError, TimeoutError, ValueError, TypeError) as exc:
        raise InputError("--cluster", None, "a Dask scheduler that can be reached "
                         f"({type(exc).__name__}: {exc})", str(cluster)) from None
    try:
        target = str(out_dir) if shared else None
        futs = client.map(run_case, specs, out_dir=target, pure=False)
        for f in as_completed(futs):
            try:
                done(f.result())
            except Exception as exc:  # a worker lost or a task failed outside run_case
                spec = specs[futs.index(f)]
                done({"key": spec["key"], "status": "error", "metrics": {},
                      "reason": f"the Dask task failed: {exc!r}"})
            f.release()
    finally:
        if own:
            client.close()


def run_sweep(sweep: Sweep, out_dir: str | Path, workers: int | None = None,
              cluster: Any = None, shared_output: bool = False,
              progress: bool = False, security: Any = None) -> SweepResult:
    """Run the missing cases of ``sweep`` into ``out_dir`` and rank all of them.

    ``workers``: local process pool size (default: the CPUs available). ``cluster``: a Dask
    scheduler address (or a ``dask.distributed.Client``) to run the cases there instead; with
    ``shared_output`` the workers write records straight into ``out_dir`` (a folder they all
    see at the same path), otherwise records come back to this process. Results do not depend
    on the executor, the worker count or the order in which cases finish.
    """
    out_dir = Path(out_dir)
    cases = resolve_cases(sweep)
    stored: dict[str, dict[str, Any]] = {}
    todo: dict[str, dict[str, Any]] = {}
    for c in cases:
        if c.key in stored or c.key in todo:
            continue
        prev = load_case_result(out_dir, c.key)
        if prev is not None:
            stored[c.key] = prev
        elif c.spec is None:
            stored[c.key] = store_case(out_dir, c, {"key": c.key, "status": "bad_input",
                                                    "reason": c.error or "", "metrics": {}})
        else:
            todo[c.key] = c.spec
    by_key = {c.key: c for c in cases}
    bar = None
    if progress and sys.stderr.isatty() and todo:
        from tqdm import tqdm

        bar = tqdm(total=len(todo), unit="case", desc="sweep", file=sys.stderr)

    cpu: dict[int, float] = {}

    def done(res: dict[str, Any]) -> None:
        if "pid" in res:
            cpu[res["pid"]] = max(cpu.get(res["pid"], 0.0), float(res["process_cpu_s"]))
        stored[res["key"]] = store_case(out_dir, by_key[res["key"]], res)
        if bar is not None:
            bar.update(1)

    specs = list(todo.values())
    try:
        if specs:
            if cluster is not None:
                _execute_dask(specs, out_dir, cluster, shared_output, done, security)
            else:
                _execute_local(specs, out_dir, workers or available_cpus(), done)
    except KeyboardInterrupt:
        finished = sum(1 for k in todo if k in stored)
        raise Interrupted(f"sweep stopped with {finished} of {len(specs)} cases to run done "
                          f"(stored in {out_dir / 'cases'}; a rerun into {out_dir} runs only "
                          "the rest)") from None
    finally:
        if bar is not None:
            bar.close()
    results = [case_result(c, stored[c.key], sweep) for c in cases]
    ranked = rank_cases(results, sweep.rank_metric, sweep.rank_goal)
    return SweepResult(sweep, out_dir, tuple(results), ranked, len(specs),
                       len(cases) - len(specs), cpu)

