"""Modified nodal analysis: number the unknowns, collect the stamps, solve.

:class:`Stamper` is the only place that knows about matrix storage. It numbers
the non-reference nodes and the branch currents, and lets every element of
:mod:`solver.circuit.elements` stamp itself. The numeric domain stores COO triplets;
:class:`System` solves a small system densely with numpy and builds ``scipy.sparse``
matrices only when they are needed (a large system, a diagnosis, a condition estimate,
a sweep), so the command line does not pay scipy's import time for a ten-node circuit.
:mod:`solver.analysis.symbolic` subclasses the stamper to get sympy entries from the
very same stamps.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from solver.circuit.elements import Element

if TYPE_CHECKING:  # scipy is imported where it is used (start-up time of the command line)
    import scipy.sparse as sp

#: up to this many unknowns :meth:`System.solve` uses a dense LU (numpy.linalg.solve) and does
#: not import scipy; above it, a sparse LU (scipy.sparse.linalg.splu). A dense n x n complex
#: matrix of this size is 16*n*n bytes = 1 MB, and LAPACK's LU of it takes milliseconds.
SOLVE_DENSE_LIMIT = 250


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


class System:
    """A stamped numeric system (G + sC) x = b.

    ``G`` and ``C`` are ``scipy.sparse`` CSC matrices built from the stamp triplets on first
    access; :meth:`solve` of a small system works on dense numpy arrays and never builds them.
    """

    def __init__(self, stamper: Stamper, b: np.ndarray):
        self.stamper = stamper
        self.b = b
        self._G = None
        self._C = None
        self._dense: dict[str, np.ndarray] = {}

    def __repr__(self) -> str:
        return f"System(size={self.stamper.size}, reactive={self.reactive})"

    # --- the matrices -----------------------------------------------------------------------
    @staticmethod
    def _summed(trip) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Rows, columns and values with duplicate stamps summed in stamp order, so that the
        dense and the sparse form hold bit-identical entries."""
        acc: dict[tuple[int, int], complex] = {}
        for r, c, v in trip:
            key = (r, c)
            acc[key] = acc[key] + v if key in acc else v
        rows = np.fromiter((k[0] for k in acc), dtype=np.intp, count=len(acc))
        cols = np.fromiter((k[1] for k in acc), dtype=np.intp, count=len(acc))
        return rows, cols, np.fromiter(acc.values(), dtype=complex, count=len(acc))

    def _sparse(self, trip) -> "sp.csc_matrix":
        import scipy.sparse as sp
        n = self.stamper.size
        if not trip:
            return sp.csc_matrix((n, n), dtype=complex)
        r, c, v = self._summed(trip)
        return sp.coo_matrix((v, (r, c)), shape=(n, n)).tocsc()

    @property
    def G(self) -> "sp.csc_matrix":
        """Conductance part, scipy.sparse CSC (built on first access)."""
        if self._G is None:
            self._G = self._sparse(self.stamper._g)
        return self._G

    @property
    def C(self) -> "sp.csc_matrix":
        """Capacitance/inductance part, scipy.sparse CSC (built on first access)."""
        if self._C is None:
            self._C = self._sparse(self.stamper._c)
        return self._C

    def dense(self, which: str) -> np.ndarray:
        """``G`` or ``C`` (``which`` = "G" or "C") as a dense complex numpy array with the same
        entries as the sparse form; cached, do not modify."""
        a = self._dense.get(which)
        if a is None:
            trip = {"G": self.stamper._g, "C": self.stamper._c}[which]
            n = self.stamper.size
            a = np.zeros((n, n), dtype=complex)
            if trip:
                r, c, v = self._summed(trip)
                a[r, c] = v
            self._dense[which] = a
        return a

    @property
    def reactive(self) -> bool:
        """True when C has a nonzero entry once duplicate stamps are summed."""
        if not self.stamper._c:
            return False
        if self.stamper.size <= SOLVE_DENSE_LIMIT:
            return bool(np.any(self.dense("C") != 0))
        return self.C.nnz > 0 and bool(np.any(self.C.data != 0))

    def dense_matrix(self, s: complex) -> np.ndarray:
        """G + sC as a dense complex array (a new array when s != 0, else the cached G)."""
        return self.dense("G") + s * self.dense("C") if s != 0 else self.dense("G")

    def matrix(self, s: complex) -> "sp.csc_matrix":
        return (self.G + s * self.C).tocsc() if s != 0 else self.G.astype(complex).tocsc()

    def solve(self, s: complex, b: np.ndarray | None = None) -> np.ndarray:
        """Solve at complex frequency s; raises :class:`SingularSystem`.

        Up to :data:`SOLVE_DENSE_LIMIT` unknowns by a dense LU with partial pivoting
        (numpy.linalg.solve, LAPACK gesv), above it by a sparse LU (scipy's SuperLU); both
        then apply the same residual check.
        """
        n = self.stamper.size
        if n == 0:
            return np.zeros(0, complex)
        rhs = self.b if b is None else b
        if n <= SOLVE_DENSE_LIMIT:
            A = self.dense_matrix(s)
            try:
                with np.errstate(all="ignore"):
                    x = np.linalg.solve(A, rhs.astype(complex))
            except np.linalg.LinAlgError as exc:  # "Singular matrix": an exactly zero pivot
                raise SingularSystem(str(exc)) from None
            Amax = np.abs(A).max()
        else:
            import scipy.sparse.linalg as spla
            A = self.matrix(s)
            try:
                with np.errstate(all="ignore"):
                    lu = spla.splu(A.astype(complex))
                    x = lu.solve(rhs.astype(complex))
            except RuntimeError as exc:  # "Factor is exactly singular"
                raise SingularSystem(str(exc)) from None
            Amax = abs(A).max()
        if not np.all(np.isfinite(x)):
            raise SingularSystem("non-finite solution")
        # reject numerically singular systems (residual check against the scale of A)
        scale = Amax * max(1.0, np.abs(x).max()) + np.abs(rhs).max()
        if np.abs(A @ x - rhs).max() > 1e-8 * scale:
            raise SingularSystem("numerically singular")
        return x

    def voltage(self, x: np.ndarray, node: str) -> complex:
        i = self.stamper.node(node)
        return 0j if i is None else complex(x[i])

    def branch_current(self, x: np.ndarray, name: str) -> complex:
        return complex(x[self.stamper.branches[name]])


