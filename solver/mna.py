"""Modified nodal analysis: number the unknowns, collect the stamps, solve.

:class:`Stamper` is the only place that knows about matrix storage. It numbers
the non-reference nodes and the branch currents, and lets every element of
:mod:`solver.elements` stamp itself. The numeric domain stores COO triplets
and builds ``scipy.sparse`` matrices; :mod:`solver.symbolic` subclasses the
stamper to get sympy entries from the very same stamps.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .elements import Element


class SingularSystem(Exception):
    """The MNA matrix is singular at the analysis frequency."""


class Stamper:
    """Numbering of unknowns plus a numeric (float/complex) scalar domain.

    Parameters
    ----------
    elements : list of Element
    ground : set of str
        Node names that are the reference.
    """

    def __init__(self, elements: list[Element], ground: set[str]):
        self.elements = list(elements)
        self.ground = set(ground)
        self.nodes: dict[str, int] = {}
        for e in self.elements:
            for n in self._all_nodes(e):
                if n not in self.ground and n not in self.nodes:
                    self.nodes[n] = len(self.nodes)
        self.branches: dict[str, int] = {}
        for e in self.elements:
            if e.needs_branch:
                self.branches[e.name] = len(self.nodes) + len(self.branches)
        self.size = len(self.nodes) + len(self.branches)
        self._g: list[tuple[int, int, complex]] = []
        self._c: list[tuple[int, int, complex]] = []
        self._b: dict[int, complex] = {}

    @staticmethod
    def _all_nodes(e: Element):
        yield from e.nodes
        yield from getattr(e, "ctrl", ())

    # --- the interface the stamps use ----------------------------------------
    def node(self, name: str):
        return None if name in self.ground else self.nodes[name]

    def branch(self, e: Element) -> int:
        return self.branches[e.name]

    def value(self, e: Element):
        return e.value

    def recip(self, e: Element):
        return 1.0 / e.value

    def g(self, r, c, v):
        if r is not None and c is not None:
            self._g.append((r, c, v))

    def c(self, r, c, v):
        if r is not None and c is not None:
            self._c.append((r, c, v))

    def rhs(self, r, v):
        if r is not None:
            self._b[r] = self._b.get(r, 0) + v

    # --- assembly -------------------------------------------------------------
    def stamp_all(self) -> "Stamper":
        for e in self.elements:
            e.stamp(self)
        return self

    def unknown_names(self) -> list[str]:
        names = [""] * self.size
        for n, i in self.nodes.items():
            names[i] = f"v({n})"
        for n, i in self.branches.items():
            names[i] = f"i({n})"
        return names


@dataclass
class System:
    """A stamped numeric system (G + sC) x = b in CSC form."""

    G: sp.csc_matrix
    C: sp.csc_matrix
    b: np.ndarray
    stamper: Stamper

    @property
    def reactive(self) -> bool:
        return self.C.nnz > 0 and bool(np.any(self.C.data != 0))

    def matrix(self, s: complex) -> sp.csc_matrix:
        return (self.G + s * self.C).tocsc() if s != 0 else self.G.astype(complex).tocsc()

    def solve(self, s: complex, b: np.ndarray | None = None) -> np.ndarray:
        """Solve at complex frequency s; raises :class:`SingularSystem`."""
        if self.stamper.size == 0:
            return np.zeros(0, complex)
        A = self.matrix(s)
        rhs = self.b if b is None else b
        try:
            with np.errstate(all="ignore"):
                lu = spla.splu(A.astype(complex))
                x = lu.solve(rhs.astype(complex))
        except RuntimeError as exc:  # "Factor is exactly singular"
            raise SingularSystem(str(exc)) from None
        if not np.all(np.isfinite(x)):
            raise SingularSystem("non-finite solution")
        # reject numerically singular systems (residual check against the scale of A)
        scale = abs(A).max() * max(1.0, np.abs(x).max()) + np.abs(rhs).max()
        if np.abs(A @ x - rhs).max() > 1e-8 * scale:
            raise SingularSystem("numerically singular")
        return x

    def voltage(self, x: np.ndarray, node: str) -> complex:
        i = self.stamper.node(node)
        return 0j if i is None else complex(x[i])

    def branch_current(self, x: np.ndarray, name: str) -> complex:
        return complex(x[self.stamper.branches[name]])


def assemble(elements: list[Element], ground: set[str]) -> System:
    """Stamp every element into sparse G, C and b.

    Examples
    --------
    >>> from solver.elements import Resistor, CurrentSource
    >>> sys_ = assemble([Resistor("R1", ("a", "0"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)], {"0"})
    >>> round(sys_.solve(0).real[0], 6)
    1.0
    """
    st = Stamper(elements, ground).stamp_all()
    n = st.size

    def build(trip):
        if not trip:
            return sp.csc_matrix((n, n), dtype=complex)
        r, c, v = zip(*trip)
        return sp.coo_matrix((np.asarray(v, dtype=complex), (r, c)), shape=(n, n)).tocsc()

    b = np.zeros(n, dtype=complex)
    for r, v in st._b.items():
        b[r] += v
    return System(build(st._g), build(st._c), b, st)
