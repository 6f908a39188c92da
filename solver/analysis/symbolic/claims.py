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
import itertools
import math
import random
from dataclasses import dataclass, field

from solver.language import expr as ex
from solver.diagnostics import error
from solver.circuit.model import Circuit
from solver.engine.symbolic.determinants import symbol
from solver.engine.symbolic.ring import exact_fraction
from solver.engine.symbolic.stamper import S_NAME

INF_WORDS = {"oo": "oo", "inf": "oo", "infinity": "oo", "∞": "oo", "0": "0"}
MAX_LIMIT_CANDIDATES = 14


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
    import sympy
    from solver.analysis.symbolic.ports import circuit_symbols
    res = c.resolver
    scope = scope or res.top
    if symbols is None:
        symbols = set(circuit_symbols(c))
    rec = lambda t, sc=scope: to_sympy(t, c, sc, symbols)  # noqa: E731
    if isinstance(e, ex.Num):
        return _rational(e.value)
    if isinstance(e, ex.Unary):
        v = rec(e.operand)
        return -v if e.op == "-" else v
    if isinstance(e, ex.Binary):
        a, b = rec(e.left), rec(e.right)
        if e.op == "+":
            return a + b
        if e.op == "-":
            return a - b
        if e.op == "*":
            return a * b
        if e.op == "/":
            return a / b
        if e.op == "^":
            return a ** b
        return parallel(a, b)
    if isinstance(e, ex.Call):
        v = rec(e.arg)
        return {"sqrt": sympy.sqrt, "exp": sympy.exp, "ln": sympy.log, "abs": sympy.Abs,
                "log10": lambda x: sympy.log(x, 10)}[e.func](v)
    if isinstance(e, ex.Ref):
        return _ref(e, c, scope, symbols, rec)
    raise AssertionError(type(e))


def _sym_or(name: str, symbols, fallback):
    return symbol(name) if name in symbols else fallback


def _ref(e: ex.Ref, c: Circuit, scope, symbols, rec):
    import sympy
    res = c.resolver
    entry, attr = res.resolve(e, scope)
    if entry is None:
        return sympy.pi
    if entry.kind in ("let", "param"):
        return rec(entry.expr, entry.scope)
    full = entry.full
    if entry.kind == "signal":
        if attr == "rs":
            return _sym_or(f"{full}.rs", symbols, _rational(c.signal.rs))
        return _rational(res.value_of(entry, None, e.loc).x)
    if entry.kind == "element":
        if full in symbols:
            return symbol(full)
        return _rational(res.value_of(entry, None, e.loc).x)  # a supply: a fixed number
    # a device quantity
    dev = c.device(full) or res.device(entry)  # the analysed (biased) circuit's own device first
    name = f"{full}.{attr}"
    if dev.kind == "opamp":
        if name in symbols:
            return symbol(name)
        raise error(e.loc, f"'{full}' is an ideal op-amp: its gain is infinite and has no symbol "
                    "(give gain= for a finite-gain op-amp)")
    if name in symbols:
        return symbol(name)
    ss = dev.ss
    if dev.is_bjt:
        if dev.model == "t":
            re_, al = symbol(f"{full}.re"), symbol(f"{full}.alpha")
            derived = {"gm": al / re_, "rpi": re_ / (1 - al), "beta": al / (1 - al)}
        else:
            gm, rpi = symbol(f"{full}.gm"), symbol(f"{full}.rpi")
            beta = gm * rpi
            derived = {"beta": beta, "alpha": beta / (beta + 1), "re": rpi / (beta + 1)}
        if attr in derived:
            return derived[attr]
    if attr in ("ro", "rpi", "re", "rd") and math.isinf(ss.get(attr, math.inf)):
        return sympy.oo
    if attr in ss:
        return _rational(ss[attr])  # absent elements (0 F, 0 Ω rx) and bias quantities: numbers
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
    in_db = _log_abs(expr, x)  # a dB quantity (CMRR, issue 18): the limit of the ratio inside
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


def describe_limit(name: str, to: str) -> str:
    return f"{name} -> {to}"


