"""``python -m sim`` is the same as the ``gaitload`` command."""

from sim.cli import entry

entry()
