"""The Examples sections of the frequency-response modules run and give what they say."""
from __future__ import annotations

import doctest
import importlib

import pytest


@pytest.mark.parametrize("name", ["solver.analysis.frequency", "solver.analysis.timeconstants", "solver.analysis.twoport", "solver.output.plot", "solver.bulk"])
def test_examples_run(name):
    mod = importlib.import_module(name)
    result = doctest.testmod(mod, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 0 and result.failed == 0
