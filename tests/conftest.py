"""Shared test helpers. The repository root comes first on sys.path so the tests
exercise this checkout even when another copy of portwise is installed.

Two ways to run the command line, with the same (returncode, stdout, stderr) shape:

* ``cli`` calls ``solver.cli.main(argv)`` in this process (fast; the default for every
  test that checks what a command prints or returns);
* ``real_cli`` spawns ``python -m solver`` (slow; kept for the few tests that check the
  process itself: the console entry, a real exit code, no traceback on a real stderr).
"""
from __future__ import annotations

import contextlib
import io
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


def run_main(*args: str, cwd: Path | None = None, input: str | None = None) -> subprocess.CompletedProcess:
    """Run ``solver.cli.main(ARGS)`` in this process, from ``cwd`` (the checkout by default).

    Returns a ``subprocess.CompletedProcess`` like :func:`run_cli`: the exit code (argparse's
    ``SystemExit`` included) and everything written to stdout and stderr.
    """
    from solver import cli as C
    out, err = io.StringIO(), io.StringIO()
    old = os.getcwd()
    stdin = sys.stdin
    try:
        os.chdir(cwd or ROOT)
        sys.stdin = io.StringIO(input or "")
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = C.main([str(a) for a in args])
            except SystemExit as e:  # --help, --version and usage errors end through argparse
                code = e.code if isinstance(e.code, int) else (0 if e.code is None else 1)
    finally:
        sys.stdin = stdin
        os.chdir(old)
    return subprocess.CompletedProcess(["portwise", *map(str, args)], code, out.getvalue(), err.getvalue())


@pytest.fixture
def cli():
    """The command line called in-process (same result shape as ``real_cli``)."""
    return run_main


@pytest.fixture
def real_cli():
    """The command line as a real ``python -m solver`` process."""
    return run_cli


@pytest.fixture
def netlist(tmp_path):
    """Write netlist text to a file and return its path."""
    def write(text: str, name: str = "t.pw") -> Path:
        p = tmp_path / name
        p.write_text(text, encoding="utf-8")
        return p
    return write
