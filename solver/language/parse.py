"""Text to :class:`solver.language.statements.Netlist`: a small fast path of our own, lark as the reference.

Most netlist lines have one of a few shapes (an element, a let, a claim...). The
fast path reads those itself: each line is cut into tokens by one regex built from
the same terminal patterns as ``grammar/portwise.lark`` (a test compares them), then
walked along the line's entry of :data:`STATEMENTS`, our own table of statement
shapes, with a small precedence-climbing expression parser. It builds the same
statement and expression dataclasses, with the same Locs, as the grammar's
Transformer (:class:`_Rules`); ``tests/test_parse_fastpath.py`` checks that they agree.

Anything the fast path is not sure of (an unknown shape, a syntax or unit error,
unusual characters, a continued line, deep nesting) is left to lark's LALR parser,
built lazily on first need: a declined line is parsed alone by lark, and a line
lark rejects sends the whole text through lark, re-parsed line by line after a
failure, so every syntax error is lark's and all of them are reported in one run.
Input limits (file size, line length, control characters, expression depth) are
checked here too.
"""
from __future__ import annotations

import functools
import re
import threading
from pathlib import Path

from solver.language import expr as ex
from solver.bulk import paused_gc
from solver.diagnostics import MAX_REPORTED, Diagnostics, InputError, Loc, error
from solver.language.statements import (BlockStart, Bound, Claim, ElementStmt, End, Ground, Let, Netlist, Node,
                                       Output, Param, Spec, Spread, Title, Use)
from solver.language.units import UnitError, parse_quantity

MAX_FILE_BYTES = 20_000_000
MAX_LINE_CHARS = 10_000
MAX_EXPR_DEPTH = 200


def grammar_path() -> Path:
    """The grammar file: shipped inside the package, or ``grammar/`` of a checkout."""
    pkg = Path(__file__).resolve().parent.parent  # solver/
    for p in (pkg / "grammar" / "portwise.lark", pkg.parent / "grammar" / "portwise.lark"):
        if p.is_file():
            return p
    raise FileNotFoundError("grammar/portwise.lark not found")


# A Loc from a (file, line, col, width) tuple without the named tuple's Python-level __new__
# (half the cost; the parser makes several per line). Only while Loc is that named tuple.
_new_loc = (functools.partial(tuple.__new__, Loc) if issubclass(Loc, tuple)
            and Loc._fields == ("file", "line", "col", "width") else lambda t: Loc(*t))

_quantity = functools.lru_cache(maxsize=4096)(parse_quantity)  # netlists repeat their values


# --- the fast path ----------------------------------------------------------------------------
# Terminal patterns, restated from grammar/portwise.lark (tests/test_parse_fastpath.py compares
# them with the compiled grammar's ``Lark.terminals``).
QUANTITY = (r"(?:\d+[RKkMGTpnuµμm]\d+|(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)"
            r"(?:[ \t]*(?:[fpnuµμmkMGT]?(?:Ω|ohm|Hz|A\/V\^2|A\/V|\/V|V|A|F|H|S|K|W)|[fpnuµμmkMGT]|%))?"
            r"(?![A-Za-z0-9_µμΩ])")
NAME = r"[A-Za-z_][A-Za-z0-9_]*"
STRING = r'"(?:[^"\\\n]|\\.)*"'
BLANKS = "[ \t\f]+"  # the grammar's first %ignore
OPERATORS = {"ADD_OP": ("+", "-"), "PAR_OP": ("||",), "MUL_OP": ("*", "/"), "POW_OP": ("^",),
             "CLAIM_OP": ("=", "~")}
PUNCTUATION = ("(", ")", ",", "=", ".", "..")

