"""Shared test helpers. The repository root comes first on sys.path so the tests
exercise this checkout even when another copy of portwise is installed."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
CIRCUITS = ROOT / "circuits"


def run_cli(*args: str, cwd: Path | None = None, input: str | None = None) -> subprocess.CompletedProcess:
    """Run ``python -m solver ARGS`` from this checkout; returns the completed process."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONIOENCODING="utf-8")
    return subprocess.run([sys.executable, "-m", "solver", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd or ROOT, env=env, input=input, timeout=120)


@pytest.fixture
def cli():
    return run_cli


@pytest.fixture
def netlist(tmp_path):
    """Write netlist text to a file and return its path."""
    def write(text: str, name: str = "t.pw") -> Path:
        p = tmp_path / name
        p.write_text(text, encoding="utf-8")
        return p
    return write
