"""Writing symbolic results the way a person does: ``||`` for parallel combinations.

* :func:`recognize_parallel` rewrites factors a*b*.../(sum of products) into
  ``a || b || ...`` when every branch is an impedance (checked by dimension);
* :func:`plain` prints in the netlist expression language (``^``, ``||``,
  names as in the netlist), so the text parses back with
  :func:`solver.language.parse.parse_expression`;
* :func:`latex` prints LaTeX with ``\\parallel`` and textbook symbol names;
* :func:`sympy_text` prints a sympy-parsable string with every ``.`` in a name
  replaced by ``_``.

The parallel operator follows the textbook definition x || y = x*y/(x + y)
(A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., chapter 1
notation, from memory).
"""
from __future__ import annotations

import itertools
import math

from solver.circuit.elements import CCCS, CCVS, VCCS, VCVS, Capacitor, Inductor, Resistor
from solver.engine.symbolic.stamper import S_NAME

# dimensions as exponents of (ohm, second): S = 1/ohm, F = s/ohm, H = ohm*s, Hz = 1/s
OHM = (1, 0)
_ELEMENT_DIMS = {Resistor: (1, 0), Capacitor: (-1, 1), Inductor: (1, 1), VCCS: (-1, 0), VCVS: (0, 0),
                 CCCS: (0, 0), CCVS: (1, 0)}
MAX_RECOGNIZE_TERMS = 400
MAX_BRANCHES = 8
MAX_BRANCH_SYMBOLS = 2


def symbol_dims(elements) -> dict[str, tuple[int, int]]:
    """{symbol name: dimension} for the symbols of ``elements`` plus ``s``."""
    out = {S_NAME: (0, -1)}
    for e in elements:
        if e.symbol is not None:
            for cls, d in _ELEMENT_DIMS.items():
                if isinstance(e, cls):
                    out[e.symbol] = d
    return out


def _par_class():
    import sympy

    class Par(sympy.Function):
        """x1 || x2 || ... kept unevaluated for printing; :meth:`expand_par` gives the formula."""

        precedence = 45  # between + (40) and * (50), as in the netlist language
        is_commutative = True

        @classmethod
        def eval(cls, *args):  # trusted: sympy's Function hook (defines, does not call eval)
            return None

        def formula(self):
            return 1 / sympy.Add(*[1 / a for a in self.args])

    return Par


_PAR = None


def Par():
    global _PAR
    if _PAR is None:
        _PAR = _par_class()
    return _PAR


def expand_par(expr):
    """Replace every ``||`` node by its formula 1/(1/x1 + 1/x2 + ...), then cancel."""
    import sympy
    P = Par()
    return sympy.cancel(expr.replace(lambda e: isinstance(e, P), lambda e: e.formula()))


def _dim(monomial: dict, dims) -> tuple[int, int] | None:
    d = [0, 0]
    for sym, e in monomial.items():
        sd = dims.get(sym.name)
        if sd is None:
            return None
        d[0] += sd[0] * e
        d[1] += sd[1] * e
    return tuple(d)


def _monomial(term):
    """(coefficient, {symbol: exponent}) of a product of powers, or None."""
    import sympy
    coeff, parts = sympy.Integer(1), {}
    for f in sympy.Mul.make_args(term):
        if f.is_Number:
            coeff *= f
            continue
        base, e = f.as_base_exp()
        if not (base.is_Symbol and e.is_Integer):
            return None
        parts[base] = parts.get(base, 0) + int(e)
    return coeff, parts


def _mono_expr(parts: dict):
    import sympy
    return sympy.Mul(*[b ** e for b, e in parts.items() if e])


