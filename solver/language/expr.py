"""Expression trees of the netlist language and their numeric evaluation.

Expressions are built by :mod:`solver.language.parse` from the parse tree and evaluated
here by our own code: nothing the user writes ever reaches Python's ``eval``.
Every value carries a dimension (:mod:`solver.language.units`); a bare number is
"free": it acts as dimensionless in ``* / ^`` and takes the unit of the other
side in ``+ - ||``, so ``2*RC`` is in ohms and ``RC + 100`` is too.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Callable

from solver.diagnostics import Loc, error
from solver.language.units import ONE, Dim, dim_name


@dataclass(slots=True, unsafe_hash=True)
class Num:
    value: float
    dim: Dim | None
    loc: Loc
    text: str


@dataclass(slots=True, unsafe_hash=True)
class Ref:
    parts: tuple[str, ...]
    loc: Loc

    @property
    def name(self) -> str:
        return ".".join(self.parts)


@dataclass(slots=True, unsafe_hash=True)
class Unary:
    op: str
    operand: "Expr"
    loc: Loc


@dataclass(slots=True, unsafe_hash=True)
class Binary:
    op: str  # + - * / ^ ||
    left: "Expr"
    right: "Expr"
    loc: Loc


@dataclass(slots=True, unsafe_hash=True)
class Call:
    func: str
    arg: "Expr"
    loc: Loc


Expr = Num | Ref | Unary | Binary | Call
FUNCTIONS = ("sqrt", "exp", "ln", "log10", "abs")
CONSTANTS = {"pi": math.pi}


@dataclass(frozen=True)
class Value:
    """A real value with its dimension (None: a free, bare number)."""

    x: float
    dim: Dim | None = None


def parallel(a, b):
    """a || b = a*b/(a+b), with an infinite branch leaving the other one."""
    if a == math.inf:
        return b
    if b == math.inf:
        return a
    return a * b / (a + b)


def refs(e: Expr):
    """Every :class:`Ref` in an expression, left to right."""
    if isinstance(e, Ref):
        yield e
    elif isinstance(e, Unary):
        yield from refs(e.operand)
    elif isinstance(e, Binary):
        yield from refs(e.left)
        yield from refs(e.right)
    elif isinstance(e, Call):
        yield from refs(e.arg)


def depth(e: Expr) -> int:
    """Nesting depth of an expression tree (a literal or a name is 1).

    Iterative, so that a tree deeper than Python's recursion limit is measured
    (and rejected by the parser's limit) instead of crashing.
    """
    best, todo = 0, [(e, 1)]
    while todo:
        node, d = todo.pop()
        best = max(best, d)
        if isinstance(node, Unary):
            todo.append((node.operand, d + 1))
        elif isinstance(node, Binary):
            todo.append((node.left, d + 1))
            todo.append((node.right, d + 1))
        elif isinstance(node, Call):
            todo.append((node.arg, d + 1))
    return best


def _same(op: str, a: Value, b: Value, loc: Loc) -> Dim | None:
    if a.dim is None:
        return b.dim
    if b.dim is None or a.dim == b.dim:
        return a.dim
    raise error(loc, f"'{op}' combines {dim_name(a.dim)} with {dim_name(b.dim)}")


def _scale(d: Dim | None, k) -> Dim | None:
    return None if d is None else tuple(e * k for e in d)


def _mul(a: Dim | None, b: Dim | None, sign: int) -> Dim | None:
    if a is None and b is None:
        return None
    a = a or ONE
    b = b or ONE
    return tuple(x + sign * y for x, y in zip(a, b))


def evaluate(e: Expr, lookup: Callable[[Ref], Value]) -> Value:
    """Evaluate an expression tree; ``lookup`` resolves names to values.

    Raises :class:`solver.diagnostics.InputError` for division by zero, a
    function outside its domain or a dimension mismatch, at the offending spot.

    Examples
    --------
    >>> from solver.language.parse import parse_expression
    >>> evaluate(parse_expression("2*(3k || 6k)"), lambda r: None).x
    4000.0
    """
    if isinstance(e, Num):
        return Value(e.value, e.dim)
    if isinstance(e, Ref):
        return lookup(e)
    if isinstance(e, Unary):
        v = evaluate(e.operand, lookup)
        return Value(-v.x if e.op == "-" else v.x, v.dim)
    if isinstance(e, Call):
        v = evaluate(e.arg, lookup)
        return _call(e, v)
    a = evaluate(e.left, lookup)
    b = evaluate(e.right, lookup)
    op = e.op
    try:
        if op == "+":
            return Value(a.x + b.x, _same(op, a, b, e.loc))
        if op == "-":
            return Value(a.x - b.x, _same(op, a, b, e.loc))
        if op == "||":
            d = _same(op, a, b, e.loc)
            if a.x + b.x == 0 and math.isfinite(a.x):
                raise error(e.loc, "parallel combination with a zero sum (a + b = 0)")
            return Value(parallel(a.x, b.x), d)
        if op == "*":
            return Value(a.x * b.x, _mul(a.dim, b.dim, 1))
        if op == "/":
            if b.x == 0:
                raise error(e.loc, "division by zero")
            return Value(a.x / b.x, _mul(a.dim, b.dim, -1))
        if op == "^":
            if b.dim not in (None, ONE):
                raise error(e.right.loc, f"an exponent must be a plain number, not {dim_name(b.dim)}")
            if a.x == 0 and b.x < 0:
                raise error(e.loc, "zero raised to a negative power")
            if a.x < 0 and not float(b.x).is_integer():
                raise error(e.loc, "negative base raised to a fractional power")
            k = Fraction(b.x).limit_denominator(1000)
            return Value(a.x ** b.x, _scale(a.dim, k))
    except OverflowError:
        raise error(e.loc, "number too large") from None
    raise AssertionError(op)


def _call(e: Call, v: Value) -> Value:
    f = e.func
    if f == "sqrt":
        if v.x < 0:
            raise error(e.loc, "sqrt of a negative number")
        return Value(math.sqrt(v.x), _scale(v.dim, Fraction(1, 2)))
    if f == "abs":
        return Value(abs(v.x), v.dim)
    if v.dim not in (None, ONE):
        raise error(e.arg.loc, f"{f}() needs a plain number, not {dim_name(v.dim)}")
    try:
        if f == "exp":
            return Value(math.exp(v.x), v.dim)
        if v.x <= 0:
            raise error(e.loc, f"{f}() of a number that is not positive")
        return Value(math.log(v.x) if f == "ln" else math.log10(v.x), v.dim)
    except OverflowError:
        raise error(e.loc, "number too large") from None
