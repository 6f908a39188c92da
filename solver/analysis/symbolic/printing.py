"""Printing helpers for sympy expressions, symbol dimensions and LaTeX names.

Results of ``derive`` and ``check`` are written by :mod:`solver.analysis.symbolic.forms`
straight from the polynomials; this module keeps what works on sympy expressions:

* :func:`symbol_dims` -- dimensions of the circuit symbols (the forms use ``||`` for impedances);
* :func:`latex_name` -- textbook LaTeX for a circuit symbol;
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

import math

from solver.circuit.elements import CCCS, CCVS, VCCS, VCVS, Capacitor, Inductor, Resistor
from solver.engine.symbolic.stamper import S_NAME

# dimensions as exponents of (ohm, second): S = 1/ohm, F = s/ohm, H = ohm*s, Hz = 1/s
OHM = (1, 0)
_ELEMENT_DIMS = {Resistor: (1, 0), Capacitor: (-1, 1), Inductor: (1, 1), VCCS: (-1, 0), VCVS: (0, 0),
                 CCCS: (0, 0), CCVS: (1, 0)}


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
