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
    from solver.language.parse import compatibility_forms
    text = compatibility_forms(text.strip())  # 50 Ω typed with the ohm sign, full-width digits
    sign = -1.0 if text.startswith("-") else 1.0
    try:  # a leading sign is read here (the netlist's numbers take it as an operator)
        value, d = parse_quantity(text[1:].lstrip() if text[:1] in "+-" and text[1:2] else text)
    except UnitError as e:
        raise error(None, f"{option}: {e}") from None
    if d not in units:
        raise error(None, f"{option}: {unit_hint}")
    return sign * value


def frequency(text: str, option: str = "--at") -> float:
    """Parse ``10kHz``, ``1e3``, ``2.2 MHz`` for an option; bad text is bad input (exit 2).

    0 is DC; a negative frequency is refused in so many words.
    """
    value = option_quantity(text, option, (None, HERTZ), "a frequency is in Hz")
    if value < 0:
        dc = "; 0 means DC" if option == "--at" else ""
        raise error(None, f"{option}: frequency must be positive (got {text.strip()}{dc})")
    if not math.isfinite(value):
        raise error(None, f"{option}: a frequency is a finite number")
    return value


def emit_json(obj) -> None:
    sys.stdout.write(json.dumps(obj, indent=2, allow_nan=False) + "\n")  # one write, not one per token


def print_warnings(warnings) -> None:
    """Print diagnostics (a list, as the pipeline and the results return them) to stderr."""
    from solver.cli import print_diagnostics
    if warnings:
        print_diagnostics(warnings)


def add_force(p) -> None:
    """``--force``: analyse a bias-solved transistor outside its amplifying region (the same on every command)."""
    p.add_argument("--force", action="store_true", help="analyse even when a bias-solved transistor is outside "
                   "its amplifying region (the output warns that the results do not describe the circuit)")


def add_overwrite(p) -> None:
    """``--overwrite``: replace output files that exist (the same on every command that writes one)."""
    p.add_argument("--overwrite", action="store_true", help="replace output files that exist")


def plot_format(path: str | None) -> str | None:
    """The image format of a --plot file name ("png" or "svg"; None without one); another ending
    is bad input."""
    if not path:
        return None
    fmt = Path(path).suffix.lower().lstrip(".")
    if fmt not in ("png", "svg"):
        raise error(None, "--plot: the file name ends in .png or .svg")
    return fmt


def refuse_existing(paths, overwrite: bool) -> None:
    """Before any work: an output file that exists is an error unless ``overwrite``."""
    for out in paths:
        if out and Path(out).exists() and not Path(out).is_dir() and not overwrite:
            raise error(None, f"'{out}' exists; use --overwrite to replace it")


def _umask() -> int:
    """The process umask (reading it means setting it: set it straight back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_file(path: str | Path, data: bytes | str, overwrite: bool = False, *, force: bool | None = None) -> None:
    """Write atomically (temporary file, then rename); refuse to replace a file without ``overwrite``.

    The new file gets the mode a plain ``open()`` would give it (0666 less the umask), not
    the 0600 of the temporary file. (``force=`` is the old name of ``overwrite``.)
    """
    overwrite = overwrite or bool(force)
    p = Path(path)
    if p.is_dir():
        raise error(None, f"'{p}' is a folder, not a file name")
    if p.exists() and not overwrite:
        raise error(None, f"'{p}' exists; use --overwrite to replace it")
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
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, p)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):  # disk full, permissions: bad input for the user, not a crash
            raise error(None, f"cannot write '{p}': {exc.strerror or exc}") from None
        raise
