"""Shared fixtures: a settled stand of the demo robot, simulated once per test session."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import settings

# property tests draw the same examples on every run, so the suite's outcome is reproducible
settings.register_profile("reproducible", derandomize=True)
settings.load_profile("reproducible")

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = ROOT / "scenarios"
MODELS = ROOT / "models"


@pytest.fixture(scope="session")
def stand_record(tmp_path_factory) -> Path:
    """A 2.5 s stand (first 1.5 s settling left out) of the demo robot."""
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    scn = load_scenario(SCENARIOS / "stand.toml",
                        ["segment.0.duration_s=2.5", "record.start_s=1.5"])
    out = tmp_path_factory.mktemp("stand") / "stand.h5"
    res = run(scn, out)
    assert res.status == "completed", res.detail
    return out
