"""Design-oriented forms of exact network functions, written straight from the polynomials.

Every network function is bilinear in any one element value x:
H(x) = (A*x + B)/(C*x + D0), with A, B, C, D0 free of x and themselves network
functions of the rest of the circuit. That gives, recursively,

* a series or sum form         x*(A/D0) + B/D0                (x not in the denominator);
* a parallel form              (B/(C*x)) || (B/D0)            (x not in the numerator),
                               (A*x/D0) || (A/C)              (B = 0);
* the extra-element form       (B/D0)*(1 + x/(B/A))/(1 + x/(D0/C)), with x = 0 as reference,
  and its dual with x = oo as reference (A/C)*(1 + (B/A)/x)/(1 + (D0/C)/x);
* a product of independent parts, when numerator and denominator factor into pieces
  that share no symbol (flint factors the engine's own polynomials).

Each quotient is printed the same way, memoised on (numerator, denominator). The
search is greedy: at each step only the elements whose split shortens the expanded
size most are followed, and above a size bound a ratio is printed expanded. The
shortest candidate, counted in symbol occurrences, wins; device symbols
(Q1.beta = Q1.gm*Q1.rpi, Q1.re = Q1.rpi/(Q1.beta + 1), Q1.alpha = Q1.beta/(Q1.beta + 1))
are tried as substitutions and kept when they shorten the result.

Big results are written with *where* lines: every sub-expression used more than
once (a shared sub-function here, a shared Laplace minor in :func:`compact_form`)
is defined once, by name, and used below. No sympy import on any of these paths.

References
----------
R. D. Middlebrook, "Null double injection and the extra element theorem", IEEE Trans.
Education 32(3), 1989. V. Vorpérian, *Fast Analytical Techniques for Electrical and
Electronic Circuits*, Cambridge University Press, 2002. C.-J. R. Shi, X.-D. Tan,
"Canonical symbolic analysis of large analog circuits with determinant decision
diagrams", IEEE Trans. CAD 19(1), 2000 (sharing of minors).
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from math import gcd

from solver.engine.symbolic.stamper import S_NAME

#: a ratio with more expanded terms than this is not split further (the size bound)
MAX_SPLIT_TERMS = 240
#: results with more expanded terms than this are written from shared minors (derive)
DESIGN_TERMS = 60
#: flint factorisation is tried up to this many terms
MAX_FACTOR_TERMS = 120
#: polynomials up to this many terms try two symbols to nest on, longer ones the most frequent
HORNER_WIDE_TERMS = 16
#: wall-clock guard of one write_form (seconds): past it, what is left is printed expanded
SECONDS = 2.0
#: elements followed at each step of the greedy search
BEAM = 2
#: ratios split per result (all variants together): a deterministic bound on the search time
WORK = 600
#: above this many symbol occurrences, sub-expressions used twice get where lines
WHERE_LIMIT = 60
#: the expanded ratio in the JSON "sympy" field is written up to this many terms
SYMPY_MAX_TERMS = 20000


# --- expression nodes --------------------------------------------------------------------------
class Node:
    """One node of a printed form: ``sym``, ``num``, ``add``, ``mul``, ``div``, ``par``, ``pow``, ``neg``.

    ``cost`` is the number of symbol occurrences when printed without where lines.
    Arithmetic operators build nodes (used as the domain of the compact Laplace expansion).
    """

    __slots__ = ("op", "args", "cost", "txt", "__weakref__")

    def __init__(self, op, args, cost):
        self.op, self.args, self.cost = op, args, cost
        self.txt = None  # the text without where names, made once

    # the compact expansion compares with 0 and combines with + - * /
    def __eq__(self, other):
        if isinstance(other, (int, Fraction)) and not isinstance(other, bool):
            return self.op == "num" and self.args[0] == other
        return self is other

    __hash__ = object.__hash__

    # operators keep their operands as they are (a shared minor stays one node, never copied)
    def __add__(self, o):
        return _add2(self, _node(o))

    __radd__ = __add__

    def __sub__(self, o):
        return _add2(self, neg(_node(o)))

    def __rsub__(self, o):
        return _add2(_node(o), neg(self))

    def __neg__(self):
        return neg(self)

    def __mul__(self, o):
        return _mul2(self, _node(o))

    __rmul__ = __mul__

    def __truediv__(self, o):
        return div(self, _node(o))

    def __repr__(self):
        return f"Node({text(self)!r})"


def _add2(a: Node, b: Node) -> Node:
    if _is_num(a, 0):
        return b
    if _is_num(b, 0):
        return a
    return Node("add", (a, b), a.cost + b.cost)


def _mul2(a: Node, b: Node) -> Node:
    if _is_num(a, 0) or _is_num(b, 0):
        return ZERO
    if _is_num(a, 1):
        return b
    if _is_num(b, 1):
        return a
    if a.op == "neg" or b.op == "neg":
        return neg(_mul2(a.args[0] if a.op == "neg" else a, b.args[0] if b.op == "neg" else b)) \
            if (a.op == "neg") != (b.op == "neg") else _mul2(a.args[0], b.args[0])
    if b.op == "num" and a.op != "num":
        a, b = b, a
    return Node("mul", (a, b), a.cost + b.cost)


def _node(x):
    return x if isinstance(x, Node) else num(Fraction(x))


def sym(name: str) -> Node:
    return Node("sym", (name,), 1)


def num(q) -> Node:
    return Node("num", (Fraction(q),), 0)


ZERO, ONE = num(0), num(1)


def _nice(q: Fraction) -> bool:
    """A coefficient printed exactly (small fraction); others print as 6-digit decimals."""
    return q.denominator <= 10**4 and abs(q.numerator) <= 10**9


def _order(n: Node):
    """Factors and branches: symbols first, by name, then compound parts as they came."""
    return (0, n.args[0]) if n.op == "sym" else (1, "") if n.op != "pow" or n.args[0].op != "sym" \
        else (0, n.args[0].args[0])


def _is_num(n, v=None):
    return n.op == "num" and (v is None or n.args[0] == v)


def neg(a: Node) -> Node:
    if a.op == "num":
        return num(-a.args[0])
    if a.op == "neg":
        return a.args[0]
    return Node("neg", (a,), a.cost)


def add(*terms) -> Node:
    flat = []
    for t in terms:
        if t.op == "add":
            flat.extend(t.args)
        elif not _is_num(t, 0):
            flat.append(t)
    if not flat:
        return ZERO
    if len(flat) == 1:
        return flat[0]
    return Node("add", tuple(flat), sum(t.cost for t in flat))


def mul(*factors) -> Node:
    flat, sign, k = [], 1, Fraction(1)
    for f in factors:
        while f.op == "neg":
            sign, f = -sign, f.args[0]
        if f.op == "num":
            k *= f.args[0]
        elif f.op == "mul":
            for g in f.args:
                if g.op == "num":
                    k *= g.args[0]
                else:
                    flat.append(g)
        else:
            flat.append(f)
    if k == 0:
        return ZERO
    if k < 0:
        sign, k = -sign, -k
    if any(f.op == "div" for f in flat):  # a*(b/c) = a*b/c
        tops = [f.args[0] if f.op == "div" else f for f in flat]
        bottoms = [f.args[1] for f in flat if f.op == "div"]
        out = div(mul(num(k), *tops), mul(*bottoms))
        return neg(out) if sign < 0 else out
    flat.sort(key=_order)
    if k != 1:
        flat.insert(0, num(k))
    out = ONE if not flat else flat[0] if len(flat) == 1 else Node("mul", tuple(flat), sum(f.cost for f in flat))
    return neg(out) if sign < 0 else out


def div(a: Node, b: Node) -> Node:
    sign = 1
    while a.op == "neg":
        sign, a = -sign, a.args[0]
    while b.op == "neg":
        sign, b = -sign, b.args[0]
    if _is_num(b):
        q = b.args[0]
        if _is_num(a):
            out = num(a.args[0] / q)
        elif not _nice(q):
            out = mul(a, num(1 / q))
        else:
            out = mul(a, num(q.denominator)) if q.denominator != 1 else a
            if q.numerator != 1:
                out = Node("div", (out, num(q.numerator)), out.cost)
    elif b.op == "div":  # a/(p/q) = a*q/p
        out = div(mul(a, b.args[1]), b.args[0])
    elif a.op == "div":  # (p/q)/b = p/(q*b)
        out = div(a.args[0], mul(a.args[1], b))
    else:
        out = Node("div", (a, b), a.cost + b.cost)
    return neg(out) if sign < 0 else out


def par(*branches) -> Node:
    flat = []
    for b in branches:
        flat.extend(b.args if b.op == "par" else (b,))
    if len(flat) == 1:
        return flat[0]
    if all(b.op == "neg" for b in flat):  # (-a) || (-b) = -(a || b)
        return neg(par(*[b.args[0] for b in flat]))
    flat.sort(key=_order)
    # a bare number as a branch reads badly (1/x || 1 is 1/(x + 1)): counted one dearer
    penalty = sum(1 for b in flat if b.op == "num")
    return Node("par", tuple(flat), sum(b.cost for b in flat) + penalty)


def power(a: Node, k: int) -> Node:
    return a if k == 1 else Node("pow", (a, k), a.cost)


def recip(a: Node) -> Node:
    return div(ONE, a)


def one_plus(x: Node, z: Node, x_over_z: bool = True) -> Node:
    """1 + x/z (or 1 + z/x with ``x_over_z`` False)."""
    return add(ONE, div(x, z) if x_over_z else div(z, x))


# --- printing ----------------------------------------------------------------------------------
_PREC = {"add": 40, "par": 45, "neg": 47, "mul": 50, "div": 50, "pow": 60, "sym": 100}


def _fmt_number(q: Fraction) -> tuple[str, int]:
    """(text, precedence) of a number; long exact fractions (from numeric symbols) as 6 digits."""
    if q.denominator > 10**4 or abs(q.numerator) > 10**9:
        t = f"{float(q):.6g}"
        return t, (47 if t.startswith("-") else 100)
    if q.denominator == 1:
        return str(q.numerator), (47 if q < 0 else 100)
    return f"{q.numerator}/{q.denominator}", (47 if q < 0 else 50)


def _prec(n: Node, names) -> int:
    if n in names:
        return 100
    if n.op == "num":
        return _fmt_number(n.args[0])[1]
    return _PREC[n.op]


def text(n: Node, names=None) -> str:
    """``n`` in the netlist expression language; nodes in ``names`` print as their name."""
    names = names or {}
    return _text(n, names, top=True)


def _wrap(n, names, need: int) -> str:
    t = _text(n, names)
    return f"({t})" if _prec(n, names) < need else t


def _text(n: Node, names, top=False) -> str:
    if not names:
        if n.txt is None:
            n.txt = _text_raw(n, names)
        return n.txt
    if not top and n in names:
        return names[n]
    return _text_raw(n, names)


def _text_raw(n: Node, names) -> str:
    op = n.op
    if op == "sym":
        return n.args[0]
    if op == "num":
        return _fmt_number(n.args[0])[0]
    if op == "neg":
        return "-" + _wrap(n.args[0], names, 50)
    if op == "add":
        out = []
        for i, t in enumerate(n.args):
            if i and t.op == "neg" and t not in names:
                out.append(" - " + _wrap(t.args[0], names, 41))
            elif i and t.op == "num" and t.args[0] < 0:
                out.append(" - " + _fmt_number(-t.args[0])[0])
            else:
                out.append((" + " if i else "") + _wrap(t, names, 40 if not i else 41))
        return "".join(out)
    if op == "par":
        return " || ".join(_wrap(b, names, 46) for b in n.args)
    if op == "mul":
        return "*".join(_wrap(f, names, 50) for f in n.args)
    if op == "div":
        return _wrap(n.args[0], names, 50) + "/" + _wrap(n.args[1], names, 51)
    if op == "pow":
        return _wrap(n.args[0], names, 61) + f"^{n.args[1]}"
    raise AssertionError(op)


def latex(n: Node, names=None) -> str:
    """LaTeX of ``n`` (``\\parallel`` for parallel, textbook symbol names)."""
    from solver.analysis.symbolic.printing import latex_name
    names = names or {}

    def wrap(m, need):
        t = go(m)
        return rf"\left({t}\right)" if _prec(m, names) < need else t

    def go(m, top=False):
        if not top and m in names:
            return names[m]
        op = m.op
        if op == "sym":
            return latex_name(m.args[0])
        if op == "num":
            q = m.args[0]
            if q.denominator > 10**4 or abs(q.numerator) > 10**9:
                return f"{float(q):.6g}"
            if q.denominator == 1:
                return str(q.numerator)
            return ("-" if q < 0 else "") + rf"\frac{{{abs(q.numerator)}}}{{{q.denominator}}}"
        if op == "neg":
            return "-" + wrap(m.args[0], 50)
        if op == "add":
            out = []
            for i, t in enumerate(m.args):
                if i and t.op == "neg" and t not in names:
                    out.append(" - " + wrap(t.args[0], 41))
                else:
                    out.append((" + " if i else "") + wrap(t, 41 if i else 40))
            return "".join(out)
        if op == "par":
            return r" \parallel ".join(wrap(b, 46) for b in m.args)
        if op == "mul":
            return r" ".join(wrap(f, 50) for f in m.args)
        if op == "div":
            return rf"\frac{{{go(m.args[0])}}}{{{go(m.args[1])}}}"
        if op == "pow":
            return wrap(m.args[0], 61) + f"^{{{m.args[1]}}}"
        raise AssertionError(op)

    return go(n, top=True)


# --- the result --------------------------------------------------------------------------------
@dataclass
class Form:
    """A printed exact result.

    Attributes
    ----------
    text : str
        The expression in the netlist expression language (uses the where names).
    where : list of (name, expression)
        Intermediate quantities in order of definition, each using symbols and earlier names.
    size : int
        Symbol occurrences (where names included) in ``text`` and every where line.
    kind : str
        "design", "compact" or "expanded".
    """

    text: str
    where: list = field(default_factory=list)
    size: int = 0
    kind: str = "design"
    node: Node | None = None
    names: dict = field(default_factory=dict)
    defs: list = field(default_factory=list)  # [(name, node)] behind ``where``
    num: dict | None = None
    den: dict | None = None
    gens: list | None = None
    expanded_terms: int | None = None  # terms of the expanded ratio (a bound when num is None)

    def latex(self) -> str:
        """LaTeX of the expression, then one ``where name = ...`` line per where line (one formula a line)."""
        if self.node is None:
            return self.text
        from solver.analysis.symbolic.printing import latex_name  # noqa: F401  (same names as plain)
        tex_names = {n: _tex_where(nm) for n, nm in self.names.items()}
        head = latex(self.node, tex_names)
        lines = [f"{_tex_where(nm)} = {latex(nd, tex_names)}" for nm, nd in self.defs]
        return head if not lines else head + "\n" + "\n".join(r"\mathrm{where}\ " + ln for ln in lines)

    @property
    def symbols(self) -> dict[str, str]:
        """{sympy name: circuit name} of the symbols of the expanded ratio."""
        if self.num is None:
            return sympy_names(sorted(node_symbols(self.node))) if self.node is not None else {}
        return sympy_names(_used_gens(self.num, self.den, self.gens))

    def sympy_text(self, max_terms: int | None = SYMPY_MAX_TERMS) -> str | None:
        """The exact expanded ratio in sympy syntax ('.' -> '_'); None when over ``max_terms`` terms."""
        if self.num is None:
            return None
        if max_terms is not None and len(self.num) + len(self.den) > max_terms:
            return None
        return sympy_ratio(self.num, self.den, self.gens)

    def where_dicts(self) -> list[dict]:
        return [{"name": n, "expression": e} for n, e in self.where]


def node_symbols(root: Node) -> set[str]:
    """Names of the symbols in a node DAG."""
    out, seen, stack = set(), set(), [root]
    while stack:
        n = stack.pop()
        if id(n) in seen:
            continue
        seen.add(id(n))
        if n.op == "sym":
            out.add(n.args[0])
        elif n.op != "num":
            stack.extend(n.args[:1] if n.op == "pow" else n.args)
    return out


def _tex_where(name: str) -> str:
    return f"{name[0]}_{{{name[1:]}}}" if len(name) > 1 else name


# --- polynomials over the engine's ring ------------------------------------------------------------
class _Poly:
    """python-flint polynomials over ``names`` (the search needs gcd, exact division, factor)."""

    def __init__(self, names):
        import flint
        self.names = list(names)
        self.n = len(self.names)
        self.ctx = flint.fmpq_mpoly_ctx.get(tuple(self.names) or ("_",), "lex")
        self.gens = self.ctx.gens()[: self.n]
        self.zero = self.ctx.from_dict({})
        self.one = self.zero + 1
        self._fmpq = flint.fmpq

    def from_dict(self, d):
        pad = max(1, self.n) - self.n
        return self.ctx.from_dict({tuple(m) + (0,) * pad: self._fmpq(c.numerator, c.denominator)
                                   for m, c in d.items() if c})

    def const(self, q: Fraction):
        return self.zero + self._fmpq(q.numerator, q.denominator)

    def terms(self, p):
        n = self.n
        return ([tuple(m[:n]) for m in p.monoms()],
                [Fraction(int(c.p), int(c.q)) for c in p.coeffs()])

    @staticmethod
    def key(p):
        return p.str()

    def factor(self, p):
        """flint's factorisation, memoised (the same pieces come back in many sub-ratios)."""
        key = p.str()
        memo = self.__dict__.setdefault("_fmemo", {})
        hit = memo.get(key)
        if hit is None:
            hit = memo[key] = p.factor()
        return hit


