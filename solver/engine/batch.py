"""Stacked MNA systems: one circuit, many value sets, solved together.

A Monte Carlo run (and a tolerance corner search, and a part-value scan) solves the
same circuit with many sets of element values. :class:`BatchStamper` numbers the
unknowns once and lets every element stamp itself once, exactly as
:class:`solver.engine.mna.Stamper` does, but an element's value may be an array with
one entry per sample (``values``, by element name): every G, C and b entry becomes an
array, and :meth:`BatchStamper.stacks` returns the stacked matrices ``G[k]``, ``C[k]``,
``b[k]`` of all samples, solved by one batched LAPACK call (:func:`solve_stacked`).
The stamps are those of :mod:`solver.circuit.elements`; nothing here restates them.

:class:`DualStamper` is the same numbering with dual numbers: each value carries its
derivative with respect to the element's own value, so that ``dA/dp`` and ``db/dp`` of every
parameter come out of one stamping pass (the adjoint sensitivity of
:mod:`solver.analysis.sensitivity`).
"""
from __future__ import annotations

import numpy as np

from solver.engine.mna import Stamper


class _Lane:
    """An array of per-sample values that the stamps can multiply, negate and compare with 0."""

    __slots__ = ("a",)

    def __init__(self, a):
        self.a = a

    def __mul__(self, o):
        return _Lane(self.a * (o.a if isinstance(o, _Lane) else o))

    __rmul__ = __mul__

    def __add__(self, o):
        return _Lane(self.a + (o.a if isinstance(o, _Lane) else o))

    __radd__ = __add__

    def __neg__(self):
        return _Lane(-self.a)

    def __ne__(self, o):  # "is this entry there at all": any sample nonzero
        return bool(np.any(self.a != (o.a if isinstance(o, _Lane) else o)))

    def __eq__(self, o):
        return not self.__ne__(o)

    __hash__ = None


def _raw(v):
    return v.a if isinstance(v, _Lane) else v


class BatchStamper(Stamper):
    """Numbering and stamps of one element list, values per sample.

    Parameters
    ----------
    elements : list of Element
    ground : set of str
    values : dict
        Element name -> array of shape (n,) (or a number) replacing ``element.value``.
    n : int
        The number of samples.

    Examples
    --------
    >>> from solver.circuit.elements import Resistor, CurrentSource
    >>> els = [Resistor("R1", ("a", "0"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)]
    >>> st = BatchStamper(els, {"0"}, {"R1": np.array([1e3, 2e3])}, 2).stamp_all()
    >>> G, C, b = st.stacks()
    >>> solve_stacked(G, b)[:, 0].real.round(6).tolist()
    [1.0, 2.0]
    """

    def __init__(self, elements, ground, values: dict, n: int):
        super().__init__(elements, ground)
        self.values = values
        self.n = n

    def value(self, e):
        v = self.values.get(e.name, self.values.get(e.symbol) if e.symbol else None)  # rs || rs: by symbol
        return e.value if v is None else _Lane(np.asarray(v))

    def recip(self, e):
        v = self.values.get(e.name, self.values.get(e.symbol) if e.symbol else None)
        return 1.0 / e.value if v is None else _Lane(1.0 / np.asarray(v))

    def _summed(self, trip):
        """{flat index r*size + c: summed value (a number or an array over the samples)}."""
        m, acc = self.size, {}
        for r, c, v in trip:
            k = r * m + c
            acc[k] = acc[k] + _raw(v) if k in acc else _raw(v)
        return acc

    def _scatter(self, acc, dtype):
        n, m = self.n, self.size
        out = np.zeros((n, m * m), dtype=dtype)
        if acc:
            keys = np.fromiter(acc, dtype=np.intp, count=len(acc))
            vals = np.empty((len(acc), n), dtype=dtype)
            for i, v in enumerate(acc.values()):
                vals[i] = v
            out[:, keys] = vals.T
        return out.reshape(n, m, m)

    def matrix(self, s: complex = 0, dtype=complex) -> np.ndarray:
        """The stacked G + sC, shape (n, size, size), assembled in one scatter per entry set."""
        acc = self._summed(self._g)
        if s != 0:
            for k, v in self._summed(self._c).items():
                acc[k] = acc[k] + s * v if k in acc else s * v
        return self._scatter(acc, dtype)

    def rhs_stack(self, dtype=complex) -> np.ndarray:
        b = np.zeros((self.n, self.size), dtype=dtype)
        for r, v in self._b.items():
            b[:, r] += _raw(v)
        return b

    def stacks(self, dtype=complex):
        """(G, C, b) of shape (n, size, size), (n, size, size), (n, size)."""
        return (self._scatter(self._summed(self._g), dtype), self._scatter(self._summed(self._c), dtype),
                self.rhs_stack(dtype))