def _try_factor(D, n0: dict, dims):
    """Write 1/D as Par(x)/M with M dividing the numerator monomial n0; (M, [x_i], k) or None."""
    import sympy
    terms = sympy.Add.make_args(sympy.expand(D))
    if len(terms) < 2 or len(terms) > MAX_BRANCHES:
        return None
    monos = [_monomial(t) for t in terms]
    if any(m is None for m in monos):
        return None
    k = monos[0][0]
    if not (k > 0) or any(c != k for c, _ in monos):
        return None
    tdims = {_dim(p, dims) for _, p in monos}
    if len(tdims) != 1 or None in tdims:
        return None
    (tdim,) = tdims
    want = (OHM[0] + tdim[0], OHM[1] + tdim[1])
    best = None
    syms = [s for s, e in n0.items() if e > 0]
    for r in range(1, len(syms) + 1):
        for sub in itertools.combinations(syms, r):
            for exps in itertools.product(*[range(1, n0[s] + 1) for s in sub]):
                M = dict(zip(sub, exps))
                if _dim(M, dims) != want:
                    continue
                xs = []
                for _, p in monos:
                    x = dict(M)
                    for s, e in p.items():
                        x[s] = x.get(s, 0) - e
                    xs.append({s: e for s, e in x.items() if e})
                if any(len(x) > MAX_BRANCH_SYMBOLS for x in xs):
                    continue  # a branch must read as an element (RC, 1/(s*CL), Q1.ro), not a formula
                cost = sum(abs(e) for x in xs for e in x.values())
                if best is None or cost < best[0]:
                    best = (cost, M, xs)
    if best is None:
        return None
    _, M, xs = best
    return M, [_mono_expr(x) for x in xs], k


def _is_impedance_sum(A, dims) -> bool:
    import sympy
    for term in sympy.Add.make_args(A):
        m = _monomial(term)
        if m is None or not (m[0] > 0) or _dim(m[1], dims) != OHM:
            return False
    return True


def _dimensionless_poly(k, dims) -> bool:
    import sympy
    for term in sympy.Add.make_args(sympy.expand(k)):
        m = _monomial(term)
        if m is None or _dim(m[1], dims) != (0, 0):
            return False
    return True


def _try_sum_branch(D, num_factors, n0: dict, dims):
    """D = k*M + A with A a sum of impedances among the numerator factors, M a monomial impedance
    dividing the numerator and k a dimensionless polynomial: then A*M/D = M || A/k.
    Returns (the factor A, the branch A/k, {symbol: exponent} of M)."""
    import sympy
    cands = [{s: 1} for s, e in n0.items() if e > 0 and dims.get(s.name) == OHM]
    for A in num_factors:
        if not isinstance(A, sympy.Add) or not _is_impedance_sum(A, dims):
            continue
        rem = sympy.expand(D - A)
        if rem == 0:
            continue
        for M in cands:
            k = sympy.cancel(rem / _mono_expr(M))
            if sympy.denom(k) != 1 or not _dimensionless_poly(k, dims):
                continue
            if sympy.Add.make_args(sympy.expand(k))[0].could_extract_minus_sign():
                continue
            return A, (A if k == 1 else A / k), M
    return None


def _try_divider(D, n0: dict, dims):
    """D = M + x*S with M a monomial dividing the numerator, x an impedance symbol and M/S a
    parallel of impedances: then M/D = P/(P + x), P = M/S (a voltage divider onto a parallel).
    Returns (M as {symbol: exponent}, P, x)."""
    import sympy
    for x in sorted(D.free_symbols, key=sympy.default_sort_key):
        if dims.get(x.name) != OHM:
            continue
        P_ = sympy.Poly(sympy.expand(D), x)
        if P_.degree() != 1:
            continue
        S, M = P_.all_coeffs()
        m = _monomial(M)
        if m is None or m[0] != 1 or not all(n0.get(s, 0) >= e for s, e in m[1].items()):
            continue
        terms = sympy.Add.make_args(sympy.expand(S))
        if len(terms) < 2:
            continue
        xs = []
        for term in terms:
            b = _monomial(sympy.cancel(M / term))
            if b is None or b[0] != 1 or _dim(b[1], dims) != OHM or len(b[1]) > MAX_BRANCH_SYMBOLS:
                break
            xs.append(_mono_expr(b[1]))
        else:
            return m[1], Par()(*sorted(xs, key=sympy.default_sort_key)), x
    return None