def flat_cost(P: _Poly, p) -> int:
    n = P.n
    return sum(sum(1 for e in m[:n] if e) for m in p.monoms())


def _content(coeffs) -> Fraction:
    """Positive rational content: gcd of numerators over lcm of denominators."""
    g, l = 0, 1
    for c in coeffs:
        g = gcd(g, c.numerator)
        l = l * c.denominator // gcd(l, c.denominator)
    return Fraction(g or 1, l)


def _mono_node(syms, m, c=Fraction(1)) -> Node:
    """c * prod(sym^e) with negative exponents below the line."""
    if not _nice(c):  # a numeric coefficient: one decimal number in front
        return mul(num(c), _mono_node(syms, m))
    top, bottom = [], []
    for i, e in enumerate(m):
        if e > 0:
            top.append(power(syms[i], e))
        elif e < 0:
            bottom.append(power(syms[i], -e))
    a = mul(num(c.numerator), *top) if top or c.numerator != 1 else ONE
    if c.denominator != 1:
        bottom.insert(0, num(c.denominator))
    return div(a, mul(*bottom)) if bottom else a


def _flat_node(syms, exps, coeffs) -> Node:
    """A polynomial written out term by term (longest terms first, subtractions last)."""
    order = sorted(range(len(exps)), key=lambda j: (-sum(1 for e in exps[j] if e), coeffs[j] < 0,
                                                   tuple(-e for e in exps[j])))
    return add(*[_mono_node(syms, exps[j], coeffs[j]) for j in order])


