"""Command-line entry point: a thin layer over the library.

Each sub-command lives in ``sim/commands/<name>.py`` and provides ``HELP`` (one line),
``add_arguments(parser)`` and ``execute(args) -> int``. Modules are imported only when their
command runs, so ``gaitload loads`` never imports the physics engine.
"""

from __future__ import annotations

import argparse
import ctypes
import importlib
import signal
import sys
import threading
from collections.abc import Callable, Sequence

from sim import __version__
from sim.core.errors import GaitloadError

# name -> (module, one-line help); the help is repeated here so --help imports nothing heavy
COMMANDS: dict[str, tuple[str, str]] = {
    "model": ("sim.commands.model", "check a robot model file and write its URDF"),
    "run": ("sim.commands.run", "simulate a scenario and write an HDF5 run record"),
    "demo": ("sim.commands.demo", "run the demo set on the invented demo robot"),
    "loads": ("sim.commands.loads", "reduce run records to duty spectra"),
    "check": ("sim.commands.check", "check reducers, motors and supply against the spectra"),
    "sweep": ("sim.commands.sweep", "run a design sweep in parallel and rank the cases"),
}


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="gaitload",
        description="Duty cycles, reducer life and motor heating for walking-robot joints. "
                    "Results are estimates: manufacturer ratings, local codes and licensed "
                    "engineering practice take precedence.")
    parser.add_argument("--version", action="version", version=f"gaitload {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (modname, help_text) in COMMANDS.items():
        # no -h of its own: ``gaitload run --help`` is left to the command's full parser
        # (built in :func:`main` once the command is known), which lists every option
        p = sub.add_parser(name, help=help_text, description=help_text, add_help=False)
        p.set_defaults(_module=modname)
        p.set_defaults(_needs_args=True)
        p.set_defaults(_name=name)
    return parser


# glibc mallopt parameters (malloc.h) and the values set by keep_freed_memory
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_MMAP_THRESHOLD_BYTES = 4 << 20
_TRIM_THRESHOLD_BYTES = 64 << 20


def keep_freed_memory() -> bool:
    """Let glibc's malloc keep some freed memory for reuse; True if it was set.

    Post-processing works chunk by chunk and allocates and frees arrays of a few MiB per
    chunk. With glibc's default, adaptive thresholds such arrays are often handed back to the
    system when freed and faulted in (and zeroed) again at the next chunk: on a 1 h, 1 kHz,
    12-joint record ``gaitload loads`` took 0.85-1.4 M minor page faults and up to 60 % more
    time. Arrays below 4 MiB now come from the heap, and up to 64 MiB of free heap is kept
    for reuse; peak memory stays the same (it is set by the chunk size). Process-wide, so it
    is called by :func:`main`, not by the library; does nothing where libc is not glibc.
    """
    if not sys.platform.startswith("linux"):
        return False
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    return bool(mallopt(_M_MMAP_THRESHOLD, _MMAP_THRESHOLD_BYTES)
                and mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD_BYTES))


def _raise_interrupt(signum: int, frame: object) -> None:
    raise KeyboardInterrupt(f"signal {signal.Signals(signum).name}")


def _terminate_as_interrupt() -> Callable[[], None]:
    """Make SIGTERM (and SIGHUP) behave like Ctrl-C while a command runs, so every clean-up
    done on Ctrl-C (temporary files removed, an interrupted record kept beside a completed
    one, sweep workers stopped) is done on them too; return the function that restores the
    previous handlers. Does nothing outside the main thread (signals go to it only)."""
    if threading.current_thread() is not threading.main_thread():
        return lambda: None
    old = {}
    for sig in (signal.SIGTERM, getattr(signal, "SIGHUP", None)):
        # a signal ignored on purpose (nohup ignores SIGHUP) stays ignored
        if sig is not None and signal.getsignal(sig) is not signal.SIG_IGN:
            old[sig] = signal.signal(sig, _raise_interrupt)

    def restore() -> None:
        for sig, handler in old.items():
            signal.signal(sig, handler)

    return restore


def main(argv: Sequence[str] | None = None) -> int:
    """Run gaitload with ``argv`` (without the program name); return the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    keep_freed_memory()
    parser = build_parser()
    # first pass: find the command, then let its module add its own arguments
    try:
        known, _ = parser.parse_known_args(argv)
    except SystemExit as exc:  # an unknown command, --version or --help
        return int(exc.code or 0)
    if not getattr(known, "command", None):
        parser.print_help()
        return 2
    module = importlib.import_module(known._module)
    sub = argparse.ArgumentParser(prog=f"gaitload {known._name}",
                                  description=COMMANDS[known._name][1])
    module.add_arguments(sub)
    idx = argv.index(known._name)
    try:
        args = sub.parse_args(argv[idx + 1:])
    except SystemExit as exc:  # argparse error or --help
        return int(exc.code or 0)
    restore = _terminate_as_interrupt()
    try:
        return int(module.execute(args))
    except GaitloadError as exc:
        print(f"gaitload {known._name}: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (see _terminate_as_interrupt)
        detail = getattr(exc, "detail", "")
        print(f"gaitload {known._name}: interrupted" + (f": {detail}" if detail else ""),
              file=sys.stderr)
        return 130
    finally:
        restore()


def entry() -> None:
    sys.exit(main())
