"""The fast path gives exactly what lark gives, and restates the grammar's terminals faithfully.

Statements are compared whole (every field, every Loc): the fast path (``parse``) against
lark alone (``_parse(..., fast=False)``: the grammar's LALR parser, then the line-by-line
re-parse after a failure), on the shipped circuits, on generated netlists with near misses
(keyword look-alikes, comments, CRLF, form feeds, continuations), and on random expressions.
The reference for the syntax is grammar/portwise.lark itself, read by lark.
"""
from __future__ import annotations

import random
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from solver.diagnostics import InputError
from solver.language import parse as P

ROOT = Path(__file__).resolve().parents[1]
CIRCUITS = sorted((ROOT / "circuits").glob("**/*.pw"))


def _outcome(text: str, fast: bool):
    try:
        return P._parse(text, "f.pw", fast=fast).statements
    except InputError as e:
        return ("error", str(e))


def _same(text: str) -> None:
    assert _outcome(text, True) == _outcome(text, False)


# --- the restated terminals are the grammar's -----------------------------------------------
@pytest.fixture(scope="module")
def terminals():
    from lark import Lark  # lark's public interface: the compiled grammar's terminal list
    lark = Lark(P.grammar_path().read_text(encoding="utf-8"), parser="lalr", lexer="contextual")
    return {t.name: t.pattern for t in lark.terminals}


def _plain(pattern: str) -> str:
    """A regex with its escapes of blank characters written as the characters (as lark keeps them)."""
    for esc, ch in (("\\t", "\t"), ("\\n", "\n"), ("\\r", "\r"), ("\\f", "\f")):
        pattern = pattern.replace(esc, ch)
    return pattern


def test_token_patterns_are_the_grammars(terminals):
    assert _plain(P.QUANTITY) == _plain(terminals["QUANTITY"].value)
    assert _plain(P.NAME) == _plain(terminals["NAME"].value)
    assert _plain(P.STRING) == _plain(terminals["STRING"].value)
    patterns = {_plain(p.value) for p in terminals.values()}
    assert _plain(P.BLANKS) in patterns  # the %ignore of blanks inside a line
    # a blank (or comment-only) line is what the grammar's newline token repeats
    assert _plain(terminals["_NL"].value) == _plain(f"(?:{P._BLANK_LINE.pattern}\\r?\\n)+")
    assert _plain(terminals["COMMENT"].value) == "#[^\n]*"


def test_statement_keywords_are_the_grammars(terminals):
    grammar = P.grammar_path().read_text(encoding="utf-8")
    for rule, keywords, _ in P.STATEMENTS:
        assert re.search(rf"^{rule}:", grammar, re.M), rule
        term = terminals.get(f"{rule.upper()}_KW") or terminals.get(rule.upper())
        if len(keywords) > 1:  # an alternation of words, e.g. VALUED_KW
            assert set(re.findall(r"\w+", term.value)) == set(keywords)
        else:
            assert term.value == keywords[0]
    assert terminals["WITHIN"].value == "within"


def test_operators_are_the_grammars(terminals):
    candidates = {chr(c) for c in range(33, 127)} | {"||", "**", "//"}
    for name, ops in P.OPERATORS.items():
        regexp = re.compile(terminals[name].to_regexp())
        assert {c for c in candidates if regexp.fullmatch(c)} == set(ops), name
    strings = {p.value for p in terminals.values() if p.type == "str"}  # literal terminals
    assert set(P.PUNCTUATION) <= strings


# --- shipped circuits -------------------------------------------------------------------------
@pytest.mark.parametrize("path", CIRCUITS, ids=lambda p: p.name)
def test_circuit_files(path, monkeypatch):
    text = path.read_text(encoding="utf-8")
    ref = P._parse(text, "f.pw", fast=False).statements
    assert ref  # (a file of statements, so that the comparison means something)

    def no_lark(*args, **kw):
        raise AssertionError("the fast path called lark")
    monkeypatch.setattr(P, "_run", no_lark)
    assert P._fast_statements(text, "f.pw") == ref  # every line by the fast path, none by lark


