"""Hand formulas checked against the exact result: verdicts, ``exact_when``, dominant terms.

A claim's expression tree (:mod:`solver.language.expr`) is turned into sympy by walking
its nodes here -- the user's text never reaches a parser other than ours.
``let`` names and block parameters expand to their definitions; element names
become their symbols; device quantities become the device's symbols or the
textbook expressions in them (hybrid-pi: beta = gm*rpi, alpha = beta/(beta+1),
re = alpha/gm; T form: gm = alpha/re, rpi = re/(1-alpha); Sedra & Smith,
*Microelectronic Circuits*, 7th ed., sections 7.2.4-7.2.5, from memory).

Limits of a rational function as one symbol goes to 0 or infinity are read off
its lowest or highest powers in that symbol, so they are exact and cheap.
"""
from __future__ import annotations

import cmath
import math
import random
from dataclasses import dataclass, field
from fractions import Fraction

from solver.language import expr as ex
from solver.diagnostics import error
from solver.circuit.model import Circuit
from solver.engine.symbolic.determinants import symbol
from solver.engine.symbolic.ring import exact_fraction
from solver.engine.symbolic.stamper import S_NAME

INF_WORDS = {"oo": "oo", "inf": "oo", "infinity": "oo", "∞": "oo", "0": "0"}


# --- claim expressions -> sympy ---------------------------------------------------------
def _rational(x: float):
    import sympy
    if math.isinf(x):
        return sympy.oo if x > 0 else -sympy.oo
    q = exact_fraction(x)
    return sympy.Rational(q.numerator, q.denominator)


def parallel(a, b):
    """a || b with an infinite branch leaving the other one (as solver.language.expr.parallel)."""
    import sympy
    if a == sympy.oo:
        return b
    if b == sympy.oo:
        return a
    return a * b / (a + b)


class _SympyAlgebra:
    """The claim tree's operations over sympy expressions."""

    def __init__(self):
        import sympy
        self.sympy = sympy
        self.inf = sympy.oo
        self.pi = sympy.pi

    def num(self, x):
        return _rational(x)

    def sym(self, name):
        return symbol(name)

    def unary(self, op, v):
        return -v if op == "-" else v

    def binary(self, op, a, b):
        if op == "+":
            return a + b
        if op == "-":
            return a - b
        if op == "*":
            return a * b
        if op == "/":
            return a / b
        if op == "^":
            return a ** b
        return parallel(a, b)

    def call(self, func, v):
        sympy = self.sympy
        return {"sqrt": sympy.sqrt, "exp": sympy.exp, "ln": sympy.log, "abs": sympy.Abs,
                "log10": lambda x: sympy.log(x, 10)}[func](v)


class NotRational(Exception):
    """The claim is not a rational function of the circuit's symbols (sqrt, exp, pi, infinity...)."""


_INFINITE = object()


