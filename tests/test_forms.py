"""Design-oriented symbolic forms (solver/analysis/symbolic/forms.py) against textbook closed forms.

Every printed form is parsed back with our own parser (solver.language.parse.parse_expression)
and turned into a ratio of python-flint polynomials by walking the expression tree here, then
compared with the exact result by polynomial identity (cross-multiplication), never at one
numeric point. Each textbook form is itself checked identical to the exact result the same way,
and the printed form may be at most 1.5 times as long (in symbol occurrences).

Sources (all from memory): A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed.,
sections 7.3.3 (CE), 7.3.4 (CE with emitter resistance), 7.3.5 (CB), 7.3.6 (emitter follower);
P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, *Analysis and Design of Analog Integrated
Circuits*, 5th ed., sections 3.3.4 (degenerated output resistance), 3.4.2 (common gate with body
effect), 3.4.3/3.5 (cascode); R. D. Middlebrook, "Null double injection and the extra element
theorem", IEEE Trans. Education 32(3), 1989 (the split forms themselves).
"""
from __future__ import annotations

import json
from fractions import Fraction

import pytest

import solver
from solver.analysis.symbolic import forms as F
from solver.analysis.symbolic.derive import derive
from solver.analysis.symbolic.ports import symbolic_port_quantities
from solver.language import expr as ex
from solver.language.parse import parse_expression

flint = pytest.importorskip("flint")


# --- reading a printed form back into polynomials (our parser, our tree walk) ---------------------
class Back:
    """Rational functions over the circuit's symbols, built from expression trees."""

    def __init__(self, gens):
        self.gens = list(gens)
        self.ctx = flint.fmpq_mpoly_ctx.get(tuple(self.gens), "lex")
        self.g = dict(zip(self.gens, self.ctx.gens()))
        self.one = self.ctx.from_dict({}) + 1
        self.names: dict = {}

    def const(self, q):
        q = Fraction(q)
        return (self.one * flint.fmpq(q.numerator, q.denominator), self.one)

    def ref(self, name):
        if name in self.names:
            return self.names[name]
        if name in self.g:
            return (self.g[name], self.one)
        owner, _, base = name.rpartition(".")
        # the documented device symbols: beta = gm*rpi, re = rpi/(beta + 1), alpha = beta/(beta + 1)
        gm, rpi = self.g[owner + ".gm"], self.g[owner + ".rpi"]
        beta = gm * rpi
        if base == "beta":
            return (beta, self.one)
        if base == "re":
            return (rpi, beta + 1)
        if base == "alpha":
            return (beta, beta + 1)
        raise KeyError(name)

    def tree(self, e):
        if isinstance(e, ex.Num):
            return self.const(Fraction(repr(e.value)))
        if isinstance(e, ex.Ref):
            return self.ref(e.name)
        if isinstance(e, ex.Unary):
            n, d = self.tree(e.operand)
            return (-n, d) if e.op == "-" else (n, d)
        assert isinstance(e, ex.Binary), e
        (a, b), (c, d) = self.tree(e.left), self.tree(e.right)
        if e.op == "+":
            return (a * d + c * b, b * d)
        if e.op == "-":
            return (a * d - c * b, b * d)
        if e.op == "*":
            return (a * c, b * d)
        if e.op == "/":
            return (a * d, b * c)
        if e.op == "||":  # x || y = x*y/(x + y)
            return (a * c, a * d + c * b)
        if e.op == "^":
            kc, kd = c.leading_coefficient(), d.leading_coefficient()
            k = Fraction(int(kc.p), int(kc.q)) / Fraction(int(kd.p), int(kd.q))
            assert k.denominator == 1, "integer powers only"
            k = int(k)
            return (a ** k, b ** k) if k >= 0 else (b ** -k, a ** -k)
        raise AssertionError(e.op)

    def text(self, t):
        return self.tree(parse_expression(t))

    def form(self, f):
        """The rational function of a Form: its where lines first, in order, then the expression."""
        for name, t in f.where:
            self.names[name] = self.text(t)
        return self.text(f.text)

    def exact(self, q):
        """A SymbolicQuantity's num/den over the same generators."""
        idx = [self.gens.index(g) for g in q.gens]

        def poly(dd):
            out = {}
            for m, c in dd.items():
                e = [0] * len(self.gens)
                for i, k in zip(idx, m):
                    e[i] = k
                out[tuple(e)] = flint.fmpq(c.numerator, c.denominator)
            return self.ctx.from_dict(out)

        return poly(q.num), poly(q.den)