def exact_when(exact, claimed, max_pairs: bool = True) -> list[str]:
    """The limits under which the claim becomes exact: single symbols first, then pairs.

    Each symbol is sent to oo and to 0 in both expressions; a limit that makes
    the exact quantity 0 or unbounded is not offered (it says nothing about the formula).

    Returns
    -------
    list of str
        e.g. ``["Q1.ro -> oo"]`` or ``["Q1.ro -> oo and Q1.rpi -> oo"]``; empty when none.
    """
    import sympy
    cands = sorted((exact.free_symbols | claimed.free_symbols), key=sympy.default_sort_key)
    cands = cands[:MAX_LIMIT_CANDIDATES]
    moves = [(x, to) for x in cands for to in ("oo", "0")]

    def apply(e, steps):
        for x, to in steps:
            e = rational_limit(e, x, to)
            if _degenerate(e):
                return None
        return e

    found = []
    for m in moves:
        le, lc = apply(exact, [m]), apply(claimed, [m])
        if le is not None and lc is not None and identical(le, lc):
            found.append(describe_limit(m[0].name, m[1]))
    if found or not max_pairs:
        return found
    for m1, m2 in itertools.combinations(moves, 2):
        if m1[0] == m2[0]:
            continue
        le, lc = apply(exact, [m1, m2]), apply(claimed, [m1, m2])
        if le is not None and lc is not None and identical(le, lc):
            found.append(" and ".join(describe_limit(x.name, to) for x, to in (m1, m2)))
    return found


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
    exact_when: list[str] = field(default_factory=list)
    exact_expression: str = ""  # the exact quantity in plain text ("" when too long to show)


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


def check_claims(c: Circuit, frequency_hz: float) -> list[Verdict]:
    """Verdict for every claim of the circuit at ``frequency_hz``.

    The quantity's value comes from the numeric engine; exactness and
    ``exact_when`` from the symbolic engine with every symbol kept.
    """
    from solver.analysis import scenarios
    from solver.analysis.ports import port_quantities
    from solver.analysis.symbolic.ports import symbol_values, symbolic_port_quantities
    values = symbol_values(c)
    s = 2j * math.pi * frequency_hz
    wanted = sorted({cl.quantity for cl in c.claims})
    for cl in c.claims:
        why = scenarios.why_undefined(c, cl.quantity)
        if why:
            raise error(cl.loc, f"claim on {cl.quantity}: {why}")
    nums = port_quantities(c, frequency_hz, which=wanted).quantities
    for cl in c.claims:  # Acm, CMRR are left out when the common-mode drive is singular (issue 18)
        if cl.quantity not in nums:
            raise error(cl.loc, f"claim on {cl.quantity}: the circuit with the signal applied common-mode "
                        "is singular")
    sym = symbolic_port_quantities(c, which=wanted)
    from solver.analysis.symbolic.ports import scenario_elements
    from solver.analysis.symbolic.printing import symbol_dims
    dims = symbol_dims(scenario_elements(c))
    out = []
    for cl in c.claims:
        claimed = to_sympy(cl.expr, c)
        exact_expr = sym[cl.quantity].expr()
        value = nums[cl.quantity]
        cv = numeric(claimed, values, s)
        if value == 0:
            rel = 0.0 if cv == 0 else math.inf
        elif cmath.isinf(value) or cmath.isinf(cv):
            rel = 0.0 if (cmath.isinf(value) and cmath.isinf(cv)) else math.inf
        else:
            rel = abs(cv - value) / abs(value)
        is_exact = identical(exact_expr, claimed)
        holds = is_exact if cl.kind == "exact" else rel <= cl.tolerance
        when = [] if is_exact else exact_when(exact_expr, claimed)
        out.append(Verdict(cl.line, cl.quantity, cl.kind, claim_text(c, cl), holds, is_exact, value, cv, rel,
                           cl.tolerance, when, _shown(exact_expr, dims)))
    return out


MAX_SHOWN = 200


def _shown(expr, dims) -> str:
    """The exact quantity as plain text with ||, or "" when longer than MAX_SHOWN characters."""
    from solver.analysis.symbolic.printing import plain, recognize_parallel
    text = plain(recognize_parallel(expr, dims))
    return text if len(text) <= MAX_SHOWN else ""


def claim_text(c: Circuit, cl) -> str:
    """The claim as written (its source line without the comment)."""
    lines = c.source.splitlines()
    if 1 <= cl.line <= len(lines):
        text = lines[cl.line - 1].split("#", 1)[0].strip()
        return text[len("claim"):].strip() if text.startswith("claim") else text
    return cl.quantity
