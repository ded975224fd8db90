"""The command line, a thin skin over the library: :mod:`.cli` dispatches ``gaitload <command>``
to ``sim.commands.<command>``; each command parses its arguments, calls the library and formats
the result. :mod:`.cli_provider` registers sweep metric providers that run a command
in-process and read its ``--json``. Nothing in the library imports this package.
"""
