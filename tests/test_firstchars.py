"""First-character analysis used by the parser's line-shape replay.

A claim of "disjoint" must never be wrong: checked against Python's own ``re``
on the grammar's terminals and on generated strings (hypothesis).
"""
import re

from hypothesis import given, settings
from hypothesis import strategies as st

from solver.language import parse as P
from solver.language.firstchars import disjoint, first_chars


def _terminals():
    lexer = P._parser("start").parser.lexer
    seen = {}
    for state_lexer in lexer.lexers.values():
        for t in state_lexer.terminals:
            seen[t.name] = t.pattern.to_regexp()
    return seen


TERMINALS = _terminals()
ALPHABET = st.sampled_from(list(" \t\n\r#\\.,()=~+-*/^|\"_09aZkµΩ٣%") + ["ohm", "||"])


def test_known_answers():
    # Python documentation, "re — Regular expression operations" (\d matches Unicode
    # decimal digits, not ASCII letters), from memory
    assert disjoint(r"\d+", "[A-Za-z_][A-Za-z0-9_]*")
    assert not disjoint(r"\w+", "[A-Za-z_]+")
    assert not disjoint("(?i:a)", "A")  # flags are not analysed: "may overlap"
    assert first_chars("x*") is None  # may match the empty string
    assert first_chars("[^a]") is None  # a negated class could be anything


@settings(max_examples=300, deadline=None)
@given(st.lists(ALPHABET, min_size=1, max_size=8).map("".join))
def test_disjoint_terminals_never_start_the_same_text(text):
    names = sorted(TERMINALS)
    pairs = 0
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if disjoint(TERMINALS[a], TERMINALS[b]):
                ma = re.match(TERMINALS[a], text)
                mb = re.match(TERMINALS[b], text)
                assert not (ma and mb and ma.end() and mb.end()), (a, b, text)
                pairs += 1
    assert pairs > 100  # most terminal pairs are claimed disjoint: the check above really ran


def test_grammar_terminals_are_analysed():
    # the replay only gets lean patterns if the main terminals are understood
    for name in ("NAME", "QUANTITY", "_NL", "COMMA", "LPAR"):
        assert first_chars(TERMINALS[name]) is not None, name
