"""``gaitload sweep SWEEP.toml [-o DIR] [--workers N] [--cluster ADDRESS] [--json] [--strict]``.

Cases whose records fail the quality screen are ranked after the clean ones, marked ``*`` in
the table and ``quality`` in the CSV and JSON, and each gets its own ``QUALITY FLAGGED`` line
(stderr with ``--json``); ``--strict`` makes any flagged case exit 1.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

HELP = "run a design sweep in parallel and rank the cases"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("sweep", help="sweep file (scenarios/sweep_*.toml)")
    p.add_argument("-o", "--output", metavar="DIR",
                   help="output folder (default: <sweep name>_sweep here); a rerun into the "
                        "same folder runs only the missing or changed cases")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, metavar="N",
                       help="local worker processes (default: the CPUs available)")
    where.add_argument("--cluster", metavar="ADDRESS",
                       help="run the cases on an existing dask.distributed scheduler, "
                            "e.g. tcp://10.0.0.5:8786")
    p.add_argument("--tls-ca-file", metavar="FILE",
                   help="with --cluster tls://...: the certificate authority to trust")
    p.add_argument("--tls-cert", metavar="FILE", help="with --cluster tls://...: this "
                   "client's certificate")
    p.add_argument("--tls-key", metavar="FILE", help="with --cluster tls://...: this "
                   "client's private key")
    p.add_argument("--shared-output", action="store_true",
                   help="with --cluster: the workers see DIR at the same path and write the "
                        "records there (default: records are sent back to this machine)")
    p.add_argument("--no-plots", action="store_true", help="write no plots")
    p.add_argument("--json", action="store_true", help="print only the JSON summary on stdout")
    p.add_argument("--strict", action="store_true",
                   help="exit 1 when a case's record fails the quality screen")


def execute(args: argparse.Namespace) -> int:
    from sim.core.atomic import output_batch
    from sim.core.errors import InputError
    from sim.core.paths import check_output_dir
    from sim.sweeps.cases import jsonable
    from sim.sweeps.cluster import cluster_security, parse_cluster_address, plain_tcp_warning
    from sim.sweeps.executors import run_sweep
    from sim.sweeps.ranking import CAUTION, format_table, write_outputs
    from sim.sweeps.spec import load_sweep

    if args.workers is not None and args.workers < 1:
        raise InputError("--workers", None, "a worker count of at least 1", args.workers)
    out = Path(args.output) if args.output else Path(Path(args.sweep).stem + "_sweep")
    check_output_dir(out, "-o")
    addr = parse_cluster_address(args.cluster) if args.cluster else None
    security = cluster_security(args.tls_ca_file, args.tls_cert, args.tls_key, addr)
    if addr is not None and (warning := plain_tcp_warning(addr)):
        print(f"gaitload sweep: {warning}", file=sys.stderr)
    sweep = load_sweep(args.sweep)  # every input error is raised here, before any output
    t0 = time.perf_counter()
    result = run_sweep(sweep, out, workers=args.workers,
                       cluster=None if addr is None else str(addr),
                       shared_output=args.shared_output, progress=True, security=security)
    elapsed = time.perf_counter() - t0
    plots: list[Path] = []
    with output_batch():  # the table, the summary and the plots, all or none
        csv_path, json_path = write_outputs(result)
        if not args.no_plots:
            from sim.figures.sweep import write_plots

            plots = write_plots(result, out / "plots")
    summary = result.summary()
    print(f"gaitload sweep: {len(result.cases)} cases, {result.n_run} run, {result.n_reused} "
          f"reused, {elapsed:.1f} s", file=sys.stderr)
    flags = [f"QUALITY FLAGGED case {c.index} ({result.record_path(c.index)}): {c.quality}"
             for c in result.cases if c.flagged]
    if args.json:
        doc = dict(summary, results_csv=str(csv_path), summary_json=str(json_path),
                   plots=[str(p) for p in plots], cases_run=result.n_run,
                   cases_reused=result.n_reused)
        print(json.dumps(jsonable(doc), indent=2))
        for line in flags:
            print(line, file=sys.stderr)
    else:
        print(format_table(result))
        w, r = summary["winner"], summary["runner_up"]
        if w is None:
            print(f"no case completed; see {csv_path} for each status and reason")
        else:
            text = f"winner: case {w['case']} {w['params']}  {sweep.rank_metric} = {w['value']:.6g}"
            if w["flagged"]:
                text += " (flagged by the quality screen: no clean case)"
            if r is not None:
                m = summary["margin"]
                rel = "" if m["rel"] is None else f" ({100 * m['rel']:.2f} %)"
                text += f"; runner-up case {r['case']} by {m['abs']:.4g}{rel}"
            print(text)
        failed = [c for c in result.cases if c.status != "completed"]
        for c in failed:
            print(f"case {c.index} {c.status}: {c.reason}")
        for line in flags:
            print(line)
        print(f"table: {csv_path}  summary: {json_path}")
        print(CAUTION)
    if not result.ranked:
        return 3
    return 1 if args.strict and flags else 0