def identical(x, y) -> bool:
    (a, b), (c, d) = x, y
    return a * d == b * c


def size_of(text: str) -> int:
    """Symbol occurrences of an expression (the JSON "size" of a form without where lines)."""
    return sum(1 for _ in ex.refs(parse_expression(text)))


def check(net: str, quantity: str, textbook: str):
    c = solver.loads(net)
    q = symbolic_port_quantities(c, which=[quantity])[quantity]
    (d,) = derive(c, [quantity])
    B = Back(q.gens)
    exact = B.exact(q)
    assert identical(B.text(textbook), exact), f"the textbook form itself: {textbook}"
    assert identical(B.form(d.form), exact), d.plain
    assert d.size <= 1.5 * size_of(textbook), (d.plain, textbook)
    return d


CE = "signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5{ro}\nresistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n"
CE_RE = ("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, e) gm=40m, rpi=2k5{ro}\nresistor RE (e, gnd) 200\n"
         "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
FOLLOWER = ("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (gnd, b, e) gm=40m, rpi=2k5\nresistor RE (e, gnd) 2k\n"
            "load RL (e, gnd) 1k\n")
CB = ("signal VS (e, gnd) 1 mV, rs=50\nnpn Q1 (c, gnd, e) gm=40m, rpi=2k5\nresistor RE (e, gnd) 2k\n"
      "resistor RC (c, gnd) 5k\nload RL (c, gnd) 10k\n")
CG = "signal VS (s, gnd) 1 mV\nnmos M1 (d, gnd, s, gnd) gm=2m, gmb=300u, ro=50k\nresistor RD (d, gnd) 10k\noutput (d, gnd)\n"
CASCODE = ("signal VS (g, gnd) 1 mV\nnmos M1 (x, g, gnd, gnd) gm=2m, ro=50k\n"
           "nmos M2 (d, gnd, x, gnd) gm=2m, gmb=300u, ro=50k\noutput (d, gnd)\n")
THREE = ("signal VS (g1, gnd) 1 mV\nnmos M1 (d1, g1, gnd, gnd) gm=2m\nresistor RD (d1, gnd) 10k\n"
         "npn Q2 (c2, d1, gnd) gm=40m, rpi=2k5\nresistor RC (c2, gnd) 5k\n"
         "npn Q3 (gnd, c2, e3) gm=40m, rpi=2k5\nload RL (e3, gnd) 1k\n")

TEXTBOOK = [
    # Sedra & Smith 7.3.3: the CE stage, without and with ro
    (CE.format(ro=""), "Av", "-Q1.gm*(RC || RL)"),
    (CE.format(ro=", ro=100k"), "Av", "-Q1.gm*(Q1.ro || RC || RL)"),
    (CE.format(ro=", ro=100k"), "Rout", "Q1.ro || RC"),
    # Sedra & Smith 7.3.4: the CE stage with an emitter resistance, exact (ro infinite)
    (CE_RE.format(ro=""), "Av", "-Q1.beta*(RC || RL)/(Q1.rpi + (Q1.beta + 1)*RE)"),
    (CE_RE.format(ro=""), "Rin", "Q1.rpi + (Q1.beta + 1)*RE"),
    # Gray & Meyer 3.3.4: output resistance of the degenerated stage with ro, exact
    (CE_RE.format(ro=", ro=100k"), "Rout", "RC || (Q1.ro*(1 + Q1.gm*(RE || Q1.rpi)) + RE || Q1.rpi)"),
    # Sedra & Smith 7.3.6: the emitter follower
    (FOLLOWER, "Gv", "(Q1.beta + 1)*(RE || RL)/(VS.rs + Q1.rpi + (Q1.beta + 1)*(RE || RL))"),
    (FOLLOWER, "Rin", "Q1.rpi + (Q1.beta + 1)*(RE || RL)"),
    (FOLLOWER, "Rout", "RE || (Q1.rpi + VS.rs)/(Q1.beta + 1)"),
    # Sedra & Smith 7.3.5: the common-base stage
    (CB, "Rin", "RE || Q1.re"),
    (CB, "Av", "Q1.alpha*(RC || RL)/Q1.re"),
    (CB, "Gv", "(RE || Q1.re)/(VS.rs + RE || Q1.re)*Q1.alpha*(RC || RL)/Q1.re"),
    # Gray & Meyer 3.4.2: the common gate with body effect
    (CG, "Rin", "(M1.ro + RD)/(1 + (M1.gm + M1.gmb)*M1.ro)"),
    (CG, "Avo", "(1 + (M1.gm + M1.gmb)*M1.ro)*RD/(M1.ro + RD)"),
    # Gray & Meyer 3.4.3: the MOS cascode, output resistance and open-circuit gain
    (CASCODE, "Rout", "M2.ro + M1.ro*(1 + (M2.gm + M2.gmb)*M2.ro)"),
    (CASCODE, "Avo", "-M1.gm*M1.ro*(1 + (M2.gm + M2.gmb)*M2.ro)"),
    # Sedra & Smith 7.3.3-7.3.6 stage by stage: CS -> CE -> emitter follower, each loaded by the next
    (THREE, "Av", "-M1.gm*(RD || Q2.rpi)*-Q2.gm*(RC || (Q3.rpi + (Q3.beta + 1)*RL))"
                  "*(Q3.beta + 1)*RL/(Q3.rpi + (Q3.beta + 1)*RL)"),
]


@pytest.mark.parametrize("net, quantity, textbook", TEXTBOOK, ids=[f"{i}-{t[1]}" for i, t in enumerate(TEXTBOOK)])
def test_textbook_stage_printed_identical_and_short(net, quantity, textbook):
    check(net, quantity, textbook)


def test_simple_forms_read_as_written():
    # the plain cases print exactly as a textbook writes them (Sedra & Smith 7.3.3, 7.3.5)
    assert check(CE.format(ro=", ro=100k"), "Av", "-Q1.gm*(Q1.ro || RC || RL)").plain == "-Q1.gm*(Q1.ro || RC || RL)"
    assert check(CB, "Rin", "RE || Q1.re").plain == "Q1.re || RE"
    assert check(CE_RE.format(ro=""), "Rin", "Q1.rpi + (Q1.beta + 1)*RE").size == 3


def test_device_symbols_only_when_shorter():
    # a stage whose result has no gm*rpi product keeps the circuit's own symbols
    d = check(CE.format(ro=", ro=100k"), "Rout", "Q1.ro || RC")
    assert "beta" not in d.plain and "alpha" not in d.plain


def test_compact_form_of_a_cascade_is_exact_and_grows_linearly():
    # the shared-minor form (every minor used twice written once, as where lines) of N cascaded
    # CE stages with cpi and cmu: identical to the exact expanded result, and its size grows by
    # the same amount per stage (the determinant-sharing idea of Shi & Tan, IEEE Trans. CAD 19(1), 2000)
    from tests.bench.bench_symbolic import cascade
    sizes = {}
    for n in (2, 3, 4, 6):
        c = solver.loads(cascade(n))
        num, den = symbolic_port_quantities(c, which=["Gv"], compact="nodes")["Gv"]
        f = F.compact_form(num, den, [])
        sizes[n] = f.size
        assert f.where and f.kind == "compact"
        if n <= 3:
            q = symbolic_port_quantities(c, which=["Gv"])["Gv"]
            B = Back(q.gens)
            assert identical(B.form(f), B.exact(q))
    assert sizes[3] - sizes[2] == sizes[4] - sizes[3]
    assert sizes[6] - sizes[4] == 2 * (sizes[4] - sizes[3])


def test_where_names_avoid_circuit_names():
    from tests.bench.bench_symbolic import cascade
    c = solver.loads(cascade(3).replace("RC1", "W1"))
    (d,) = derive(c, ["Gv"])
    assert d.where and all(name != "W1" for name, _ in d.where)
    q = symbolic_port_quantities(c, which=["Gv"])["Gv"]
    B = Back(q.gens)
    assert identical(B.form(d.form), B.exact(q))


def test_expanded_option_gives_the_flat_ratio():
    c = solver.loads(CE_RE.format(ro=""))
    (d,) = derive(c, ["Rin"], expanded=True)
    assert d.form.kind == "expanded"
    q = symbolic_port_quantities(c, which=["Rin"])["Rin"]
    B = Back(q.gens)
    assert identical(B.form(d.form), B.exact(q))
    assert "||" not in d.plain and "beta" not in d.plain


def test_limits_and_bias_work_on_the_polynomials():
    # ro -> oo leaves the CE gain -gm*(RC || RL) (Sedra & Smith 7.3.3)
    c = solver.loads(CE.format(ro=", ro=100k"))
    (d,) = derive(c, ["Av"], limits=[("Q1.ro", "oo")])
    assert d.plain == "-Q1.gm*(RC || RL)"
    (d,) = derive(c, ["Av"], limits=[("Q1.ro", "0")])
    assert d.plain == "0"


def test_sympy_field_is_the_exact_expanded_ratio():
    # sympy (reference library) reads the "sympy" text back; identical to the exact result
    sympy = pytest.importorskip("sympy")
    c = solver.loads(FOLLOWER)
    q = symbolic_port_quantities(c, which=["Gv"])["Gv"]
    (d,) = derive(c, ["Gv"])
    loc = {k: sympy.Symbol(k, positive=True) for k in d.symbols}
    back = sympy.parse_expr(d.sympy, local_dict=loc)  # trusted: the program's own output
    ref = q.expr().xreplace({sympy.Symbol(v, positive=True): loc[k] for k, v in d.symbols.items()})
    assert sympy.cancel(back - ref) == 0


def test_derive_cli_json_where_size_and_floating_pair(cli, netlist):
    from tests.bench.bench_symbolic import cascade
    r = cli("derive", netlist(cascade(6)), "Gv", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["form"] == "compact" and d["where"] and d["size"] > 0
    assert all(set(w) == {"name", "expression"} for w in d["where"])
    assert d["sympy"] is None and "terms" in d["sympy_omitted"]  # 124,416 terms: not written by default
    assert "latex" not in d
    r = cli("derive", netlist(cascade(2)), "Gv")
    assert r.returncode == 0 and "  where W1 = " in r.stdout, r.stdout
    # the same input checks as solve: a floating resistor pair is an error at its line (exit 2)
    bad = netlist("signal VS (a, gnd) 1 V, rs=1k\nresistor R1 (a, gnd) 2k\nresistor R2 (x, y) 1k\n"
                  "resistor R3 (x, y) 1k\noutput (a, gnd)\n")
    r = cli("derive", bad, "Av")
    assert r.returncode == 2 and ":3:1: error:" in r.stderr and "Traceback" not in r.stderr
    assert r.stdout == ""


def test_write_form_public_entry():
    # the function claims and others call: a Form with text, size, where and latex()
    gens = ["s", "RA", "RB", "CA"]
    one = Fraction(1)
    # RA || RB || 1/(s*CA) = RA*RB/(RA + RB + s*CA*RA*RB)
    f = F.write_form({(0, 1, 1, 0): one}, {(0, 1, 0, 0): one, (0, 0, 1, 0): one, (1, 1, 1, 1): one}, gens,
                     dims={"s": (0, -1), "RA": (1, 0), "RB": (1, 0), "CA": (-1, 1)})
    B = Back(gens)
    assert identical(B.form(f), B.text("RA || RB || 1/(s*CA)"))
    assert f.size <= 4 and f.where == [] and "\\parallel" in f.latex()


@pytest.mark.parametrize("example", ["hydrophone_cs_stage", "geophone_diffpair"])
def test_bundled_examples_print_exactly(example):
    # every quantity of a bundled example, whatever form the printer picks (design with or
    # without where lines, compact), reads back identical to the exact result
    from conftest import CIRCUITS
    from solver.analysis.pipeline import load, prepare
    from solver.analysis.symbolic.ports import scenario_elements
    from solver.analysis.symbolic.printing import symbol_dims
    c = prepare(load(CIRCUITS / f"{example}.pw")).circuit
    dims = symbol_dims(scenario_elements(c))
    from solver.analysis.scenarios import DECIBELS
    for name, q in symbolic_port_quantities(c).items():
        if name in DECIBELS:  # CMRR: 20*log10(abs(Avo/Acm)), not a ratio; Avo and Acm are checked here
            continue
        f = F.form_of(q, dims=dims, seconds=0.3)
        B = Back(q.gens)
        assert identical(B.form(f), B.exact(q)), (name, f.text)


def test_without_python_flint_the_flat_ratio_is_printed(monkeypatch):
    # python-flint is optional: without it the printer writes the exact expanded ratio
    import solver.engine.symbolic.ring as ring
    monkeypatch.setattr(ring, "have_flint", lambda: False)
    c = solver.loads(FOLLOWER)
    q = symbolic_port_quantities(c, which=["Rout"])["Rout"]
    f = F.form_of(q)
    assert f.kind == "expanded" and "||" not in f.text
    B = Back(q.gens)
    assert identical(B.form(f), B.exact(q))
