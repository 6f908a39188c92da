"""The sparse symbolic solve: Cramer's rule with determinants by memoised Laplace expansion.

An MNA matrix of an amplifier has a few entries per row, so expanding the
determinant row by row and memoising every minor by (row, set of columns left)
visits only the minors that the sparsity pattern allows; a reverse
Cuthill-McKee ordering first narrows the band, which keeps that set small.
Expansion is division-free, so over a polynomial ring every minor is exact.
Two result forms share the recursion:

* *exact*   -- minors are expanded polynomials (python-flint ``fmpq_mpoly`` when
  available): a quantity is a ratio of two expanded polynomials;
* *compact* -- minors are nested sympy sums of products, sharing subexpressions,
  never expanded: the size grows with the number of minors, not of terms.

References
----------
J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*, 2nd ed.,
ch. 2 (MNA) and ch. 6 on symbolic analysis (from memory); E. Cuthill, J. McKee,
"Reducing the bandwidth of sparse symmetric matrices", ACM national conference, 1969.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from solver.engine.symbolic.ring import Ring, evaluate_dict# noqa: F401  (re-exported for ports and claims)
from solver.engine.symbolic.stamper import S_NAME


def rcm_order(n: int, pattern) -> list[int]:
    """Reverse Cuthill-McKee order of the symmetrised pattern (list of new -> old index).

    Breadth-first from a node of least degree in each connected part, neighbours in
    order of increasing degree, then reversed (Cuthill and McKee, 1969). Written here
    so that the symbolic path needs no scipy import (about half a second at start-up).
    """
    adj = [set() for _ in range(n)]
    for r, c in pattern:
        if r != c:
            adj[r].add(c)
            adj[c].add(r)
    deg = [len(a) for a in adj]
    seen = [False] * n
    order: list[int] = []
    for start in sorted(range(n), key=lambda i: (deg[i], i)):
        if seen[start]:
            continue
        seen[start] = True
        head = len(order)
        order.append(start)
        while head < len(order):
            v = order[head]
            head += 1
            for w in sorted(adj[v], key=lambda i: (deg[i], i)):
                if not seen[w]:
                    seen[w] = True
                    order.append(w)
    return order[::-1]


class LaplaceDeterminants:
    """Determinants and cofactors of one sparse matrix, with one memo for all of them.

    Parameters
    ----------
    n : int
        Size.
    entries : dict
        {(row, col): entry}, entries non-zero.
    zero, one : domain constants
    add, mul, neg : callables of the domain (defaults: Python operators)

    Examples
    --------
    >>> L = LaplaceDeterminants(2, {(0, 0): 2, (0, 1): 1, (1, 0): 1, (1, 1): 3}, 0, 1)
    >>> L.det(), L.cofactor(0, 1)
    (5, -1)
    """

    def __init__(self, n, entries, zero, one, order=None):
        self.n = n
        self.zero, self.one = zero, one
        self.order = list(order) if order is not None else rcm_order(n, entries.keys())
        self.pos = {old: new for new, old in enumerate(self.order)}
        self.rows = [dict() for _ in range(n)]
        for (r, c), v in entries.items():
            self.rows[self.pos[r]][self.pos[c]] = v
        self.memo: dict = {}

    def _det(self, i: int, mask: int, skip: frozenset):
        while i in skip:
            skip = skip - {i}
            i += 1
        if mask == 0:
            return self.one
        key = (i, mask, skip)
        hit = self.memo.get(key)
        if hit is not None:
            return hit
        total = None
        for c, a in self.rows[i].items():
            if not (mask >> c) & 1:
                continue
            sub = self._det(i + 1, mask & ~(1 << c), skip)
            if sub is self.zero or sub == 0:
                continue
            term = a * sub
            if bin(mask & ((1 << c) - 1)).count("1") & 1:
                term = -term
            total = term if total is None else total + term
        total = self.zero if total is None else total
        self.memo[key] = total
        return total

    def det(self):
        return self._det(0, (1 << self.n) - 1, frozenset())

    def cofactor(self, r: int, k: int):
        """C_rk of the original matrix: (-1)^(r+k) times the minor without row r and column k.

        A symmetric permutation maps the adjugate onto itself, so the cofactor
        is taken in the permuted matrix at (pos r, pos k).
        """
        pr, pk = self.pos[r], self.pos[k]
        sub = self._det(0, ((1 << self.n) - 1) & ~(1 << pk), frozenset({pr}))
        return -sub if (pr + pk) & 1 else sub


@dataclass
class RationalFunction:
    """num/den, both polynomials of ``ring`` (with the generators ``X`` and ``1/X``)."""

    num: object
    den: object
    ring: Ring

    def cancel(self) -> "RationalFunction":
        g = self.ring.gcd(self.num, self.den)
        if g == 0 or g == self.ring.one:
            return self
        return RationalFunction(self.ring.exquo(self.num, g), self.ring.exquo(self.den, g), self.ring)


def natural(rf: RationalFunction, symbols: list[str]):
    """Merge ``X`` and ``1/X`` into one variable: (num, den, gens) as {exponent tuple: Fraction}.

    Both sides are multiplied by X^M, M the highest power of ``1/X`` that occurs,
    so the exponents stay non-negative. gens is ``[s] + symbols``; a common
    monomial factor is divided out. Exponent arithmetic is done on numpy arrays
    (a 124,000-term denominator has millions of exponents).
    """
    import numpy as np
    R = rf.ring
    idx = {n: i for i, n in enumerate(R.names)}
    gens = [S_NAME] + list(symbols)
    parts = [R.terms(rf.num), R.terms(rf.den)]
    arrays = [np.array(e, dtype=np.int64).reshape(len(e), len(R.names)) for e, _ in parts]
    both = np.vstack(arrays)
    cols = []
    for x in symbols:
        a, b = idx.get(x), idx.get("1/" + x)
        cols.append((a, b, int(both[:, b].max()) if b is not None and len(both) else 0))

    def conv(E):
        out = np.zeros((E.shape[0], len(gens)), dtype=np.int64)
        out[:, 0] = E[:, idx[S_NAME]]
        for j, (a, b, top) in enumerate(cols, start=1):
            col = np.full(E.shape[0], top, dtype=np.int64)
            if a is not None:
                col += E[:, a]
            if b is not None:
                col -= E[:, b]
            out[:, j] = col
        return out

    nat = [conv(E) for E in arrays]
    if all(len(E) for E in nat):
        low = np.minimum(nat[0].min(axis=0), nat[1].min(axis=0))
        nat = [E - low for E in nat]
    dicts = []
    for E, (_, coeffs) in zip(nat, parts):
        d: dict = {}
        for m, c in zip(map(tuple, E.tolist()), coeffs):
            d[m] = d.get(m, 0) + c
        dicts.append({k: v for k, v in d.items() if v})
    n2, d2 = dicts
    if sum(1 for c in d2.values() if c < 0) * 2 > len(d2):  # write the denominator mostly positive
        n2 = {m: -c for m, c in n2.items()}
        d2 = {m: -c for m, c in d2.items()}
    return n2, d2, gens


def symbol(name: str):
    """The sympy symbol of a circuit name; ``s`` (complex frequency) has no sign assumption.

    Every module builds its symbols here so that claims, limits and results meet.
    """
    import sympy
    return sympy.Symbol(name) if name == S_NAME else sympy.Symbol(name, positive=True)


def to_sympy(num: dict, den: dict, gens: list[str]):
    """A sympy expression num/den with symbols named ``gens`` (``s`` and circuit names)."""
    import sympy
    syms = [symbol(g) for g in gens]

    def poly(d):
        if not d:
            return sympy.Integer(0)
        return sympy.Poly.from_dict({m: sympy.Rational(c.numerator, c.denominator) for m, c in d.items()},
                                    *syms).as_expr()

    n, d = poly(num), poly(den)
    if d == 0:
        return sympy.oo if n != 0 else sympy.nan  # an open port: unbounded
    return n / d
