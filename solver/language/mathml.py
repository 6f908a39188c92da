"""Presentation MathML from our own expression trees (:mod:`solver.language.expr`).

The HTML report and the notebook displays show formulas as MathML, which current
browsers render natively (no script, no font download). The markup is written here
from the parse tree of the netlist language -- a claim's expression, or a derived
formula printed in that language and parsed back with our own parser -- never by
handing user text to a computer-algebra parser.

Names follow the textbook look of :func:`solver.analysis.symbolic.printing.latex_name`:
``RC`` is R with subscript C, ``Q1.gm`` is g with subscript "m,Q1", ``Q1.rpi`` is r with
subscript "π,Q1"; ``a || b`` is written with the parallel sign ∥ (U+2225) and a quotient
as a built-up fraction. Operator precedence is the language's own: ``+ -`` below ``||``
below ``* /`` below unary minus below ``^`` (grammar/README.md).

References
----------
W3C, *Mathematical Markup Language (MathML) Version 3.0*, 2nd ed. (2014), chapter 3,
presentation markup; MathML Core (W3C, 2023) for the elements browsers implement.

Examples
--------
>>> from solver.language.parse import parse_expression
>>> inner(parse_expression("-(RC || RL)/(Q1.re + RE1)"))[:45]
'<mfrac><mrow><mo>−</mo><mrow><mo>(</mo><mrow>'
>>> "∥" in math(parse_expression("a || b"))
True
"""
from __future__ import annotations

from html import escape

from solver.language import expr as ex

NS = "http://www.w3.org/1998/Math/MathML"

#: device quantity -> (main letter, subscript) in textbook notation
#: (Sedra & Smith, *Microelectronic Circuits*, 7th ed., symbol conventions, from memory)
BASES = {"gm": ("g", "m"), "gmb": ("g", "mb"), "rpi": ("r", "π"), "ro": ("r", "o"), "rx": ("r", "x"),
         "re": ("r", "e"), "rd": ("r", "d"), "cpi": ("C", "π"), "cmu": ("C", "μ"), "cgs": ("C", "gs"),
         "cgd": ("C", "gd"), "cj": ("C", "j"), "rs": ("R", "s"), "ic": ("I", "C"), "id": ("I", "D"),
         "va": ("V", "A"), "vt": ("V", "T"), "vov": ("V", "ov"), "alpha": ("α", ""), "beta": ("β", ""),
         "lambda": ("λ", ""), "gain": ("A", "")}
#: port quantity names as symbols: Av -> A with subscript v
QUANTITY_SUBSCRIPTS = {"Rin": ("R", "in"), "Rout": ("R", "out"), "Avo": ("A", "vo"), "Av": ("A", "v"),
                       "Gv": ("G", "v"), "Gvo": ("G", "vo"), "Zt": ("Z", "t"), "Zto": ("Z", "to"),
                       "Ai": ("A", "i")}

_PREC = {"+": 40, "-": 40, "||": 45, "*": 50, "/": 50}
_UNARY = 60
_POW = 70
_ATOM = 100


def _t(tag: str, body: str) -> str:
    return f"<{tag}>{body}</{tag}>"


def _mi(text: str) -> str:
    # a one-letter identifier is italic by default; a longer one (a label) stays upright
    return f"<mi>{escape(text)}</mi>" if len(text) == 1 else f'<mi mathvariant="normal">{escape(text)}</mi>'


def _sub(main: str, sub: str) -> str:
    if not sub:
        return _mi(main)
    return f"<msub>{_mi(main)}<mrow><mtext>{escape(sub)}</mtext></mrow></msub>"


def name(text: str) -> str:
    """MathML for a circuit symbol (``RC``, ``Q1.gm``, ``VS.rs``, ``s``).

    Examples
    --------
    >>> name("RC")
    '<msub><mi>R</mi><mrow><mtext>C</mtext></mrow></msub>'
    >>> name("Q1.gm")
    '<msub><mi>g</mi><mrow><mtext>m,Q1</mtext></mrow></msub>'
    """
    if text in QUANTITY_SUBSCRIPTS:
        return _sub(*QUANTITY_SUBSCRIPTS[text])
    if text == "V_T":
        return _sub("V", "T")
    *owner, base = text.split(".")
    own = ".".join(owner)
    if owner and base in BASES:
        main, sub = BASES[base]
        return _sub(main, f"{sub},{own}" if sub else own)
    if len(base) >= 2 and base[0].isupper() and base[0].isalpha():
        main, sub = base[0], base[1:]
    else:
        main, sub = base, ""
    if owner:
        sub = f"{sub},{own}" if sub else own
    if len(main) > 1 and not sub:
        return _mi(main)
    return _sub(main, sub) if sub else _mi(main)


