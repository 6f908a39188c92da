"""Text to :class:`solver.netlist.Netlist`: lark LALR parser with an inline Transformer.

The grammar lives in ``grammar/portwise.lark``; the Transformer below has one
small method per rule and builds our statement and expression dataclasses
directly (no full parse tree is kept). A file that fails to parse as a whole is
parsed again line by line, so every syntax error is reported in one run.
"""
from __future__ import annotations

import functools
import re
from pathlib import Path

from lark import Lark, Token, Transformer, v_args
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken, VisitError

from . import expr as ex
from .diagnostics import Diagnostics, InputError, Loc, error
from .netlist import (BlockStart, Claim, ElementStmt, End, Ground, Let, Netlist, Node, Output,
                      Param, Title, Use)
from .units import UnitError, parse_quantity

MAX_FILE_BYTES = 20_000_000
MAX_LINE_CHARS = 10_000
MAX_EXPR_DEPTH = 200


def grammar_path() -> Path:
    """The grammar file: shipped inside the package, or ``grammar/`` of a checkout."""
    here = Path(__file__).resolve().parent
    for p in (here / "grammar" / "portwise.lark", here.parent / "grammar" / "portwise.lark"):
        if p.is_file():
            return p
    raise FileNotFoundError("grammar/portwise.lark not found")


class _Build(Transformer):
    """Parse-tree rules to dataclasses; ``file`` and ``text`` give locations and raw spans."""

    def __init__(self, file: str = "<string>"):
        super().__init__()
        self.file = file

    def _loc(self, tok: Token) -> Loc:
        return Loc(self.file, tok.line, tok.column, max(1, len(str(tok))))

    # --- statements -----------------------------------------------------------
    def start(self, items):
        return [s for s in items if s is not None]

    def line(self, items):
        return items[0]

    def title(self, items):
        (tok,) = items
        body = str(tok)[1:-1]
        body = re.sub(r"\\(.)", r"\1", body)
        return Title(body, self._loc(tok))

    def let(self, items):
        name, value = items
        return Let(str(name), value, self._loc(name))

    def _element(self, kw, name, groups, value, params, sense=None):
        return ElementStmt(str(kw), str(name), groups, value, params, self._loc(kw), self._loc(name), sense)

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
        return BlockStart(str(name), ports, rest[0] if rest else [], self._loc(name))

    def end(self, items):
        return End(self._loc(items[0]))

    def use(self, items):
        block, inst, nodes, *rest = items
        return Use(str(block), str(inst), nodes, rest[0] if rest else [], self._loc(inst), self._loc(block))

    def claim(self, items):
        q, op, value, *tol = items
        kind = "exact" if str(op) == "=" else "approx"
        return Claim(str(q), kind, value, tol[0] if tol else None, self._loc(q), self._loc(q))

    def _node(self, tok) -> Node:
        return Node(str(tok).strip(), self._loc(tok))

    def nodes(self, items):
        return [self._node(t) for t in items]

    def params(self, items):
        return list(items)

    def param(self, items):
        key, value = items
        return Param(str(key), value, self._loc(key))

    # --- expressions ------------------------------------------------------------
    def number(self, items):
        (tok,) = items
        try:
            value, d = parse_quantity(str(tok))
        except UnitError as e:
            raise error(self._loc(tok), str(e)) from None
        return ex.Num(value, d, self._loc(tok), str(tok))

    def ref(self, items):
        return ex.Ref(tuple(str(t) for t in items), self._loc(items[0]))

    def call(self, items):
        name, arg = items
        if str(name) not in ex.FUNCTIONS:
            raise error(self._loc(name), f"unknown function '{name}' (functions: {', '.join(ex.FUNCTIONS)})")
        return ex.Call(str(name), arg, self._loc(name))

    def binop(self, items):
        left, op, right = items
        return ex.Binary(str(op), left, right, self._loc(op))

    def unop(self, items):
        op, operand = items
        if str(op) == "+":
            return operand
        if isinstance(operand, ex.Num):  # fold -3 so that it stays a literal
            return ex.Num(-operand.value, operand.dim, self._loc(op), "-" + operand.text)
        return ex.Unary("-", operand, self._loc(op))