class _Search:
    """The memoised greedy search over bilinear splits (one per variant of the symbols)."""

    def __init__(self, P: _Poly, beam: int = BEAM, max_terms: int = MAX_SPLIT_TERMS, work=None, dims=None,
                 deadline=None):
        self.P = P
        self.dims = [dims.get(n) for n in P.names] if dims else None
        self.work = work if work is not None else [WORK]  # ratios split, shared by the variants
        self.deadline = deadline if deadline is not None else time.perf_counter() + SECONDS
        self.beam = beam
        self.max_terms = max_terms
        self.memo: dict = {}
        self.pmemo: dict = {}
        self.nmemo: dict = {}
        self.syms = [sym(n) for n in P.names]
        self.zero = P.zero
        self.one = P.one

    # -- helpers
    def split(self, p, i):
        """(coefficient of x_i, rest) when p has degree <= 1 in x_i, else None."""
        deg = p.degrees()[i] if p != 0 else 0
        if deg == 0:
            return self.zero, p
        if deg > 1:
            return None
        return p.derivative(i), p.subs({i: 0})

    def normal(self, N, D):
        """(k, N1, D1): N/D = k*N1/D1 with the gcd cancelled and N1, D1 monic."""
        key = (N.str(), D.str())
        hit = self.nmemo.get(key)
        if hit is not None:
            return hit
        g = N.gcd(D)
        if not g.is_one() and not g.is_zero():
            N, D = N / g, D / g
        cn, cd = N.leading_coefficient(), D.leading_coefficient()
        k = Fraction(int(cn.p), int(cn.q)) / Fraction(int(cd.p), int(cd.q))
        out = (k, N / cn, D / cd)
        self.nmemo[key] = out
        return out

    # -- polynomials
    def poly(self, p) -> Node:
        """A polynomial: expanded, with common factors pulled out, Horner on a symbol, or factored."""
        key = self.P.key(p)
        hit = self.pmemo.get(key)
        if hit is not None:
            return hit
        out = self._poly(p)
        self.pmemo[key] = out
        return out

    def _mono(self, m, c=Fraction(1)) -> Node:
        return _mono_node(self.syms, m, c)

    def _flat(self, exps, coeffs) -> Node:
        return _flat_node(self.syms, exps, coeffs)

    def _poly(self, p) -> Node:
        exps, coeffs = self.P.terms(p)
        if not exps:
            return ZERO
        if len(exps) == 1:
            return self._mono(exps[0], coeffs[0])
        k = _content(coeffs)
        if not _nice(k) or not all(_nice(c) for c in coeffs):
            k = max((abs(c) for c in coeffs))  # numeric symbols: the largest coefficient 1, not a tiny content
        negative = sum(1 for c in coeffs if c < 0) * 2
        if negative > len(coeffs) or (negative == len(coeffs) and any(
                c < 0 and not any(m) for m, c in zip(exps, coeffs))):  # 1 - alpha, not alpha - 1
            k = -k
        low = tuple(min(m[i] for m in exps) for i in range(self.P.n))
        if k != 1 or any(low):
            mono = self.P.from_dict({low: Fraction(1)})
            inner = (p / mono) * self.P.const(1 / k)
            return mul(self._mono(low, k), self.poly(inner))
        best = self._flat(exps, coeffs)
        cands = []
        if len(exps) <= MAX_FACTOR_TERMS:
            c, fs = self.P.factor(p)
            if len(fs) > 1 or (fs and fs[0][1] > 1):
                cands.append(mul(num(_fraction(c)), *[power(self.poly(f), int(e)) for f, e in fs]))
        counts = [0] * self.P.n
        for m in exps:
            for i, e in enumerate(m):
                if e:
                    counts[i] += 1
        order = sorted((i for i in range(self.P.n) if counts[i] >= 2), key=lambda i: -counts[i])
        for i in order[: (self.beam if len(exps) <= HORNER_WIDE_TERMS else 1)]:
            a, b = {}, {}
            for m, c in zip(exps, coeffs):
                if m[i]:
                    a[m[:i] + (m[i] - 1,) + m[i + 1:]] = c
                else:
                    b[m] = c
            A, B = self.P.from_dict(a), self.P.from_dict(b)
            cands.append(add(mul(self.syms[i], self.poly(A)), self.poly(B)))
        for cand in cands:
            if _better(cand, best):
                best = cand
        return best

    # -- ratios
    def ratio(self, N, D) -> Node:
        """N/D written as short as the greedy search finds."""
        if N == 0:
            return ZERO
        k, N, D = self.normal(N, D)
        key = (self.P.key(N), self.P.key(D))
        hit = self.memo.get(key)
        if hit is None:
            hit = self._ratio(N, D)
            self.memo[key] = hit
        return mul(num(k), hit) if k != 1 else hit

    def _ratio(self, N, D) -> Node:
        if D == self.one:
            return self.poly(N)
        best = div(self.poly(N), self.poly(D))
        if len(N) + len(D) > self.max_terms or self.work[0] <= 0:
            return best
        if time.perf_counter() > self.deadline:
            self.work[0] = 0
            return best
        self.work[0] -= 1
        if len(D) == 1:  # a sum over a monomial, e.g. (RE + RL)/(RE*RL) = 1/(RE || RL)
            if len(N) > 1:
                for cand in [recip(self.ratio(D, N))] + self._products(N, D):
                    if _better(cand, best):
                        best = cand
            return best
        for cand in self._products(N, D):
            if _better(cand, best):
                best = cand
        rest = D - N
        if rest != 0 and len(rest) < len(D):  # a divider: N/(N + W) = 1/(1 + W/N)
            w = self.ratio(rest, N)
            cand = div(ONE, add(ONE, w))
            if w.op == "div" and w.args[1].cost <= 2:  # onto a short branch: Z/(Z + W')
                z = w.args[1]
                cand = div(z, add(z, w.args[0]))
            if _better(cand, best):
                best = cand
        scored = []
        for i in range(self.P.n):
            sN, sD = self.split(N, i), self.split(D, i)
            if sN is None or sD is None:
                continue
            A, B = sN
            C, D0 = sD
            if A == 0 and C == 0:
                continue
            parts = self._parts(i, A, B, C, D0)
            if not parts:
                continue
            est = sum(self._est(n, d) for builder in parts for n, d in builder[1])
            scored.append((est, i, parts))
        scored.sort(key=lambda t: t[0])
        for _, i, parts in scored[: self.beam]:
            for build, subs in parts:
                cand = build(*[self.ratio(n, d) for n, d in subs])
                if _better(cand, best):
                    best = cand
        return best

    def _est(self, n, d) -> int:
        if n == 0:
            return 0
        return flat_cost(self.P, n) + flat_cost(self.P, d)  # before cancelling: cheap, and a fair guide

    def _dim(self, p):
        """Dimension (ohm, second exponents) of a homogeneous polynomial, None when unknown."""
        if self.dims is None or p == 0:
            return None
        m = p.monoms()[0]
        d0 = d1 = 0
        for e, d in zip(m, self.dims):
            if e:
                if d is None:
                    return None
                d0 += e * d[0]
                d1 += e * d[1]
        return d0, d1

    def _impedance(self, N, D) -> bool:
        """Whether N/D is an impedance (always True when dimensions are not known)."""
        dn, dd = self._dim(N), self._dim(D)
        if dn is None or dd is None:
            return self.dims is None or dn is None or dd is None
        return (dn[0] - dd[0], dn[1] - dd[1]) == (1, 0)

    def _parts(self, i, A, B, C, D0):
        """Candidate forms for the split on x_i: [(builder, [(num, den), ...])]."""
        x = self.syms[i]
        X = self.P.gens[i]
        out = []
        # parallel forms only for impedances: x || y of two gains or admittances is not what it reads
        Z = self._impedance(A * X + B, C * X + D0)
        if C == 0:  # x only in the numerator: a sum (series) form
            if B == 0:
                out.append((lambda h: mul(x, h), [(A, D0)]))
            else:
                out.append((lambda h1, h2: add(mul(x, h1), h2), [(A, D0), (B, D0)]))
        elif A == 0:  # x only in the denominator: parallel, divider
            if D0 == 0:
                out.append((lambda h: div(h, x), [(B, C)]))
            else:
                if Z:
                    out.append((lambda h1, h2: par(h1, h2), [(B, C * X), (B, D0)]))
                # a divider onto one element reads z/(z + x), a longer branch h0/(1 + x/z)
                out.append((lambda h0, z: mul(h0, div(z, add(z, x))) if z.cost <= 1 else div(h0, one_plus(x, z)),
                            [(B, D0), (D0, C)]))
        elif B == 0:  # A x/(C x + D0) = (A x/D0) || (A/C)
            if D0 != 0:
                if Z:
                    out.append((lambda h1, h2: par(h1, h2), [(A * X, D0), (A, C)]))
                out.append((lambda h, z: mul(h, div(x, add(x, z))), [(A, C), (D0, C)]))
        elif D0 == 0:
            out.append((lambda h1, h2: add(h1, div(h2, x)), [(A, C), (B, C)]))
        else:  # the extra element theorem, with x = 0 and with x = oo as reference
            out.append((lambda h0, zn, zd: mul(h0, div(one_plus(x, zn), one_plus(x, zd))),
                        [(B, D0), (B, A), (D0, C)]))
            out.append((lambda hi, zn, zd: mul(hi, div(one_plus(x, zn, False), one_plus(x, zd, False))),
                        [(A, C), (B, A), (D0, C)]))
        return out

    def _products(self, N, D):
        """N/D as a product of parts sharing no symbol (from the factors of N and D)."""
        if len(N) + len(D) > MAX_FACTOR_TERMS:
            return []
        cn, fn = self.P.factor(N)
        cd, fd = self.P.factor(D)
        if len(fn) + len(fd) < 2:
            return []
        items = [(f, e, 1) for f, e in fn] + [(f, e, -1) for f, e in fd]
        support = []
        for f, _, _ in items:
            exps, _ = self.P.terms(f)
            support.append({i for m in exps for i, e in enumerate(m) if e})
        parent = list(range(len(items)))

        def root(a):
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for a in range(len(items)):
            for b in range(a + 1, len(items)):
                if support[a] & support[b]:
                    parent[root(a)] = root(b)
        groups: dict = {}
        for a in range(len(items)):
            groups.setdefault(root(a), []).append(a)
        if len(groups) < 2:
            return []
        k = _fraction(cn) / _fraction(cd)
        parts = [num(k)]
        for members in groups.values():
            n, d = self.one, self.one
            for a in members:
                f, e, side = items[a]
                for _ in range(int(e)):
                    if side > 0:
                        n = n * f
                    else:
                        d = d * f
            parts.append(self.ratio(n, d))
        return [mul(*parts)]