# Statement shapes: (rule, keywords, parts after the keyword). Parts: NAME a name; NODES
# "(" node ("," node)* ")"; NODE one node; REF NAME ("." NAME)*; EXPR an expression;
# "=" that character; CLAIM_OP "=" or "~"; TAIL ("," param)*; PARAMS? [param ("," param)*];
# WITHIN? ["within" expr]; RANGE? [".." expr]; ".." that token; BOUND expr [NAME]. The rules are those of grammar/portwise.lark of the same name. A title
# line is matched whole by _TITLE (its string may hold "#"); the other rows are walked by _Fast.
STATEMENTS = (
    ("valued", ("resistor", "capacitor", "inductor", "supply", "signal", "load"),
     ("NAME", "NODES", "EXPR", "TAIL")),
    ("controlled", ("vccs", "vcvs"), ("NAME", "NODES", "NODES", "EXPR", "TAIL")),
    ("sensed", ("cccs", "ccvs"), ("NAME", "NODES", "REF", "EXPR", "TAIL")),
    ("device", ("npn", "pnp", "nmos", "pmos", "opamp", "diode"), ("NAME", "NODES", "PARAMS?")),
    ("title", ("title",), ("STRING",)),
    ("let", ("let",), ("NAME", "=", "EXPR")),
    ("output", ("output",), ("NODES",)),
    ("ground", ("ground",), ("NODE",)),
    ("block", ("block",), ("NAME", "NODES", "PARAMS?")),
    ("end", ("end",), ()),
    ("use", ("use",), ("NAME", "NAME", "NODES", "PARAMS?")),
    ("claim", ("claim",), ("NAME", "CLAIM_OP", "EXPR", "WITHIN?")),
    ("spread", ("spread",), ("REF", "EXPR", "RANGE?", "TAIL")),
    ("spec", ("spec",), ("NAME", "BOUND", "..", "BOUND")),
)
_KEYWORDS = {kw: (rule, parts) for rule, kws, parts in STATEMENTS for kw in kws if rule != "title"}

# One token after optional blanks: (blanks, quantity, name, operator or punctuation). findall
# skips what matches nothing, so a line is only taken when the pieces add up to all of it.
_ops = sorted({o for ops in OPERATORS.values() for o in ops} | set(PUNCTUATION), key=len, reverse=True)
_TOKEN = re.compile(f"((?:{BLANKS})?)(?:({QUANTITY})|({NAME})|({'|'.join(map(re.escape, _ops))}))")
_TITLE_KW = next(kws[0] for rule, kws, _ in STATEMENTS if rule == "title")
_TITLE = re.compile(f"(?:{BLANKS})?{_TITLE_KW}(?:{BLANKS})?({STRING})(?:{BLANKS})?(?:#[^\\n]*)?")
_BLANK_LINE = re.compile(r"[ \t]*(?:#[^\n]*)?")  # what the grammar's _NL takes before "\n"
_BINARY = {"+": 1, "-": 1, "||": 2, "*": 3, "/": 3}  # binding power; all left-associative
_TAKES_NODE = ("q", "n")
_DEEPEST = 100  # nesting beyond this is left to lark's iterative parser (no deep recursion here)


class _Decline(Exception):
    """The fast path is not sure of a line: lark reads it. (A new one each time: an instance
    raised again would keep growing its traceback.)"""