class RingAlgebra:
    """The claim tree's operations over (numerator, denominator) pairs of the engine's ring.

    Parameters
    ----------
    ring : solver.engine.symbolic.ring.Ring
        Over the generators ``[s] + circuit symbols`` (the exact quantity's ring).
    """

    def __init__(self, ring):
        self.ring = ring
        self.index = {n: i for i, n in enumerate(ring.names)}
        self.inf = _INFINITE
        self.pi = None

    def num(self, x):
        if math.isinf(x):
            if x > 0:
                return _INFINITE
            raise NotRational("-infinity")
        return (self.ring.const(exact_fraction(x)), self.ring.one)

    def sym(self, name):
        if name not in self.index:
            raise NotRational(name)
        return (self.ring.gens[self.index[name]], self.ring.one)

    def unary(self, op, v):
        if v is _INFINITE:
            raise NotRational("infinity")
        return (-v[0], v[1]) if op == "-" else v

    def binary(self, op, a, b):
        if op == "||":
            if a is _INFINITE:
                return b
            if b is _INFINITE:
                return a
            an, ad = a
            bn, bd = b
            return self._norm(an * bn, an * bd + bn * ad)
        if a is _INFINITE or b is _INFINITE or a is None or b is None:
            raise NotRational("infinity")
        (an, ad), (bn, bd) = a, b
        if op == "+":
            return (an * bd + bn * ad, ad * bd)
        if op == "-":
            return (an * bd - bn * ad, ad * bd)
        if op == "*":
            return (an * bn, ad * bd)
        if op == "/":
            return self._norm(an * bd, ad * bn)
        # ^: an integer constant exponent only
        terms = self.ring.to_dict(bn)
        zero = (0,) * len(self.ring.names)
        if bd != self.ring.one or any(m != zero for m in terms):
            raise NotRational("a symbolic power")
        q = Fraction(terms.get(zero, 0))
        if q.denominator != 1:
            raise NotRational("a fractional power")
        k = int(q)
        if k < 0:
            an, ad, k = ad, an, -k
            if an == 0:
                raise NotRational("division by zero")
        return (an ** k, ad ** k)

    def _norm(self, n, d):
        if d == 0:
            raise NotRational("division by zero")
        return (n, d)

    def call(self, func, v):
        raise NotRational(func)


def to_sympy(e: ex.Expr, c: Circuit, scope=None, symbols: set[str] | None = None):
    """The sympy form of a netlist expression tree, in the circuit's symbols.

    Parameters
    ----------
    e : solver.language.expr tree
    c : Circuit (its resolver maps names)
    scope : resolver scope (default: the top level)
    symbols : set of str
        Symbol names of the circuit (default: all of them).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n"
    ...           "claim Gv = RL/(R1 + RL)\\n")
    >>> to_sympy(c.claims[0].expr, c)
    RL/(R1 + RL)
    """
    return walk(e, c, _SympyAlgebra(), scope, symbols)


def to_rational(e: ex.Expr, c: Circuit, ring, scope=None, symbols: set[str] | None = None):
    """The claim as a :class:`solver.analysis.symbolic.limits.Rat` over ``ring``'s generators.

    Raises :class:`NotRational` for a claim that is not a rational function (sqrt, exp, pi).

    Examples
    --------
    >>> from solver import loads
    >>> from solver.engine.symbolic.ring import Ring
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n"
    ...           "claim Gv = RL || R1\\n")
    >>> r = to_rational(c.claims[0].expr, c, Ring(["s", "R1", "RL"]))
    >>> sorted(r.num), sorted(r.den)
    ([(0, 1, 1)], [(0, 0, 1), (0, 1, 0)])
    """
    from solver.analysis.symbolic.limits import Rat
    v = walk(e, c, RingAlgebra(ring), scope, symbols)
    if v is _INFINITE:
        raise NotRational("infinity")
    n, d = v
    return Rat(n, d, ring)


def walk(e: ex.Expr, c: Circuit, A, scope=None, symbols: set[str] | None = None):
    """Evaluate a netlist expression tree in the algebra ``A`` (sympy or the engine's ring)."""
    from solver.analysis.symbolic.ports import circuit_symbols
    res = c.resolver
    scope = scope or res.top
    if symbols is None:
        symbols = set(circuit_symbols(c))
    rec = lambda t, sc=scope: walk(t, c, A, sc, symbols)  # noqa: E731
    if isinstance(e, ex.Num):
        return A.num(e.value)
    if isinstance(e, ex.Unary):
        return A.unary(e.op, rec(e.operand))
    if isinstance(e, ex.Binary):
        return A.binary(e.op, rec(e.left), rec(e.right))
    if isinstance(e, ex.Call):
        return A.call(e.func, rec(e.arg))
    if isinstance(e, ex.Ref):
        return _ref(e, c, scope, symbols, rec, A)
    raise AssertionError(type(e))