def _fraction(c) -> Fraction:
    if hasattr(c, "p") and hasattr(c, "q"):
        return Fraction(int(c.p), int(c.q))
    return Fraction(str(c))


def _length(n: Node) -> int:
    return len(text(n))


def _score(n: Node):
    """Symbol occurrences, a subtraction counted as half of one (people write sums), then length."""
    t = text(n)
    return n.cost + 0.5 * (t.count("-")), len(t)


def _better(a: Node, b: Node) -> bool:
    return _score(a) < _score(b)


# --- device symbols ------------------------------------------------------------------------------
DEVICE_SYMBOLS = {
    "beta": "Q.beta = Q.gm*Q.rpi",
    "re": "Q.re = Q.rpi/(Q.beta + 1)",
    "alpha": "Q.alpha = Q.beta/(Q.beta + 1)",
}


def _bjts(gens) -> list[str]:
    """Owners with both ``.gm`` and ``.rpi`` symbols (hybrid-pi BJTs)."""
    have = set(gens)
    out = []
    for g in gens:
        if g.endswith(".gm"):
            owner = g[: -len(".gm")]
            if owner + ".rpi" in have and owner + ".beta" not in have:
                out.append(owner)
    return out


def _substitute(num: dict, den: dict, i: int, p: dict, q: dict):
    """num/den with variable i replaced by p/q (dicts over the same, possibly extended, gens)."""
    def by_power(d):
        out: dict = {}
        for m, c in d.items():
            out.setdefault(m[i], {})[m[:i] + (0,) + m[i + 1:]] = c
        return out

    pn, pd = by_power(num), by_power(den)
    top = max(list(pn) + list(pd))

    def mulp(a, b):
        out: dict = {}
        for ma, ca in a.items():
            for mb, cb in b.items():
                m = tuple(x + y for x, y in zip(ma, mb))
                out[m] = out.get(m, 0) + ca * cb
        return {m: c for m, c in out.items() if c}

    def powp(a, k):
        r = {tuple([0] * len(next(iter(a)))): Fraction(1)}
        for _ in range(k):
            r = mulp(r, a)
        return r

    def build(parts):
        out: dict = {}
        for k, coef in parts.items():
            t = mulp(mulp(coef, powp(p, k)), powp(q, top - k))
            for m, c in t.items():
                out[m] = out.get(m, 0) + c
        return {m: c for m, c in out.items() if c}

    return build(pn), build(pd)


