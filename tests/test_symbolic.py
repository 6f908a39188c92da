"""Symbolic engine: textbook closed forms, consistency with the numeric engine, printing.

Closed forms are from A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed.
(chapter 7 BJT and MOSFET stages, chapter 2 op-amp circuits) and B. Razavi,
*Design of Analog CMOS Integrated Circuits*, chapter 3 (single-stage amplifiers),
all from memory. Each check is an identity of rational functions (sympy cancel).

The comparisons with the numeric engine (and hybrid-pi against T model, one backend
against another) are consistency checks: both sides come from the same stamps, so they
catch a broken engine but not a wrong stamp; the closed forms are the outside references.
"""
from __future__ import annotations

import cmath
import io
import math
import random

import pytest
import sympy

import solver
from solver.analysis.ports import port_quantities
from solver.engine.symbolic.determinants import symbol as S
from solver.analysis.symbolic.ports import symbol_values, symbolic_port_quantities


def sq(text, names=None, **kw):
    c = solver.loads(text)
    return {k: v.expr() for k, v in symbolic_port_quantities(c, which=names, **kw).items()}


def same(a, b):
    return sympy.cancel(sympy.together(a - b)) == 0


def par(*xs):
    return 1 / sum(1 / x for x in xs)


gm, rpi, ro, RC, RE, RL, rs = (S(n) for n in ("Q1.gm", "Q1.rpi", "Q1.ro", "RC", "RE", "RL", "VS.rs"))
re_t, al = S("Q1.re"), S("Q1.alpha")


def test_common_emitter_without_ro():
    # Sedra & Smith 7th ed., section 7.3.3 (CE): Rin = rpi, Avo = -gm*RC, Rout = RC (from memory)
    q = sq("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5\nresistor RC (c, gnd) 5k\n"
           "load RL (c, gnd) 10k\n")
    assert same(q["Rin"], rpi)
    assert same(q["Avo"], -gm * RC)
    assert same(q["Rout"], RC)
    assert same(q["Av"], -gm * par(RC, RL))