def _ref(e: ex.Ref, c: Circuit, scope, symbols, rec, A):
    res = c.resolver
    entry, attr = res.resolve(e, scope)
    if entry is None:
        if A.pi is None:
            raise NotRational("pi")
        return A.pi
    if entry.kind in ("let", "param"):
        return rec(entry.expr, entry.scope)
    full = entry.full
    sym = A.sym
    if entry.kind == "signal":
        if attr == "rs":
            return sym(f"{full}.rs") if f"{full}.rs" in symbols else A.num(c.signal.rs)
        return A.num(res.value_of(entry, None, e.loc).x)
    if entry.kind == "element":
        if full in symbols:
            return sym(full)
        return A.num(res.value_of(entry, None, e.loc).x)  # a supply: a fixed number
    # a device quantity
    dev = c.device(full) or res.device(entry)  # the analysed (biased) circuit's own device first
    name = f"{full}.{attr}"
    if dev.kind == "opamp":
        if name in symbols:
            return sym(name)
        raise error(e.loc, f"'{full}' is an ideal op-amp: its gain is infinite and has no symbol "
                    "(give gain= for a finite-gain op-amp)")
    if name in symbols:
        return sym(name)
    ss = dev.ss
    one = A.num(1.0)
    if dev.is_bjt:
        if dev.model == "t":
            re_, al = sym(f"{full}.re"), sym(f"{full}.alpha")
            derived = {"gm": lambda: A.binary("/", al, re_),
                       "rpi": lambda: A.binary("/", re_, A.binary("-", one, al)),
                       "beta": lambda: A.binary("/", al, A.binary("-", one, al))}
        else:
            gm, rpi = sym(f"{full}.gm"), sym(f"{full}.rpi")
            beta = lambda: A.binary("*", gm, rpi)  # noqa: E731
            derived = {"beta": beta, "alpha": lambda: A.binary("/", beta(), A.binary("+", beta(), one)),
                       "re": lambda: A.binary("/", rpi, A.binary("+", beta(), one))}
        if attr in derived:
            return derived[attr]()
    if attr in ("ro", "rpi", "re", "rd") and math.isinf(ss.get(attr, math.inf)):
        return A.inf
    if attr in ss:
        return A.num(ss[attr])  # absent elements (0 F, 0 Ω rx) and bias quantities: numbers
    raise error(e.loc, f"{full} has no {attr}")


# --- rational functions ----------------------------------------------------------------------
def num_den(expr, gens):
    """(numerator, denominator) as sympy Polys in gens, or None when expr is not rational in them."""
    import sympy
    n, d = sympy.fraction(sympy.cancel(sympy.together(expr)))
    try:
        return sympy.Poly(n, *gens), sympy.Poly(d, *gens)
    except sympy.PolynomialError:
        return None


def _gens(*exprs):
    import sympy
    s = set()
    for e in exprs:
        s |= e.free_symbols
    return sorted(s, key=sympy.default_sort_key) or [symbol(S_NAME)]


def identical(a, b) -> bool:
    """True when a and b are the same function of their symbols.

    Rational expressions: the cross-multiplied polynomial difference is zero (exact).
    Otherwise (sqrt, exp in a claim): equal at eight random positive points to 1e-12.
    """
    import sympy
    if a.has(sympy.oo, sympy.zoo, sympy.nan) or b.has(sympy.oo, sympy.zoo, sympy.nan):
        return a == b
    gens = _gens(a, b)
    pa, pb = num_den(a, gens), num_den(b, gens)
    if pa is not None and pb is not None:
        return (pa[0] * pb[1] - pb[0] * pa[1]).is_zero
    rnd = random.Random(7)
    for _ in range(8):
        pt = {g: sympy.Float(rnd.uniform(0.5, 3.0), 30) for g in gens}
        va, vb = complex(a.xreplace(pt).evalf(30)), complex(b.xreplace(pt).evalf(30))
        if abs(va - vb) > 1e-12 * max(abs(va), abs(vb), 1e-300):
            return False
    return True


