"""What a new user trips over (issue 17): values, messages, options, API and output polish.

Messages are checked against the fast path and lark alone (``_parse(..., fast=False)``) where
the parser is involved; numbers against closed forms written here.
"""
from __future__ import annotations

import json
import os
import unicodedata

import pytest

import solver
from solver.diagnostics import InputError
from solver.language.parse import _parse

CE = """\
signal VS (in, gnd) 10 mV, rs=600
resistor RB (in, gnd) 47k
npn Q1 (c, in, gnd) ic=1mA, beta=100
resistor RC (c, gnd) 4k7
load RL (c, gnd) 10k
"""


def _messages(text, fast=True):
    try:
        _parse(text, "t.pw", fast)
    except InputError as e:
        return [(d.loc.line, d.loc.col, d.message) for d in e.diagnostics]
    return []


def _warnings(text):
    return [(d.loc.line, d.message) for d in solver.loads(text, "t.pw").warnings]


# --- values accepted silently ---------------------------------------------------------------
@pytest.mark.parametrize("fast", [True, False])
def test_rkm_code_followed_by_a_prefix_is_an_error(fast):
    # IEC 60062:2016 (the RKM code): the letter is the multiplier and the decimal point, so
    # 4k7 = 4.7e3 and a second multiplier has no meaning
    got = _messages("resistor RC (c, gnd) 4k7k\n", fast)
    assert got == [(1, 22, "the RKM code 4k7 already carries its multiplier (4700); a prefix after it "
                           "is not allowed: write 4k7")]
    assert _messages("resistor RC (c, gnd) 4k7 kΩ\n", fast)[0][2].endswith("write 4k7Ω")
    assert _messages("resistor RC (c, gnd) 4k7 Ω\n", fast) == []


def test_implausible_values_warn_with_the_likely_intent():
    # bounds: common practice, no source (a resistor from 1 Ω to 1 GΩ, ic below 10 A, supply below 10 kV)
    text = CE.replace("4k7", "10m") + "supply VCC (vcc, gnd) 20 kV\nresistor RX (vcc, gnd) 1e308\n"
    text = text.replace("ic=1mA", "ic=1e6 A")
    w = dict(_warnings(text))
    assert w[4] == "10 mΩ is implausible for a resistor (below 1 Ω); for megaohms write 10M"
    assert w[3].startswith("1 MA is implausible for a transistor's bias current (above 10 A)")
    assert "1e-6 A" in w[3]
    assert w[6] == "20 kV is implausible for a supply (above 10 kV)"
    assert w[7].startswith("1e+308 Ω is implausible for a resistor (above 1 GΩ)")
    assert _warnings(CE) == []  # ordinary values say nothing


def test_element_on_one_node_warns_at_its_line_and_takes_the_blame():
    w = _warnings(CE + "resistor R2 (in, in) 1k\n")
    assert w == [(6, "R2 has both ends on node 'in': it carries no current and does nothing "
                     "(a typo for another node?)")]
    # RC on (c, c): the cut set at c would name Q1.gm; the error points at RC's line instead
    with pytest.raises(InputError) as e:
        solver.solve(solver.loads(CE.replace("RC (c, gnd)", "RC (c, c)"), "t.pw"))
    err = [d for d in e.value.diagnostics if d.severity == "error"][0]
    assert err.loc.line == 4 and err.message.startswith("RC (line 4) has both ends on 'c'")


@pytest.mark.parametrize("fast", [True, False])
def test_unicode_compatibility_forms_of_unit_symbols(fast):
    # Unicode Standard Annex #15 (NFKC): the ohm sign U+2126 is Ω U+03A9, the micro sign U+00B5
    # is μ U+03BC, full-width digits are ASCII digits (checked with unicodedata itself)
    assert unicodedata.normalize("NFKC", "\u2126") == "\u03a9"
    text = ("signal VS (in, gnd) 1 \u00b5V\nresistor R1 (in, out) 4.7 k\u2126\n"
            "capacitor C1 (out, gnd) 1 \u03bcF\nload RL (out, gnd) \uff11\uff10 k\u03a9\n")
    nl = _parse(text, "t.pw", fast)
    vals = [s.value.value for s in nl.statements]
    assert vals == pytest.approx([1e-6, 4700.0, 1e-6, 1e4])
    assert nl.source == text  # what the user wrote is kept
    title = 'title "\uff21\u2126"\n'
    assert _parse(title, "t.pw", fast).statements[0].text == "\uff21\u2126"  # strings as written


def test_files_not_in_utf8_say_save_as_utf8(tmp_path, cli):
    latin = tmp_path / "latin.pw"
    latin.write_bytes("signal VS (in, gnd) 1 µV\n".encode("latin-1"))
    utf16 = tmp_path / "utf16.pw"
    utf16.write_text(CE, encoding="utf-16")
    for f in (latin, utf16):
        r = cli("solve", f)
        assert r.returncode == 2 and "save the file as UTF-8" in r.stderr
    assert "'µ'" in cli("solve", latin).stderr
    assert "UTF-16" in cli("solve", utf16).stderr