class _Fast:
    """The fast path for one file (see the module docstring). Each method reads tokens
    ``(kind, text, col)`` of one line, ``kind`` being ``q`` (a quantity), ``n`` (a name),
    the operator or punctuation itself, or ``$`` (the end of the line)."""

    __slots__ = ("file", "line", "toks", "depth")

    def __init__(self, file: str):
        self.file = file
        self.line = 0
        self.toks = []
        self.depth = 0

    def loc(self, col: int, text: str) -> Loc:
        return _new_loc((self.file, self.line, col, len(text) or 1))

    def statement(self, raw: str, line: int):
        """The statement of one physical line, None for a blank line, or :class:`_Decline`."""
        self.line = line
        hash_at = raw.find("#")  # a comment, unless a string is open before it
        body = raw if hash_at < 0 else raw[:hash_at]
        if '"' in body:
            m = _TITLE.fullmatch(raw)
            if m is None:
                raise _Decline
            tok = m.group(1)
            return Title(re.sub(r"\\(.)", r"\1", tok[1:-1]), self.loc(m.start(1) + 1, tok))
        body = body.rstrip(" \t\f")
        if not body:
            if _BLANK_LINE.fullmatch(raw) is None:
                raise _Decline  # (a form feed on a line of its own: a double _NL for the grammar)
            return None
        toks, col = [], 1
        for blank, q, n, o in _TOKEN.findall(body):
            col += len(blank)
            if q:
                toks.append(("q", q, col))
                col += len(q)
            elif n:
                toks.append(("n", n, col))
                col += len(n)
            else:
                toks.append((o, o, col))
                col += len(o)
        if col != len(body) + 1:
            raise _Decline  # a character no token takes
        toks.append(("$", "", col))
        kind, kw, kw_col = toks[0]
        shape = _KEYWORDS.get(kw) if kind == "n" else None
        if shape is None:
            raise _Decline
        self.toks = toks
        self.depth = 0
        rule, parts = shape
        vals, i = [], 1
        for part in parts:
            if part == "NAME":
                tok = toks[i]
                if tok[0] != "n":
                    raise _Decline
                vals.append(tok)
                i += 1
            elif part == "NODES":
                nodes, i = self.nodes(i)
                vals.append(nodes)
            elif part == "EXPR":
                value, i = self.expr(i, 1)
                vals.append(value)
            elif part == "TAIL":
                params = []
                while toks[i][0] == ",":
                    param, i = self.param(i + 1)
                    params.append(param)
                vals.append(params)
            elif part == "PARAMS?":
                params = []
                if toks[i][0] == "n":
                    param, i = self.param(i)
                    params.append(param)
                    while toks[i][0] == ",":
                        param, i = self.param(i + 1)
                        params.append(param)
                vals.append(params)
            elif part == "REF":
                ref, i = self.ref(i)
                vals.append(ref)
            elif part == "NODE":
                kind, text, col = toks[i]
                if kind not in _TAKES_NODE:
                    raise _Decline
                vals.append(Node(text.strip(), self.loc(col, text)))
                i += 1
            elif part == "=":
                if toks[i][0] != "=":
                    raise _Decline
                i += 1
            elif part == "CLAIM_OP":
                tok = toks[i]
                if tok[0] not in OPERATORS["CLAIM_OP"]:
                    raise _Decline
                vals.append(tok)
                i += 1
            elif part == "RANGE?":
                hi = None
                if toks[i][0] == "..":
                    hi, i = self.expr(i + 1, 1)
                vals.append(hi)
            elif part == "..":
                if toks[i][0] != "..":
                    raise _Decline
                i += 1
            elif part == "BOUND":
                value, i = self.expr(i, 1)
                unit = None
                if toks[i][0] == "n":
                    unit = toks[i]
                    i += 1
                vals.append(Bound(value, unit and unit[1], unit and self.loc(unit[2], unit[1])))
            elif part == "WITHIN?":
                tol = None
                if toks[i][0] == "n" and toks[i][1] == "within":
                    tol, i = self.expr(i + 1, 1)
                vals.append(tol)
            else:  # pragma: no cover - a shape of the table this walker does not know
                raise _Decline
        if toks[i][0] != "$":
            raise _Decline
        if "within" in body and sum(t[1] == "within" for t in toks if t[0] == "n") != (
                rule == "claim" and vals[3] is not None):
            raise _Decline  # where lark's merged states take the name as the keyword (sensed's ref)
        return _MAKE[rule](self, kw, kw_col, vals)

    def nodes(self, i):
        toks = self.toks
        if toks[i][0] != "(":
            raise _Decline
        file, line, out = self.file, self.line, []
        while True:
            kind, text, col = toks[i + 1]
            if kind not in _TAKES_NODE:
                raise _Decline
            out.append(Node(text.strip(), _new_loc((file, line, col, len(text) or 1))))
            sep = toks[i + 2][0]
            i += 2
            if sep == ")":
                return out, i + 1
            if sep != ",":
                raise _Decline

    def param(self, i):
        toks = self.toks
        kind, key, col = toks[i]
        if kind != "n" or toks[i + 1][0] != "=":
            raise _Decline
        value, i = self.expr(i + 2, 1)
        return Param(key, value, self.loc(col, key)), i

    def ref(self, i):
        toks = self.toks
        kind, text, col = toks[i]
        if kind != "n":
            raise _Decline
        parts = [text]
        i += 1
        while toks[i][0] == ".":
            kind, part, _ = toks[i + 1]
            if kind != "n":
                raise _Decline
            parts.append(part)
            i += 2
        return ex.Ref(tuple(parts), self.loc(col, text)), i

    # --- expressions: precedence climbing (the grammar's sum > par > product > unary > power) ----
    def expr(self, i, min_bp):
        left, i = self.unary(i)
        toks = self.toks
        while True:
            op, text, col = toks[i]
            bp = _BINARY.get(op)
            if bp is None or bp < min_bp:
                return left, i
            right, i = self.expr(i + 1, bp + 1)
            left = ex.Binary(op, left, right, self.loc(col, op))

    def unary(self, i):
        op, text, col = self.toks[i]
        if op == "-" or op == "+":
            self.depth += 1
            if self.depth > _DEEPEST:
                raise _Decline
            operand, i = self.unary(i + 1)
            self.depth -= 1
            if op == "+":
                return operand, i
            if isinstance(operand, ex.Num):  # -3 stays a literal, as in _Rules.unop
                return ex.Num(-operand.value, operand.dim, self.loc(col, op), "-" + operand.text), i
            return ex.Unary("-", operand, self.loc(col, op)), i
        return self.power(i)

    def power(self, i):
        toks = self.toks
        kind, text, col = toks[i]
        if kind == "q":
            try:
                value, dim = _quantity(text)
            except UnitError:
                raise _Decline from None
            atom = ex.Num(value, dim, self.loc(col, text), text)
            i += 1
        elif kind == "n":
            nxt = toks[i + 1][0]
            if nxt == "(":
                if text not in ex.FUNCTIONS:
                    raise _Decline
                arg, i = self.nested(i + 2)
                atom = ex.Call(text, arg, self.loc(col, text))
            elif nxt == ".":
                atom, i = self.ref(i)
            else:
                atom = ex.Ref((text,), self.loc(col, text))
                i += 1
        elif kind == "(":
            atom, i = self.nested(i + 1)
        else:
            raise _Decline
        op, _, col = toks[i]
        if op != "^":
            return atom, i
        self.depth += 1
        if self.depth > _DEEPEST:
            raise _Decline
        right, i = self.unary(i + 1)
        self.depth -= 1
        return ex.Binary("^", atom, right, self.loc(col, op)), i

    def nested(self, i):
        """An expression and its closing ``)``."""
        self.depth += 1
        if self.depth > _DEEPEST:
            raise _Decline
        value, i = self.expr(i, 1)
        if self.toks[i][0] != ")":
            raise _Decline
        self.depth -= 1
        return value, i + 1