def rational_limit(expr, x, to: str):
    """Limit of a rational function as symbol x -> oo or 0, from its extreme powers of x.

    Returns sympy.oo for an unbounded limit. Non-rational expressions use sympy.limit.

    Examples
    --------
    >>> import sympy
    >>> ro, rc, gm = sympy.symbols("ro rc gm", positive=True)
    >>> rational_limit(-gm*ro*rc/(ro + rc), ro, "oo")
    -gm*rc
    """
    import sympy
    if x not in expr.free_symbols:
        return expr
    in_db = _log_abs(expr, x)  # a dB quantity (CMRR): the limit of the ratio inside
    if in_db is not None:
        k, inner = in_db
        lim = rational_limit(inner, x, to)
        if lim.has(sympy.oo, sympy.zoo, sympy.nan) or lim == 0:
            return sympy.oo if lim != 0 else -sympy.oo
        return k * sympy.log(sympy.Abs(lim))
    n, d = sympy.fraction(sympy.cancel(sympy.together(expr)))
    try:
        P, Q = sympy.Poly(n, x), sympy.Poly(d, x)
    except sympy.PolynomialError:
        return sympy.limit(expr, x, sympy.oo if to == "oo" else 0, "+")
    if to == "oo":
        dp, dq = P.degree(), Q.degree()
        if dp > dq:
            return sympy.oo
        if dp < dq:
            return sympy.Integer(0)
        return sympy.cancel(P.LC() / Q.LC())
    lp = min(m[0] for m in P.monoms())
    lq = min(m[0] for m in Q.monoms())
    if lp < lq:
        return sympy.oo
    if lp > lq:
        return sympy.Integer(0)
    return sympy.cancel(P.coeff_monomial(x ** lp) / Q.coeff_monomial(x ** lq))


def _log_abs(expr, x):
    """(k, R) when expr = k * log(|R|) with k free of x (a ratio in dB), else None."""
    import sympy
    if not expr.is_Mul:
        return None
    logs = [f for f in expr.args if isinstance(f, sympy.log)]
    if len(logs) != 1:
        return None
    k = expr / logs[0]
    inner = logs[0].args[0]
    return None if x in k.free_symbols else (k, inner.args[0] if isinstance(inner, sympy.Abs) else inner)


def _degenerate(v) -> bool:
    import sympy
    return v == 0 or v.has(sympy.oo, sympy.zoo, sympy.nan)


def parse_limit(text: str, symbols) -> tuple[str, str]:
    """``NAME=oo`` or ``NAME=0`` from a ``--limit`` option; bad text is bad input."""
    name, sep, to = text.partition("=")
    name, to = name.strip(), to.strip()
    if not sep or to.lower() not in INF_WORDS:
        raise error(None, f"--limit: '{text}' is not NAME=oo or NAME=0")
    if name not in symbols and name != S_NAME:
        import difflib
        close = difflib.get_close_matches(name, list(symbols), n=1)
        raise error(None, f"--limit: '{name}' is not a symbol of this circuit"
                    + (f"; did you mean '{close[0]}'?" if close else ""))
    return name, INF_WORDS[to.lower()]


# --- dominant terms -----------------------------------------------------------------------------
@dataclass
class Pruned:
    num: dict
    den: dict
    dropped: int
    kept: int
    coefficient_error: float  # worst relative change of any coefficient of s (<= tolerance)
    error_at_f: float  # relative error of the pruned quantity at the analysis frequency
    bound_at_f: float  # a priori bound from the coefficient errors


def _term_value(m, c, point):
    v = float(c)
    for x, e in zip(point[1:], m[1:]):
        if e:
            v *= x ** e
    return v