def test_common_emitter_with_ro():
    # Sedra & Smith 7th ed., section 7.3.3: Avo = -gm*(RC || ro), Rout = RC || ro (from memory)
    q = sq("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k\n"
           "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    assert same(q["Avo"], -gm * par(RC, ro))
    assert same(q["Rout"], par(RC, ro))
    # Gv = Rin/(Rin + rs) * Av
    assert same(q["Gv"], rpi / (rpi + rs) * -gm * par(RC, ro, RL))


def test_common_emitter_with_degeneration():
    # Sedra & Smith 7th ed., section 7.3.4: Rin = (beta+1)(re + RE), Avo = -alpha*RC/(re + RE),
    # with beta = gm*rpi, alpha = beta/(beta+1), re = alpha/gm (from memory)
    q = sq("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, e) gm=40m, rpi=2k5\nresistor RE (e, gnd) 200\n"
           "resistor RC (c, gnd) 5k\noutput (c, gnd)\n")
    beta = gm * rpi
    alpha = beta / (beta + 1)
    re_ = alpha / gm
    assert same(q["Rin"], (beta + 1) * (re_ + RE))
    assert same(q["Avo"], -alpha * RC / (re_ + RE))


def test_emitter_follower():
    # Sedra & Smith 7th ed., section 7.3.6: Rin = rpi + (beta+1)*RL', Av = (beta+1)RL'/(rpi + (beta+1)RL'),
    # Rout = RE || (rpi + rs)/(beta+1) (from memory)
    q = sq("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (gnd, b, e) gm=40m, rpi=2k5\n"
           "resistor RE (e, gnd) 2k\nload RL (e, gnd) 1k\n")
    beta = gm * rpi
    rl = par(RE, RL)
    assert same(q["Rin"], rpi + (beta + 1) * rl)
    assert same(q["Av"], (beta + 1) * rl / (rpi + (beta + 1) * rl))
    assert same(q["Rout"], par(RE, (rpi + rs) / (beta + 1)))


def test_common_base_t_model():
    # Sedra & Smith 7th ed., section 7.3.5 (CB, T model): Rin = re, Avo = alpha*RC/re (= gm*RC), Rout = RC
    # (from memory)
    q = sq("signal VS (e, gnd) 1 mV\nnpn Q1 (c, gnd, e) gm=40m, rpi=2k5, model=t\n"
           "resistor RC (c, gnd) 5k\noutput (c, gnd)\n")
    assert same(q["Rin"], re_t)
    assert same(q["Avo"], al * RC / re_t)
    assert same(q["Rout"], RC)


def test_hybrid_pi_and_t_model_are_consistent_symbolically():
    # consistency check (same stamping engine, two drawings): the two models are one two-port (Sedra & Smith 7th ed., section 7.2.5, from memory):
    # substituting gm = alpha/re, rpi = re/(1 - alpha) maps one result onto the other
    net = ("signal VS (b, gnd) 1 mV, rs=600\nnpn Q1 (c, b, e) gm=40m, rpi=2k5{m}\nresistor RE (e, gnd) 200\n"
           "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    h = sq(net.format(m=""))
    t = sq(net.format(m=", model=t"))
    sub = {gm: al / re_t, rpi: re_t / (1 - al)}
    assert set(h) == set(t) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for k in h:
        assert same(h[k].subs(sub), t[k]), k


M_gm, M_ro, RD, M_gmb = S("M1.gm"), S("M1.ro"), S("RD"), S("M1.gmb")


def test_common_source():
    # Razavi, Design of Analog CMOS ICs, section 3.3.1: Av = -gm*(RD || ro), Rout = RD || ro (from memory)
    q = sq("signal VS (g, gnd) 1 mV\nnmos M1 (d, g, gnd) gm=2m, ro=50k\nresistor RD (d, gnd) 10k\n"
           "output (d, gnd)\n")
    assert same(q["Avo"], -M_gm * par(RD, M_ro))
    assert same(q["Rout"], par(RD, M_ro))
    assert q["Rin"] == sympy.oo


def test_source_follower_with_body_effect():
    # Razavi, section 3.4: Av = gm*(ro || RS)/(1 + (gm + gmb)*(ro || RS)) with the body at ground;
    # Rout = 1/(gm + gmb) || ro || RS (from memory)
    q = sq("signal VS (g, gnd) 1 mV\nnmos M1 (gnd, g, s, gnd) gm=2m, ro=50k, gmb=300u\n"
           "resistor RS (s, gnd) 5k\noutput (s, gnd)\n")
    RS = S("RS")
    r = par(M_ro, RS)
    assert same(q["Avo"], M_gm * r / (1 + (M_gm + M_gmb) * r))
    assert same(q["Rout"], par(1 / (M_gm + M_gmb), M_ro, RS))


def test_common_gate():
    # Razavi, section 3.5: Rin = (ro + RD)/(1 + (gm + gmb)*ro); Avo (rs = 0) = (1 + (gm+gmb)*ro)*RD/(ro + RD)
    # (from memory; body tied to ground)
    q = sq("signal VS (s, gnd) 1 mV\nnmos M1 (d, gnd, s, gnd) gm=2m, ro=50k, gmb=300u\n"
           "resistor RD (d, gnd) 10k\noutput (d, gnd)\n")
    assert same(q["Rin"], (M_ro + RD) / (1 + (M_gm + M_gmb) * M_ro))
    assert same(q["Avo"], (1 + (M_gm + M_gmb) * M_ro) * RD / (M_ro + RD))


def test_inverting_amplifier_ideal_and_finite_gain():
    # Sedra & Smith 7th ed., sections 2.2.1-2.2.2: ideal Av = -R2/R1; finite open-loop gain A:
    # Av = -(R2/R1)/(1 + (1 + R2/R1)/A); Rin = R1 (ideal) (from memory)
    net = ("signal VS (in, gnd) 1 mV\nresistor R1 (in, m) 10k\nresistor R2 (m, out) 47k\n"
           "opamp U1 (out, gnd, m){g}\noutput (out, gnd)\n")
    R1, R2, A = S("R1"), S("R2"), S("U1.gain")
    ideal = sq(net.format(g=""))
    assert same(ideal["Avo"], -R2 / R1)
    assert same(ideal["Rin"], R1)
    assert ideal["Rout"] == 0
    finite = sq(net.format(g=" gain=1e4"))
    assert same(finite["Avo"], -(R2 / R1) / (1 + (1 + R2 / R1) / A))
    assert sympy.limit(finite["Avo"], A, sympy.oo) == -R2 / R1


def test_non_inverting_amplifier():
    # Sedra & Smith 7th ed., section 2.3.1: G = 1 + R2/R1, Rin infinite (from memory)
    q = sq("signal VS (in, gnd) 1 mV\nresistor R1 (m, gnd) 10k\nresistor R2 (m, out) 47k\n"
           "opamp U1 (out, in, m)\noutput (out, gnd)\n")
    assert same(q["Avo"], 1 + S("R2") / S("R1"))


def test_miller_zero_of_common_emitter():
    # Sedra & Smith 7th ed., section 10.3 (CE high-frequency): with cmu the transfer has the
    # right-half-plane zero s = gm/cmu; numerator of Avo proportional to (s*cmu - gm) (from memory)
    q = sq("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, cpi=10p, cmu=1p\n"
           "resistor RC (c, gnd) 5k\noutput (c, gnd)\n")
    num = sympy.numer(sympy.factor(q["Avo"]))
    s, cmu = S("s"), S("Q1.cmu")
    assert sympy.simplify(num.subs(s, gm / cmu)) == 0


# --- consistency of the two engines on random circuits (same stamps, not independent) -------
def random_circuit(rnd: random.Random) -> str:
    nodes = ["in", "a", "b", "c"]
    lines = [f"signal VS (in, gnd) 1 mV, rs={rnd.uniform(50, 5000):.4g}"]
    k = 0
    for i, n in enumerate(nodes):
        for m in nodes[i + 1:] + ["gnd"]:
            if rnd.random() < 0.55:
                k += 1
                lines.append(f"resistor R{k} ({n}, {m}) {rnd.uniform(100, 1e5):.4g}")
    for n in nodes[1:]:
        lines.append(f"resistor RG{n} ({n}, gnd) {rnd.uniform(1e3, 1e5):.4g}")
        if rnd.random() < 0.4:
            lines.append(f"capacitor C{n} ({n}, gnd) {rnd.uniform(1e-12, 1e-8):.4g}")
    b, c = rnd.sample(nodes[1:], 2)
    lines.append(f"npn Q1 ({c}, {b}, gnd) gm={rnd.uniform(1e-3, 0.1):.4g}, rpi={rnd.uniform(500, 1e4):.4g}, "
                 f"ro={rnd.uniform(1e4, 1e6):.4g}, cmu=1p")
    lines.append(f"vccs G1 ({b}, gnd) (in, gnd) {rnd.uniform(-1e-3, 1e-3):.4g}")
    lines.append(f"load RL ({c}, gnd) {rnd.uniform(1e3, 1e5):.4g}")
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("seed", range(8))
def test_symbolic_and_numeric_engines_are_consistent_on_random_circuits(seed):
    # consistency check, not an independent reference: the symbolic result evaluated at the
    # netlist values equals scipy.sparse.linalg.splu's solve of the same stamps
    # (solver.analysis.ports); the random RC networks of test_robustness.py meet a hand-built matrix
    rnd = random.Random(seed)
    c = solver.loads(random_circuit(rnd))
    f = rnd.choice([0.0, 1e3, 1e6])
    numeric = port_quantities(c, f).quantities
    values = symbol_values(c)
    exact = symbolic_port_quantities(c)
    assert set(exact) == set(numeric) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for name, q in exact.items():
        z = q.value(values, 2j * math.pi * f)
        ref = numeric[name]
        if cmath.isinf(ref):
            assert cmath.isinf(z), name
        else:
            assert abs(z - ref) <= 1e-9 * abs(ref) + 1e-15, (name, z, ref)


def test_keep_and_numeric_give_the_same_values():
    # consistency check: keeping symbols or substituting numbers first gives the same value
    rnd = random.Random(11)
    c = solver.loads(random_circuit(rnd))
    values = symbol_values(c)
    full = symbolic_port_quantities(c, which=["Av"])["Av"].value(values, 2j * math.pi * 1e4)
    part = symbolic_port_quantities(c, keep=["RL", "Q1.gm"], which=["Av"])["Av"]
    assert part.gens == ["s", "Q1.gm", "RL"]  # only the kept names stay symbols (with s)
    assert abs(part.value(values, 2j * math.pi * 1e4) - full) <= 1e-9 * abs(full)
    none = symbolic_port_quantities(c, numeric=list(values), which=["Av"])["Av"]
    assert none.gens == ["s"]


def test_compact_form_equals_exact():
    # consistency check: the compact (nested) form and the expanded form are one function
    from tests.bench.bench_symbolic import cascade
    c = solver.loads(cascade(2))
    values = symbol_values(c)
    exact = symbolic_port_quantities(c, which=["Gv"])["Gv"]
    compact = symbolic_port_quantities(c, which=["Gv"], compact=True)["Gv"]
    s = 2j * math.pi * 3e6
    sub = {S(n): v for n, v in values.items()}
    sub[S("s")] = s
    assert abs(complex(compact.xreplace(sub).evalf()) - exact.value(values, s)) <= 1e-9 * abs(exact.value(values, s))


def test_sympy_backend_matches_flint():
    pytest.importorskip("flint")
    from solver.engine.symbolic.determinants import LaplaceDeterminants
    from solver.engine.symbolic.ring import Ring
    # the determinant of a random sparse polynomial matrix, both backends and sympy's Matrix.det
    rnd = random.Random(3)
    names = ["a", "b", "c"]
    out = []
    for be in ("flint", "sympy"):
        R = Ring(names, be)
        g = R.gens
        ent = {}
        rnd.seed(3)
        for i in range(5):
            for j in range(5):
                if i == j or rnd.random() < 0.4:
                    ent[(i, j)] = g[rnd.randrange(3)] + R.const(rnd.randint(-3, 3))
        out.append(R.to_dict(LaplaceDeterminants(5, ent, R.zero, R.one).det()))
        ref = sympy.Matrix(5, 5, lambda i, j: sympy.sympify(str(ent[(i, j)]).replace("^", "**"))  # trusted: our own polynomial text
                           if (i, j) in ent else 0).det()
        P = sympy.Poly(ref, *sympy.symbols(names))
        assert {k: v for k, v in P.as_dict().items()} == {k: v for k, v in out[-1].items()}
    assert out[0] == out[1]


# --- printing --------------------------------------------------------------------------------
def test_parallel_recognised_and_round_trips():
    from solver.language.parse import parse_expression
    from solver.analysis.symbolic.claims import to_sympy
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k\n"
                     "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    d = {x.quantity: x for x in derive(c, ["Av", "Rout", "Rin"])}
    assert d["Av"].plain == "-Q1.gm*(Q1.ro || RC || RL)"
    assert d["Rout"].plain == "Q1.ro || RC"
    assert "\\parallel" in d["Av"].latex
    exact = symbolic_port_quantities(c)
    for name, x in d.items():
        back = to_sympy(parse_expression(x.plain), c)  # our own parser and tree walker
        assert same(back, exact[name].expr()), name


def test_sympy_string_parses_back():
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k, cmu=1p\n"
                     "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    exact = symbolic_port_quantities(c)
    assert set(exact) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for x in derive(c, list(exact)):
        names = {k: S(v) for k, v in x.symbols.items()}
        names["s"] = S("s")
        back = sympy.parse_expr(x.sympy, local_dict=names)  # trusted: text our printer wrote
        assert same(back, exact[x.quantity].expr()), x.quantity


@pytest.mark.parametrize("quantity", ["Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"])
def test_latex_renders_with_mathtext(quantity):
    # matplotlib's mathtext (a TeX subset) must accept every LaTeX string we print
    matplotlib = pytest.importorskip("matplotlib")
    matplotlib.use("Agg")
    from matplotlib import mathtext
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k, cmu=1p\n"
                     "resistor RC (c, gnd) 5k\ncapacitor CL (c, gnd) 1n\nload RL (c, gnd) 10k\n")
    (x,) = derive(c, [quantity])
    for line in x.latex.splitlines():  # the expression, then one line per where line
        buf = io.BytesIO()
        mathtext.math_to_image(f"${line}$", buf, format="png")
        assert buf.getvalue().startswith(b"\x89PNG")


def test_latex_names():
    from solver.analysis.symbolic.printing import latex_name
    assert latex_name("Q1.gm") == r"g_{m,\mathrm{Q1}}"
    assert latex_name("RC") == "R_{C}"
    assert latex_name("S1.RC") == r"R_{C,\mathrm{S1}}"
    assert latex_name("Q1.alpha") == r"\alpha_{\mathrm{Q1}}"


# --- limits ----------------------------------------------------------------------------------
@pytest.mark.parametrize("to", ["oo", "0"])
def test_rational_limit_matches_sympy_limit(to):
    # reference: sympy.limit (Gruntz algorithm) on the same rational functions
    from solver.analysis.symbolic.claims import rational_limit
    q = sq("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, e) gm=40m, rpi=2k5, ro=100k\n"
           "resistor RE (e, gnd) 100\nresistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    for name in ("Av", "Rin", "Rout"):
        for x in (ro, RE, rpi, gm):
            ours = rational_limit(q[name], x, to)
            ref = sympy.limit(q[name], x, sympy.oo if to == "oo" else 0, "+")
            assert ours == ref or same(ours, ref), (name, x, to)


# --- dominant terms ------------------------------------------------------------------------
@pytest.mark.parametrize("tol", [0.01, 0.05, 0.2])
def test_dominant_terms_error_bound(tol):
    from tests.bench.bench_symbolic import cascade
    from solver.analysis.symbolic.claims import prune
    from solver.engine.symbolic.determinants import evaluate_dict
    c = solver.loads(cascade(2))
    values = symbol_values(c)
    f = 1e5
    s = 2j * math.pi * f
    q = symbolic_port_quantities(c, which=["Gv"])["Gv"]
    p = prune(q.num, q.den, q.gens, values, tol, s)
    assert p.dropped > 0
    assert p.coefficient_error <= tol + 1e-12
    # the reported error is the real one: compare with the numeric engine (solver.analysis.ports)
    ref = port_quantities(c, f).quantities["Gv"]
    pt = [s] + [values[g] for g in q.gens[1:]]
    pruned_value = evaluate_dict(p.num, pt) / evaluate_dict(p.den, pt)
    err = abs(pruned_value - ref) / abs(ref)
    assert err == pytest.approx(p.error_at_f, rel=1e-6, abs=1e-12)
    assert err <= p.bound_at_f + 1e-12


def test_pure_python_backend_gives_the_same_quantities(monkeypatch):
    # consistency check: the sympy PolyRing fallback (no python-flint) must give the same exact results
    import solver.engine.symbolic.ring as ring
    net = ("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, e) gm=40m, rpi=2k5, ro=100k, cmu=1p\n"
           "resistor RE (e, gnd) 100\nresistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
    monkeypatch.setattr(ring, "DEFAULT_BACKEND", "sympy")
    slow = sq(net)
    monkeypatch.setattr(ring, "DEFAULT_BACKEND", None)
    fast = sq(net)
    assert set(fast) == set(slow) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for k in fast:
        assert same(slow[k], fast[k]), k


def test_parallel_with_a_series_branch_round_trips():
    # R1 || (R2 + R3): the resistance seen into a divider (series/parallel reduction, any
    # circuits text, e.g. Sedra & Smith 7th ed., chapter 1, from memory)
    from solver.language.parse import parse_expression
    from solver.analysis.symbolic.claims import to_sympy
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("signal VS (a, gnd) 1 mV\nresistor R1 (a, gnd) 10k\nresistor R2 (a, b) 1k\n"
                     "resistor R3 (b, gnd) 5k\noutput (b, gnd)\n")
    (d,) = derive(c, ["Rin"])
    assert d.plain == "R1 || (R2 + R3)"
    R1, R2, R3 = S("R1"), S("R2"), S("R3")
    assert same(to_sympy(parse_expression(d.plain), c), R1 * (R2 + R3) / (R1 + R2 + R3))


def test_block_instances_give_prefixed_symbols():
    # two cascaded CE stages: Avo = gm1*(ro1 || RC1 || rpi2) * gm2*(ro2 || RC2)
    # (Sedra & Smith 7th ed., section 7.3.3 applied per stage, from memory)
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("block stage (i, o) rc=5k\n  npn Q (o, i, gnd) gm=40m, rpi=2k5, ro=100k\n"
                     "  resistor RC (o, gnd) rc\nend\nsignal VS (a, gnd) 1 mV\nuse stage S1 (a, b)\n"
                     "use stage S2 (b, c) rc=10k\noutput (c, gnd)\n")
    q = symbolic_port_quantities(c, which=["Avo"])["Avo"].expr()
    g1, g2, o1, o2, r1, r2, p2 = (S(n) for n in ("S1.Q.gm", "S2.Q.gm", "S1.Q.ro", "S2.Q.ro", "S1.RC", "S2.RC",
                                                 "S2.Q.rpi"))
    assert same(q, g1 * par(o1, r1, p2) * g2 * par(o2, r2))
    text = derive(c, ["Avo"])[0].plain
    assert "(S1.Q.ro || S1.RC || S2.Q.rpi)" in text and "(S2.Q.ro || S2.RC)" in text


def test_follower_output_resistance_prints_as_textbook():
    # Sedra & Smith 7th ed., section 7.3.6: Rout = RE || (rpi + rs)/(beta + 1) (from memory)
    from solver.language.parse import parse_expression
    from solver.analysis.symbolic.claims import to_sympy
    from solver.analysis.symbolic.derive import derive
    c = solver.loads("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (gnd, b, e) gm=40m, rpi=2k5\n"
                     "resistor RE (e, gnd) 2k\nload RL (e, gnd) 1k\n")
    # (the same section also writes it RE || (re + rs/(beta + 1)), with re = rpi/(beta + 1))
    (d,) = derive(c, ["Rout"])
    assert d.plain == "RE || (Q1.re + VS.rs/(Q1.beta + 1))"
    assert same(to_sympy(parse_expression(d.plain), c), par(RE, (rpi + rs) / (gm * rpi + 1)))


def test_divider_form_and_every_quantity_round_trips():
    # Gv = -gm*(rpi || RB)*(ro || RC || RF)/(rs + rpi || RB): the input divider times the CE gain
    # (Sedra & Smith 7th ed., section 7.3.3, from memory); every printed quantity parses back
    # with our own parser into the same rational function
    from conftest import CIRCUITS
    from solver.language.parse import parse_expression
    from solver.analysis.symbolic.claims import to_sympy
    from solver.analysis.symbolic.derive import derive
    c = solver.load(CIRCUITS / "hydrophone_preamp.pw")
    exact = symbolic_port_quantities(c)
    shown = {d.quantity: d.plain for d in derive(c, list(exact))}
    # the textbook form has 9 symbol occurrences; the printed one may be no longer
    (gv,) = derive(c, ["Gv"])
    assert gv.size <= 9, shown["Gv"]
    assert set(shown) == set(exact) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for name, text in shown.items():
        assert same(to_sympy(parse_expression(text), c), exact[name].expr()), name