def _make_element(f, kw, kw_col, groups, value, params, sense=None):
    name = f.toks[1]
    return ElementStmt(kw, name[1], groups, value, params, f.loc(kw_col, kw), f.loc(name[2], name[1]), sense)


_MAKE = {  # rule -> statement from (fast path, keyword, its column, the parts' values): as _Rules does
    "valued": lambda f, kw, c, v: _make_element(f, kw, c, [v[1]], v[2], v[3]),
    "controlled": lambda f, kw, c, v: _make_element(f, kw, c, [v[1], v[2]], v[3], v[4]),
    "sensed": lambda f, kw, c, v: _make_element(f, kw, c, [v[1]], v[3], v[4], v[2]),
    "device": lambda f, kw, c, v: _make_element(f, kw, c, [v[1]], None, v[2]),
    "let": lambda f, kw, c, v: Let(v[0][1], v[1], f.loc(v[0][2], v[0][1])),
    "output": lambda f, kw, c, v: Output(v[0], f.loc(c, kw)),
    "ground": lambda f, kw, c, v: Ground(v[0], v[0].loc),
    "block": lambda f, kw, c, v: BlockStart(v[0][1], v[1], v[2], f.loc(v[0][2], v[0][1])),
    "end": lambda f, kw, c, v: End(f.loc(c, kw)),
    "use": lambda f, kw, c, v: Use(v[0][1], v[1][1], v[2], v[3], f.loc(v[1][2], v[1][1]),
                                   f.loc(v[0][2], v[0][1])),
    "spread": lambda f, kw, c, v: Spread(v[0], v[1], v[2], v[3], v[0].loc),
    "spec": lambda f, kw, c, v: Spec(v[0][1], v[1], v[2], f.loc(v[0][2], v[0][1])),
    "claim": lambda f, kw, c, v: Claim(v[0][1], "exact" if v[1][1] == "=" else "approx", v[2], v[3],
                                       f.loc(v[0][2], v[0][1]), f.loc(v[0][2], v[0][1])),
}