def test_a_solve_never_builds_lark():
    # a bundled netlist read and solved in a fresh process: lark is not even imported
    code = ("import sys; from solver.cli import main; rc = main(['solve', sys.argv[1]]);"
            "print('LARK' if 'lark' in sys.modules else 'NOLARK', rc)")
    r = subprocess.run([sys.executable, "-c", code, str(ROOT / "circuits" / "mic_preamp.pw")],
                       capture_output=True, text=True, cwd=ROOT, env={"PYTHONPATH": str(ROOT), "PATH": ""},
                       timeout=120)
    assert r.stdout.split()[-2:] == ["NOLARK", "0"], r.stderr


# --- generated netlists -----------------------------------------------------------------------
LINES = [
    "resistor R{i} (a{i}, a{j}) 4k7   # series arm",
    "resistor R{i} (a{i}, a{j}) R0 || 10k",
    "resistor R{i} (a{i}, a{j}) 4k7, tc=1e-3",
    "capacitor C{i} (a{j}, gnd) 4n7",
    "capacitor C{i} (a{j}, gnd) 4.7 nF",
    "inductor L{i} (a{i}, a{j}) 10 uH",
    "npn Q{i} (a{j}, a{i}, gnd) ic=0.5 mA, beta=200, va=60 V",
    "npn Q{i} (a{j}, a{i}, gnd)",
    "pnp Q{i} (c, b, e) ic=1mA, beta=150",
    "nmos M{i} (d, g, s) id=1 mA, vov=0.2 V, lambda=0.02 /V, kn=2 A/V^2",
    "vccs G{i} (a{j}, gnd) (a{i}, gnd) 2 mS",
    "vcvs E{i} (a{j}, gnd) (a{i}, 0) -(RC || RL)/(Q1.re + RE1)",
    "cccs F{i} (a{j}, gnd) VS 2",
    "ccvs H{i} (a{j}, gnd) X1.RS 1k, note=2",
    "use stage X{i} (s{i}, s{j}) rc=RCC*(1 + {k}/10)",
    "use stage X{i} (s{i}, s{j}) rc=-RCC^2/(1 + {k}), ic=sqrt(2) * 1 mA",
    "use stage X{i} (s{i}, s{j})",
    "let V{i} = ({k} + 1) * 2k2 || R0",
    "let V{i} = - -{k} + +2 ^ -2 ^ 3 - abs(-x)",
    "claim V{i} ~ {k} V within 5%",
    "claim Av = -gm*RC",
    "output (a{i}, gnd)",
    "ground a{i}",
    "ground 0",
    "block stage (in, out) rc=RCC, ic=1 mA",
    "block stage (in, out)",
    "end",
    "  end  # of the block",
    'title "t{i} \\"q\\" # not a comment"',
    'title"x"',
    "\tresistor\tR{i}\t(a{i},a{j})\t{k}k",
    "resistor\fR{i} (a{i}, a{j}) 1k\f",
    "resistor R{i} \\\n  (a{i}, a{j}) 1k",
    "resistor R{i} (a{i}, a{j}) 1k  # comment\n\n# only a comment\n",
    "resistor R{i} (a{i}, resistor) 1k",
    'resistor R{i} (a{i}, a{j}) 1k  # the "main" arm',
    "resistor R{i} (output, within) end",
    # near misses: lark's call, whatever it is
    "resistorR{i} (a, b) 1k",
    "claim V{i} ~ 5 withinx",
    "let x{i} = within",
    "resistor R{i} (a, b) 1k.5",
    "resistor R{i} (a, b) 2/V",
    "resistor R{i} (a, b) 1 furlong",
    "resistor R{i} (a, b) sqr(2)",
    "resistor R{i} (a, b) a.b(2)",
    "resistor R{i} (a.b, c) 1",
    "capacitor C{i} (a, b) 4.7 µF",
    "resistor R{i} (a, b) 1k,",
    "npn Q{i} (a, b, c) ,",
    "\f",
    "resistor R{i} (a, b) | 2",
    "output a",
    "spread R{i} 5%",
    "spread Q{i}.beta 100 .. 300, dist=normal",
    "spread M{i}.vth 0.9 V .. 1.1 V",
    "spec Av {k} .. 35",
    "spec Gv 20 dB .. inf",
    "spread R{i} 1..2",
    "spec Av 1 .. 2 dB .. 3",
]


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 2**32 - 1), st.sampled_from(["\n", "\r\n"]))
def test_generated_netlists(seed, eol):
    rng = random.Random(seed)
    picks = rng.sample(LINES, rng.randint(1, 6))
    out = [rng.choice(picks).format(i=i, j=i + 1, k=i % 4) for i in range(rng.randint(1, 40))]
    text = eol.join(out) + (eol if rng.random() < 0.8 else "")
    _same(text)


