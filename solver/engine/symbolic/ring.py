"""Multivariate polynomials over Q behind one small interface.

python-flint's ``fmpq_mpoly`` is used when it is installed (measured an order of
magnitude faster than the pure-Python fallback on the cascade benchmark, see
tests/bench/bench_symbolic.py); otherwise sympy's sparse ``PolyRing``. Both
element types support ``+ - *``, equality with 0 and exact division, so the
engine only needs :class:`Ring` for construction and conversion.

References
----------
W. Hart et al., FLINT: Fast Library for Number Theory, ``fmpq_mpoly`` module.
"""
from __future__ import annotations

from fractions import Fraction


def exact_fraction(x: float) -> Fraction:
    """The float ``x`` as an exact fraction of its shortest decimal form (4.7e3 -> 4700).

    The shortest repr round-trips, so ``float(exact_fraction(x)) == x``.

    Examples
    --------
    >>> exact_fraction(0.1)
    Fraction(1, 10)
    """
    return Fraction(repr(float(x)))  # trusted: repr of a float the program holds, not user text


#: None: flint when installed; "sympy" forces the fallback (tests use it to cover both)
DEFAULT_BACKEND: str | None = None


def have_flint() -> bool:
    try:
        import flint  # noqa: F401
    except ImportError:
        return False
    return True


class Ring:
    """Q[x1..xn] with generator names ``names``.

    Parameters
    ----------
    names : sequence of str
    backend : "flint" | "sympy" | None
        None picks flint when it is installed.

    Examples
    --------
    >>> R = Ring(["a", "b"])
    >>> a, b = R.gens
    >>> R.to_dict((a + b) * (a - b)) == {(2, 0): 1, (0, 2): -1}
    True
    """

    def __init__(self, names, backend: str | None = None):
        self.names = tuple(names)
        if backend is None:
            backend = DEFAULT_BACKEND or ("flint" if have_flint() else "sympy")
        self.backend = backend
        if backend == "flint":
            import flint
            self._ctx = flint.fmpq_mpoly_ctx.get(self.names or ("_",), "lex")
            gens = self._ctx.gens()
            self.gens = tuple(gens[: len(self.names)])
            self.zero = self._ctx.from_dict({})
            self.one = self.zero + 1
            self._nvars = max(1, len(self.names))
        else:
            from sympy import QQ
            from sympy.polys.rings import PolyRing
            self._ring = PolyRing(self.names or ("_",), QQ)
            self.gens = tuple(self._ring.gens[: len(self.names)])
            self.zero = self._ring.zero
            self.one = self._ring.one
            self._nvars = max(1, len(self.names))

    def const(self, q: Fraction | int):
        """A constant polynomial."""
        q = Fraction(q)
        if self.backend == "flint":
            import flint
            return self.zero + flint.fmpq(q.numerator, q.denominator)
        from sympy import QQ
        return self._ring(QQ(q.numerator, q.denominator))

    def from_dict(self, d: dict):
        """From {exponent tuple: Fraction} (tuples of length len(names))."""
        pad = self._nvars - len(self.names)
        if self.backend == "flint":
            import flint
            return self._ctx.from_dict({tuple(m) + (0,) * pad: flint.fmpq(c.numerator, c.denominator)
                                        for m, c in d.items() if c})
        from sympy import QQ
        return self._ring.from_dict({tuple(m) + (0,) * pad: QQ(c.numerator, c.denominator)
                                     for m, c in d.items() if c})

    def terms(self, p) -> tuple[list, list]:
        """(exponent tuples, Fraction coefficients) of a polynomial, in matching order."""
        n = len(self.names)
        if self.backend == "flint":
            exps = [tuple(map(int, m[:n])) for m in p.monoms()]
            coeffs = [Fraction(int(c.p), int(c.q)) for c in p.coeffs()]
            return exps, coeffs
        items = list(p.items())
        return ([tuple(m[:n]) for m, _ in items],
                [Fraction(int(c.numerator), int(c.denominator)) for _, c in items])

    def to_dict(self, p) -> dict:
        """{exponent tuple: Fraction} of a polynomial."""
        exps, coeffs = self.terms(p)
        return dict(zip(exps, coeffs))

    def gcd(self, a, b):
        return a.gcd(b)

    def exquo(self, a, b):
        """Exact quotient a/b (b divides a)."""
        if self.backend == "flint":
            return a / b
        return a.exquo(b)

    def evaluate(self, p, point) -> complex:
        """Numeric value at ``point`` (one complex number per generator), in floating point."""
        return evaluate_dict(self.to_dict(p), point)


def evaluate_dict(d: dict, point) -> complex:
    """Value of a polynomial given as {exponent tuple: coefficient} at one complex point per generator."""
    total = 0j
    for m, c in d.items():
        t = complex(float(c))
        for x, e in zip(point, m):
            if e:
                t *= x ** e
        total += t
    return total