@functools.lru_cache(maxsize=None)
def _parser(start: str) -> Lark:
    return Lark(grammar_path().read_text(encoding="utf-8"), parser="lalr", lexer="contextual",
                start=start, propagate_positions=False, maybe_placeholders=False,
                cache=True)


_EXPECT_NAMES = {"NAME": "a name", "QUANTITY": "a number", "_NL": "end of line", "LPAR": "'('",
                 "RPAR": "')'", "COMMA": "','", "EQUAL": "'='", "STRING": "a quoted string",
                 "$END": "end of file"}


def _describe(expected) -> str:
    names = sorted({_EXPECT_NAMES.get(t, t.lower() if t.isupper() and "_" in t else f"'{t}'" if len(t) < 3 else t)
                    for t in expected})
    return ", ".join(names[:6]) + (" or more" if len(names) > 6 else "")


def _syntax_message(e: UnexpectedInput) -> str:
    if isinstance(e, UnexpectedCharacters):
        ch = e.char
        return f"unexpected character {ch!r}"
    if isinstance(e, UnexpectedEOF):
        return "unexpected end of statement"
    if isinstance(e, UnexpectedToken):
        tok = e.token
        what = "end of line" if tok.type in ("_NL", "$END") else repr(str(tok))
        return f"unexpected {what}; expected {_describe(e.expected)}"
    return "syntax error"


def _strip_comment(line: str) -> str:
    out, quoted = [], False
    for ch in line:
        if ch == '"':
            quoted = not quoted
        if ch == "#" and not quoted:
            break
        out.append(ch)
    return "".join(out)


def _check_text(text: str, file: str, diags: Diagnostics) -> None:
    for i, line in enumerate(text.splitlines(), 1):
        if len(line) > MAX_LINE_CHARS:
            diags.error(Loc(file, i, 1), f"line longer than {MAX_LINE_CHARS} characters")


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
    diags = Diagnostics()
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise error(Loc(file, 1, 1), f"file larger than {MAX_FILE_BYTES} bytes")
    _check_text(text, file, diags)
    diags.check()
    try:
        stmts = _run(_parser("start"), text, file)
        nl = Netlist(file, text, stmts)
    except InputError as e:
        if any(d.loc is None or d.severity != "error" for d in e.diagnostics):
            raise
        nl = None
    except UnexpectedInput:
        nl = None
    if nl is None:
        nl = _parse_by_line(text, file, diags)
    for s in nl.statements:
        for e in _exprs(s):
            if ex.depth(e) > MAX_EXPR_DEPTH:
                diags.error(e.loc, f"expression nested deeper than {MAX_EXPR_DEPTH} levels")
    diags.check()
    return nl


def _exprs(s):
    for attr in ("value", "tolerance"):
        v = getattr(s, attr, None)
        if v is not None and not isinstance(v, (str, list)):
            yield v
    for p in getattr(s, "params", ()) or ():
        yield p.value


def _run(parser: Lark, text: str, file: str):
    import sys
    limit = sys.getrecursionlimit()
    sys.setrecursionlimit(max(limit, 20000))
    try:
        tree = parser.parse(text)
        return _Build(file).transform(tree)
    except VisitError as e:
        if isinstance(e.orig_exc, InputError):
            raise e.orig_exc from None
        raise
    except RecursionError:
        raise error(Loc(file, 1, 1), "expression nested too deeply") from None
    finally:
        sys.setrecursionlimit(limit)


def _logical_lines(text: str):
    """(first line number, text) of each statement, joining lines that end in a backslash."""
    buf, start = [], None
    for n, raw in enumerate(text.splitlines(), 1):
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
    parser = _parser("line")
    stmts = []
    for lineno, body in _logical_lines(text):
        if not body.strip():
            continue
        try:
            # pad with newlines so that line numbers in tokens are right
            stmt = _run(parser, body + "\n", file)
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