def prune(num: dict, den: dict, gens, values: dict, tol: float, s: complex) -> Pruned:
    """Drop terms below ``tol``: per power of s, the smallest terms whose summed magnitude
    stays within ``tol`` times that coefficient's value at the nominal point.

    Each coefficient of s then changes by at most ``tol`` (relative), and the
    quantity at s by at most (eN + eD)/(1 - eD), eN and eD the same sums weighted
    by |s|^k over |N(s)| and |D(s)| (triangle inequality).
    """
    point = [0.0] + [values[g] for g in gens[1:]]
    worst = 0.0
    dropped = 0
    out = []
    weights = []
    for poly in (num, den):
        groups: dict[int, list] = {}
        for m, c in poly.items():
            groups.setdefault(m[0], []).append((m, c, _term_value(m, c, point)))
        kept = {}
        w = 0.0
        for k, terms in groups.items():
            total = sum(v for _, _, v in terms)
            terms.sort(key=lambda t: abs(t[2]))
            budget = tol * abs(total)
            acc = 0.0
            i = 0
            while i < len(terms) - 1 and acc + abs(terms[i][2]) <= budget:
                acc += abs(terms[i][2])
                i += 1
            dropped += i
            for m, c, _ in terms[i:]:
                kept[m] = c
            if total != 0:
                worst = max(worst, acc / abs(total))
            w += tol * abs(total) * abs(s) ** k if acc else 0.0
        out.append(kept)
        weights.append(w)
    from solver.engine.symbolic.determinants import evaluate_dict
    full_pt = [s] + point[1:]
    n0, d0 = evaluate_dict(num, full_pt), evaluate_dict(den, full_pt)
    n1, d1 = evaluate_dict(out[0], full_pt), evaluate_dict(out[1], full_pt)
    h0 = n0 / d0
    h1 = n1 / d1
    err = abs(h1 - h0) / abs(h0) if h0 != 0 else (0.0 if h1 == 0 else math.inf)
    eN = weights[0] / abs(n0) if n0 != 0 else math.inf
    eD = weights[1] / abs(d0) if d0 != 0 else math.inf
    bound = (eN + eD) / (1 - eD) if eD < 1 else math.inf
    return Pruned(out[0], out[1], dropped, len(out[0]) + len(out[1]), worst, err, bound)


# --- verdicts -------------------------------------------------------------------------------------
@dataclass
class Verdict:
    line: int
    quantity: str
    kind: str
    text: str
    holds: bool
    exact: bool
    value: complex
    claimed: complex
    rel_error: float
    tolerance: float | None
    exact_when: list[str] = field(default_factory=list)  # machine form: "Q1.ro -> oo and RL -> oo"
    exact_expression: str = ""  # the exact quantity in plain text ("" when too long to show)
    exact_when_words: list[str] = field(default_factory=list)  # as a designer says it: "Q1.β → ∞ (gm fixed)"
    search_complete: bool = True  # False: the exact-when search stopped early (search_note says why)
    search_note: str = ""
    searched: tuple[int, int] = (0, 0)  # (limits and pairs tried, of how many)


def numeric(expr, values: dict, s: complex) -> complex:
    """Value of a sympy expression of circuit symbols at the netlist values and frequency s."""
    import sympy
    rep = {}
    for sym in expr.free_symbols:
        rep[sym] = sympy.Float(values[sym.name], 30) if sym.name != S_NAME else \
            sympy.Float(s.real, 30) + sympy.I * sympy.Float(s.imag, 30)
    v = expr.xreplace(rep).evalf(30)
    if v in (sympy.oo, -sympy.oo, sympy.zoo):
        return complex(math.inf)
    return complex(v)


def _rel(value: complex, cv: complex) -> float:
    if value == 0:
        return 0.0 if cv == 0 else math.inf
    if cmath.isinf(value) or cmath.isinf(cv):
        return 0.0 if (cmath.isinf(value) and cmath.isinf(cv)) else math.inf
    return abs(cv - value) / abs(value)