def _variants(num: dict, den: dict, gens: list[str]):
    """(name, num, den, gens) for the circuit symbols and the device-symbol substitutions."""
    bjts = _bjts(gens)
    yield "circuit", num, den, gens
    if not bjts:
        return
    ext = list(gens)
    for q in bjts:
        ext += [f"{q}.beta", f"{q}.re", f"{q}.alpha"]
    pad = len(ext) - len(gens)
    n0 = {m + (0,) * pad: c for m, c in num.items()}
    d0 = {m + (0,) * pad: c for m, c in den.items()}
    idx = {g: i for i, g in enumerate(ext)}
    zero = (0,) * len(ext)

    def mono(**e):
        m = list(zero)
        for name, k in e.items():
            m[idx[name]] += k
        return tuple(m)

    def one_plus(name):  # name + 1
        return {mono(**{name: 1}): Fraction(1), zero: Fraction(1)}

    def one_minus(name):  # 1 - name
        return {zero: Fraction(1), mono(**{name: 1}): Fraction(-1)}

    nb, db = n0, d0
    for q in bjts:  # gm = beta/rpi
        nb, db = _substitute(nb, db, idx[q + ".gm"], {mono(**{q + ".beta": 1}): Fraction(1)},
                             {mono(**{q + ".rpi": 1}): Fraction(1)})
    nb, db = _reduce(nb, db)
    yield "beta", nb, db, ext
    nr, dr = nb, db
    for q in bjts:  # rpi = re*(beta + 1)
        p = {mono(**{q + ".re": 1, q + ".beta": 1}): Fraction(1), mono(**{q + ".re": 1}): Fraction(1)}
        nr, dr = _substitute(nr, dr, idx[q + ".rpi"], p, {zero: Fraction(1)})
    nr, dr = _reduce(nr, dr)
    yield "re", nr, dr, ext
    for base_name, bn, bd in (("alpha", nb, db), ("re+alpha", nr, dr)):
        na, da = bn, bd
        for q in bjts:  # beta = alpha/(1 - alpha)
            na, da = _substitute(na, da, idx[q + ".beta"], {mono(**{q + ".alpha": 1}): Fraction(1)},
                                 one_minus(q + ".alpha"))
        na, da = _reduce(na, da)
        yield base_name, na, da, ext
    del one_plus


