"""Claims: verdicts, exact_when, exit codes and JSON of ``portwise check``.

Reference formulas are textbook small-signal results (A. S. Sedra, K. C. Smith,
*Microelectronic Circuits*, 7th ed., sections 7.3.3-7.3.4, from memory); the
quantity's value comes from the numeric engine, so each verdict is checked
against numbers computed here independently of the claim machinery.
"""
from __future__ import annotations

import json
import math

import pytest

import solver
from solver.analysis.symbolic.claims import check_claims, identical, to_sympy
from solver.engine.symbolic.determinants import symbol as S

CE = """\
title "claims test: CE stage"
signal VS (b, gnd) 1 mV, rs=1k
npn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k
resistor RC (c, gnd) 5k
load RL (c, gnd) 10k
"""


def verdicts(text):
    c = solver.loads(text)
    return c, check_claims(c, 0.0)


def test_exact_claim_holds_identically():
    # Sedra & Smith 7th ed., section 7.3.3: Av = -gm*(ro || RC || RL) (from memory)
    _, (v,) = verdicts(CE + "claim Av = -Q1.gm*(Q1.ro || RC || RL)\n")
    assert v.holds and v.exact and v.kind == "exact"
    assert v.rel_error < 1e-12
    assert v.exact_when == []


def test_exact_claim_refuted_with_the_limit_that_fixes_it():
    # dropping ro is the textbook simplification (Sedra & Smith 7th ed., 7.3.3, from memory): exact
    # only when ro -> oo
    _, (v,) = verdicts(CE + "claim Av = -Q1.gm*(RC || RL)\n")
    assert not v.holds and not v.exact
    assert v.exact_when == ["Q1.ro -> oo"]
    # the reported error is the real one: -gm*(RC||RL) against -gm*(ro||RC||RL)
    gm, ro, rc, rl = 40e-3, 100e3, 5e3, 10e3
    exact = -gm / (1 / ro + 1 / rc + 1 / rl)
    claimed = -gm / (1 / rc + 1 / rl)
    assert v.rel_error == pytest.approx(abs(claimed - exact) / abs(exact), rel=1e-9)


def test_pair_of_limits():
    # -gm*RC needs both ro -> oo and RL -> oo (an unloaded, ideal-output CE; Sedra & Smith 7th ed.,
    # 7.3.3, from memory)
    _, (v,) = verdicts(CE + "claim Av = -Q1.gm*RC\n")
    assert v.exact_when == ["Q1.ro -> oo and RL -> oo"]


def test_approximate_claim_tolerance_both_ways():
    # Av = -gm (ro || RC || RL) against the claimed -gm (RC || RL) (Sedra & Smith 7th ed., 7.3.3,
    # from memory)
    gm, ro, rc, rl = 40e-3, 100e3, 5e3, 10e3
    err = abs(-gm * rc * rl / (rc + rl) / (-gm / (1 / ro + 1 / rc + 1 / rl)) - 1)  # about 3.3 %
    _, (ok, bad) = verdicts(CE + "claim Av ~ -Q1.gm*(RC || RL) within 5%\n"
                                 "claim Av ~ -Q1.gm*(RC || RL) within 2%\n")
    assert ok.holds and not bad.holds
    assert ok.rel_error == pytest.approx(err, rel=1e-9)
    assert ok.tolerance == pytest.approx(0.05) and bad.tolerance == pytest.approx(0.02)


def test_let_names_expand_and_device_quantities_derive():
    # rpi = (beta + 1)*re with beta = gm*rpi, re = alpha/gm (Sedra & Smith 7th ed., 7.2.4, from memory)
    _, (a, b) = verdicts(CE + "let RP = RC || RL\nclaim Av = -Q1.gm*(Q1.ro || RP)\n"
                              "claim Rin = (Q1.beta + 1)*Q1.re\n")
    assert a.holds and a.exact
    assert b.holds and b.exact


