"""``portwise derive`` and the symbolic lines of ``portwise solve``.

Closed forms: Sedra & Smith, *Microelectronic Circuits*, 7th ed., section 7.3.3 (CE stage,
from memory); sympy (reference library) reads back the ``sympy`` field.
"""
from __future__ import annotations

import json

import pytest
import sympy

CE = """\
signal VS (b, gnd) 1 mV, rs=1k
npn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k
resistor RC (c, gnd) 5k
load RL (c, gnd) 10k
"""


def test_derive_plain_and_latex(cli, netlist):
    p = netlist(CE)
    r = cli("derive", p, "Av")
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "Av = -Q1.gm*(Q1.ro || RC || RL)"
    r = cli("derive", p, "Av", "--latex")
    assert "\\parallel" in r.stdout and "g_{m," in r.stdout


def test_derive_json_shape_and_sympy_field(cli, netlist):
    r = cli("derive", netlist(CE), "Avo", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert set(d) >= {"quantity", "expression", "where", "size", "sympy", "symbols"}
    assert "latex" not in d  # LaTeX only when asked (--latex)
    assert d["where"] == [] and d["size"] == 3  # -Q1.gm*(Q1.ro || RC): three symbol occurrences
    assert d["symbols"] == {"Q1_gm": "Q1.gm", "Q1_ro": "Q1.ro", "RC": "RC"}
    loc = {k: sympy.Symbol(k, positive=True) for k in d["symbols"]}
    e = sympy.parse_expr(d["sympy"], local_dict=loc)  # trusted: the program's own output
    gm, ro, rc = loc["Q1_gm"], loc["Q1_ro"], loc["RC"]
    assert sympy.cancel(e - (-gm * ro * rc / (ro + rc))) == 0


def test_derive_limit_keep_numeric(cli, netlist):
    p = netlist(CE)
    r = cli("derive", p, "Av", "--limit", "Q1.ro=oo")
    assert r.stdout.strip() == "Av = -Q1.gm*(RC || RL)"
    r = cli("derive", p, "Av", "--numeric", "Q1.gm,Q1.ro,RC")
    assert r.returncode == 0, r.stderr
    assert "Q1.gm" not in r.stdout and "RL" in r.stdout
    r = cli("derive", p, "all", "--keep", "RL")
    assert r.returncode == 0, r.stderr
    lines = dict(ln.split(" = ", 1) for ln in r.stdout.strip().splitlines())
    assert list(lines) == ["Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"]
    # with only RL kept, the load-free quantities are plain numbers: Rin = rpi = 2500,
    # Rout = ro || RC = 100000/21, Avo = -gm (ro || RC) = -4000/21 (Sedra & Smith 7th ed., 7.3.3,
    # from memory); the load-dependent ones still name RL
    from fractions import Fraction
    assert Fraction(lines["Rin"]) == 2500
    assert Fraction(lines["Rout"]) == Fraction(100000, 21)
    assert Fraction(lines["Avo"]) == Fraction(-4000, 21)
    assert all("RL" in lines[k] for k in ("Av", "Gv", "Ai"))


def test_derive_bad_options_exit_2(cli, netlist):
    p = netlist(CE)
    for args in (["--limit", "Q1.ro=5"], ["--limit", "QX.ro=oo"], ["--keep", "RZ"], ["--dominant", "150%"]):
        r = cli("derive", p, "Av", *args)
        assert r.returncode == 2, (args, r.stderr)
        assert "Traceback" not in r.stderr
    r = cli("derive", netlist(CE.replace("load RL (c, gnd) 10k", "output (c, gnd)")), "Ai")
    assert r.returncode == 2


def test_derive_dominant_reports_error(cli, netlist):
    r = cli("derive", netlist(CE), "Gv", "--dominant", "5%", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)["dominant"]
    assert d["coefficient_error"] <= 0.05
    assert d["error_at_frequency"] <= d["error_bound_at_frequency"]


def test_solve_shows_symbolic_forms_for_small_circuits(cli, netlist):
    r = cli("solve", netlist(CE), "--symbolic")
    assert r.returncode == 0, r.stderr
    assert "= -Q1.gm*(Q1.ro || RC || RL)" in r.stdout
    assert "= Q1.ro || RC" in r.stdout
    # without --symbolic the report stays numeric
    plain = cli("solve", netlist(CE))
    assert plain.returncode == 0 and "Av" in plain.stdout, plain.stderr  # a report, only without the forms
    assert "= -Q1.gm" not in plain.stdout


def test_expand_bias_matches_the_closed_form(cli):
    # gm = ic/V_T, ro = va/ic (Sedra & Smith 7th ed., 7.2.1-7.2.4, from memory); V_T = kT/q with
    # CODATA constants (scipy.constants) at the default 300 K; the outside reference is the CE
    # gain Av = -gm (ro || RC || RF) (same book, 7.3.3), the numeric engine a consistency check
    from scipy.constants import elementary_charge, k
    import solver
    from conftest import CIRCUITS
    r = cli("derive", CIRCUITS / "hydrophone_preamp.pw", "Av", "--expand-bias", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert "Q1.ic" in d["symbols"].values() and "V_T" in d["symbols"].values()
    values = {"Q1_ic": 0.5e-3, "Q1_va": 60.0, "V_T": k * 300.0 / elementary_charge, "RC": 10e3, "RF": 22e3}
    loc = {name: sympy.Symbol(name, positive=True) for name in d["symbols"]}
    e = sympy.parse_expr(d["sympy"], local_dict=loc)  # trusted: the program's own output
    got = float(e.subs({loc[n]: v for n, v in values.items() if n in loc}))
    vt = values["V_T"]
    gm, ro = 0.5e-3 / vt, 60.0 / 0.5e-3
    assert got == pytest.approx(-gm / (1 / ro + 1 / 10e3 + 1 / 22e3), rel=1e-9)
    ref = solver.solve(solver.load(CIRCUITS / "hydrophone_preamp.pw")).quantities["Av"].real
    assert got == pytest.approx(ref, rel=1e-9)


def test_solve_leaves_out_symbolic_forms_for_large_circuits(cli, netlist):
    # the size guard of solver/symbolic/quick.py (common practice, no source): a three-stage
    # cascade has more MNA unknowns than the guard allows
    from tests.bench.bench_symbolic import cascade
    from solver.analysis.symbolic.quick import quick_symbolic
    import solver
    assert quick_symbolic(solver.loads(cascade(3))) == {}
    r = cli("solve", netlist(cascade(3)))
    assert r.returncode == 0, r.stderr
    assert "\n        = " not in r.stdout


def test_solve_symbolic_time_guard():
    # with no time at all the guard gives up and the numeric report stands alone
    import solver
    from solver.analysis.symbolic.quick import quick_symbolic
    c = solver.loads(CE)
    assert quick_symbolic(c, seconds=1e-6) == {}
    assert quick_symbolic(c)["Av"] == "-Q1.gm*(Q1.ro || RC || RL)"