_MOST_DECLINED = 100  # beyond this, lark reads the whole text (each line alone costs its line number)


def _fast_statements(text: str, file: str):
    """The statements of ``text`` by the fast path, lark reading the lines it declines alone;
    None when lark must read the whole text (a continued line, a line lark rejects)."""
    if "\r" in text:
        if text.count("\r") != text.count("\r\n"):
            return None  # a carriage return that does not end a line
        lines = text.replace("\r\n", "\n").split("\n")
    else:
        lines = text.split("\n")
    fast, stmts, declined = _Fast(file), [], 0
    statement, append = fast.statement, stmts.append
    for lineno, raw in enumerate(lines, 1):
        try:
            stmt = statement(raw, lineno)
        except _Decline:
            declined += 1
            if "\\" in raw or declined > _MOST_DECLINED:
                return None  # (a continuation joins lines; lark reads the whole text)
            try:  # the line alone, on its own line number (blank lines before it)
                got = _run("start", "\n" * (lineno - 1) + raw + "\n", file)
            except Exception:  # noqa: BLE001 - any complaint: the whole text goes to lark
                return None
            if len(got) != 1:
                return None
            stmt = got[0]
        except Exception:  # noqa: BLE001 - a surprise in the fast path is lark's to judge
            return None
        if stmt is not None:
            append(stmt)
    return stmts


# --- lark: the reference and the fallback ------------------------------------------------------
class _Rules:
    """Parse-tree rules to dataclasses, run inline by lark as each rule is reduced.

    Mixed with :class:`lark.Transformer` when lark is first needed (see :func:`_parser`),
    so that importing this module does not import lark. ``file`` is set before each
    parse (see :func:`_run`).
    """

    def __init__(self, file: str = "<string>"):
        super().__init__()
        self.file = file

    def _loc(self, tok) -> Loc:
        return _new_loc((self.file, tok.line, tok.column, len(tok.value) or 1))

    # --- statements -----------------------------------------------------------
    def start(self, items):
        return [s for s in items if s is not None]

    def line(self, items):
        return items[0]

    def title(self, items):
        (tok,) = items
        body = tok.value[1:-1]
        body = re.sub(r"\\(.)", r"\1", body)
        return Title(body, self._loc(tok))

    def let(self, items):
        name, value = items
        return Let(name.value, value, self._loc(name))

    def _element(self, kw, name, groups, value, params, sense=None):
        return ElementStmt(kw.value, name.value, groups, value, params, self._loc(kw), self._loc(name), sense)

    def valued(self, items):
        kw, name, nodes, value, *params = items
        return self._element(kw, name, [nodes], value, params)

    def controlled(self, items):
        kw, name, nodes, ctrl, value, *params = items
        return self._element(kw, name, [nodes, ctrl], value, params)

    def sensed(self, items):
        kw, name, nodes, sense, value, *params = items
        return self._element(kw, name, [nodes], value, params, sense)

    def device(self, items):
        kw, name, nodes, *rest = items
        return self._element(kw, name, [nodes], None, rest[0] if rest else [])

    def output(self, items):
        kw, nodes = items
        return Output(nodes, self._loc(kw))

    def ground(self, items):
        (node,) = items
        return Ground(self._node(node), self._node(node).loc)

    def block(self, items):
        name, ports, *rest = items
        return BlockStart(name.value, ports, rest[0] if rest else [], self._loc(name))

    def end(self, items):
        return End(self._loc(items[0]))

    def use(self, items):
        block, inst, nodes, *rest = items
        return Use(block.value, inst.value, nodes, rest[0] if rest else [], self._loc(inst), self._loc(block))

    def claim(self, items):
        q, op, value, *tol = items
        kind = "exact" if op.value == "=" else "approx"
        return Claim(q.value, kind, value, tol[0] if tol else None, self._loc(q), self._loc(q))

    def spread(self, items):
        target, lo, *rest = [i for i in items if getattr(i, "type", None) != "RANGE"]
        hi = rest.pop(0) if rest and not isinstance(rest[0], Param) else None
        return Spread(target, lo, hi, rest, target.loc)

    def spec(self, items):
        q, lo, _, hi = items
        return Spec(q.value, lo, hi, self._loc(q))

    def bound(self, items):
        value, *unit = items
        return Bound(value, unit[0].value if unit else None, self._loc(unit[0]) if unit else None)

    def _node(self, tok) -> Node:
        return Node(tok.value.strip(), self._loc(tok))

    def nodes(self, items):
        return [self._node(t) for t in items]

    def params(self, items):
        return list(items)

    def param(self, items):
        key, value = items
        return Param(key.value, value, self._loc(key))

    # --- expressions ------------------------------------------------------------
    def number(self, items):
        (tok,) = items
        loc = self._loc(tok)
        try:
            value, d = _quantity(tok.value)
        except UnitError as e:
            raise error(loc, str(e)) from None
        return ex.Num(value, d, loc, tok.value)

    def ref(self, items):
        return ex.Ref(tuple(t.value for t in items), self._loc(items[0]))

    def call(self, items):
        name, arg = items
        if name.value not in ex.FUNCTIONS:
            raise error(self._loc(name), f"unknown function '{name}' (functions: {', '.join(ex.FUNCTIONS)})")
        return ex.Call(name.value, arg, self._loc(name))

    def binop(self, items):
        left, op, right = items
        return ex.Binary(op.value, left, right, self._loc(op))

    def unop(self, items):
        op, operand = items
        if op.value == "+":
            return operand
        if isinstance(operand, ex.Num):  # fold -3 so that it stays a literal
            return ex.Num(-operand.value, operand.dim, self._loc(op), "-" + operand.text)
        return ex.Unary("-", operand, self._loc(op))


