"""The demo netlists under circuits/mistakes/ report each planted mistake at its line.

(The doctests of every module run in tests/test_doc_examples.py.)
"""
from __future__ import annotations


def test_demo_netlist_shows_each_planted_mistake(cli):
    # circuits/mistakes/buffer_with_mistakes.pw plants three mistakes; each must be reported at its line
    r = cli("solve", "circuits/mistakes/buffer_with_mistakes.pw")
    assert r.returncode == 2
    assert ":12:1: error: a loop of voltage-defined branches: VDD (line 11), VAUX (line 12)" in r.stderr
    assert ":14:1: error: nodes 'srcc', 'tap' have no path to the reference node" in r.stderr
    assert ":7:5: warning: 'CIN' is defined but never used" in r.stderr
    assert "did you mean 'src'?" in r.stderr


def test_sign_slip_demo_names_the_node(cli):
    r = cli("solve", "circuits/mistakes/sign_slip.pw")
    assert r.returncode == 2
    assert "circuits/mistakes/sign_slip.pw:4:1: error: the circuit with the load is numerically singular" in r.stderr
    assert "undetermined: node 'a'" in r.stderr and ":5:22: warning: negative resistor value" in r.stderr