def test_many_declined_lines_go_to_lark_as_a_whole():
    # lines lark takes and the fast path does not (a keyword run into the name): past the
    # hundredth, lark reads the whole text at once
    text = "".join(f"resistorR{i} (a{i}, a{i + 1}) 1k\n" for i in range(300))
    _same(text)
    assert len(P.parse(text).statements) == 300


# --- random expressions -----------------------------------------------------------------------
ATOMS = ["1", "4k7", "2.2 nF", "10 mV", "1e-3", "5%", ".5", "3.", "RB", "Q1.gm", "X1 . re", "pi", "within",
         "end", "sqrt(2)", "abs (x)", "ln(1k)"]


@st.composite
def expressions(draw, depth=0):
    if depth > 4 or draw(st.integers(0, 2)) == 0:
        return draw(st.sampled_from(ATOMS))
    kind = draw(st.sampled_from(["bin", "bin", "un", "par", "call"]))
    sp = draw(st.sampled_from(["", " ", "\t"]))
    if kind == "bin":
        op = draw(st.sampled_from(["+", "-", "||", "*", "/", "^"]))
        return draw(expressions(depth + 1)) + sp + op + sp + draw(expressions(depth + 1))
    if kind == "un":
        return draw(st.sampled_from(["-", "+"])) + sp + draw(expressions(depth + 1))
    if kind == "par":
        return "(" + sp + draw(expressions(depth + 1)) + sp + ")"
    return draw(st.sampled_from(["sqrt", "exp", "abs"])) + "(" + draw(expressions(depth + 1)) + ")"


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(expressions(), expressions())
def test_random_expressions(a, b):
    text = (f"let x = {a}\nresistor R1 (n1, n2) {a}, k={b}\ncccs F1 (n1, 0) RS.x {b}\n"
            f"claim Av ~ {a} within {b}\nuse amp X1 (i, o) g={b}\n")
    _same(text)
    # precedence against a reading of the grammar by lark: one expression alone
    assert P.parse_expression(a) == P._parse(f"let _ = {a}\n", "<expr>", fast=False).statements[0].value


# --- errors still come from lark --------------------------------------------------------------
def test_an_error_among_fast_lines_reports_as_lark_alone():
    good = "".join(f"resistor R{i} (a{i}, a{i + 1}) 1k\n" for i in range(20))
    for bad in ["resistor R99 (a, b) 1 furlong\n", "resistor R99 (a, b) 1k 2k\n",
                "resistor R99 (a, b)\n", "resistor R99 (a, b) sqr(2)\n", "resistorR99 (a b) 1\n"]:
        with pytest.raises(InputError) as fast:
            P.parse(good + bad + good, "f.pw")
        with pytest.raises(InputError) as plain:
            P._parse_by_line(good + bad + good, "f.pw", P.Diagnostics())
        assert str(fast.value) == str(plain.value)
        assert fast.value.diagnostics[0].loc.line == 21


# --- the line-by-line re-parse after a syntax error ------------------------------------------
def test_reparse_keeps_an_escaped_quote_inside_a_title():
    # the title is valid (\" inside a string, then a # that is text): only line 2 is wrong
    text = 'title "a \\"#b\\" c"\nresistor R1 (a b) 1k\n'
    with pytest.raises(InputError) as e:
        P.parse(text, "f.pw")
    assert [d.loc.line for d in e.value.diagnostics] == [2]
    assert P._strip_comment('title "a \\"#b\\" c" # note') == 'title "a \\"#b\\" c" '


def test_reparse_keeps_a_form_feed_as_a_blank():
    # "\f" is a blank inside a line for the grammar, not a line break: only line 2 is wrong
    text = "resistor R1\f(a, b) 1k\nresistor R2 (a b) 1k\nresistor R3 (a,\fb) 1k\n"
    with pytest.raises(InputError) as e:
        P.parse(text, "f.pw")
    assert [(d.loc.line, d.loc.col) for d in e.value.diagnostics] == [(2, 16)]
    assert [n for n, _ in P._logical_lines(text)] == [1, 2, 3, 4]
