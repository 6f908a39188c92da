"""Helpers shared by the subcommands: reading a frequency, printing warnings, writing files."""
from __future__ import annotations

import json
import math
import os
import sys
import tempfile
from pathlib import Path

from solver.diagnostics import error
from solver.language.units import HERTZ, UnitError, parse_quantity


def option_quantity(text: str, option: str, units: tuple, unit_hint: str) -> float:
    """A number with an optional prefix and unit from the command line, in one of ``units``.

    Bad text is bad input (exit 2) naming the option; None in ``units`` admits a bare number.
    """
    try:
        value, d = parse_quantity(text.strip())
    except UnitError as e:
        raise error(None, f"{option}: {e}") from None
    if d not in units:
        raise error(None, f"{option}: {unit_hint}")
    return value


def frequency(text: str, option: str = "--at") -> float:
    """Parse ``10kHz``, ``1e3``, ``2.2 MHz`` for an option; bad text is bad input (exit 2)."""
    value = option_quantity(text, option, (None, HERTZ), "a frequency is in Hz")
    if not (value >= 0) or not math.isfinite(value):
        raise error(None, f"{option}: a frequency is a non-negative number")
    return value


def emit_json(obj) -> None:
    sys.stdout.write(json.dumps(obj, indent=2, allow_nan=False) + "\n")  # one write, not one per token


def print_warnings(warnings) -> None:
    """Print diagnostics (a list, as the pipeline and the results return them) to stderr."""
    from solver.cli import print_diagnostics
    if warnings:
        print_diagnostics(warnings)


def write_file(path: str | Path, data: bytes | str, force: bool = False) -> None:
    """Write atomically (temporary file, then rename); refuse to replace a file without force."""
    p = Path(path)
    if p.is_dir():
        raise error(None, f"'{p}' is a folder, not a file name")
    if p.exists() and not force:
        raise error(None, f"'{p}' exists; use --force to replace it")
    if not p.parent.exists():
        raise error(None, f"folder '{p.parent}' does not exist")
    raw = data.encode("utf-8") if isinstance(data, str) else data
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", dir=p.parent)
    except OSError as e:
        raise error(None, f"cannot write in '{p.parent}': {e.strerror or e}") from None
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(raw)
        os.replace(tmp, p)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):  # disk full, permissions: bad input for the user, not a crash
            raise error(None, f"cannot write '{p}': {exc.strerror or exc}") from None
        raise
