"""Which characters a regular expression can start a match with, to tell two terminals apart.

The parser's line-shape replay (:mod:`solver.language.parse`) matches each token of a
known line shape by its own terminal's pattern instead of the whole lexer
alternation. That gives the very token the lexer would give only if no
terminal tried *before* it could match at the same spot; a terminal whose
possible first characters are disjoint from the expected one's cannot. This
module answers that question conservatively: every answer of "disjoint" is
sure, and anything it does not understand counts as "may overlap".

References
----------
A. V. Aho, M. S. Lam, R. Sethi, J. D. Ullman, *Compilers: Principles,
Techniques, and Tools*, 2nd ed., section 4.4.2 (FIRST sets), from memory;
the structure walked is the parse tree of Python's own ``re`` compiler.
"""
from __future__ import annotations

import functools
import re

try:  # the regex parse tree of Python's re compiler (CPython 3.11+)
    from re import _constants as _C
    from re import _parser as _P
except ImportError:  # pragma: no cover - another Python: nothing is ever called disjoint
    _C = _P = None

# character classes by category, for testing single characters against them
_CATEGORY = {} if _C is None else {
    _C.CATEGORY_DIGIT: re.compile(r"\d"), _C.CATEGORY_NOT_DIGIT: re.compile(r"\D"),
    _C.CATEGORY_SPACE: re.compile(r"\s"), _C.CATEGORY_NOT_SPACE: re.compile(r"\S"),
    _C.CATEGORY_WORD: re.compile(r"\w"), _C.CATEGORY_NOT_WORD: re.compile(r"\W"),
}
_MAX_TESTED = 4096  # characters of an explicit range tested one by one against a category


def _seq(items):
    """(first-character items, nullable) of a sequence; items None: anything."""
    out = []
    for op, av in items:
        first, nullable = _item(op, av)
        if first is None:
            return None, False
        out += first
        if not nullable:
            return out, False
    return out, True


def _item(op, av):
    C = _C
    if op is C.LITERAL:
        return [("r", av, av)], False
    if op is C.IN:
        out = []
        for o, a in av:
            if o is C.LITERAL:
                out.append(("r", a, a))
            elif o is C.RANGE:
                out.append(("r", a[0], a[1]))
            elif o is C.CATEGORY and a in _CATEGORY:
                out.append(("c", a))
            else:  # NEGATE and anything else: could be any character
                return None, False
        return out, False
    if op is C.SUBPATTERN:
        _, add_flags, del_flags, body = av
        return (None, False) if add_flags or del_flags else _seq(body)
    if op is C.ATOMIC_GROUP:
        return _seq(av)
    if op is C.BRANCH:
        out, nullable = [], False
        for branch in av[1]:
            first, n = _seq(branch)
            if first is None:
                return None, False
            out += first
            nullable = nullable or n
        return out, nullable
    if op in (C.MAX_REPEAT, C.MIN_REPEAT, C.POSSESSIVE_REPEAT):
        lo, _, body = av
        first, nullable = _seq(body)
        return first, nullable or lo == 0
    if op in (C.AT, C.ASSERT, C.ASSERT_NOT):
        # zero width: they only ever narrow what follows, so skipping them over-approximates
        return [], True
    return None, False


@functools.lru_cache(maxsize=None)
def first_chars(pattern: str):
    """The possible first characters of a match of ``pattern``, or None if unknown.

    Returns a tuple of items, ``("r", lo, hi)`` for code points lo..hi and
    ``("c", category)`` for a class such as ``\\d``; None when the pattern may
    match the empty string or uses something not analysed here (flags,
    negated classes, back references...).

    Examples
    --------
    >>> first_chars("[A-Za-z_][A-Za-z0-9_]*")
    (('r', 65, 90), ('r', 97, 122), ('r', 95, 95))
    >>> first_chars("a?") is None  # may match nothing
    True
    """
    if _P is None:
        return None
    try:
        tree = _P.parse(pattern)
    except Exception:  # noqa: BLE001 - not analysable is an answer ("unknown")
        return None
    if tree.state.flags & ~(re.UNICODE | re.MULTILINE | re.DOTALL):
        return None
    first, nullable = _seq(list(tree))
    return None if first is None or nullable else tuple(first)


def _meets(a, b) -> bool:
    if a[0] == "r" and b[0] == "r":
        return a[1] <= b[2] and b[1] <= a[2]
    if a[0] == "c" and b[0] == "c":
        return True  # not worked out: may overlap
    rng, cat = (a, b) if a[0] == "r" else (b, a)
    if rng[2] - rng[1] >= _MAX_TESTED:
        return True
    test = _CATEGORY[cat[1]].match
    return any(test(chr(c)) for c in range(rng[1], rng[2] + 1))


def disjoint(p: str, q: str) -> bool:
    """True only if no match of ``p`` can start with a character a match of ``q`` starts with.

    Examples
    --------
    >>> disjoint(r"\\d+", "[A-Za-z_]+")
    True
    >>> disjoint(r"\\w+", "[A-Za-z_]+")
    False
    """
    fp, fq = first_chars(p), first_chars(q)
    if fp is None or fq is None:
        return False
    return not any(_meets(a, b) for a in fp for b in fq)