@functools.lru_cache(maxsize=None)
def _parser(start: str):
    """``(Lark, its inline Transformer)`` for one start symbol, built on first need.

    The Transformer is given to lark (``transformer=``), so it runs inline as each
    rule is reduced: no parse tree is ever built. Nothing is cached on disk (lark's
    cache is a pickle: loading one from a shared folder would run whatever was planted
    there); a netlist the fast path reads whole never builds it at all.
    """
    from lark import Lark, Transformer
    rules = type("_Build", (_Rules, Transformer), {})()
    lark = Lark(grammar_path().read_text(encoding="utf-8"), parser="lalr", lexer="contextual",
                start=start, propagate_positions=False, maybe_placeholders=False, transformer=rules)
    return lark, rules


_LOCK = threading.Lock()  # the inline Transformer carries the file name of the current parse


def _run(start: str, text: str, file: str):
    """Parse ``text`` from rule ``start`` with lark (iterative: no input exhausts the stack here).

    A rule's :class:`InputError` (a bad unit, an unknown function) is raised as it is;
    a syntax error as lark's :class:`lark.exceptions.UnexpectedInput`.
    """
    from lark.exceptions import VisitError
    lark, rules = _parser(start)
    with _LOCK:
        rules.file = file
        try:
            return lark.parse(text)
        except VisitError as e:
            if isinstance(e.orig_exc, InputError):
                raise e.orig_exc from None
            raise


_EXPECT_NAMES = {"NAME": "a name", "QUANTITY": "a number", "_NL": "end of line", "LPAR": "'('",
                 "RPAR": "')'", "COMMA": "','", "EQUAL": "'='", "STRING": "a quoted string",
                 "$END": "end of file", "ADD_OP": "'+' or '-'", "MUL_OP": "'*' or '/'", "POW_OP": "'^'",
                 "PAR_OP": "'||'", "CLAIM_OP": "'=' or '~'", "DOT": "'.'", "RANGE": "'..'", "WITHIN": "'within'",
                 "VALUED_KW": "an element keyword", "CONTROLLED_KW": "an element keyword",
                 "SENSED_KW": "an element keyword", "DEVICE_KW": "a device keyword"}