def recognize_parallel(expr, dims: dict):
    """Rewrite parallel combinations of impedances as ``||`` nodes (see :func:`expand_par`).

    Parameters
    ----------
    expr : sympy expression, a rational function of circuit symbols
    dims : dict
        {symbol name: (ohm exponent, second exponent)}, from :func:`symbol_dims`.

    Returns
    -------
    sympy expression
        Equal to ``expr``; unchanged when nothing is recognised.

    Examples
    --------
    >>> import sympy
    >>> a, b, g = sympy.symbols("RA RB gm", positive=True)
    >>> plain(recognize_parallel(-g*a*b/(a + b), {"RA": (1, 0), "RB": (1, 0), "gm": (-1, 0)}))
    '-gm*(RA || RB)'
    """
    import sympy
    if len(sympy.Add.make_args(sympy.expand(sympy.numer(expr)))) + \
            len(sympy.Add.make_args(sympy.expand(sympy.denom(expr)))) > MAX_RECOGNIZE_TERMS:
        return expr
    f = sympy.factor(expr)
    num, den = sympy.fraction(f)
    n_factors = list(sympy.Mul.make_args(num))
    n0: dict = {}
    rest_num = []
    for x in n_factors:
        m = _monomial(x)
        if m is None:
            rest_num.append(x)
        else:
            rest_num.append(m[0])
            for s, e in m[1].items():
                n0[s] = n0.get(s, 0) + e
    d_factors = list(sympy.Mul.make_args(den))
    pars, rest_den = [], []
    for D in d_factors:
        if isinstance(D, sympy.Add):
            hit = _try_sum_branch(D, rest_num, n0, dims)
            if hit is not None:
                A, branch, M = hit
                rest_num.remove(A)
                for s, e in M.items():
                    n0[s] -= e
                pars.append(Par()(*sorted([branch, _mono_expr(M)], key=sympy.default_sort_key)))
                continue
            hit = _try_factor(D, {s: e for s, e in n0.items() if e > 0}, dims)
            if hit is not None:
                M, xs, k = hit
                for s, e in M.items():
                    n0[s] -= e
                pars.append(Par()(*sorted(xs, key=sympy.default_sort_key)))
                rest_den.append(k)
                continue
        if isinstance(D, sympy.Add):
            hit = _try_divider(D, n0, dims)
            if hit is not None:
                M, P, x = hit
                for s, e in M.items():
                    n0[s] -= e
                pars.append(P / (P + x))
                continue
        rest_den.append(D)
    if not pars:
        return expr
    out = sympy.Mul(*rest_num) * _mono_expr(n0) * sympy.Mul(*pars) / sympy.Mul(*rest_den)
    return out


# --- printers -----------------------------------------------------------------------------
def _printers():
    from sympy.printing.latex import LatexPrinter
    from sympy.printing.str import StrPrinter

    class PlainPrinter(StrPrinter):
        """The netlist expression language: ``^`` for powers, ``||`` for parallel."""

        def _print_Pow(self, expr, rational=False):
            return super()._print_Pow(expr, rational).replace("**", "^")

        def _print_Rational(self, expr):
            if expr.q > 10**6:
                return f"{float(expr):.6g}"
            return super()._print_Rational(expr)

        def _print_Function(self, expr):
            if isinstance(expr, Par()):
                return " || ".join(self.parenthesize(a, 45) for a in expr.args)
            return super()._print_Function(expr)

        def _print_ImaginaryUnit(self, expr):
            return "j"

        def _print_ComplexInfinity(self, expr):
            return "oo"

    class TexPrinter(LatexPrinter):
        def _print_Symbol(self, expr, style="plain"):
            return latex_name(expr.name)

        def _print_Function(self, expr, exp=None):
            if isinstance(expr, Par()):
                body = r" \parallel ".join(self.parenthesize(a, 45) for a in expr.args)
                return body if exp is None else rf"\left({body}\right)^{{{exp}}}"
            return super()._print_Function(expr, exp)

        def _print_Rational(self, expr):
            if expr.q > 10**6:
                return self._print_Float(expr.evalf(6))
            return super()._print_Rational(expr)

        def _print_ComplexInfinity(self, expr):
            return r"\infty"

    return PlainPrinter, TexPrinter


