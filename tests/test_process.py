"""The command as a real process: the few checks an in-process call of ``solver.cli.main`` cannot make.

Everything else calls the command in-process (the ``cli`` fixture of conftest.py); these
tests spawn an interpreter on purpose: the console entry declared in pyproject.toml,
``python -m solver``, the exit code the operating system sees, and a stderr free of
tracebacks (the project's rule: user errors exit 2 with ``FILE:LINE:COL: error:``, GNU
Coding Standards, section 4.4, from memory).
"""
from __future__ import annotations

import os
import re
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from conftest import CIRCUITS, ROOT

GNU = re.compile(r"^(?P<file>[^:\n]+):(?P<line>\d+):(?P<col>\d+): error: ", re.M)


def test_console_entry_is_declared_and_runs():
    # pyproject.toml names solver.cli:entry as the `portwise` script (PEP 621 [project.scripts])
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert meta["project"]["scripts"] == {"portwise": "solver.cli:entry"}
    # call exactly that object in a fresh interpreter, the way the generated script does
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONIOENCODING="utf-8")
    code = "import sys; sys.argv = ['portwise', '--version']; from solver.cli import entry; entry()"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "portwise " + meta["project"]["version"]


def test_installed_script_if_present():
    script = Path(sys.executable).with_name("portwise")
    if not script.exists():
        pytest.skip("no portwise script next to this interpreter")
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONIOENCODING="utf-8")
    r = subprocess.run([str(script), "solve", CIRCUITS / "mic_preamp.pw"], capture_output=True, text=True,
                       cwd=ROOT, env=env, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "Avo" in r.stdout


def test_python_m_solver_exit_codes(real_cli, netlist):
    ok = real_cli("solve", CIRCUITS / "mic_preamp.pw")
    assert ok.returncode == 0, ok.stderr
    assert "Rin" in ok.stdout and ok.stderr == ""
    bare = real_cli()  # no command: the help text and exit 2 (bad input)
    assert bare.returncode == 2 and "COMMAND" in bare.stdout
    usage = real_cli("solve", CIRCUITS / "mic_preamp.pw", "--no-such-option")
    assert usage.returncode == 2 and "portwise: error: unrecognized arguments" in usage.stderr


def test_real_process_user_error_is_exit_2_without_traceback(real_cli, netlist):
    p = netlist("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd 1k\noutput (a, gnd)\n")
    r = real_cli("solve", p)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr
    m = GNU.search(r.stderr)
    assert m and m.group("file") == str(p) and m.group("line") == "2", r.stderr