def _describe(expected) -> str:
    names = sorted({_EXPECT_NAMES.get(t, t.lower() if t.isupper() and "_" in t else f"'{t}'" if len(t) < 3 else t)
                    for t in expected})
    return ", ".join(names[:6]) + (" or more" if len(names) > 6 else "")


def _syntax_message(e) -> str:
    """A short message for lark's :class:`lark.exceptions.UnexpectedInput`."""
    from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedToken
    if isinstance(e, UnexpectedCharacters):
        ch = e.char
        return f"unexpected character {ch!r}"
    if isinstance(e, UnexpectedEOF):
        return "unexpected end of statement"
    if isinstance(e, UnexpectedToken):
        tok = e.token
        what = "end of line" if tok.type in ("_NL", "$END") else repr(str(tok))
        expected = e.expected
        ip = getattr(e, "interactive_parser", None)
        if ip is not None:  # LALR merges states: ask the parser what it really takes here
            try:
                expected = ip.accepts() or expected
            except Exception:  # noqa: BLE001 - the plain expected set is still right, only wider
                pass
        return f"unexpected {what}; expected {_describe(expected)}"
    return "syntax error"


def _strip_comment(line: str) -> str:
    """``line`` up to a ``#`` outside a string (a string may hold ``\\"`` and ``#``)."""
    quoted = escaped = False
    for i, ch in enumerate(line):
        if escaped:
            escaped = False
        elif quoted and ch == "\\":
            escaped = True
        elif ch == '"':
            quoted = not quoted
        elif ch == "#" and not quoted:
            return line[:i]
    return line


def _check_text(text: str, file: str, diags: Diagnostics) -> None:
    """Limits that keep every later stage bounded: line length, control characters.

    Two whole-text regex scans, so that the check costs little beside the parse.
    """
    for m in _LONG_LINE.finditer(text):
        line = text.count("\n", 0, m.start()) + 1
        diags.error(Loc(file, line, MAX_LINE_CHARS + 1), f"line longer than {MAX_LINE_CHARS} characters")
        if len(diags.errors) >= MAX_REPORTED:
            return
    for m in _CONTROL.finditer(text):
        line = text.count("\n", 0, m.start()) + 1
        col = m.start() - (text.rfind("\n", 0, m.start()) + 1) + 1
        diags.error(Loc(file, line, col),
                    f"control character U+{ord(m.group()):04X} in the text (not a netlist character)")
        if len(diags.errors) >= MAX_REPORTED:
            return


# C0 controls other than tab, newline, carriage return and form feed; DEL; C1 controls; surrogates
_CONTROL = re.compile("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f\ud800-\udfff]")
_LINE_OVER_DEPTH = re.compile(f"^[^\\n]{{{MAX_EXPR_DEPTH + 1}}}", re.M)
_LONG_LINE = re.compile(f"^[^\\n]{{{MAX_LINE_CHARS + 1}}}", re.M)  # tried at line starts only


def parse(text: str, file: str = "<string>") -> Netlist:
    """Parse netlist text.

    Parameters
    ----------
    text : str
        The netlist source.
    file : str
        The name used in diagnostics.

    Returns
    -------
    Netlist

    Raises
    ------
    InputError
        With every syntax error found, one per line at most.

    Examples
    --------
    >>> nl = parse("resistor R1 (a, gnd) 4k7\\n")
    >>> nl.statements[0].name
    'R1'
    """
    return _parse(text, file, fast=True)