def assemble(elements: list[Element], ground: set[str]) -> System:
    """Stamp every element; G and C are built from the triplets when first needed.

    Examples
    --------
    >>> from solver.circuit.elements import Resistor, CurrentSource
    >>> sys_ = assemble([Resistor("R1", ("a", "0"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)], {"0"})
    >>> round(float(sys_.solve(0).real[0]), 6)
    1.0
    """
    st = Stamper(elements, ground).stamp_all()
    b = np.zeros(st.size, dtype=complex)
    for r, v in st._b.items():
        b[r] += v
    return System(st, b)


# --- diagnosis of a singular or ill-conditioned system ---------------------------------------
#: a scaled condition estimate above this loses more than about 12 of the 16 significant digits
#: of double precision (relative error ~ cond * 2.2e-16), so the results deserve a warning
COND_WARN = 1e12
#: up to this many unknowns the null space of a numerically singular system comes from a dense
#: SVD; above it, from inverse iteration on one sparse LU factorization
DENSE_LIMIT = 2000
#: up to this many unknowns :func:`condition_estimate` gives the exact 1-norm condition number
EXACT_COND_LIMIT = 300
#: :func:`condition_estimate` trusts a dense result up to this (two decades below COND_WARN, so
#: whether to warn is always decided as before); above it, the sparse LU route decides
DENSE_COND_TRUST = 1e10


@dataclass
class Singularity:
    """What is wrong with a singular system, in unknown names (``v(node)``, ``i(element)``).

    undetermined -- unknowns that no equation pins down
    redundant    -- equations (rows: KCL of a node ``v(n)`` or the branch law ``i(e)``) that
                    depend on the others
    structural   -- True when the sparsity pattern alone is singular (bipartite matching)
    """

    undetermined: list[str]
    redundant: list[str]
    structural: bool
    rank: int
    size: int
    #: True when ``rank`` is an upper bound (one null direction found by inverse iteration)
    estimated: bool = False


