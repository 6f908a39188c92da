"""Symbolic port quantities, built from the numeric engine's own scenario builders.

The scenarios are those of :mod:`solver.analysis.ports` (the same element lists from
``small_signal_elements``, ``signal_elements`` and ``load_element``): the
unloaded drive, the loaded drive and the output test source. Each port quantity
is a ratio of two linear functionals of the solution, and with Cramer's rule
x_k = sum_r C_rk b_r / det A, so every quantity is a ratio of sums of cofactors
of one memoised matrix per scenario.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from solver.diagnostics import error
from solver.circuit.elements import CurrentSource, VoltageSource
from solver.circuit.model import Circuit
from solver.analysis.ports import load_element, signal_elements, small_signal_elements
from solver.engine.symbolic.determinants import LaplaceDeterminants, RationalFunction, evaluate_dict, natural, to_sympy
from solver.engine.symbolic.ring import Ring
from solver.engine.symbolic.stamper import S_NAME, SymbolicStamper, variable_names

TEST = "{test}"


class SymbolicQuantity:
    """An exact port quantity: num/den over ``gens`` (``s`` then circuit symbol names).

    The engine's result stays an expanded ratio of ring polynomials (in ``X`` and
    ``1/X``); the dicts ``num``/``den`` in the circuit's own symbols are made on
    first use, since for large circuits that conversion costs more than the solve.
    """

    def __init__(self, name: str, rf: RationalFunction, symbols: list[str]):
        self.name = name
        self.rf = rf
        self._symbols = list(symbols)
        self._nat = None

    def _natural(self):
        if self._nat is None:
            self._nat = natural(self.rf, self._symbols)
        return self._nat

    @property
    def num(self) -> dict:
        return self._natural()[0]

    @property
    def den(self) -> dict:
        return self._natural()[1]

    @property
    def gens(self) -> list[str]:
        return [S_NAME] + self._symbols

    @property
    def ring_terms(self) -> tuple[int, int]:
        """Terms of the engine's numerator and denominator (before merging X and 1/X)."""
        return len(self.rf.num), len(self.rf.den)

    def expr(self):
        """The sympy expression (symbols from :func:`solver.engine.symbolic.determinants.symbol`)."""
        return to_sympy(self.num, self.den, self.gens)

    @property
    def nterms(self) -> int:
        return len(self.num) + len(self.den)

    def value(self, values: dict, s: complex = 0j) -> complex:
        """Numeric value with ``values`` {symbol name: number} at complex frequency ``s``."""
        point = [s] + [values[g] for g in self.gens[1:]]
        d = evaluate_dict(self.den, point)
        n = evaluate_dict(self.num, point)
        if d == 0:
            return complex(math.inf) if n != 0 else complex(math.nan)
        return n / d


def circuit_symbols(c: Circuit) -> list[str]:
    """Every symbol of the small-signal circuit in stamping order (``RC``, ``Q1.gm``, ``VS.rs`` ...)."""
    seen: dict[str, None] = {}
    for e in scenario_elements(c):
        if e.symbol is not None and e.symbol not in seen:
            seen[e.symbol] = None
    return list(seen)


def scenario_elements(c: Circuit) -> list:
    """Every element any scenario stamps (for symbol values and dimensions)."""
    els = small_signal_elements(c) + signal_elements(c, 1.0)
    if c.load is not None:
        els.append(load_element(c))
    return els


def symbol_values(c: Circuit) -> dict[str, float]:
    """{symbol name: netlist value} of every symbol of the circuit."""
    return {e.symbol: float(e.value.real if isinstance(e.value, complex) else e.value)
            for e in scenario_elements(c) if e.symbol is not None}


def choose_symbols(c: Circuit, keep=None, numeric=()) -> list[str]:
    """The symbols that stay symbolic: ``keep`` only (when given), minus ``numeric``.

    Unknown names are bad input (the option names them).
    """
    every = circuit_symbols(c)
    for opt, names in (("--keep", keep or ()), ("--numeric", numeric or ())):
        for n in names:
            if n not in every:
                import difflib
                close = difflib.get_close_matches(n, every, n=1)
                hint = f"; did you mean '{close[0]}'?" if close else f" (symbols: {', '.join(every)})"
                raise error(None, f"{opt}: '{n}' is not a symbol of this circuit{hint}")
    chosen = [n for n in every if (keep is None or n in keep) and n not in set(numeric or ())]
    return chosen


class _Scenario:
    """One stamped scenario: its cofactors and the functional solve."""

    def __init__(self, c: Circuit, els, ring: Ring, keep, domain=None):
        self.st = SymbolicStamper(els, c.ground, ring, keep).stamp_all()
        entries, zero, one = self.st.A, ring.zero, ring.one
        self.b = dict(self.st.b)
        if domain is not None:  # compact form: the same recursion over sympy expressions
            conv, zero, one = domain
            entries = {k: conv(v) for k, v in entries.items()}
            self.b = {k: conv(v) for k, v in self.b.items()}
        self.L = LaplaceDeterminants(self.st.size, entries, zero, one)
        self.zero = zero
        self._det = None

    @property
    def det(self):
        if self._det is None:
            self._det = self.L.det()
        return self._det

    def node(self, name):
        return self.st.node(name)

    def times_det(self, w: dict):
        """det(A) * sum_k w_k x_k, as a sum of cofactors (no division)."""
        total = self.zero
        for k, wk in w.items():
            if k is None:
                continue
            for r, br in self.b.items():
                if br == 0:
                    continue
                cof = self.L.cofactor(r, k)
                if cof == 0:
                    continue
                total = total + wk * br * cof
        return total

    def port(self, p, n, scale=1):
        w = {}
        for node, sign in ((p, 1), (n, -1)):
            i = self.node(node)
            if i is not None:
                w[i] = w.get(i, 0) + sign * scale
        return w