def test_t_model_symbols():
    # common base, T model: Rin = re exactly (Sedra & Smith 7th ed., 7.3.5, from memory)
    _, (v,) = verdicts("signal VS (e, gnd) 1 mV\nnpn Q1 (c, gnd, e) gm=40m, rpi=2k5, model=t\n"
                       "resistor RC (c, gnd) 5k\noutput (c, gnd)\nclaim Rin = Q1.re\n")
    assert v.holds and v.exact


def test_degeneration_formula_exact_when_gm_large():
    # Av -> -RC/RE as gm -> oo (the "gain set by resistor ratio" rule), Sedra & Smith 7.3.4
    _, (v,) = verdicts("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, e) gm=40m, rpi=2k5\nresistor RE (e, gnd) 220\n"
                       "resistor RC (c, gnd) 4k7\noutput (c, gnd)\nclaim Avo ~ -RC/RE within 15%\n")
    assert "Q1.gm -> oo" in v.exact_when
    # exact: Avo = -beta*RC/(rpi + (beta + 1)*RE), beta = gm*rpi = 100
    exact = -100 * 4.7e3 / (2.5e3 + 101 * 220)
    assert v.value.real == pytest.approx(exact, rel=1e-12)
    assert v.rel_error == pytest.approx(abs(-4.7e3 / 220 - exact) / abs(exact), rel=1e-9)  # about 12 %
    assert v.holds and not v.exact


def test_identical_and_exact_when_primitives():
    import sympy
    # a || b = ab/(a + b) = 1/(1/a + 1/b) (definition of the parallel combination, from memory)
    a, b = S("RA"), S("RB")
    assert identical(a * b / (a + b), 1 / (1 / a + 1 / b))
    assert not identical(a * b / (a + b), a)
    # on the engine's polynomials: RA*RB/(RA + RB) -> RA as RB -> oo (the same definition)
    from fractions import Fraction
    from solver.analysis.symbolic import limits as L
    from solver.engine.symbolic.ring import Ring
    ring = Ring(["s", "RA", "RB"])
    one = Fraction(1)
    par = L.from_dicts(ring, {(0, 1, 1): one}, {(0, 1, 0): one, (0, 0, 1): one})
    ra = L.from_dicts(ring, {(0, 1, 0): one}, {(0, 0, 0): one})
    moves = [L.Move("RB -> oo", "RB → ∞", frozenset({2}), "ray", [(2, 1)]),
             L.Move("RB -> 0", "RB → 0", frozenset({2}), "ray", [(2, -1)])]
    assert L.search(par, ra, moves).keys == ["RB -> oo"]
    assert not L.identical(par, ra) and L.identical(par, par)
    assert identical(sympy.sqrt(a) * sympy.sqrt(a), a)


def test_ideal_opamp_gain_is_bad_input():
    from solver.diagnostics import InputError
    c = solver.loads("signal VS (in, gnd) 1 mV\nresistor R1 (in, m) 10k\nresistor R2 (m, out) 47k\n"
                     "opamp U1 (out, gnd, m)\noutput (out, gnd)\nclaim Avo = -R2/R1*U1.gain\n")
    with pytest.raises(InputError, match="ideal op-amp"):
        to_sympy(c.claims[0].expr, c)