def _equilibrate(A: sp.csc_matrix) -> sp.csc_matrix:
    """Scale rows, then columns, to unit max-norm: MNA mixes siemens, ones and farads*s."""
    import scipy.sparse as sp
    A = sp.csr_matrix(A)
    r = abs(A).max(axis=1).toarray().ravel()
    r[r == 0] = 1.0
    A = sp.diags(1.0 / r) @ A
    c = abs(A).max(axis=0).toarray().ravel()
    c[c == 0] = 1.0
    return sp.csc_matrix(A @ sp.diags(1.0 / c))


def _equilibrate_dense(A: np.ndarray) -> np.ndarray:
    """:func:`_equilibrate` on a dense array: the same products, entry by entry."""
    r = np.abs(A).max(axis=1)
    r[r == 0] = 1.0
    A = A * (1.0 / r)[:, None]
    c = np.abs(A).max(axis=0)
    c[c == 0] = 1.0
    return A * (1.0 / c)[None, :]


def diagnose(system: System, s: complex) -> Singularity:
    """Explain a singular MNA matrix at complex frequency s.

    First the structural rank: a maximum bipartite matching of equations to
    unknowns over the nonzero pattern (an unmatched unknown cannot be
    determined, whatever the values). If the pattern has full rank the matrix
    is numerically singular: the null vectors of the (equilibrated) matrix
    from a dense SVD name the unknowns and equations involved.

    References
    ----------
    I. S. Duff, "On algorithms for obtaining a maximum transversal", ACM Trans.
    Math. Software 7(3), 1981 (structural rank by matching), from memory.
    G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., section 2.4
    (the SVD and numerical rank), from memory.

    Examples
    --------
    >>> from solver.circuit.elements import Resistor, CurrentSource
    >>> bad = assemble([Resistor("R1", ("a", "b"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)], {"0"})
    >>> diagnose(bad, 0).undetermined
    ['v(a)', 'v(b)']
    """
    import scipy.sparse as sp
    from scipy.sparse.csgraph import maximum_bipartite_matching, structural_rank
    names = system.stamper.unknown_names()
    n = system.stamper.size
    if n == 0:
        return Singularity([], [], False, 0, 0)
    A = _equilibrate(system.matrix(s))
    # the structure is what the stamps wrote, before values that cancel are summed (a numeric
    # cancellation is found by the SVD below, and named as such)
    st = system.stamper
    trip = [(r, c) for r, c, v in st._g if v != 0] + ([(r, c) for r, c, v in st._c if v != 0] if s != 0 else [])
    rows = np.fromiter((t[0] for t in trip), dtype=np.int64, count=len(trip))
    cols = np.fromiter((t[1] for t in trip), dtype=np.int64, count=len(trip))
    pattern = sp.csr_matrix((np.ones(len(trip)), (rows, cols)), shape=(n, n))  # rows = equations
    pattern.sum_duplicates()
    rank = int(structural_rank(pattern))
    if rank < n:
        col_of_row = maximum_bipartite_matching(pattern, perm_type="column")  # eq -> unknown
        row_of_col = maximum_bipartite_matching(pattern, perm_type="row")     # unknown -> eq
        redundant = [names[i] for i in range(n) if col_of_row[i] < 0]
        undetermined = [names[j] for j in range(n) if row_of_col[j] < 0]
        return Singularity(undetermined, redundant, True, rank, n)
    if n > DENSE_LIMIT:
        return _sparse_null(A, names)
    import scipy.linalg as sla
    M = A.toarray()
    U, sv, Vh = sla.svd(M)
    tol = sv[0] * n * np.finfo(float).eps * 1e3 if sv.size else 0.0
    null = sv <= max(tol, 1e-13 * (sv[0] if sv.size else 1.0))
    k = int(null.sum())
    if k == 0:  # pivots tiny but not zero: name the weakest direction
        null[-1] = True
        k = 1
    V = np.abs(Vh[null, :]).max(axis=0)
    W = np.abs(U[:, null]).max(axis=1)
    undetermined = [names[j] for j in np.flatnonzero(V > 0.1 * V.max())]
    redundant = [names[i] for i in np.flatnonzero(W > 0.1 * W.max())]
    return Singularity(undetermined, redundant, False, n - k, n)