def symbolic_port_quantities(c: Circuit, keep=None, numeric=(), which=None, compact: bool = False):
    """Exact (or compact) symbolic port quantities of a circuit.

    Parameters
    ----------
    c : Circuit
    keep, numeric : iterables of symbol names
        ``keep`` (when given) lists the symbols that stay symbolic; ``numeric``
        names symbols to replace by their netlist values.
    which : iterable of quantity names or None (all)
    compact : bool
        Return nested, unexpanded sympy expressions instead of expanded ratios.

    Returns
    -------
    dict
        name -> :class:`SymbolicQuantity` (exact) or sympy expression (compact).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 2k\\noutput (a, gnd)\\n")
    >>> str(symbolic_port_quantities(c, which=["Gv"])["Gv"].expr())
    'R1/(R1 + VS.rs)'
    """
    kept = choose_symbols(c, keep, numeric)
    base = small_signal_elements(c)
    ring = Ring(variable_names(kept, [base + signal_elements(c, 1.0) + ([load_element(c)] if c.load else [])]))
    domain = _compact_domain(ring, kept) if compact else None
    current = c.signal.kind == "A"
    names = ["Rin", "Rout", "Avo", "Av", "Zt" if current else "Gv", "Zto" if current else "Gvo", "Ai"]
    if c.load is None:
        names.remove("Ai")
    want = [q for q in names if which is None or q in which]
    sc = lambda els: _Scenario(c, els, ring, set(kept), domain)  # noqa: E731
    out: dict[str, object] = {}
    op, on = c.output_port
    p, n = c.signal.nodes

    def drive(loaded):
        els = base + signal_elements(c, 1.0)
        if loaded:
            els.append(load_element(c))
        s = sc(els)
        v_in = s.times_det(s.port(p, n))
        v_out = s.times_det(s.port(op, on))
        if c.signal.kind == "V":
            i_in = s.times_det({s.st.branch(_named(els, c.signal.name)): -1})
        elif math.isfinite(c.signal.rs):
            rs_el = _named(els, f"{c.signal.name}.rs")
            i_in = s.det - v_in * s.st.recip(rs_el) if domain is None else s.det - v_in * domain[0](s.st.recip(rs_el))
        else:
            i_in = s.det
        return s, v_in, v_out, i_in

    def ratio(a, b):
        if domain is not None:
            return a / b
        return RationalFunction(a, b, ring)

    unl = {"Avo", "Gvo", "Zto"} | ({"Rin", "Av", "Gv", "Zt"} if c.load is None else set())
    if unl & set(want):
        s, v_in, v_out, i_in = drive(False)
        if c.load is None:
            out.update(Rin=ratio(v_in, i_in), Av=ratio(v_out, v_in), **{names[4]: ratio(v_out, s.det)})
        out.update(Avo=ratio(v_out, v_in), **{names[5]: ratio(v_out, s.det)})
    if c.load is not None and {"Rin", "Av", "Gv", "Zt", "Ai"} & set(want):
        s, v_in, v_out, i_in = drive(True)
        lp, ln = c.load.nodes
        conv = domain[0] if domain is not None else (lambda x: x)
        g_load = conv(s.st.recip(load_element(c)))
        i_load = s.times_det(s.port(lp, ln, 1)) * g_load
        out.update(Rin=ratio(v_in, i_in), Av=ratio(v_out, v_in), Ai=ratio(i_load, i_in),
                   **{names[4]: ratio(v_out, s.det)})
    if "Rout" in want:
        els = base + signal_elements(c, 0.0, with_source=False)
        s = sc(els + [CurrentSource(TEST, (on, op), 1.0, None, "", None)])
        if s.det != 0:
            out["Rout"] = ratio(s.times_det(s.port(op, on)), s.det)
        else:  # a stiff output: drive it with 1 V and take the current
            test = VoltageSource(TEST, (op, on), 1.0, None, "", None)
            s = sc(els + [test])
            out["Rout"] = ratio(s.det, s.times_det({s.st.branch(test): -1}))
    result = {}
    for q in want:
        v = out[q]
        if domain is not None:
            result[q] = v
        else:
            result[q] = SymbolicQuantity(q, v.cancel(), kept)
    return result


def _named(els, name):
    return next(e for e in els if e.name == name)


def _compact_domain(ring: Ring, kept):
    """(convert ring entry -> sympy, zero, one) for the compact form."""
    import sympy
    from solver.engine.symbolic.determinants import symbol
    gens = []
    for name in ring.names:
        if name == S_NAME:
            gens.append(symbol(S_NAME))
        elif name.startswith("1/"):
            gens.append(1 / symbol(name[2:]))
        else:
            gens.append(symbol(name))

    def conv(p):
        if isinstance(p, (int, float)):
            return sympy.Integer(p) if isinstance(p, int) else sympy.Rational(p)
        terms = []
        for m, cf in ring.to_dict(p).items():
            t = sympy.Rational(cf.numerator, cf.denominator)
            for g, e in zip(gens, m):
                if e:
                    t = t * g ** e
            terms.append(t)
        return sympy.Add(*terms)

    return conv, sympy.Integer(0), sympy.Integer(1)
