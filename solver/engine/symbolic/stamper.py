"""A :class:`solver.engine.mna.Stamper` whose scalars are polynomials: the symbolic domain.

Every element stamps itself exactly as in the numeric engine; only
``value``/``recip``/``g``/``c``/``rhs`` change. A kept symbol ``X`` becomes the
ring generator ``X`` and its reciprocal the separate generator ``1/X``, so the
MNA matrix stays polynomial (Cramer's rule then needs no division); the two are
recombined into one rational function in :mod:`solver.engine.symbolic.determinants`.
Symbols not kept take their netlist value as an exact rational.
"""
from __future__ import annotations

from fractions import Fraction

from solver.circuit.elements import Element
from solver.engine.mna import Stamper
from solver.engine.symbolic.ring import Ring, exact_fraction

S_NAME = "s"


def variable_names(symbols, element_lists=None) -> list[str]:
    """Ring generators: ``s``, then ``X`` and/or ``1/X`` for every kept symbol.

    With ``element_lists`` (the scenarios to stamp), only the forms the stamps
    actually ask for are made (a resistor needs only ``1/R``): fewer generators
    make every later conversion cheaper.
    """
    symbols = list(symbols)
    if element_lists is None:
        used = {(n, k) for n in symbols for k in ("v", "r")}
    else:
        used = set()
        for els in element_lists:
            probe = _Probe(els, set())  # numbering only; ground does not matter here
            probe.stamp_all()
            used |= probe.used
    out = [S_NAME]
    for name in symbols:
        if (name, "v") in used:
            out.append(name)
        if (name, "r") in used:
            out.append("1/" + name)
    return out


class _Probe(Stamper):
    """Records which symbols the stamps read by value ("v") and by reciprocal ("r")."""

    def __init__(self, elements, ground):
        super().__init__(elements, ground)
        self.used: set[tuple[str, str]] = set()

    def value(self, e):
        if e.symbol:
            self.used.add((e.symbol, "v"))
        return 1.0

    def recip(self, e):
        if e.symbol:
            self.used.add((e.symbol, "r"))
        return 1.0


class SymbolicStamper(Stamper):
    """Stamps into a dict-of-keys polynomial matrix A = G + s*C and a vector b.

    Parameters
    ----------
    elements : list of Element
    ground : set of str
    ring : Ring
        Generators from :func:`variable_names`.
    keep : set of str
        Symbols that stay symbolic; every other value is its number.
    """

    def __init__(self, elements: list[Element], ground: set[str], ring: Ring, keep):
        super().__init__(elements, ground)
        self.ring = ring
        self.keep = set(keep)
        self._index = {n: i for i, n in enumerate(ring.names)}
        self.s = ring.gens[self._index[S_NAME]]
        self.A: dict[tuple[int, int], object] = {}
        self.b: dict[int, object] = {}

    def _scalar(self, v):
        if isinstance(v, (int, float, Fraction)):
            return self.ring.const(exact_fraction(v) if isinstance(v, float) else v)
        return v

    def _number(self, x) -> Fraction:
        if isinstance(x, complex):
            if x.imag:
                raise ValueError("complex element values have no symbolic form")
            x = x.real
        return exact_fraction(x)

    def value(self, e: Element):
        if e.symbol in self.keep and e.symbol in self._index:
            return self.ring.gens[self._index[e.symbol]]
        return self.ring.const(self._number(e.value))

    def recip(self, e: Element):
        if e.symbol in self.keep and "1/" + e.symbol in self._index:
            return self.ring.gens[self._index["1/" + e.symbol]]
        return self.ring.const(1 / self._number(e.value))

    def _add(self, r, c, v):
        if r is None or c is None:
            return
        v = self._scalar(v)
        if v == 0:
            return
        cur = self.A.get((r, c))
        self.A[(r, c)] = v if cur is None else cur + v

    def g(self, r, c, v):
        self._add(r, c, v)

    def c(self, r, c, v):
        self._add(r, c, self.s * self._scalar(v))

    def rhs(self, r, v):
        if r is not None:
            v = self._scalar(v)
            self.b[r] = self.b.get(r, self.ring.zero) + v