def _paren(body: str) -> str:
    return f"<mrow><mo>(</mo>{body}<mo>)</mo></mrow>"


def _prec(e: ex.Expr) -> int:
    if isinstance(e, ex.Binary):
        return _POW if e.op == "^" else _PREC[e.op]
    if isinstance(e, ex.Unary):
        return _UNARY
    if isinstance(e, ex.Num) and e.value < 0:
        return _UNARY
    return _ATOM


def _num(e: ex.Num) -> str:
    text = e.text or repr(e.value)
    if text.startswith("-"):
        return f"<mo>−</mo><mn>{escape(text[1:])}</mn>"
    return f"<mn>{escape(text)}</mn>"


def inner(e: ex.Expr) -> str:
    """The MathML body of an expression (no ``<math>`` wrapper).

    Iterative over ``+ -`` chains would not matter here: the parser limits nesting
    (``parse.MAX_EXPR_DEPTH``), so plain recursion is bounded.
    """
    if isinstance(e, ex.Num):
        return _num(e)
    if isinstance(e, ex.Ref):
        return name(e.name)
    if isinstance(e, ex.Unary):
        body = inner(e.operand)
        if _prec(e.operand) < _PREC["*"]:  # -(a || b), not (-a) || b
            body = _paren(body)
        return f"<mo>−</mo>{body}" if e.op == "-" else body
    if isinstance(e, ex.Call):
        arg = inner(e.arg)
        if e.func == "sqrt":
            return _t("msqrt", arg)
        if e.func == "abs":
            return f'<mrow><mo>|</mo>{arg}<mo>|</mo></mrow>'
        fn = {"ln": "ln", "exp": "exp", "log10": "log"}[e.func]
        head = f'<mi mathvariant="normal">{fn}</mi>'
        if e.func == "log10":
            head = f"<msub>{head}<mn>10</mn></msub>"
        return f"<mrow>{head}<mo>&#x2061;</mo>{_paren(arg)}</mrow>"
    assert isinstance(e, ex.Binary)
    op = e.op
    if op == "/":
        return f"<mfrac><mrow>{inner(e.left)}</mrow><mrow>{inner(e.right)}</mrow></mfrac>"
    if op == "^":
        base = inner(e.left)
        if _prec(e.left) < _ATOM or isinstance(e.left, ex.Call):
            base = _paren(base)
        return f"<msup><mrow>{base}</mrow><mrow>{inner(e.right)}</mrow></msup>"
    p = _PREC[op]
    left, right = inner(e.left), inner(e.right)
    if _prec(e.left) < p:
        left = _paren(left)
    # the right operand of - and / binds tighter; of + * || the same level associates freely
    if _prec(e.right) < p or (op == "-" and _prec(e.right) == p) or \
            (op in ("+", "||") and isinstance(e.right, ex.Num) and e.right.value < 0):
        right = _paren(right)
    sign = {"+": "+", "-": "−", "||": "∥"}.get(op)
    if sign is None:  # product: a visible dot between two numbers, invisible times otherwise
        sign = "⋅" if isinstance(e.left, ex.Num) and isinstance(e.right, ex.Num) else "&#x2062;"
    return f"<mrow>{left}<mo>{sign}</mo>{right}</mrow>"


def math(e: ex.Expr, lhs: str | None = None, relation: str = "=", display: bool = False) -> str:
    """A complete ``<math>`` element; with ``lhs`` (a name) it reads ``lhs relation expression``.

    Examples
    --------
    >>> from solver.language.parse import parse_expression
    >>> math(parse_expression("RL/(R1 + RL)"), "Gv").startswith('<math xmlns="http://www.w3.org/1998/Math/MathML">')
    True
    """
    body = inner(e)
    if lhs is not None:
        body = f"{name(lhs)}<mo>{escape(relation)}</mo>{body}"
    attr = ' display="block"' if display else ""
    return f'<math xmlns="{NS}"{attr}><mrow>{body}</mrow></math>'