def _sparse_null(A: sp.csc_matrix, names: list[str]) -> Singularity:
    """The weakest right and left directions of a large equilibrated matrix by inverse
    iteration: a few solves with one sparse LU of A (shifted off zero when A is exactly
    singular), which amplify the null-space components of a random start.

    References
    ----------
    G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., section 8.2.2 (inverse
    iteration), from memory.
    """
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla
    n = A.shape[0]
    A = sp.csc_matrix(A, dtype=complex)
    lu = None
    with np.errstate(all="ignore"):
        for shift in (0.0, 1e-10, 1e-7):  # entries are O(1) after equilibration
            try:
                lu = spla.splu(sp.csc_matrix(A + shift * sp.identity(n, format="csc")))
                break
            except RuntimeError:
                continue
    if lu is None:
        return Singularity([], [], False, n - 1, n, estimated=True)
    rng = np.random.default_rng(0)  # repeatable messages
    found = []
    for trans in ("N", "H"):
        x = rng.standard_normal(n) + 0j
        with np.errstate(all="ignore"):
            for _ in range(4):
                x = lu.solve(x, trans=trans)
                x /= np.linalg.norm(x) or 1.0
        x = np.abs(np.nan_to_num(x))
        found.append([names[j] for j in np.flatnonzero(x > 0.1 * x.max())] if x.max() > 0 else [])
    return Singularity(found[0], found[1], False, n - 1, n, estimated=True)


def condition_estimate(system: System, s: complex) -> float:
    """1-norm condition estimate of the equilibrated matrix at s (inf when singular).

    Uses Higham's block 1-norm estimator (scipy.sparse.linalg.onenormest) on
    A and on A^-1 applied through one sparse LU factorisation, so the cost is a
    handful of triangular solves, not an inverse.

    References
    ----------
    N. J. Higham, F. Tisseur, "A block algorithm for matrix 1-norm estimation",
    SIAM J. Matrix Anal. Appl. 21(4), 2000 (from memory).

    Examples
    --------
    >>> from solver.circuit.elements import Resistor, CurrentSource
    >>> ok = assemble([Resistor("R1", ("a", "0"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)], {"0"})
    >>> condition_estimate(ok, 0)
    1.0
    """
    n = system.stamper.size
    if n == 0:
        return 1.0
    if n <= EXACT_COND_LIMIT:
        # small and well conditioned: the same exact 1-norm condition number of the same
        # equilibrated matrix, from dense arrays without importing scipy. A nonsingular matrix
        # this far from singular cannot give an exactly zero pivot in the sparse LU below
        # (backward stability of LU with partial pivoting: Golub, Van Loan, Matrix
        # Computations, 4th ed., section 3.4.6, from memory), so the result is the same; near
        # singularity the sparse route decides, exactly as before.
        Ad = _equilibrate_dense(system.dense_matrix(s))
        if np.all(np.isfinite(Ad)):
            with np.errstate(all="ignore"):
                cond = float(np.linalg.cond(Ad, 1))
            if cond <= DENSE_COND_TRUST:
                return cond
    import scipy.sparse.linalg as spla
    A = _equilibrate(system.matrix(s)).astype(complex)
    try:
        with np.errstate(all="ignore"):
            lu = spla.splu(A)
    except RuntimeError:
        return float("inf")
    if n <= EXACT_COND_LIMIT:  # small: the exact 1-norm condition number is cheap and repeatable
        return float(np.linalg.cond(A.toarray(), 1)) if np.all(np.isfinite(A.data)) else float("inf")
    inv = spla.LinearOperator((n, n), matvec=lu.solve, rmatvec=lambda x: lu.solve(x, trans="H"),
                              dtype=complex)
    # the estimator draws random +-1 columns from numpy's global generator: seed it for the
    # call so the same netlist always gives the same warning, and restore the caller's state
    state = np.random.get_state()
    try:
        np.random.seed(20260)
        with np.errstate(all="ignore"):
            est = spla.onenormest(A) * spla.onenormest(inv)
    finally:
        np.random.set_state(state)
    return float(est) if np.isfinite(est) else float("inf")