# --- command line ----------------------------------------------------------------------
def test_check_exit_codes_and_json(cli, netlist):
    good = netlist(CE + "claim Av = -Q1.gm*(Q1.ro || RC || RL)\n", "good.pw")
    r = cli("check", good)
    assert r.returncode == 0, r.stderr
    assert "holds" in r.stdout
    bad = netlist(CE + "claim Av = -Q1.gm*(RC || RL)\nclaim Rout ~ RC within 10%\n", "bad.pw")
    r = cli("check", bad, "--json")
    assert r.returncode == 1, r.stderr
    data = json.loads(r.stdout)
    first, second = data["claims"]
    # RFC 8259 JSON; the field names are the ones documented for `portwise check --json`
    assert set(first) >= {"line", "quantity", "kind", "holds", "value", "claimed", "rel_error", "tolerance",
                          "exact_when"}
    assert first["line"] == 6 and first["kind"] == "exact" and first["holds"] is False
    assert first["exact_when"] == ["Q1.ro -> oo"]
    assert first["exact_expression"] == "-Q1.gm*(Q1.ro || RC || RL)"
    assert second["kind"] == "approx" and second["tolerance"] == pytest.approx(0.1)
    ro, rc = 100e3, 5e3  # CE output resistance Rout = ro || RC (Sedra & Smith 7th ed., 7.3.3, from memory)
    assert second["value"]["re"] == pytest.approx(ro * rc / (ro + rc))
    assert second["holds"] is True
    r = cli("check", bad)
    assert r.returncode == 1
    assert "exact when Q1.ro → ∞" in r.stdout


def test_unknown_symbol_in_claim_is_bad_input_with_line(cli, netlist):
    p = netlist(CE + "claim Av = -Q1.gm*(RC || RX)\n")
    r = cli("check", p)
    assert r.returncode == 2
    assert f"{p}:6:" in r.stderr and "RX" in r.stderr
    assert "Traceback" not in r.stderr


def test_no_claims_is_bad_input(cli, netlist):
    r = cli("check", netlist(CE))
    assert r.returncode == 2 and "no claim" in r.stderr


def test_example_circuit_claims(cli):
    # circuits/hydrophone_preamp.pw: a CE stage, ic = 0.5 mA, beta = 200, va = 60 V, RB = 33k || 68k,
    # RC = 10k, RF = 22k, rs = 2k. Hand values: gm = ic/V_T, rpi = beta/gm, ro = va/ic;
    # Av = -gm (ro || RC || RF), Rin = RB || rpi, Gv = Rin/(Rin + rs) Av (Sedra & Smith 7th ed.,
    # sections 7.2 and 7.3.3, from memory); V_T = kT/q at 300 K from CODATA (scipy.constants)
    from scipy.constants import elementary_charge, k
    from conftest import CIRCUITS
    r = cli("check", CIRCUITS / "hydrophone_preamp.pw", "--json")
    assert r.returncode == 1, r.stderr  # the last claim is planted to fail
    claims = json.loads(r.stdout)["claims"]
    vt = k * 300.0 / elementary_charge
    gm, beta, ro = 0.5e-3 / vt, 200.0, 60.0 / 0.5e-3
    rpi, rb, rc, rf, rs = beta / gm, 33e3 * 68e3 / 101e3, 10e3, 22e3, 2e3
    par = lambda *x: 1 / sum(1 / v for v in x)  # noqa: E731
    av, rin = -gm * par(ro, rc, rf), par(rb, rpi)
    gv = rin / (rin + rs) * av
    want = [  # (line, quantity, kind, holds, exact value, claimed value, exact_when)
        (14, "Av", "exact", True, av, -gm * par(ro, par(rc, rf)), []),
        (15, "Av", "approx", True, av, -gm * par(rc, rf), ["Q1.ro -> oo"]),
        (16, "Rin", "exact", True, rin, par(rb, rpi), []),
        (17, "Gv", "approx", False, gv, -gm * par(rc, rf), ["Q1.ro -> oo and VH.rs -> 0"]),
    ]
    assert len(claims) == len(want)
    for c, (line, qty, kind, holds, value, claimed, when) in zip(claims, want):
        assert (c["line"], c["quantity"], c["kind"], c["holds"], c["exact_when"]) == (line, qty, kind, holds, when)
        assert c["value"]["re"] == pytest.approx(value, rel=1e-9)
        assert c["claimed"]["re"] == pytest.approx(claimed, rel=1e-9)
        assert c["rel_error"] == pytest.approx(abs(claimed - value) / abs(value), rel=1e-6, abs=1e-12)
        if kind == "approx":  # the verdict follows from the hand numbers and the stated tolerance
            assert holds == (abs(claimed - value) / abs(value) <= c["tolerance"])