def _with_devices(dims, gens):
    """Dimensions of the device symbols too: beta and alpha are plain numbers, re is in ohms."""
    if dims is None:
        return None
    out = dict(dims)
    for g in gens:
        base = g.rsplit(".", 1)[-1]
        if g not in out and base in ("beta", "alpha", "re"):
            out[g] = (1, 0) if base == "re" else (0, 0)
    return out


def _reduce(num: dict, den: dict):
    """Divide out the common monomial factor."""
    if not num or not den:
        return num, den
    ms = list(num) + list(den)
    low = tuple(min(m[i] for m in ms) for i in range(len(ms[0])))
    if not any(low):
        return num, den
    sub = lambda d: {tuple(a - b for a, b in zip(m, low)): c for m, c in d.items()}  # noqa: E731
    return sub(num), sub(den)


# --- where lines -----------------------------------------------------------------------------------
def _name_shared(root: Node, taken: set, always: bool = False):
    """Names for the sub-expressions used more than once: ({node: name}, [(name, node)] in order)."""
    refs: dict = {}
    order = []
    seen = set()
    stack = [(root, False)]
    while stack:
        n, done = stack.pop()
        if done:
            order.append(n)
            continue
        if id(n) in seen:
            continue
        seen.add(id(n))
        stack.append((n, True))
        if n.op in ("sym", "num"):
            continue
        kids = n.args if n.op not in ("pow",) else (n.args[0],)
        for k in kids:
            if isinstance(k, Node):
                refs[id(k)] = refs.get(id(k), 0) + 1
                stack.append((k, False))
    if not always and root.cost <= WHERE_LIMIT:
        return {}, []
    names: dict = {}
    defs = []
    counter = 0
    for n in order:  # children before parents
        if n is root or n.op in ("sym", "num") or refs.get(id(n), 0) < 2:
            continue
        if n.op == "neg" or n.cost < 2:
            continue
        counter += 1
        name = f"W{counter}"
        while name in taken:
            counter += 1
            name = f"W{counter}"
        names[n] = name
        defs.append((name, n))
    return names, defs


