"""The code base stays lint-clean (ruff, configured in pyproject.toml)."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_clean():
    try:
        import ruff  # noqa: F401
    except ImportError:
        if shutil.which("ruff") is None:
            pytest.skip("ruff is not installed (it comes with the test extra)")
    res = subprocess.run(
        [sys.executable, "-m", "ruff", "check", "mapsection", "tests", "sample_area"],
        cwd=ROOT, capture_output=True, text=True,
    )
    assert res.returncode == 0, res.stdout + res.stderr
