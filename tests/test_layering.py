"""The stage order of the package (sim/__init__.py, DEVELOPERS.md), checked on the source.

Stages, in the order data flows: core, robot, drive, scenario, record, engine, loads, checks,
sweeps, figures, commands. A module may import from its own stage and from stages before it;
nothing but the commands imports the figures, and nothing imports the commands. Imports inside
functions (lazy imports) count like any other.
"""

from __future__ import annotations

import ast
import re
import shutil
import subprocess
import sys
from pathlib import Path

from .conftest import ROOT

STAGES = ("core", "parts", "robot", "drive", "scenario", "record", "engine", "loads", "checks",
          "sweeps", "figures", "commands")

# Known exceptions, each with its reason: {(importer path, imported module): why}. The list
# only shrinks; it is empty now (the sweep's loads./check. providers call the library).
ALLOWED: dict[tuple[str, str], str] = {}


def _importers(module: str) -> set[str]:
    pat = re.compile(rf"^\s*(import {module}\b|from {module}\b)", re.M)
    return {str(p.relative_to(ROOT)) for p in (ROOT / "sim").rglob("*.py")
            if pat.search(p.read_text())}


def _stage(dotted: str) -> str | None:
    parts = dotted.split(".")
    if parts[0] != "sim" or len(parts) < 2:
        return None
    return parts[1] if parts[1] in STAGES else None


def imports_of(path: Path) -> set[str]:
    """Every ``sim.*`` module that a source file imports, at any depth of the file."""
    out: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names if a.name.startswith("sim."))
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "sim":  # from sim import gait: a submodule or a name
                out.update(f"sim.{a.name}" for a in node.names)
            elif node.module.startswith("sim."):
                out.add(node.module)
    return out


def layering_violations(root: Path) -> list[str]:
    """``importer -> imported`` pairs that break the stage order, as readable lines."""
    bad = []
    for path in sorted((root / "sim").rglob("*.py")):
        rel = str(path.relative_to(root))
        parts = path.relative_to(root / "sim").parts
        if len(parts) == 1:  # sim/__init__.py (names only) and sim/__main__.py (entry point)
            continue
        me = parts[0] if parts[0] in STAGES else Path(parts[0]).stem
        if me not in STAGES:
            bad.append(f"{rel}: not in any stage ({', '.join(STAGES)})")
            continue
        for mod in sorted(imports_of(path)):
            them = _stage(mod)
            if them is None or (rel, mod) in ALLOWED:
                continue
            if STAGES.index(them) > STAGES.index(me):
                bad.append(f"{rel} ({me}) imports {mod} ({them}), a later stage")
            elif them == "figures" and me not in ("figures", "commands"):
                bad.append(f"{rel} ({me}) imports {mod}: only the commands use figures")
    return bad


def test_every_module_imports_only_its_own_and_earlier_stages():
    assert layering_violations(ROOT) == []


def test_the_exceptions_still_exist():
    # an exception that no longer happens must leave the list
    for (rel, mod), why in ALLOWED.items():
        assert mod in imports_of(ROOT / rel), (rel, mod, why)


def test_a_wrong_import_is_caught(tmp_path):
    shutil.copytree(ROOT / "sim", tmp_path / "sim")
    assert layering_violations(tmp_path) == []
    victim = tmp_path / "sim" / "robot" / "kinematics.py"
    victim.write_text(victim.read_text() + "\nfrom sim.loads.spectra import JointSpectrum\n")
    lazy = tmp_path / "sim" / "loads" / "mix.py"
    lazy.write_text(lazy.read_text() + "\n\ndef _late():\n    import sim.figures.loads\n")
    found = layering_violations(tmp_path)
    assert len(found) == 2, found
    assert "sim/loads/mix.py (loads) imports sim.figures.loads (figures)" in found[0]
    assert "sim/robot/kinematics.py (robot) imports sim.loads.spectra (loads)" in found[1]


def test_only_the_runner_imports_the_engine_and_only_record_touches_h5py():
    assert _importers("pybullet") == {"sim/engine/world.py"}
    assert _importers("h5py") == {"sim/record.py"}


def test_post_processing_and_checks_never_load_the_engine():
    code = ("import sys\n"
            "import sim.loads.spectra, sim.loads.series, sim.loads.report, sim.loads.rainflow\n"
            "import sim.loads.damage, sim.loads.mix, sim.figures.loads\n"
            "import sim.checks.drivetrain_file, sim.checks.reducer, sim.checks.motor\n"
            "import sim.checks.thermal, sim.checks.supply, sim.commands.loads\n"
            "import sim.commands.check\n"
            "print('pybullet' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, check=True).stdout.strip()
    assert out == "False"
