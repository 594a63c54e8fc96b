"""Shared test setup: paths of the repository and a helper to run the real command line."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = ROOT / "fixtures"


def run_cli(*args: str, cwd: Path | None = None, env: dict | None = None) -> subprocess.CompletedProcess:
    """Run ``python -m optlint`` as a user would, in a fresh process."""
    full_env = dict(os.environ)
    full_env.pop("FORCE_COLOR", None)
    full_env["NO_COLOR"] = "1"
    if env:
        full_env.update(env)
    return subprocess.run([sys.executable, "-m", "optlint", *args], capture_output=True, text=True,
                          cwd=str(cwd or ROOT), env=full_env, timeout=300)


@pytest.fixture
def cli():
    return run_cli
