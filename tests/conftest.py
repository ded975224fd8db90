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


# a short demo trot: 0.5 s stand, 2.5 s trot, the first 1.5 s left out
TROT = ["segment.1.duration_s=2.5", "record.start_s=1.5"]
# the knee's damping far past the explicit step's alternation limit, kd dt / J > 1 (J the
# knee's swing inertia with its rotor, 0.0093 kg m^2; sim/drive/gains.py): b = 1.9, inside the
# stability bound 2, so the knees ring at period two steps and the robot still trots
CHATTER = [*TROT, "control.kd_nm_s_rad.knee=18"]


@pytest.fixture(scope="session")
def trot_records(tmp_path_factory) -> dict[str, Path]:
    """Short demo trots: every step (dec1), decimated by 10 (dec10), and made to chatter."""
    from sim.engine.runner import run
    from sim.scenario.scenario_file import load_scenario

    d = tmp_path_factory.mktemp("screen")
    out = {}
    for name, extra in (("dec1", []), ("dec10", ["record.decimation=10"]),
                        ("chatter", CHATTER[len(TROT):])):
        scn = load_scenario(SCENARIOS / "trot.toml", [*TROT, *extra,
                                                      "record.life_exponents=[9.0]"])
        res = run(scn, d / f"{name}.h5")
        assert res.status == "completed", res.detail
        out[name] = d / f"{name}.h5"
    return out