def _local_size(n: Node, names) -> int:
    """Symbol occurrences printed for ``n`` with named children printed as names (which count 1)."""
    total = 0
    stack = [n]
    first = True
    while stack:
        m = stack.pop()
        if not first and m in names:
            total += 1
            continue
        first = False
        if m.op == "sym":
            total += 1
        elif m.op in ("num",):
            continue
        elif m.op == "pow":
            stack.append(m.args[0])
        else:
            stack.extend(m.args)
    return total


def finish(root: Node, kind: str, gens, num=None, den=None, always_where: bool = False) -> Form:
    """A :class:`Form` from a node, with where lines for shared parts above the size limit."""
    taken = set(gens or ()) | {g.split(".")[0] for g in gens or ()}
    names, defs = _name_shared(root, taken, always_where)
    body = text(root, names)
    where = [(nm, text(nd, names)) for nm, nd in defs]
    size = _local_size(root, names) + sum(_local_size(nd, names) for _, nd in defs)
    return Form(body, where, size, kind, root, names, defs, num, den, list(gens) if gens else None)


# --- entry points ----------------------------------------------------------------------------------
def _used_gens(num, den, gens):
    """The generators that occur (column by column: a 100,000-term ratio is quick)."""
    cols = list(zip(*(list(num) + list(den)))) if (num or den) else []
    return [g for g, col in zip(gens, cols) if any(col)]


def expanded_node(num: dict, den: dict, gens) -> Node:
    """The flat sum-of-products ratio (numerator and denominator expanded)."""
    syms = [sym(g) for g in gens]
    n = _flat_node(syms, *_terms_of(num)) if num else ZERO
    if not den:
        return sym("oo")
    d = _flat_node(syms, *_terms_of(den))
    if len(den) == 1:
        return div(n, d)
    return div(n, d) if not _is_num(d, 1) else n


def _terms_of(d: dict):
    items = sorted(d.items())
    return [m for m, _ in items], [c for _, c in items]


