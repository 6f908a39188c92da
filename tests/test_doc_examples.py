"""Every module under solver/ imports, and the Examples sections of its docstrings run.

Modules are found by a glob over solver/ (not a hand list), so a new module is covered
the day it is added, and one that cannot be imported fails ``test_module_imports``
instead of being skipped. Doctests run with ``doctest.testmod`` (Python standard
library, "doctest — Test interactive Python examples").
"""
from __future__ import annotations

import doctest
import importlib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "solver"
FLAGS = doctest.NORMALIZE_WHITESPACE | doctest.ELLIPSIS


def module_names() -> list[str]:
    names = []
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(ROOT).with_suffix("").parts
        if parts[-1] == "__main__":  # running it is running the command (tests/test_process.py)
            continue
        if parts[-1] == "__init__":
            parts = parts[:-1]
        names.append(".".join(parts))
    return names


MODULES = module_names()


def has_examples(name: str) -> bool:
    """True when the module's source holds an interactive example (a ``>>>`` prompt)."""
    path = PACKAGE.parent.joinpath(*name.split("."))
    path = path / "__init__.py" if path.is_dir() else path.with_suffix(".py")
    return ">>> " in path.read_text(encoding="utf-8")


def test_the_glob_finds_the_package():
    # the discovery itself must be able to fail: it sees the main modules of every layer
    assert {"solver", "solver.api", "solver.cli", "solver.cli.commands.solve", "solver.engine.mna",
            "solver.analysis.symbolic.claims", "solver.language.parse"} <= set(MODULES)
    # and it sees the examples: these modules are known to carry some
    assert all(has_examples(n) for n in ("solver.engine.mna", "solver.analysis.frequency", "solver.bulk"))


@pytest.mark.parametrize("name", MODULES)
def test_module_imports(name):
    importlib.import_module(name)  # an ImportError (or any error at import) fails here, by name


@pytest.mark.parametrize("name", MODULES)
def test_examples_run(name):
    try:
        mod = importlib.import_module(name)
    except Exception as e:  # reported by test_module_imports; here it is a failure too, not a skip
        pytest.fail(f"{name} cannot be imported: {type(e).__name__}: {e}")
    result = doctest.testmod(mod, optionflags=FLAGS, report=True)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"
    if has_examples(name):  # examples written but none collected would be a silent pass
        assert result.attempted > 0, f"{name} has '>>>' examples but doctest collected none"