# --- the designer's limits, the halves of a symmetric pair, the bounded search ----------------------------
def test_only_limits_a_designer_takes_are_offered():
    # rpi -> 0 would set beta = gm*rpi to zero (it changes the device): never offered. beta -> oo with gm
    # fixed is rpi -> oo (hybrid-pi, beta = gm*rpi; Sedra & Smith 7th ed., 7.2.4, from memory)
    from solver.analysis.symbolic.limits import designer_moves
    from solver.analysis.symbolic.ports import circuit_symbols
    c = solver.loads(CE)
    keys = {m.key: m.words for m in designer_moves(c, ["s"] + circuit_symbols(c))}
    assert "Q1.rpi -> 0" not in keys and "Q1.gm -> 0" not in keys and "Q1.ro -> 0" not in keys
    assert "VS.rs -> oo" not in keys and "RL -> 0" not in keys
    assert keys["Q1.rpi -> oo"] == "Q1.β → ∞ (gm fixed)"
    assert keys["Q1.ro -> oo"] == "Q1.ro → ∞"
    assert keys["RL -> oo"].startswith("RL → ∞") and keys["VS.rs -> 0"].startswith("VS.rs → 0")


def test_beta_to_infinity_with_gm_fixed_is_said_in_words():
    # CE input resistance Rin = RB || rpi; "Rin ~ RB" is what is left when the base current vanishes,
    # beta -> oo with gm fixed (Sedra & Smith 7th ed., 7.3.3, from memory)
    _, (v,) = verdicts(CE + "resistor RB (b, gnd) 47k\nclaim Rin ~ RB within 10%\n")
    assert v.exact_when == ["Q1.rpi -> oo"]
    assert v.exact_when_words == ["Q1.β → ∞ (gm fixed)"]
    assert v.search_complete


def test_t_model_beta_to_infinity_is_alpha_to_one():
    # degenerated CE, T model: Avo = -alpha*RC/(re + RE) exactly; -RC/(re + RE) is its beta -> oo
    # (alpha -> 1) form (Sedra & Smith 7th ed., 7.3.4, from memory)
    text = ("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, e) gm=40m, rpi=2k5, model=t\nresistor RE (e, gnd) 220\n"
            "resistor RC (c, gnd) 4k7\noutput (c, gnd)\n")
    _, (exact, approx) = verdicts(text + "claim Avo = -Q1.alpha*RC/(Q1.re + RE)\n"
                                         "claim Avo ~ -RC/(Q1.re + RE) within 5%\n")
    assert exact.holds and exact.exact
    assert approx.exact_when == ["Q1.alpha -> 1"] and approx.exact_when_words == ["Q1.β → ∞ (α → 1)"]
    beta = 40e-3 * 2.5e3  # alpha = beta/(beta + 1): the claim is 1/alpha - 1 = 1/beta too large
    assert approx.rel_error == pytest.approx(1 / beta, rel=1e-9)


def test_symmetric_pair_is_exact_when_the_halves_match(cli):
    # long-tailed pair, differential output: Ad = -gm (RC || ro) when both halves match (the half-circuit
    # of the differential mode; Sedra & Smith 7th ed., 9.2.3, from memory)
    from conftest import CIRCUITS
    r = cli("check", CIRCUITS / "geophone_diffpair.pw", "--json")
    assert r.returncode == 0, r.stderr
    (v,) = json.loads(r.stdout)["claims"]
    assert v["exact_when_text"] == ["the halves match"]
    assert v["exact_when"][0].startswith("halves match:") and "RCB = RCA" in v["exact_when"][0]
    assert v["exact_when_search"]["complete"] is True
    r = cli("check", CIRCUITS / "geophone_diffpair.pw")
    assert "exact when the halves match" in r.stdout and "no limit makes it exact" not in r.stdout