def write_form(num: dict, den: dict, gens, *, expanded: bool = False, devices: bool = True,
               beam: int | None = None, max_terms: int = MAX_SPLIT_TERMS, work: int | None = None,
               dims: dict | None = None, seconds: float = SECONDS) -> Form:
    """The readable exact form of num/den.

    Parameters
    ----------
    num, den : dict
        {exponent tuple: Fraction} over ``gens`` (as :class:`ports.SymbolicQuantity` gives them).
    gens : list of str
        Generator names: ``s`` and circuit symbol names.
    expanded : bool
        The flat sum-of-products ratio instead of a design-oriented form.
    devices : bool
        Try the device symbols Q.beta, Q.re, Q.alpha (kept when shorter).
    beam : int or None
        Elements followed per step (None: 3 for small ratios, fewer for larger ones).
    max_terms : int
        The size bound of the split search (expanded terms).
    work : int or None
        Ratios split in all (default :data:`WORK`); the search stops there, deterministically.
    dims : dict or None
        {symbol: (ohm exponent, second exponent)} (``printing.symbol_dims``); with it,
        ``||`` is used for impedances only.
    seconds : float
        Wall-clock guard: past it the remaining parts print expanded (the work bound
        normally stops the search first, so the output does not depend on the machine).

    Returns
    -------
    Form

    Examples
    --------
    >>> from fractions import Fraction as F
    >>> gens = ["s", "RA", "RB"]
    >>> f = write_form({(0, 1, 1): F(1)}, {(0, 1, 0): F(1), (0, 0, 1): F(1)}, gens)
    >>> f.text, f.size
    ('RA || RB', 2)
    """
    gens = list(gens)
    if not num:
        return Form("0", [], 0, "expanded", ZERO, num=num, den=den, gens=gens)
    if not den:
        return Form("oo", [], 0, "expanded", sym("oo"), num=num, den=den, gens=gens)
    if expanded:
        return finish(expanded_node(num, den, gens), "expanded", gens, num, den)
    from solver.engine.symbolic.ring import have_flint
    if len(num) + len(den) > max_terms or not have_flint():  # the search needs python-flint
        return finish(expanded_node(num, den, gens), "expanded", gens, num, den)
    if beam is None:
        size = len(num) + len(den)
        beam = 3 if size <= 30 else 2 if size <= 80 else 1
    total = WORK if work is None else work
    deadline = time.perf_counter() + seconds
    variants = list(_variants(num, den, gens)) if devices else [("circuit", num, den, gens)]
    # a quick greedy pass over every variant, then the rest of the work on the most promising one
    quick = []
    share = [max(1, total // (3 * len(variants)))]
    for v in variants:
        _, n, d, g = v
        S = _Search(_Poly(g), 1, max_terms, share, _with_devices(dims, g), deadline)
        share[0] = max(1, total // (3 * len(variants)))
        quick.append((S.ratio(S.P.from_dict(n), S.P.from_dict(d)), v))
    ranked = sorted(range(len(quick)), key=lambda j: (_score(quick[j][0]), j))
    best = quick[ranked[0]][0]
    if beam > 1:  # the rest of the work on the two most promising variants
        for j in ranked[:2]:
            _, n, d, g = quick[j][1]
            S = _Search(_Poly(g), beam, max_terms, [(total - total // 3) // 2], _with_devices(dims, g), deadline)
            node = S.ratio(S.P.from_dict(n), S.P.from_dict(d))
            if _better(node, best):
                best = node
    return finish(best, "design", gens, num, den)


def form_of(q, **kw) -> Form:
    """:func:`write_form` of a :class:`solver.analysis.symbolic.ports.SymbolicQuantity`."""
    return write_form(q.num, q.den, q.gens, **kw)


# --- compact exact forms: shared Laplace minors ------------------------------------------------------
def compact_domain(ring):
    """(convert ring entry -> Node, zero, one) for the memoised Laplace expansion.

    A ring monomial in ``X`` and ``1/X`` becomes X^(a - b); each matrix entry becomes
    one node, so an entry or minor used in several places is one shared node.
    """
    names = ring.names
    plain = []
    for n in names:
        plain.append((n[2:], -1) if n.startswith("1/") else (n, 1))
    cache: dict = {}

    def conv(p):
        if isinstance(p, (int, Fraction)):
            return num(p)
        exps, coeffs = ring.terms(p)
        groups: dict = {}  # by power of s: 1/RC + 1/Q1.ro + s*(Q1.cpi + Q1.cmu)
        for m, c in sorted(zip(exps, coeffs), key=lambda t: (t[1] < 0, tuple(-e for e in t[0]))):
            e: dict = {}
            for (g, sg), k in zip(plain, m):
                if k:
                    e[g] = e.get(g, 0) + sg * k
            groups.setdefault(e.pop(S_NAME, 0), []).append((e, c))
        terms = []
        for ks in sorted(groups):
            part = [_entry_term(e, c) for e, c in groups[ks]]
            if ks == 0:
                terms.extend(part)
            else:
                inner = add(*part)
                sign = inner.op == "neg"
                t = mul(power(sym(S_NAME), ks), inner.args[0] if sign else inner)
                terms.append(neg(t) if sign else t)
        key = tuple(text(t) for t in terms)
        hit = cache.get(key)
        if hit is None:
            hit = cache[key] = add(*terms) if terms else ZERO
        return hit

    return conv, ZERO, ONE


def _entry_term(e: dict, c: Fraction) -> Node:
    """One term of a matrix entry: c * product of symbols^k (negative k below the line)."""
    top = [power(sym(g), k) for g, k in e.items() if k > 0]
    bottom = [power(sym(g), -k) for g, k in e.items() if k < 0]
    a = mul(num(abs(c.numerator)), *top) if top else num(abs(c.numerator))
    if c.denominator != 1:
        bottom.insert(0, num(c.denominator))
    t = div(a, mul(*bottom)) if bottom else a
    return neg(t) if c < 0 else t


def expanded_terms_bound(root: Node) -> int:
    """Terms of the full expansion of a node DAG without cancellation (an upper bound)."""
    memo: dict = {}
    stack = [(root, False)]
    while stack:
        n, done = stack.pop()
        if id(n) in memo:
            continue
        kids = [] if n.op in ("sym", "num") else [n.args[0]] if n.op in ("pow", "neg") else list(n.args)
        if not done:
            stack.append((n, True))
            stack.extend((k, False) for k in kids if id(k) not in memo)
            continue
        if n.op == "sym":
            v = 1
        elif n.op == "num":
            v = 0 if n.args[0] == 0 else 1
        elif n.op == "add":
            v = sum(memo[id(k)] for k in kids)
        elif n.op == "mul":
            v = 1
            for k in kids:
                v *= memo[id(k)]
        elif n.op == "pow":
            v = memo[id(kids[0])] ** n.args[1]
        else:  # neg, and div or par (not made by the expansion)
            v = memo[id(kids[0])] if n.op == "neg" else max(memo[id(k)] for k in kids)
        memo[id(n)] = v
    return memo[id(root)]


def compact_form(num_node: Node, den_node: Node, gens, num=None, den=None) -> Form:
    """The exact result num/den as shared minors: every node used twice is a where line."""
    if _is_num(num_node, 0):
        return Form("0", [], 0, "compact", ZERO, num=num, den=den, gens=gens)
    root = div(num_node, den_node) if not _is_num(den_node, 1) else num_node
    return finish(root, "compact", gens, num, den, always_where=True)


# --- sympy syntax (for the JSON "sympy" field; no sympy import) ---------------------------------------
def sympy_names(gens) -> dict[str, str]:
    """{sympy name ('Q1_gm'): circuit name ('Q1.gm')}, in sorted order of circuit names."""
    out: dict = {}
    for g in sorted(gens):
        key = g.replace(".", "_")
        while key in out and out[key] != g:
            key += "_"
        out[key] = g
    return out


def sympy_ratio(num: dict, den: dict, gens) -> str:
    """num/den in sympy syntax with '.' -> '_' names (expanded, exact rationals)."""
    back = {v: k for k, v in sympy_names(_used_gens(num, den, gens)).items()}

    def poly(d):
        if not d:
            return "0"
        parts = []
        for m, c in sorted(d.items(), key=lambda t: tuple(-e for e in t[0])):
            fs = []
            for g, e in zip(gens, m):
                if e:
                    fs.append(back[g] + (f"**{e}" if e > 1 else ""))
            mag = abs(c)
            co = "" if mag == 1 and fs else (str(mag.numerator) if mag.denominator == 1 else
                                            f"{mag.numerator}/{mag.denominator}")
            body = "*".join(([co] if co else []) + fs) if fs else co
            parts.append(("-" if c < 0 else "+", body))
        first = parts[0]
        out = ("-" if first[0] == "-" else "") + first[1]
        for sgn, body in parts[1:]:
            out += f" {sgn} {body}"
        return out

    if not den:
        return "oo"
    n, d = poly(num), poly(den)
    if d == "1":
        return n
    return f"({n})/({d})"