_BASE_TEX = {"gm": r"g_{m", "gmb": r"g_{mb", "rpi": r"r_{\pi", "ro": r"r_{o", "rx": r"r_{x", "re": r"r_{e",
             "cpi": r"C_{\pi", "cmu": r"C_{\mu", "cgs": r"C_{gs", "cgd": r"C_{gd", "rd": r"r_{d",
             "cj": r"C_{j", "rs": r"R_{s", "alpha": r"\alpha", "beta": r"\beta", "gain": r"A",
             "ic": r"I_{C", "va": r"V_{A", "vt": r"V_{T", "id": r"I_{D", "vov": r"V_{ov", "lambda": r"\lambda"}


def latex_name(name: str) -> str:
    """Textbook LaTeX for a circuit symbol: ``Q1.gm`` -> ``g_{m,\\mathrm{Q1}}``, ``RC`` -> ``R_{C}``.

    Examples
    --------
    >>> latex_name("Q1.rpi")
    'r_{\\\\pi,\\\\mathrm{Q1}}'
    >>> latex_name("RL")
    'R_{L}'
    """
    if name == S_NAME:
        return "s"
    if name == "V_T":
        return "V_{T}"
    *owner, base = name.split(".")
    esc = lambda t: t.replace("_", r"\_")  # noqa: E731
    own = r"\mathrm{" + esc(".".join(owner)) + "}" if owner else ""
    if owner and base in _BASE_TEX:
        head = _BASE_TEX[base]
        if "{" in head:
            return f"{head},{own}}}"
        return f"{head}_{{{own}}}"
    if len(base) >= 2 and base[0].isalpha() and base[0].isupper():
        head = f"{base[0]}_{{{esc(base[1:])}"
    elif len(base) == 1:
        head = base
    else:
        head = r"\mathrm{" + esc(base) + "}"
    if owner:
        return f"{head},{own}}}" if head.endswith(tuple("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789")) and "_{" in head \
            else f"{head}_{{{own}}}"
    return head + ("}" if "_{" in head else "")


def plain(expr) -> str:
    """Plain text in the netlist expression language (parses with solver.language.parse.parse_expression)."""
    P, _ = _printers()
    return P().doprint(expr)


def latex(expr) -> str:
    """LaTeX with ``\\parallel`` for recognised parallel combinations."""
    _, T = _printers()
    return T().doprint(expr)


def sympy_names(expr) -> dict[str, str]:
    """{sympy name ('Q1_gm'): circuit name ('Q1.gm')} for the symbols of an expression."""
    out = {}
    for s in sorted(expr.free_symbols, key=lambda s: s.name):
        key = s.name.replace(".", "_")
        while key in out and out[key] != s.name:
            key += "_"
        out[key] = s.name
    return out


def sympy_text(expr) -> str:
    """``str`` of the expression with '.'→'_' names and every ``||`` expanded (sympy-parsable)."""
    import sympy
    e = expand_par(expr) if expr.has(Par()) else expr
    names = sympy_names(e)
    back = {v: k for k, v in names.items()}
    return sympy.sstr(e.xreplace({s: sympy.Symbol(back[s.name]) for s in e.free_symbols}))


def is_finite_number(x) -> bool:
    return isinstance(x, (int, float)) and math.isfinite(x)