def test_unmatched_halves_are_not_proposed():
    from solver.analysis.symbolic.limits import matched_halves
    from solver.analysis.symbolic.ports import circuit_symbols
    text = ("signal VG (b1, b2) 1 mV, rs=380\nnpn QA (ca, b1, t) gm=10m, rpi=25k, ro=240k\n"
            "npn QB (cb, b2, t) gm=10m, rpi=25k, ro=240k\nresistor RT (t, gnd) 27k\n"
            "resistor RCA (ca, gnd) 18k\nresistor RCB (cb, gnd) {}\nload RL (ca, cb) 100k\n")
    c = solver.loads(text.format("18k"))
    pairs = matched_halves(c, ["s"] + circuit_symbols(c))
    assert ("RCA", "RCB") in pairs and ("QA.gm", "QB.gm") in pairs
    c = solver.loads(text.format("22k"))  # the collector resistors differ: no mirror image
    assert matched_halves(c, ["s"] + circuit_symbols(c)) == []


def test_coupling_capacitors_shorted_is_said_in_words(cli):
    # the midband gain of an RC-coupled CE stage: coupling and bypass capacitors shorted
    # (Sedra & Smith 7th ed., 10.1, from memory)
    from conftest import CIRCUITS
    r = cli("check", CIRCUITS / "contact_pickup_preamp.pw", "--json")
    assert r.returncode == 0, r.stderr
    (v,) = json.loads(r.stdout)["claims"]
    assert v["exact_when"] == ["s -> oo"]
    assert v["exact_when_text"] == ["coupling capacitors shorted (s → ∞)"]


def test_exact_when_search_is_bounded_and_says_so():
    # common practice, no source: a search that stops early says how far it got
    from conftest import CIRCUITS
    from solver.analysis.symbolic.claims import check
    c = solver.load(CIRCUITS / "line_driver.pw")
    (v,) = check(c, search_seconds=0.0).verdicts
    assert not v.search_complete and "stopped looking" in v.search_note and "time limit" in v.search_note
    assert v.searched[0] < v.searched[1]
    (v,) = check(c, search_seconds=120).verdicts  # given the time, it looks at every combination
    assert v.search_complete and v.searched[0] == v.searched[1]


def test_check_runs_the_input_checks_of_solve(cli, netlist):
    # a floating resistor pair: the same FILE:LINE:COL error as solve, exit 2 (GNU diagnostics format)
    from solver.analysis.symbolic.claims import check
    from solver.diagnostics import InputError
    text = CE + "resistor RX1 (x, y) 1k\nresistor RX2 (x, y) 2k\nclaim Av ~ -Q1.gm*RC within 50%\n"
    with pytest.raises(InputError) as e:
        check(solver.loads(text, "f.pw"))
    assert e.value.diagnostics[0].loc.line == 6
    p = netlist(text)
    r, s = cli("check", p), cli("solve", p)
    assert r.returncode == 2 and f"{p}:6:1: error:" in r.stderr and "Traceback" not in r.stderr
    assert r.stderr.splitlines()[0] == s.stderr.splitlines()[0]


def test_check_path_imports_neither_sympy_nor_scipy():
    # the whole `portwise check` of bundled examples (a reactive one, a symmetric pair, a failing claim):
    # claims, limits and the printed exact quantity run on the engine's polynomials (common practice,
    # no source: lazy imports keep the command quick)
    import subprocess
    import sys
    from conftest import ROOT
    code = r"""
import contextlib, io, runpy, sys
for f in ('circuits/contact_pickup_preamp.pw', 'circuits/geophone_diffpair.pw', 'circuits/hydrophone_preamp.pw'):
    sys.argv = ['solver', 'check', f]
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        try:
            runpy.run_module('solver', run_name='__main__')
        except SystemExit as e:
            assert e.code in (0, 1, None), e.code
    assert 'claim(s) at' in out.getvalue()
bad = sorted(m for m in sys.modules if m == 'sympy' or m.startswith('scipy.sparse'))
assert not bad, bad
"""
    p = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert p.returncode == 0, p.stderr


