"""The one-way dependency rule of sim/__init__.py, checked on the source and on imports."""

from __future__ import annotations

import re
import subprocess
import sys

from .conftest import ROOT


def _importers(module: str) -> set[str]:
    pat = re.compile(rf"^\s*(import {module}\b|from {module}\b)", re.M)
    return {str(p.relative_to(ROOT)) for p in (ROOT / "sim").rglob("*.py")
            if pat.search(p.read_text())}


def test_only_the_runner_imports_the_engine_and_only_record_touches_h5py():
    assert _importers("pybullet") == {"sim/runner.py"}
    assert _importers("h5py") == {"sim/record.py"}


def test_post_processing_and_checks_never_load_the_engine():
    code = ("import sys\n"
            "import sim.spectra, sim.rainflow, sim.mix, sim.plots, sim.drivetrain\n"
            "import sim.checks.reducer, sim.checks.motor, sim.checks.thermal\n"
            "import sim.checks.supply, sim.commands.loads, sim.commands.check\n"
            "print('pybullet' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, check=True).stdout.strip()
    assert out == "False"
