"""Sweep metric providers that run a ``gaitload`` command in-process and read its ``--json``.

Takes a provider name, an argument list built from the case
(:class:`~sim.sweeps.providers.CaseContext`) and the shape of the command's JSON, and adds a
metric provider to this process's registry (:func:`register_cli_provider`). The built-in
``loads.`` and ``check.`` providers call the library directly (:mod:`sim.sweeps.providers`);
this is for a command whose JSON has no library function of its own. It lives with the
commands because the library never imports them.
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable, Mapping
from typing import Any

from sim.core.errors import GaitloadError
from sim.sweeps.providers import CaseContext, MetricProvider, register_provider


def register_cli_provider(name: str, argv: Callable[[CaseContext], list[str]],
                          schema: Mapping[str, Any], command: str, doc: str = "",
                          needs_drivetrain: bool = False,
                          ok_codes: tuple[int, ...] = (0,)) -> MetricProvider:
    """Register a provider that runs ``gaitload <command> ... --json`` in-process.

    ``argv(ctx)`` builds the argument list for :func:`sim.commands.cli.main` (it must include
    ``--json``); stdout is captured and parsed as JSON. The provider is unavailable while the
    module ``sim.commands.<command>`` does not exist, and a metric that needs it is then
    rejected before any case runs, naming the metric.
    """
    module = f"sim.commands.{command}"

    def available() -> str | None:
        import importlib.util

        try:
            found = importlib.util.find_spec(module) is not None
        except (ImportError, ValueError):
            found = False
        return None if found else (f"the 'gaitload {command}' command, which this installation "
                                   f"does not have (no module {module})")

    def produce(ctx: CaseContext) -> Mapping[str, Any]:
        from contextlib import redirect_stderr, redirect_stdout

        from sim.commands.cli import main

        why = available()
        if why:
            raise GaitloadError(f"metric provider '{name}.' needs {why}")
        args = argv(ctx)
        out, err = io.StringIO(), io.StringIO()
        with redirect_stdout(out), redirect_stderr(err):
            code = main(args)
        if code not in ok_codes:
            raise GaitloadError(f"metric provider '{name}.': 'gaitload {' '.join(args)}' exited "
                                f"with {code}: {err.getvalue().strip()[-400:]}")
        try:
            doc = json.loads(out.getvalue())
        except json.JSONDecodeError as exc:
            raise GaitloadError(f"metric provider '{name}.': 'gaitload {command} --json' "
                                f"printed no JSON ({exc})") from None
        if not isinstance(doc, dict):
            raise GaitloadError(f"metric provider '{name}.': expected a JSON object")
        return doc

    return register_provider(MetricProvider(name, produce, schema, doc, needs_drivetrain,
                                            available))