def test_dominant_form_read_back_as_a_claim_has_the_reported_error(cli, netlist):
    # derive --dominant prints a design-oriented form of the pruned ratio and its error at the
    # analysis frequency; the same text, read back by check as a claim, must be off the exact value
    # (numeric engine) by exactly that error, and within the a-priori bound (triangle inequality on the
    # dropped coefficients, common practice, no source)
    from conftest import CIRCUITS
    src = CIRCUITS / "hydrophone_preamp.pw"
    r = cli("derive", src, "Gv", "--dominant", "2%", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert not d.get("where")
    dom = d["dominant"]
    assert dom["terms_dropped"] > 0 and dom["error_at_frequency"] <= dom["error_bound_at_frequency"]
    p = netlist(src.read_text() + f"claim Gv ~ {d['expression']} within 5%\n")
    r = cli("check", p, "--json")
    assert r.returncode in (0, 1), r.stderr
    v = json.loads(r.stdout)["claims"][-1]
    assert v["rel_error"] == pytest.approx(dom["error_at_frequency"], rel=1e-6)
    assert v["holds"] is True
    text = cli("derive", src, "Gv", "--dominant", "2%").stdout
    assert "bound" in text and d["expression"] in text


def test_exact_when_search_has_a_combination_bound():
    # common practice, no source: the bound in size is deterministic (no clock), and says so
    from solver.analysis.symbolic import limits as L
    from solver.analysis.symbolic.claims import to_rational
    from solver.analysis.symbolic.ports import symbol_values, symbolic_port_quantities
    from solver.engine.symbolic.ring import Ring
    c = solver.loads(CE + "claim Av ~ -Q1.gm*RC within 50%\n")  # needs two limits: ro -> oo and RL -> oo
    sq = symbolic_port_quantities(c, which=["Av"])["Av"]
    ring = Ring(sq.gens)
    exact, claimed = L.from_dicts(ring, sq.num, sq.den), to_rational(c.claims[0].expr, c, ring)
    moves = L.designer_moves(c, sq.gens, symbol_values(c), 0j, exact)
    full = L.search(exact, claimed, moves, seconds=60)
    assert full.complete and full.keys == ["Q1.ro -> oo and RL -> oo"]
    cut = L.search(exact, claimed, moves, seconds=60, max_combinations=len(moves) + 1)
    assert not cut.complete and "combinations" in cut.note() and cut.tried < cut.total


def test_both_polynomial_backends_give_the_same_verdicts(monkeypatch):
    # the pure-sympy ring (no python-flint) must reach the same verdicts and limits; the reference is
    # the degenerated CE in the T model, Avo = -alpha*RC/(re + RE) (Sedra & Smith 7th ed., 7.3.4,
    # from memory): -RC/(re + RE) needs alpha -> 1, -RC/RE also re -> 0
    from solver.analysis.symbolic.claims import check
    from solver.engine.symbolic import ring
    text = ("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, e) gm=40m, rpi=2k5, model=t\nresistor RE (e, gnd) 220\n"
            "resistor RC (c, gnd) 4k7\noutput (c, gnd)\nclaim Avo ~ -RC/(Q1.re + RE) within 5%\n"
            "claim Avo ~ -RC*(Q1.re + RE)/(Q1.re + RE)^2 within 5%\nclaim Avo ~ -RC/RE within 20%\n")
    got = {}
    for backend in ("sympy", None):
        monkeypatch.setattr(ring, "DEFAULT_BACKEND", backend)
        got[backend] = [(v.holds, v.exact, v.exact_when, round(v.rel_error, 12))
                        for v in check(solver.loads(text), search_seconds=60).verdicts]
    assert got["sympy"] == got[None]
    assert got[None][0][2] == got[None][1][2] == ["Q1.alpha -> 1"]
    assert got[None][2][2] == ["Q1.alpha -> 1 and Q1.re -> 0"]
