"""Primitive elements and their MNA stamps: the one definition both engines use.

After device expansion a circuit is a flat list of these primitives. Each one
writes itself into the modified nodal analysis system through a *stamper*
(:class:`solver.engine.mna.Stamper`), which decides the scalar domain: floats for the
numeric engine, sympy symbols for the symbolic one. The system is

    (G + s*C) x = b,

with x the node voltages followed by the branch currents of the elements that
need one (voltage-defined branches). A stamp only ever calls

* ``st.node(name)`` / ``st.branch(elem)``: unknown indices (None for ground),
* ``st.value(elem)`` / ``st.recip(elem)``: the element value or its reciprocal,
* ``st.g(r, c, v)`` / ``st.c(r, c, v)``: add ``v`` to G or C at (r, c),
* ``st.rhs(r, v)``: add to the excitation vector.

References
----------
C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network
analysis", IEEE Trans. Circuits and Systems 22(6), 1975.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from solver.diagnostics import Loc


@dataclass
class Element:
    """Base of all primitives.

    name    -- unique full name (``S1.RC``, ``Q1.rpi``)
    nodes   -- terminal node names
    value   -- numeric value (float or complex)
    symbol  -- name of its symbol in the symbolic engine (None: a fixed number)
    origin  -- the netlist element or device it came from, for diagnostics
    """

    name: str
    nodes: tuple[str, ...]
    value: complex | float = 0.0
    symbol: str | None = None
    origin: str = ""
    loc: Loc | None = None

    #: True when the element adds a branch-current unknown to the system
    needs_branch = False
    #: what defines the branch for topology checks: "r" (resistive), "v" (voltage), "i" (current)
    branch_kind = "r"
    #: True when the element is reactive in the DC view (capacitor open, inductor short)
    reactive = False

    def stamp(self, st) -> None:
        raise NotImplementedError

    def current(self, st) -> list:
        """The element's current from nodes[0] to nodes[1] as [(column, g_coeff, c_coeff)]."""
        raise NotImplementedError(f"{type(self).__name__} has no sensed current")


def _two(a, b, v, add):
    """Stamp an admittance-like value between unknowns a and b into rows/cols a, b."""
    add(a, a, v)
    add(b, b, v)
    add(a, b, -v)
    add(b, a, -v)


@dataclass
class Resistor(Element):
    def stamp(self, st):
        a, b = st.node(self.nodes[0]), st.node(self.nodes[1])
        _two(a, b, st.recip(self), st.g)

    def current(self, st):
        g = st.recip(self)
        return [(st.node(self.nodes[0]), g, 0), (st.node(self.nodes[1]), -g, 0)]


@dataclass
class Capacitor(Element):
    reactive = True

    def stamp(self, st):
        a, b = st.node(self.nodes[0]), st.node(self.nodes[1])
        _two(a, b, st.value(self), st.c)

    def current(self, st):
        c = st.value(self)
        return [(st.node(self.nodes[0]), 0, c), (st.node(self.nodes[1]), 0, -c)]


@dataclass
class _Branch(Element):
    """Element with a branch current unknown j flowing from nodes[0] to nodes[1] through it."""

    needs_branch = True
    branch_kind = "v"

    def _kcl(self, st, j):
        a, b = st.node(self.nodes[0]), st.node(self.nodes[1])
        st.g(a, j, 1)
        st.g(b, j, -1)
        return a, b

    def current(self, st):
        return [(st.branch(self), 1, 0)]


@dataclass
class Inductor(_Branch):
    """v(a) - v(b) - s*L*j = 0."""

    reactive = True

    def stamp(self, st):
        j = st.branch(self)
        a, b = self._kcl(st, j)
        st.g(j, a, 1)
        st.g(j, b, -1)
        st.c(j, j, -st.value(self))


@dataclass
class VoltageSource(_Branch):
    """v(a) - v(b) = value (the excitation)."""

    def stamp(self, st):
        j = st.branch(self)
        a, b = self._kcl(st, j)
        st.g(j, a, 1)
        st.g(j, b, -1)
        st.rhs(j, st.value(self))


@dataclass
class CurrentSource(Element):
    """A current ``value`` flows from nodes[0] through the source to nodes[1]."""

    branch_kind = "i"

    def stamp(self, st):
        a, b = st.node(self.nodes[0]), st.node(self.nodes[1])
        v = st.value(self)
        st.rhs(a, -v)
        st.rhs(b, v)

    def current(self, st):
        return []  # a fixed current: no dependence on the unknowns (excitation only)


@dataclass
class VCCS(Element):
    """Current value*(v(cp) - v(cn)) flows from nodes[0] through the source to nodes[1]."""

    ctrl: tuple[str, str] = ("", "")
    branch_kind = "i"

    def stamp(self, st):
        p, n = st.node(self.nodes[0]), st.node(self.nodes[1])
        cp, cn = st.node(self.ctrl[0]), st.node(self.ctrl[1])
        gm = st.value(self)
        st.g(p, cp, gm)
        st.g(p, cn, -gm)
        st.g(n, cp, -gm)
        st.g(n, cn, gm)

    def current(self, st):
        gm = st.value(self)
        return [(st.node(self.ctrl[0]), gm, 0), (st.node(self.ctrl[1]), -gm, 0)]


@dataclass
class VCVS(_Branch):
    """v(p) - v(n) = value*(v(cp) - v(cn))."""

    ctrl: tuple[str, str] = ("", "")

    def stamp(self, st):
        j = st.branch(self)
        p, n = self._kcl(st, j)
        cp, cn = st.node(self.ctrl[0]), st.node(self.ctrl[1])
        mu = st.value(self)
        st.g(j, p, 1)
        st.g(j, n, -1)
        st.g(j, cp, -mu)
        st.g(j, cn, mu)


@dataclass
class CCCS(Element):
    """Current value*i(sense) flows from nodes[0] through the source to nodes[1]."""

    sense: Element | None = None
    branch_kind = "i"

    def stamp(self, st):
        p, n = st.node(self.nodes[0]), st.node(self.nodes[1])
        k = st.value(self)
        for col, gk, ck in self.sense.current(st):
            if gk != 0:
                st.g(p, col, k * gk)
                st.g(n, col, -k * gk)
            if ck != 0:
                st.c(p, col, k * ck)
                st.c(n, col, -k * ck)

    def current(self, st):
        k = st.value(self)
        return [(col, k * gk if gk != 0 else 0, k * ck if ck != 0 else 0)
                for col, gk, ck in self.sense.current(st)]


@dataclass
class CCVS(_Branch):
    """v(p) - v(n) = value*i(sense)."""

    sense: Element | None = None

    def stamp(self, st):
        j = st.branch(self)
        p, n = self._kcl(st, j)
        r = st.value(self)
        st.g(j, p, 1)
        st.g(j, n, -1)
        for col, gk, ck in self.sense.current(st):
            if gk != 0:
                st.g(j, col, -r * gk)
            if ck != 0:
                st.c(j, col, -r * ck)


@dataclass
class Nullor(_Branch):
    """Ideal op-amp: v(inp) = v(inn); the output supplies any current (to ground).

    nodes = (out, inp, inn). The branch current j flows out of the output
    terminal into the circuit; the inputs draw no current.
    """

    def stamp(self, st):
        j = st.branch(self)
        out, inp, inn = (st.node(n) for n in self.nodes)
        st.g(out, j, -1)
        st.g(j, inp, 1)
        st.g(j, inn, -1)

    def current(self, st):
        return [(st.branch(self), -1, 0)]