def check_claims(c: Circuit, frequency_hz: float, search_seconds: float | None = None) -> list[Verdict]:
    """Verdict for every claim of the circuit at ``frequency_hz``.

    The quantity's value comes from the numeric engine; exactness and
    ``exact_when`` from the symbolic engine with every symbol kept, on its own
    polynomials (:mod:`solver.analysis.symbolic.limits`): a claim is identical
    when the cross-multiplied difference is the zero polynomial. The exact-when
    search tries the designer's limits (:func:`~solver.analysis.symbolic.limits.designer_moves`)
    one at a time, then in pairs, within ``search_seconds`` per claim (default
    :data:`solver.analysis.symbolic.limits.SEARCH_SECONDS`), and says when it stopped.
    """
    from solver.analysis import scenarios
    from solver.analysis.ports import port_quantities
    from solver.analysis.symbolic import limits as L
    from solver.analysis.symbolic.ports import symbol_values, symbolic_port_quantities
    from solver.engine.symbolic.ring import Ring
    seconds = L.SEARCH_SECONDS if search_seconds is None else search_seconds
    values = symbol_values(c)
    s = 2j * math.pi * frequency_hz
    wanted = sorted({cl.quantity for cl in c.claims})
    for cl in c.claims:
        why = scenarios.why_undefined(c, cl.quantity)
        if why:
            raise error(cl.loc, f"claim on {cl.quantity}: {why}")
    nums = port_quantities(c, frequency_hz, which=wanted).quantities
    for cl in c.claims:  # Acm, CMRR are left out when the common-mode drive is singular
        if cl.quantity not in nums:
            raise error(cl.loc, f"claim on {cl.quantity}: the circuit with the signal applied common-mode "
                        "is singular")
    sym = symbolic_port_quantities(c, which=wanted)
    gens = sym[wanted[0]].gens
    ring = Ring(gens)
    point = [s] + [values[g] for g in gens[1:]]
    moves: dict[str, list] = {}
    from solver.analysis.symbolic.ports import scenario_elements
    from solver.analysis.symbolic.printing import symbol_dims
    dims = symbol_dims(scenario_elements(c))
    out = []
    for cl in c.claims:
        sq = sym[cl.quantity]
        value = nums[cl.quantity]
        exact = L.from_dicts(ring, sq.num, sq.den)
        try:
            # a dB quantity (CMRR) is compared in dB: the sympy path, never the ratio's polynomials
            claimed = to_rational(cl.expr, c, ring) if sq.den and cl.quantity not in scenarios.DECIBELS else None
        except NotRational:
            claimed = None
        note, found, complete, tried = "", None, True, (0, 0)
        if claimed is None:  # sqrt, exp, pi in the claim, or an unbounded quantity: sympy decides
            claimed_expr = to_sympy(cl.expr, c)
            cv = numeric(claimed_expr, values, s)
            is_exact = identical(sq.expr(), claimed_expr)
            if not is_exact:
                complete, note = False, "no limits searched: the claim is not a rational function of the symbols"
        else:
            cv = claimed.value(point)
            is_exact = L.identical(exact, claimed)
            if not is_exact:
                if cl.quantity not in moves:
                    moves[cl.quantity] = L.designer_moves(c, gens, values, s, exact)
                found = L.search(exact, claimed, moves[cl.quantity], seconds)
                complete, note, tried = found.complete, found.note(), (found.tried, found.total)
        rel = _rel(value, cv)
        holds = is_exact if cl.kind == "exact" else rel <= cl.tolerance
        out.append(Verdict(cl.line, cl.quantity, cl.kind, claim_text(c, cl), holds, is_exact, value, cv, rel,
                           cl.tolerance, found.keys if found else [],
                           _in_db(cl.quantity, _shown(claimed if is_exact and claimed is not None else sq, dims)),
                           found.words if found else [], complete, note, tried))
    return out


