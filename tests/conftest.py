"""Shared test fixtures.

``run_cli`` runs ``python -m winder`` in a subprocess against this checkout,
with sessions confined to a temporary data directory (``WINDER_DATA_DIR``).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PROFILES = ROOT / "profiles"

os.environ.setdefault("TEXTUAL_ANIMATIONS", "none")


def cli_env(data_dir: Path | None = None) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["TEXTUAL_ANIMATIONS"] = "none"
    if data_dir is not None:
        env["WINDER_DATA_DIR"] = str(data_dir)
    return env


@pytest.fixture
def run_cli(tmp_path):
    """Run ``winder ARGS...``; returns the CompletedProcess (text mode)."""

    def run(*args: str, timeout: float = 60, input: str | None = None,
            cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
        return subprocess.run(
            [sys.executable, "-m", "winder", *map(str, args)],
            capture_output=True, text=True, timeout=timeout, input=input,
            env=cli_env(tmp_path / "data"), cwd=cwd or ROOT,
        )

    return run
