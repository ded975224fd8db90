"""``python -m sim`` is the same as the ``gaitload`` command."""

from sim.commands.cli import entry

entry()