def solve_stacked(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    """x[k] = A[k]^-1 b[k] for every sample; a singular sample gives a row of nan.

    One batched LAPACK gesv call (numpy.linalg.solve); when some sample is singular the
    samples are solved one by one so that only that one is lost.
    """
    if A.shape[1] == 0:
        return np.zeros(b.shape, dtype=np.result_type(A, b))
    with np.errstate(all="ignore"):
        try:
            return np.linalg.solve(A, b[..., None])[..., 0]
        except np.linalg.LinAlgError:
            out = np.full(b.shape, np.nan, dtype=np.result_type(A, b))
            for k in range(A.shape[0]):
                try:
                    out[k] = np.linalg.solve(A[k], b[k])
                except np.linalg.LinAlgError:
                    pass
            return out


class _Dual:
    """A value and its derivatives by parameter name: {name: d(value)/d(parameter)}."""

    __slots__ = ("v", "d")

    def __init__(self, v, d):
        self.v, self.d = v, d

    def __mul__(self, o):
        if isinstance(o, _Dual):
            d = {k: x * o.v for k, x in self.d.items()}
            for k, x in o.d.items():
                d[k] = d.get(k, 0) + self.v * x
            return _Dual(self.v * o.v, d)
        return _Dual(self.v * o, {k: x * o for k, x in self.d.items()})

    __rmul__ = __mul__

    def __neg__(self):
        return _Dual(-self.v, {k: -x for k, x in self.d.items()})

    def __ne__(self, o):
        return self.v != (o.v if isinstance(o, _Dual) else o) or bool(self.d)

    def __eq__(self, o):
        return not self.__ne__(o)

    __hash__ = None


class DualStamper(Stamper):
    """The stamps with each parameter's derivative: ``dG[name]``, ``dC[name]``, ``db[name]``
    as lists of (row, column, derivative) and (row, derivative).

    ``params`` maps an element name to its parameter name (the element's symbol); elements
    not in it are fixed numbers.
    """

    def __init__(self, elements, ground, params: dict[str, str]):
        super().__init__(elements, ground)
        self.params = params
        self.dG: dict[str, list] = {}
        self.dC: dict[str, list] = {}
        self.db: dict[str, list] = {}

    def value(self, e):
        p = self.params.get(e.name)
        return e.value if p is None else _Dual(e.value, {p: 1.0})

    def recip(self, e):
        p = self.params.get(e.name)
        return 1.0 / e.value if p is None else _Dual(1.0 / e.value, {p: -1.0 / (e.value * e.value)})

    def _split(self, store, dstore, r, c, v):
        if isinstance(v, _Dual):
            store.append((r, c, v.v))
            for k, x in v.d.items():
                dstore.setdefault(k, []).append((r, c, x))
        else:
            store.append((r, c, v))

    def g(self, r, c, v):
        if r is not None and c is not None:
            self._split(self._g, self.dG, r, c, v)

    def c(self, r, c, v):
        if r is not None and c is not None:
            self._split(self._c, self.dC, r, c, v)

    def rhs(self, r, v):
        if r is not None:
            if isinstance(v, _Dual):
                for k, x in v.d.items():
                    self.db.setdefault(k, []).append((r, x))
                v = v.v
            self._b[r] = self._b.get(r, 0) + v