def _parse(text: str, file: str, fast: bool) -> Netlist:
    """:func:`parse`; ``fast=False`` is lark alone (the reference the fast path is tested against)."""
    diags = Diagnostics()
    if len(text) > MAX_FILE_BYTES or len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise error(Loc(file, 1, 1), f"file larger than {MAX_FILE_BYTES} bytes")
    _check_text(text, file, diags)
    diags.check()
    stmts = None
    if fast:
        with paused_gc():  # a few objects per token, all kept: see solver.bulk
            stmts = _fast_statements(text, file)
    if stmts is not None:
        nl = Netlist(file, text, stmts)
    else:
        nl = _lark_netlist(text, file, diags)
    # Every level of an expression beyond the first takes an operator or a function name of
    # its own, so a tree deeper than the limit needs a line longer than it: with no line
    # that long and no continued line (no backslash at all), no expression needs measuring.
    if "\\" in text or _LINE_OVER_DEPTH.search(text):
        for s in nl.statements:
            for e in _exprs(s):
                if ex.depth(e) > MAX_EXPR_DEPTH:
                    diags.error(e.loc, f"expression nested deeper than {MAX_EXPR_DEPTH} levels")
    diags.check()
    return nl


def _lark_netlist(text: str, file: str, diags: Diagnostics) -> Netlist:
    """The whole text by lark; after a failure, line by line, so that every error is reported."""
    from lark.exceptions import UnexpectedInput
    try:
        with paused_gc():
            return Netlist(file, text, _run("start", text, file))
    except InputError as e:
        if any(d.loc is None or d.severity != "error" for d in e.diagnostics):
            raise
    except UnexpectedInput:
        pass
    return _parse_by_line(text, file, diags)


def _exprs(s):
    for attr in ("value", "tolerance", "lo", "hi"):
        v = getattr(s, attr, None)
        if isinstance(v, Bound):
            v = v.value
        if v is not None and not isinstance(v, (str, list)):
            yield v
    for p in getattr(s, "params", ()) or ():
        yield p.value


def _logical_lines(text: str):
    """(first line number, text) of each statement, joining lines that end in a backslash.

    Lines end at "\\n" only, as for the grammar (a form feed is a blank, not a line break).
    """
    buf, start = [], None
    for n, raw in enumerate(text.split("\n"), 1):
        body = _strip_comment(raw)
        if start is None:
            start = n
        stripped = body.rstrip()
        if stripped.endswith("\\"):
            buf.append(stripped[:-1] + " ")
            continue
        buf.append(body)
        yield start, "".join(buf)
        buf, start = [], None
    if buf:
        yield start, "".join(buf)


def _parse_by_line(text: str, file: str, diags: Diagnostics) -> Netlist:
    from lark.exceptions import UnexpectedInput, UnexpectedToken
    stmts = []
    for lineno, body in _logical_lines(text):
        if not body.strip():
            continue
        try:
            stmt = _run("line", body + "\n", file)
        except UnexpectedInput as e:
            col = getattr(e, "column", 1) or 1
            width = len(str(getattr(e, "token", "") or "x")) if isinstance(e, UnexpectedToken) else 1
            diags.error(Loc(file, lineno, col, width), _syntax_message(e))
            continue
        except InputError as e:
            for d in e.diagnostics:
                loc = d.loc and Loc(file, lineno, d.loc.col, d.loc.width)
                diags.items.append(type(d)(d.severity, loc, d.message))
            continue
        too_deep = [e for e in _exprs(stmt) if ex.depth(e) > MAX_EXPR_DEPTH]
        for e in too_deep:
            diags.error(Loc(file, lineno, e.loc.col, e.loc.width),
                        f"expression nested deeper than {MAX_EXPR_DEPTH} levels")
        if not too_deep:
            stmts.append(_relocate(stmt, lineno))
    diags.check()
    return Netlist(file, text, stmts)


def _relocate(obj, lineno: int):
    """Shift every Loc in a statement parsed alone onto its real line."""
    import dataclasses
    if isinstance(obj, Loc):
        return Loc(obj.file, obj.line + lineno - 1, obj.col, obj.width)
    if isinstance(obj, list):
        return [_relocate(x, lineno) for x in obj]
    if isinstance(obj, tuple):
        return tuple(_relocate(x, lineno) for x in obj)
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        changes = {f.name: _relocate(getattr(obj, f.name), lineno) for f in dataclasses.fields(obj)}
        return type(obj)(**changes)
    return obj


def parse_expression(text: str, file: str = "<expr>") -> ex.Expr:
    """Parse a single expression (used by tests and the Python API)."""
    stmt = parse(f"let _ = {text}\n", file).statements[0]
    return stmt.value