@dataclass
class Checked:
    """The claims of one netlist checked: what :func:`check` returns.

    circuit      -- the circuit analysed (the biased copy when the bias was solved)
    frequency_hz -- where the values were compared
    verdicts     -- one :class:`Verdict` per claim line, in netlist order
    warnings     -- every warning of the input checks (diagnostics)
    notes        -- how the frequency was chosen, bias cautions
    """

    circuit: Circuit
    frequency_hz: float
    verdicts: list
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)

    @property
    def holds(self) -> bool:
        return all(v.holds for v in self.verdicts)


def check(c: Circuit, at: float | None = None, force: bool = False, search_seconds: float | None = None) -> Checked:
    """Check the claim lines of ``c`` after the same input checks as every analysis.

    Runs :func:`solver.analysis.pipeline.prepare` (signal and output port, the DC
    view's source laws, the bias solve, the graph checks of every configuration),
    so a netlist ``solve`` refuses is refused here with the same
    ``FILE:LINE:COL`` diagnostics, then :func:`check_claims` at ``at`` Hz (default:
    as solve, the detected midband; DC without reactive parts).

    Raises
    ------
    solver.diagnostics.InputError
        Bad input: no claim lines, a claim on an undefined quantity or an unknown
        symbol, a circuit the checks refuse or that cannot be solved.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n"
    ...           "claim Gv = RL/(R1 + RL)\\n")
    >>> check(c).verdicts[0].holds
    True
    """
    from solver.analysis.pipeline import analysis_frequency, prepare
    from solver.analysis.ports import PortError
    from solver.analysis.singular import explain_singular
    p = prepare(c, "ports", "dc" if at == 0 else "ac", force)
    if not p.circuit.claims:
        raise p.fail([error(None, f"'{c.file}' has no claim lines (write e.g. "
                                  "'claim Av ~ -RC/RE within 10%')").diagnostics[0]])
    f, notes = analysis_frequency(p.circuit, at)
    try:
        verdicts = check_claims(p.circuit, f, search_seconds)
    except PortError as e:
        raise p.fail(explain_singular(p.circuit, f, str(e))) from None
    return Checked(p.circuit, f, verdicts, list(p.warnings), list(p.notes) + notes)


def _in_db(quantity: str, shown: str) -> str:
    """A dB quantity's exact expression is 20*log10(abs(ratio)) around its ratio's form."""
    from solver.analysis import scenarios
    return f"20*log10(abs({shown}))" if shown and quantity in scenarios.DECIBELS else shown


MAX_SHOWN = 200
#: the exact quantity is written (forms.write_form) only up to this many expanded terms: a longer
#: ratio does not print within MAX_SHOWN characters, and the printer's search would cost more than the check
MAX_SHOWN_TERMS = 40
SHOWN_WORK = 50  # the printer's work bound for it (forms.write_form ``work``)
SHOWN_SECONDS = 0.3  # and its wall-clock guard (forms.write_form ``seconds``)


def _shown(q, dims=None) -> str:
    """The exact quantity in its design-oriented form (forms.write_form), or "" when longer than MAX_SHOWN.

    ``q`` is a SymbolicQuantity, or an identical claim's own rational function
    (:class:`~solver.analysis.symbolic.limits.Rat`: the same function, usually far fewer terms);
    ``dims`` the symbols' dimensions (printing.symbol_dims), for the printer's || forms.
    """
    if q.nterms > MAX_SHOWN_TERMS:
        return ""
    num, den = q.dicts() if hasattr(q, "dicts") else (q.num, q.den)
    if not num or not den:
        return ""
    from solver.analysis.symbolic.forms import write_form
    f = write_form(num, den, q.gens, work=SHOWN_WORK, dims=dims, seconds=SHOWN_SECONDS)
    text = f.text if not f.where else ""
    return text if len(text) <= MAX_SHOWN else ""


def claim_text(c: Circuit, cl) -> str:
    """The claim as written (its source line without the comment)."""
    lines = c.source.splitlines()
    if 1 <= cl.line <= len(lines):
        text = lines[cl.line - 1].split("#", 1)[0].strip()
        return text[len("claim"):].strip() if text.startswith("claim") else text
    return cl.quantity
