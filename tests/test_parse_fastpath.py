"""The fast loop (with its line-shape replay) gives exactly what lark's own loop gives.

Statements are compared whole (every field, every Loc), on the shipped circuits and on
generated netlists whose lines repeat often enough for their shapes to be replayed, with
near misses (same start, other tokens), comments, continuations, CRLF and blank lines.
"""
from __future__ import annotations

import random
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from solver.language import parse as P
from solver.diagnostics import InputError

ROOT = Path(__file__).resolve().parents[1]
CIRCUITS = sorted((ROOT / "circuits").glob("**/*.pw"))

LINES = [
    "resistor R{i} (a{i}, a{j}) 4k7   # series arm",
    "resistor R{i} (a{i}, a{j}) R0 || 10k",
    "resistor R{i} (a{i}, a{j}) 4k7, tc=1e-3",
    "capacitor C{i} (a{j}, gnd) 4n7",
    "capacitor C{i} (a{j}, gnd) 4.7 nF",
    "inductor L{i} (a{i}, a{j}) 10 uH",
    "npn Q{i} (a{j}, a{i}, gnd) ic=0.5 mA, beta=200, va=60 V",
    "npn Q{i} (a{j}, a{i}, gnd)",
    "vccs G{i} (a{j}, gnd) (a{i}, gnd) 2 mS",
    "cccs F{i} (a{j}, gnd) VS 2",
    "use stage X{i} (s{i}, s{j}) rc=RCC*(1 + {k}/10)",
    "use stage X{i} (s{i}, s{j}) rc=-RCC^2/(1 + {k}), ic=sqrt(2) * 1 mA",
    "use stage X{i} (s{i}, s{j})",
    "let V{i} = ({k} + 1) * 2k2 || R0",
    "claim V{i} ~ {k} V within 5%",
    "output (a{i}, gnd)",
    "ground a{i}",
    'title "t{i} \\"q\\""',
    "\tresistor\tR{i}\t(a{i},a{j})\t{k}k",
    "resistor R{i} \\\n  (a{i}, a{j}) 1k",
    "resistor R{i} (a{i}, a{j}) 1k  # comment\n\n# only a comment\n",
    "resistor R{i} (a{i}, resistor) 1k",
]


@pytest.fixture(autouse=True, scope="module")
def _shapes_early():
    """Build line shapes after two lines (not the default hundred), so small netlists replay."""
    old = P._Driver.SHAPE_MIN
    P._Driver.SHAPE_MIN = 2
    P._driver("start")._reset()
    yield
    P._Driver.SHAPE_MIN = old
    P._driver("start")._reset()


def _same(text: str) -> None:
    """parse() (fast loop, shapes) and lark's loop agree: statements, or the error text."""
    try:
        fast = P.parse(text, "f.pw").statements
    except InputError as e:
        fast = ("error", str(e))
    try:
        lark = P._run("start", text, "f.pw")
    except Exception:  # noqa: BLE001 - any lark error: parse() must then report an error too
        assert isinstance(fast, tuple), "the fast path accepted what lark rejects"
        return
    assert fast == lark


@pytest.mark.parametrize("path", CIRCUITS, ids=lambda p: p.name)
def test_circuit_files(path):
    text = path.read_text(encoding="utf-8")
    _same(text)
    _same(text * 6)  # every line shape now repeats: replayed from the second copy on
    assert P._driver("start").shape_match


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 2**32 - 1), st.sampled_from(["\n", "\r\n"]))
def test_generated_netlists(seed, eol):
    rng = random.Random(seed)
    picks = rng.sample(LINES, rng.randint(1, 6))
    out = []
    for i in range(rng.randint(10, 80)):
        out.append(rng.choice(picks).format(i=i, j=i + 1, k=i % 4))
    text = eol.join(out) + (eol if rng.random() < 0.8 else "")
    _same(text)


def test_a_replayed_shape_with_an_error_reports_like_before():
    # the same shape many times, then lines that start the same and go wrong
    good = "".join(f"resistor R{i} (a{i}, a{i + 1}) 1k\n" for i in range(20))
    for bad in ["resistor R99 (a, b) 1 furlong\n", "resistor R99 (a, b) 1k 2k\n",
                "resistor R99 (a, b)\n", "resistor R99 (a, b) sqr(2)\n"]:
        with pytest.raises(InputError) as fast:
            P.parse(good + bad + good, "f.pw")
        with pytest.raises(InputError) as plain:
            P._parse_by_line(good + bad + good, "f.pw", P.Diagnostics())
        assert str(fast.value) == str(plain.value)
