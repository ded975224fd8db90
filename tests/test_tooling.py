"""Tooling that bites: the lint and type checks configured in pyproject.toml must pass."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from .conftest import ROOT


def _tool(name: str) -> str:
    local = Path(sys.executable).with_name(name)  # the tool installed beside this Python
    exe = str(local) if local.exists() else shutil.which(name)
    if exe is None:
        pytest.skip(f"{name} is not installed (it comes with the test extras)")
    return exe


def test_ruff_lint_passes():
    res = subprocess.run([_tool("ruff"), "check", "sim", "tests"], cwd=ROOT,
                         capture_output=True, text=True)
    assert res.returncode == 0, res.stdout + res.stderr


def test_mypy_passes():
    res = subprocess.run([_tool("mypy")], cwd=ROOT, capture_output=True, text=True)
    assert res.returncode == 0, res.stdout + res.stderr
