"""Symbolic port quantities, read from the same scenario table as the numeric engine.

The configurations and read-outs are those of :mod:`solver.analysis.scenarios`.
Each port quantity is a ratio of two linear read-outs of the solution, and with
Cramer's rule x_k = sum_r C_rk b_r / det A every read-out times det A is a sum of
cofactors of one memoised matrix per configuration, so no division is needed.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from solver.analysis import scenarios as table
from solver.circuit.model import Circuit
from solver.circuit.views import load_element, signal_elements, small_signal_elements
from solver.diagnostics import error
from solver.engine.symbolic.determinants import LaplaceDeterminants, RationalFunction, evaluate_dict, natural, to_sympy
from solver.engine.symbolic.ring import Ring
from solver.engine.symbolic.stamper import S_NAME, SymbolicStamper, variable_names


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


class DecibelQuantity:
    """A ratio of two rows in dB (CMRR = 20 log10 |Avo/Acm|): the exact ratio, and its dB form.

    ``ratio`` is the :class:`SymbolicQuantity` of the ratio itself (Avo/Acm), whose
    ``num``/``den``/``gens`` the dominant-term pruning reads; ``infinite`` is True when the
    denominator row is identically zero (then so is no ratio: the dB value is +oo).
    """

    def __init__(self, name: str, ratio: SymbolicQuantity | None):
        self.name = name
        self.ratio = ratio
        self.infinite = ratio is None

    def __getattr__(self, attr):
        # everything else a SymbolicQuantity offers (rf, ring_terms, ...) is the ratio's
        if attr.startswith("__") or self.__dict__.get("ratio") is None:
            raise AttributeError(attr)
        return getattr(self.ratio, attr)

    @property
    def nterms(self) -> int:
        return 0 if self.ratio is None else self.ratio.nterms

    @property
    def num(self) -> dict:
        return {} if self.ratio is None else self.ratio.num

    @property
    def den(self) -> dict:
        return {} if self.ratio is None else self.ratio.den

    @property
    def gens(self) -> list[str]:
        return [S_NAME] if self.ratio is None else self.ratio.gens

    def ratio_expr(self):
        """The ratio (e.g. Avo/Acm) as a sympy expression; sympy.oo when infinite."""
        import sympy
        return sympy.oo if self.ratio is None else self.ratio.expr()

    def expr(self):
        """20*log10(|ratio|) as a sympy expression (sympy.oo when infinite)."""
        import sympy
        r = self.ratio_expr()
        return r if r == sympy.oo else 20 * sympy.log(sympy.Abs(r), 10)

    def value(self, values: dict, s: complex = 0j) -> complex:
        return complex(math.inf if self.ratio is None else table.decibels(self.ratio.value(values, s), 1.0), 0.0)


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


class _Config:
    """One stamped configuration: its cofactors, and read-outs times det A."""

    def __init__(self, c: Circuit, els, ring: Ring, keep, domain=None):
        self.st = SymbolicStamper(els, c.ground, ring, keep).stamp_all()
        entries, zero, one = self.st.A, ring.zero, ring.one
        self.b = dict(self.st.b)
        self.conv = (lambda x: x) if domain is None else domain[0]
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

    def times_det(self, k: int):
        """det(A) * x_k, as a sum of cofactors (no division)."""
        total = self.zero
        for r, br in self.b.items():
            if br == 0:
                continue
            cof = self.L.cofactor(r, k)
            if cof == 0:
                continue
            total = total + br * cof
        return total

    def read(self, terms):
        """det(A) times a read-out of the scenario table."""
        total = self.zero
        for t in terms:
            if t.kind == "node":
                k = self.st.node(t.name)
                if k is None:
                    continue
                v = self.times_det(k)
            elif t.kind == "branch":
                v = self.times_det(self.st.branches[t.name])
            else:
                v = self.det
            if t.per is not None:
                v = v * self.conv(self.st.recip(t.per))
            total = total + v if t.sign > 0 else total - v
        return total


def symbolic_port_quantities(c: Circuit, keep=None, numeric=(), which=None, compact: bool = False):
    """Exact (or compact) symbolic port quantities of a circuit.

    Parameters
    ----------
    c : Circuit
    keep, numeric : iterables of symbol names
        ``keep`` (when given) lists the symbols that stay symbolic; ``numeric``
        names symbols to replace by their netlist values.
    which : iterable of quantity names or None (all)
        ``"supply:NAME"`` adds the gain from supply NAME to v_out (the signal zeroed, the
        load in place), read from the scenario table's configuration for that supply.
    compact : bool or "nodes"
        Return nested, unexpanded sympy expressions instead of expanded ratios; "nodes":
        (numerator, denominator) as :class:`solver.analysis.symbolic.forms.Node` DAGs
        sharing every memoised minor (for :func:`solver.analysis.symbolic.forms.compact_form`).

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
    ring = Ring(variable_names(kept, [scenario_elements(c)]))
    if compact == "nodes":  # the printer's own expression nodes (no sympy): forms.compact_domain
        from solver.analysis.symbolic.forms import compact_domain
        domain = compact_domain(ring)
    else:
        domain = _compact_domain(ring, kept) if compact else None
    configs: dict = {}

    def stamped(m):
        if m.config.key not in configs:
            configs[m.config.key] = _Config(c, list(m.config.elements), ring, set(kept), domain)
        return configs[m.config.key]

    result = {}
    for q in table.quantities(c):
        if which is not None and q not in which:
            continue
        if q in table.DECIBELS:  # a ratio of two rows: each read as usual, then divided
            continue
        m = table.chosen(c, q, lambda m: stamped(m).det == 0, base)  # singular for every value
        s = stamped(m)
        if q in table.DIFFERENTIAL and s.det == 0:  # no common-mode drive (as the numeric engine)
            continue
        num = s.read(m.num)
        den = s.read(m.den) if m.den is not None else s.det
        if compact == "nodes":
            result[q] = (num, den)
        elif domain is not None:
            result[q] = num / den
        else:
            result[q] = SymbolicQuantity(q, RationalFunction(num, den, ring).cancel(), kept)
    for q in which or ():  # a supply's gain to v_out ("supply:VCC"): the table's configuration for it
        if not q.startswith(table.SUPPLY):
            continue
        m = table.supply_measurement(c, q[len(table.SUPPLY):], base)
        st = stamped(m)
        num, den = st.read(m.num), st.det
        if compact == "nodes":
            result[q] = (num, den)
        else:
            result[q] = num / den if domain is not None else \
                SymbolicQuantity(q, RationalFunction(num, den, ring).cancel(), kept)
    for q, (a, b) in table.DECIBELS.items():
        if q not in table.quantities(c) or (which is not None and q not in which):
            continue
        parts = symbolic_port_quantities(c, keep, numeric, (a, b), compact)
        if b not in parts:
            continue
        if compact == "nodes":  # the ratio's numerator and denominator as the printer's nodes
            (na, da), (nb, db) = parts[a], parts[b]
            result[q] = (na * db, da * nb)
            continue
        if compact:
            import sympy
            result[q] = 20 * sympy.log(sympy.Abs(parts[a] / parts[b]), 10) if parts[b] != 0 else sympy.oo
            continue
        ra, rb = parts[a].rf, parts[b].rf
        ratio = None if rb.num == 0 else SymbolicQuantity(
            f"{a}/{b}", RationalFunction(ra.num * rb.den, ra.den * rb.num, ra.ring).cancel(), kept)
        result[q] = DecibelQuantity(q, ratio)
    return result


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
