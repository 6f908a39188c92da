"""Text to :class:`solver.language.statements.Netlist`: lark LALR parser with an inline Transformer.

The grammar lives in ``grammar/portwise.lark``; the Transformer below has one
small method per rule and builds our statement and expression dataclasses
directly, run by the parser as each rule is reduced (no parse tree is kept).
A valid file goes through :class:`_Driver`, a lean loop over lark's own
compiled tables (about three times lark's loop); anything else goes through
lark's loop, and a file that fails as a whole is parsed again line by line, so
every syntax error is reported in one run. Input limits (file size, line
length, control characters, expression depth) are checked here too.
"""
from __future__ import annotations

import functools
import operator
import re
import threading
from pathlib import Path

from lark import Lark, Transformer
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken, VisitError

from solver.language import expr as ex
from solver.bulk import paused_gc
from solver.diagnostics import MAX_REPORTED, Diagnostics, InputError, Loc, error
from solver.language.statements import (BlockStart, Claim, ElementStmt, End, Ground, Let, Netlist, Node, Output,
                      Param, Title, Use)
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


class _Tok:
    """A token of the fast loop: all that the rule callbacks read from a :class:`lark.Token`."""

    __slots__ = ("type", "value", "line", "column")

    def __init__(self, type_: str, value: str, line: int, column: int):
        self.type = type_
        self.value = value
        self.line = line
        self.column = column

    def __str__(self) -> str:
        return self.value


class _Kids:
    """What a lark helper rule (a repetition, a ``_rule``) reduces to: its children, spliced
    into the parent rule by lark's child filter. Lighter than the default :class:`lark.Tree`."""

    __slots__ = ("children",)

    def __init__(self, children):
        self.children = children


# A Loc from a (file, line, col, width) tuple without the named tuple's Python-level __new__
# (half the cost; the parser makes several per line). Only while Loc is that named tuple.
_new_loc = (functools.partial(tuple.__new__, Loc) if issubclass(Loc, tuple)
            and Loc._fields == ("file", "line", "col", "width") else lambda t: Loc(*t))


class _Build(Transformer):
    """Parse-tree rules to dataclasses, run inline by the parser as each rule is reduced.

    Tokens are :class:`lark.Token` (lark's own loop) or :class:`_Tok` (the fast
    loop); the methods only use ``tok.value``, ``tok.line`` and ``tok.column``.
    ``file`` is set before each parse (see :func:`_run`).
    """

    def __init__(self, file: str = "<string>"):
        super().__init__()
        self.file = file

    def __default__(self, data, children, meta):
        return _Kids(children)

    def _loc(self, tok) -> Loc:  # (inlined in the callbacks a netlist line calls most)
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
        file = self.file
        return ElementStmt(kw.value, name.value, groups, value, params,
                           _new_loc((file, kw.line, kw.column, len(kw.value) or 1)),
                           _new_loc((file, name.line, name.column, len(name.value) or 1)), sense)

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
        file = self.file
        return Use(block.value, inst.value, nodes, rest[0] if rest else [],
                   _new_loc((file, inst.line, inst.column, len(inst.value) or 1)),
                   _new_loc((file, block.line, block.column, len(block.value) or 1)))

    def claim(self, items):
        q, op, value, *tol = items
        kind = "exact" if op.value == "=" else "approx"
        return Claim(q.value, kind, value, tol[0] if tol else None, self._loc(q), self._loc(q))

    def _node(self, tok) -> Node:
        return Node(tok.value.strip(), self._loc(tok))

    def nodes(self, items):
        file = self.file
        return [Node(t.value.strip(), _new_loc((file, t.line, t.column, len(t.value) or 1))) for t in items]

    def params(self, items):
        return list(items)

    def param(self, items):
        key, value = items
        return Param(key.value, value, _new_loc((self.file, key.line, key.column, len(key.value) or 1)))

    # --- expressions ------------------------------------------------------------
    def number(self, items):
        (tok,) = items
        return self.number_at(tok.value, tok.line, tok.column)

    # ``<rule>_at(text, line, col)``: the same rule reduced from one token given by its text
    # and place; the line-shape replay calls it without making the token (see _Driver._encode)
    def number_at(self, text, line, col):
        loc = _new_loc((self.file, line, col, len(text) or 1))
        try:
            value, d = _quantity(text)
        except UnitError as e:
            raise error(loc, str(e)) from None
        return ex.Num(value, d, loc, text)

    def ref(self, items):
        tok = items[0]
        return ex.Ref((tok.value,) if len(items) == 1 else tuple([t.value for t in items]),
                      _new_loc((self.file, tok.line, tok.column, len(tok.value) or 1)))

    def ref_at(self, text, line, col):
        return ex.Ref((text,), _new_loc((self.file, line, col, len(text) or 1)))

    def call(self, items):
        name, arg = items
        if name.value not in ex.FUNCTIONS:
            raise error(self._loc(name), f"unknown function '{name}' (functions: {', '.join(ex.FUNCTIONS)})")
        return ex.Call(name.value, arg, self._loc(name))

    def binop(self, items):
        left, op, right = items
        return ex.Binary(op.value, left, right, _new_loc((self.file, op.line, op.column, len(op.value) or 1)))

    def unop(self, items):
        op, operand = items
        if op.value == "+":
            return operand
        if isinstance(operand, ex.Num):  # fold -3 so that it stays a literal
            return ex.Num(-operand.value, operand.dim, self._loc(op), "-" + operand.text)
        return ex.Unary("-", operand, self._loc(op))


@functools.lru_cache(maxsize=None)
def _parser(start: str) -> Lark:
    """The compiled grammar for one start symbol, built once per process.

    The Transformer is given to lark (``transformer=``), so it runs inline as
    each rule is reduced: no parse tree is ever built.
    """
    return Lark(grammar_path().read_text(encoding="utf-8"), parser="lalr", lexer="contextual",
                start=start, propagate_positions=False, maybe_placeholders=False,
                transformer=_Build())


_quantity = functools.lru_cache(maxsize=4096)(parse_quantity)  # netlists repeat their values

_LOCK = threading.Lock()  # the inline Transformer carries the file name of the current parse


def _builder(parser: Lark) -> "_Build":
    return parser.options.transformer


_CHAR_CLASS_PLUS = re.compile(r"\[(?:[^\]\\]|\\.)*\]\+")  # one character class, one or more


class _Fallback(Exception):
    """The fast loop met something it does not handle (any error): lark's own loop takes over."""


def _unwrap(callback):
    """``(inner, include, expand1)`` of a lark rule callback: the function that builds the
    node, lark's child filter (``(index, splice?)`` pairs, or None for all children) and
    whether a single kept child stands for the node (``?rule``). None for a callback of
    a shape not known here."""
    from lark.parse_tree_builder import ChildFilterLALR_NoPlaceholders, ExpandSingleChild
    expand1 = isinstance(callback, ExpandSingleChild)
    inner = callback.node_builder if expand1 else callback
    include = None
    if type(inner) is ChildFilterLALR_NoPlaceholders:
        include, inner = tuple(inner.to_include), inner.node_builder
        if isinstance(inner, ExpandSingleChild):  # lark nests the two either way round
            expand1, inner = True, inner.node_builder
    if isinstance(inner, functools.partial):
        if getattr(inner.func, "__name__", "") != "default_callback":
            return None
        inner = _Kids  # lark's default callback ends in _Build.__default__, which makes a _Kids
    elif hasattr(inner, "visit_wrapper"):
        return None
    return inner, include, expand1


def _wrap(inner, include, expand1, size=None):
    """One lean function for ``inner`` behind the child filter ``include`` (see :func:`_unwrap`):
    the rule callback without lark's wrapper objects (one Python call per reduction instead of
    up to four), its child filter and single-child expansion redone inline. ``size``, when
    known, is the number of children (a filter that keeps them all is dropped)."""
    if size is not None and include == tuple((i, False) for i in range(size)):
        include = None
    if include is None and not expand1:
        return inner
    if include is not None and not any(e for _, e in include):
        picks = tuple(i for i, _ in include)
        if len(picks) == 1 and not expand1:
            return lambda children, f=inner, i=picks[0]: f([children[i]])
        if len(picks) > 1:  # itemgetter: no per-call comprehension
            pick = operator.itemgetter(*picks)
            return lambda children, f=inner, pick=pick: f(list(pick(children)))

        def filtered(children, f=inner, picks=picks):
            kept = [children[i] for i in picks]
            return kept[0] if expand1 and len(kept) == 1 else f(kept)
        return filtered

    if include is not None and include[0][1] and not any(e for _, e in include[1:]):
        head, rest = include[0][0], tuple(i for i, _ in include[1:])

        def left(children, f=inner, head=head, rest=rest):  # a left-recursive repetition
            kept = children[head].children
            for i in rest:
                kept.append(children[i])
            return kept[0] if expand1 and len(kept) == 1 else f(kept)
        return left

    if include is not None and include[-1][1] and not any(e for _, e in include[:-1]):
        picks, last = tuple(i for i, _ in include[:-1]), include[-1][0]

        def right(children, f=inner, picks=picks, last=last):  # kept children, then a repetition
            kept = [children[i] for i in picks]
            if kept:
                kept += children[last].children
            else:
                kept = children[last].children
            return kept[0] if expand1 and len(kept) == 1 else f(kept)
        return right

    def spliced(children, f=inner, include=include):
        if include is None:
            kept = children
        else:
            kept = []
            for i, expand in include:  # as lark's filter: reuse the first spliced list (left recursion)
                if expand:
                    if kept:
                        kept += children[i].children
                    else:
                        kept = children[i].children
                else:
                    kept.append(children[i])
        return kept[0] if expand1 and len(kept) == 1 else f(kept)
    return spliced


class _Driver:
    """A lean LALR(1) loop over lark's own tables, contextual lexers and rule callbacks.

    lark's parser loop spends most of its time on bookkeeping that a valid
    netlist never needs: a full :class:`lark.Token` for every ``(``, ``,`` and
    newline that the rule callbacks then throw away, and a callback call for
    every unit reduction of the expression precedence chain. This loop reads
    the *same* compiled grammar (``grammar/portwise.lark`` stays the single
    source of the syntax) and differs only in what it skips:

    * a token whose terminal every rule filters out is pushed as ``None``;
    * a reduction by a ``?rule`` with one kept child keeps the child as it is
      (exactly what lark's ``ExpandSingleChild`` returns);
    * the LR actions for a token depend only on the stack of states and the
      terminal, so each (stack, terminal) transition is worked out once and
      memoised (the callbacks to run and the stack after the shift);
    * blanks between tokens are skipped by the match that finds the next token.
    * a line whose shape (its token types, from the same stack) has been seen a few
      times is read by one regex match and its recorded actions replayed (see
      :meth:`_shape`); a line that does not match is read token by token.

    ``tests/test_robustness.py`` checks on random inputs that it returns what
    lark's own loop returns, or gives up where lark raises.

    Any input it cannot take (a syntax error, a surprise) raises
    :class:`_Fallback`, and the caller runs lark's own parser on the same text,
    so every error message is lark's.

    References
    ----------
    A. V. Aho, M. S. Lam, R. Sethi, J. D. Ullman, *Compilers: Principles,
    Techniques, and Tools*, 2nd ed., section 4.7 (the LR parsing loop), from memory.
    """

    def __init__(self, lark: Lark, start: str):
        from lark.grammar import Rule
        from lark.parsers.lalr_analysis import Shift
        front = lark.parser
        table = front.parser._parse_table
        callbacks = front.parser.parser.callbacks
        self.term_callbacks = {str(k): v for k, v in callbacks.items() if isinstance(k, str)}
        kept, dropped = set(), set()
        rules = [r for r in callbacks if isinstance(r, Rule)]
        index = {r: i for i, r in enumerate(rules)}
        # per rule: (number of children, goto symbol, callback or None for a unit reduction)
        self.rules = []
        self.rule_parts = []  # _unwrap of each rule's callback, for the replays (see _reduction)
        for rule in rules:
            keep_all = rule.options.keep_all_tokens
            for sym in rule.expansion:
                if sym.is_term:
                    (dropped if sym.filter_out and not keep_all else kept).add(str(sym.name))
            unit = False
            if rule.options.expand1 and not rule.alias and len(rule.expansion) == 1 and not keep_all:
                sym = rule.expansion[0]
                unit = not (sym.is_term and sym.filter_out) and not (not sym.is_term and sym.name.startswith("_"))
            parts = _unwrap(callbacks[rule])  # None: a callback of a shape not known here, kept as it is
            self.rule_parts.append(parts)
            lean = None if unit else callbacks[rule] if parts is None else _wrap(*parts)
            self.rules.append((len(rule.expansion), str(rule.origin.name), lean))
        self.dropped = frozenset(dropped - kept - set(self.term_callbacks))
        # actions with plain-str keys (lark's keys are Tokens, slow to compare): shift to state s is
        # s >= 0, reduce by rule i is -1 - i
        self.actions = {state: {str(sym): (arg if act is Shift else -1 - index[arg])
                                for sym, (act, arg) in row.items()}
                        for state, row in table.states.items()}
        self.end = table.end_states[start]
        self.patterns = {}  # lexer -> (skip, ordered terminals, flags), or None (no line shapes there)
        self.lexers = {state: self._lexer(lexer) for state, lexer in front.lexer.lexers.items()}
        self.state_patterns = {state: self.patterns[lexer] for state, lexer in front.lexer.lexers.items()}
        # Memo of whole LR transitions. The actions taken on a token depend only on the
        # stack of states and the token's terminal, so each stack seen gets an id, and
        # rows[id][terminal] = (callbacks to run, id of the stack after the shift, accepted?).
        self.start_state = table.start_states[start]
        self._reset()

    def _reset(self) -> None:
        self.stacks: list[tuple] = []
        self.stack_ids: dict[tuple, int] = {}
        self.rows: list[tuple] = []  # per stack id: (match, kinds, unless, memo row)
        self.memo_size = 0
        self.start = self._intern((self.start_state,))
        self.shape_counts: dict[tuple, int] = {}  # (stack id, token types of a line) -> lines seen
        self.shapes: dict[int, list] = {}  # stack id -> [(regex text, program)] of its line shapes
        self.shape_match: dict[int, tuple] = {}  # stack id -> (match of all its shapes, programs)

    MEMO_LIMIT = 200_000
    #: deeper stacks (deeply nested expressions) go to lark's loop: the memo keys whole stacks,
    #: and remembering every prefix of a very deep one would cost memory quadratic in its depth
    MAX_FAST_DEPTH = 400
    STACK_LIMIT = 50_000  # distinct stacks remembered; beyond this the memo starts afresh
    # what to do with a matched terminal (+ NEWLINE when its text may hold line breaks)
    KEEP, DROP, IGNORE, UNLESS, NEWLINE = 0, 1, 2, 3, 4
    SHAPE_MIN = 100  # lines of one shape seen before its regex is built (a few ms: small files never pay)
    MAX_SHAPES = 64  # per stack id; beyond this new shapes just take the token loop

    def _lexer(self, lexer):
        """One lark contextual-lexer state as (match function, kinds, keyword callbacks)."""
        mres = tuple(lexer.scanner._mres)  # builds lexer.callback too
        # blanks between tokens (the %ignore terminals without a newline) are skipped by the
        # same regex match that finds the next token, instead of costing a match each
        skip = "|".join(t.pattern.to_regexp() for t in lexer.terminals
                        if t.name in lexer.ignore_types and t.name not in lexer.newline_types)
        if skip:
            mres = tuple(re.compile(f"(?:{skip})*(?:{m.pattern})", m.flags) for m in mres)
        # for line shapes: (skip, terminals in the order the alternation tries them, flags)
        order = sorted(mres[0].groupindex.items(), key=lambda kv: kv[1]) if len(mres) == 1 else ()
        regexps = {t.name: t.pattern.to_regexp() for t in lexer.terminals}
        self.patterns[lexer] = (skip, tuple((name, regexps[name]) for name, _ in order),
                                mres[0].flags) if order and all(n in regexps for n, _ in order) else None
        if len(mres) == 1:
            match = mres[0].match
        else:
            def match(text, pos, _mres=mres):
                for mre in _mres:
                    m = mre.match(text, pos)
                    if m:
                        return m
                return None
        unless = dict(lexer.callback)
        kinds = {}
        for t in lexer.terminals:
            name = t.name
            kind = (self.IGNORE if name in lexer.ignore_types else self.UNLESS if name in unless
                    else self.DROP if name in self.dropped else self.KEEP)
            kinds[name] = kind | (self.NEWLINE if name in lexer.newline_types else 0)
        return match, kinds, unless

    def _shape(self, sid: int, types: tuple) -> None:
        """Build the replay of one line shape: the tokens ``types`` read from stack ``sid``.

        The LR actions depend only on the stack and the token types, so every line of the
        same shape from the same stack takes the same actions. One regex matches a whole
        line of the shape. Per token: the blanks the state's lexer skips (possessively),
        then the expected terminal's own pattern (atomic), behind a negative lookahead of
        the terminals that state's lexer tries *before* it and that could start at the
        same character (:func:`solver.language.firstchars.disjoint` leaves out the others). So a
        line matches only if the token loop would read exactly these tokens with these
        spans; a line that does not match takes the token loop, so errors are never replayed.
        """
        from solver.language.firstchars import disjoint
        shapes = self.shapes.setdefault(sid, [])
        if len(shapes) >= self.MAX_SHAPES:
            return
        k, parts, events, flags = len(shapes), [], [], None
        stack = list(self.stacks[sid])
        for i, ttype in enumerate(types):
            lexer = self.state_patterns[stack[-1]]
            if lexer is None or flags not in (None, lexer[2]):
                return
            skip, order, flags = lexer
            names = [name for name, _ in order]
            if ttype not in names:
                return
            regexps = dict(order)
            target = regexps[ttype]
            if re.search(r"\\[1-9]|\(\?P[<=]", target):
                return  # a group of its own inside a terminal: not worth the risk
            before = [r for name, r in order[:names.index(ttype)] if not disjoint(r, target)]
            guard = f"(?!{'|'.join(f'(?:{r})' for r in before)})" if before else ""
            # blanks: "[ \t\f]+" repeated is just "[ \t\f]*+" (a quarter faster a line)
            blanks = (f"{skip[:-1]}*+" if _CHAR_CLASS_PLUS.fullmatch(skip) else f"(?:{skip})*+") if skip else ""
            group = f"s{k}_{i}"
            parts.append(f"{blanks}{guard}(?P<{group}>(?>{target}))")
            kind = self.lexers[stack[-1]][1][ttype] & ~self.NEWLINE
            if kind not in (self.KEEP, self.DROP):
                return
            reduced, accepted = self._simulate(stack, ttype)
            if accepted or len(stack) > self.MAX_FAST_DEPTH:
                return
            events += [(rule, None) for rule in reduced]
            events.append((group, ttype if kind == self.KEEP else None))
        program = self._program(len(self.stacks[sid]) - 1, events)
        if program is None:
            return
        shapes.append((f"(?P<S{k}>{''.join(parts)})", (program, group, self._intern(tuple(stack)))))
        pattern = re.compile("|".join(t for t, _ in shapes), flags)
        programs = {}
        for j, (_, (program_j, last, end_sid)) in enumerate(shapes):
            # the last token holds the line break(s)
            programs[f"S{j}"] = (self._encode(program_j, pattern.groupindex), pattern.groupindex[last], end_sid)
        self.shape_match[sid] = (pattern.match, programs)

    @staticmethod
    def _encode(program: list, groups: dict) -> tuple:
        """A replay program as :meth:`run` reads it, ``(callback, arg, ttype)`` per step:

        * ``(callback, n, None)``: reduce the top ``n`` values;
        * ``(None, 0, None)``: push ``None`` (a dropped token);
        * ``(None, g, ttype)``: push the token of regex group ``g``;
        * ``(callback, g, ttype)``: the same token, at once reduced alone (a name in a list);
        * ``(callback, -g, None)``: the same, by the rule's ``_at`` form (a number, a reference),
          given the token's text, line and column, so that no token object is made.
        """
        out = []
        for callback, arg, ttype in program:
            if callback is not None:
                if arg == 1 and out and out[-1][0] is None and out[-1][2] is not None:
                    at = getattr(getattr(callback, "__self__", None), f"{getattr(callback, '__name__', '')}_at",
                                 None)
                    out[-1] = (at, -out[-1][1], None) if at else (callback, out[-1][1], out[-1][2])
                else:
                    out.append((callback, arg, None))
            else:
                out.append((None, groups[arg], ttype) if ttype is not None else (None, 0, None))
        return tuple(out)

    def _program(self, depth: int, events: list):
        """The replay program of a line shape, or None when one cannot be made.

        ``events`` are, in order, ``(rule, None)`` for a reduction and ``(group, ttype)`` for
        a token shift (``ttype`` None for a token every rule drops), on a stack of ``depth``
        values. Steps are ``(callback, children, None)`` and ``(None, group, ttype)`` (made
        into what :meth:`run` reads by :meth:`_encode`).

        The program does only the work whose result a rule keeps. Every shape is worked out
        here once, on a model of the stack whose entries are missing (a dropped token that a
        reduction of the same line takes: never pushed), one value, or *spread* (a helper
        rule's list, e.g. the ``("," node)*`` of a node list, taken within the line: its
        items stay on the value stack, so no list object is made and the rule that splices
        it takes them as they are). A reduction then gets its kept children straight off the
        value stack, picked by position when some are left out, and one that would only
        pass its single child on is left out. Dropped tokens still on the stack at the end
        of the line are pushed as ``None``, as the token loop does, since the token loop
        reduces them later.
        """
        # which shifts and reductions of this line a later reduction of the line takes
        ids, taken = [-1] * depth, set()
        for n, (what, _) in enumerate(events):
            if isinstance(what, int):
                size = self.rules[what][0]
                if size:
                    taken.update(ids[-size:])
                    del ids[-size:]
            ids.append(n)
        MISSING, ONE = 0, -1  # stack model: 0 missing, -1 one value, k > 0 a spread list of k values
        model, program = [ONE] * depth, []
        for n, (what, ttype) in enumerate(events):
            if not isinstance(what, int):
                if ttype is None and n in taken:
                    model.append(MISSING)
                else:
                    model.append(ONE)
                    program.append((None, what, ttype))
                continue
            size, _, callback = self.rules[what]
            popped = model[-size:] if size else []
            if size:
                del model[-size:]
            if callback is None:  # a unit reduction: its child is a kept symbol, one value
                model.append(ONE)
                continue
            step = self._reduction(what, popped, n in taken)
            if step is None:
                return None
            entry, op = step
            model.append(entry)
            if op is not None:
                program.append(op)
        return program

    def _reduction(self, rule: int, popped: list, taken: bool):
        """``(stack entry, step or None)`` of one replayed reduction (see :meth:`_program`);
        None when it cannot be replayed here."""
        widths = [1 if e == -1 else e for e in popped]  # values each child occupies
        total = sum(widths)
        parts = self.rule_parts[rule]
        if parts is None:  # a callback not unwrapped: only with every child one value
            return (-1, (self.rules[rule][2], total, None)) if all(e == -1 for e in popped) else None
        inner, include, expand1 = parts
        if include is None:
            include = tuple((i, False) for i in range(len(popped)))
        starts = [sum(widths[:i]) for i in range(len(popped))]
        picks, runtime_splice = [], False
        for i, splice in include:
            e = popped[i]
            if e == 0:
                return None  # (a kept child is never a dropped token)
            if splice and e == -1:
                runtime_splice = True  # a helper list made earlier: spliced when it runs
            elif splice != (e > 0):
                return None  # a spread list not spliced, or a value spliced: not this grammar
            picks += range(starts[i], starts[i] + widths[i]) if e > 0 else [starts[i]]
        if runtime_splice:
            if any(e > 0 for e in popped):
                return None
            remapped = tuple((starts[i], splice) for i, splice in include)  # (one value per child here)
            return -1, (_wrap(inner, remapped, expand1, size=total), total, None)
        whole = picks == list(range(total))
        if inner is _Kids and not expand1 and taken and whole:
            return total, None  # spread: its items stay where they are
        if expand1 and len(picks) == 1:
            if whole:
                return -1, None  # passes its one child on
            i = picks[0]
            return -1, (lambda children, i=i: children[i], total, None)
        if whole:
            return -1, (inner, total, None)
        if not picks:
            return -1, (lambda children, f=inner: f([]), total, None)
        if len(picks) == 1:
            i = picks[0]
            return -1, (lambda children, f=inner, i=i: f([children[i]]), total, None)
        pick = operator.itemgetter(*picks)
        return -1, (lambda children, f=inner, pick=pick: f(list(pick(children))), total, None)

    def _intern(self, stack: tuple) -> int:
        i = self.stack_ids.get(stack)
        if i is None:
            i = self.stack_ids[stack] = len(self.stacks)
            self.stacks.append(stack)
            self.rows.append(self.lexers[stack[-1]] + ({},))
        return i

    def _simulate(self, stack: list, ttype: str):
        """The LR(1) actions for one token on ``stack`` (changed in place): the rules reduced
        by, in order, and whether the input is accepted; :class:`_Fallback` on a syntax error."""
        actions, rules = self.actions, self.rules
        reduced = []
        while True:
            a = actions[stack[-1]].get(ttype)
            if a is None:
                raise _Fallback(ttype)
            if a >= 0:
                stack.append(a)
                return reduced, False
            reduced.append(-1 - a)
            size, origin, _ = rules[-1 - a]
            if size:
                del stack[-size:]
            stack.append(actions[stack[-1]][origin])
            if ttype == "$END" and stack[-1] == self.end:
                return reduced, True

    def _step(self, sid: int, ttype: str):
        """Run the LR(1) actions for one token from stack ``sid``; remember the result."""
        stack = list(self.stacks[sid])
        reduced, accepted = self._simulate(stack, ttype)
        ops = tuple((callback, size) for size, _, callback in map(self.rules.__getitem__, reduced)
                    if callback is not None)
        if len(stack) > self.MAX_FAST_DEPTH:
            raise _Fallback("deep")
        if self.memo_size > self.MEMO_LIMIT:  # a pathological input: start afresh, stay bounded
            for row in self.rows:
                row[3].clear()
            self.memo_size = 0
        hit = (ops, self._intern(tuple(stack)), accepted)
        self.rows[sid][3][ttype] = hit
        self.memo_size += 1
        return hit

    def run(self, text: str):
        """Parse ``text``; the value of the start rule, or :class:`_Fallback`."""
        if len(self.stacks) > self.STACK_LIMIT:  # keep a long-lived process bounded
            self._reset()
        dropped, term_callbacks, rows = self.dropped, self.term_callbacks, self.rows
        KEEP, DROP, IGNORE, NEWLINE = self.KEEP, self.DROP, self.IGNORE, self.NEWLINE
        sid, values = self.start, []
        pos, line, line_start, n = 0, 1, 0, len(text)
        shape_match, shape_counts = self.shape_match, self.shape_counts
        # the token types of the current line so far (None: a line no shape can describe);
        # shapes start after a line's first token, so that its stack picks the few shapes to try
        rec, rec_sid = [], sid
        while True:
            if rec is not None and len(rec) == 1 and sid in shape_match:
                m = shape_match[sid][0](text, pos)
                if m is not None:
                    program, last, sid = shape_match[sid][1][m.lastgroup]
                    regs = m.regs
                    for callback, arg, ttype in program:  # (see _encode)
                        if ttype is None:
                            if callback is None:
                                values.append(None)
                            elif arg == 1:
                                values[-1] = callback([values[-1]])
                            elif arg > 0:
                                children = values[-arg:]
                                del values[-arg:]
                                values.append(callback(children))
                            elif arg:
                                start, end = regs[-arg]
                                values.append(callback(text[start:end], line, start - line_start + 1))
                            else:
                                values.append(callback([]))
                        else:
                            start, end = regs[arg]
                            tok = _Tok(ttype, text[start:end], line, start - line_start + 1)
                            values.append(tok if callback is None else callback([tok]))
                    start, pos = regs[last]
                    k = text.count("\n", start, pos)
                    if k:
                        line += k
                        line_start = text.rindex("\n", start, pos) + 1
                    rec = []
                    continue
            match, kinds, unless, memo = rows[sid]
            eol = False
            if pos >= n:
                ttype, tok = "$END", None
            else:
                m = match(text, pos)
                if m is None:
                    raise _Fallback(pos)
                ttype = m.lastgroup
                # one span call: the terminal's group ends where the match ends (lark's
                # alternatives are whole groups, and the blanks skipped come before them)
                pos, end = m.span(ttype)
                value = text[pos:end]
                kind = kinds[ttype]
                tok_line, col = line, pos - line_start + 1
                if kind & NEWLINE:
                    kind -= NEWLINE
                    k = value.count("\n")
                    if k:
                        line += k
                        line_start = pos + value.rindex("\n") + 1
                        eol = True
                    else:
                        rec = None  # a replay could not count its line breaks
                pos = end
                if kind == KEEP:
                    tok = _Tok(ttype, value, tok_line, col)
                elif kind == DROP:
                    tok = None
                elif kind == IGNORE:
                    rec = None  # (a continuation line, or blanks the skip did not take)
                    continue
                else:  # a name that may be a keyword: lark's own callback decides
                    rec = None
                    tok = unless[ttype](_Tok(ttype, value, tok_line, col))
                    ttype = tok.type
                    if ttype in dropped:
                        tok = None
            hit = memo.get(ttype)
            if hit is None:
                hit = self._step(sid, ttype)
            ops, sid, accepted = hit
            for callback, size in ops:
                if size:
                    children = values[-size:]
                    del values[-size:]
                else:
                    children = []
                values.append(callback(children))
            if accepted:
                return values[-1]
            if ttype in term_callbacks:
                rec = None
                tok = term_callbacks[ttype](tok)
            values.append(tok)
            if rec is not None:
                rec.append(ttype)
                if len(rec) == 1:
                    rec_sid = sid
            if eol:  # count the shape of the line just read; a frequent one gets its regex
                if rec is not None and len(rec) > 1:
                    if len(shape_counts) > self.STACK_LIMIT:  # many one-off lines: stay bounded
                        shape_counts.clear()
                    key = (rec_sid, tuple(rec[1:]))
                    seen = shape_counts[key] = shape_counts.get(key, 0) + 1
                    if seen == self.SHAPE_MIN and len(shape_counts) < self.STACK_LIMIT:
                        self._shape(rec_sid, key[1])
                rec = []


@functools.lru_cache(maxsize=None)
def _driver(start: str) -> _Driver:
    return _Driver(_parser(start), start)


_EXPECT_NAMES = {"NAME": "a name", "QUANTITY": "a number", "_NL": "end of line", "LPAR": "'('",
                 "RPAR": "')'", "COMMA": "','", "EQUAL": "'='", "STRING": "a quoted string",
                 "$END": "end of file", "ADD_OP": "'+' or '-'", "MUL_OP": "'*' or '/'", "POW_OP": "'^'",
                 "PAR_OP": "'||'", "CLAIM_OP": "'=' or '~'", "DOT": "'.'", "WITHIN": "'within'",
                 "VALUED_KW": "an element keyword", "CONTROLLED_KW": "an element keyword",
                 "SENSED_KW": "an element keyword", "DEVICE_KW": "a device keyword"}


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
    out, quoted = [], False
    for ch in line:
        if ch == '"':
            quoted = not quoted
        if ch == "#" and not quoted:
            break
        out.append(ch)
    return "".join(out)


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
    diags = Diagnostics()
    if len(text) > MAX_FILE_BYTES or len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise error(Loc(file, 1, 1), f"file larger than {MAX_FILE_BYTES} bytes")
    _check_text(text, file, diags)
    diags.check()
    try:
        stmts = _run("start", text, file, fast=True)
        nl = Netlist(file, text, stmts)
    except InputError as e:
        if any(d.loc is None or d.severity != "error" for d in e.diagnostics):
            raise
        nl = None
    except UnexpectedInput:
        nl = None
    if nl is None:
        nl = _parse_by_line(text, file, diags)
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


def _exprs(s):
    for attr in ("value", "tolerance"):
        v = getattr(s, attr, None)
        if v is not None and not isinstance(v, (str, list)):
            yield v
    for p in getattr(s, "params", ()) or ():
        yield p.value


def _run(start: str, text: str, file: str, fast: bool = False):
    """Parse ``text`` from rule ``start``: the fast loop first (if asked), lark's own loop otherwise.

    Both loops are iterative and the callbacks build the trees bottom-up, so no
    input can exhaust the Python stack here.
    """
    parser = _parser(start)
    with _LOCK:
        _builder(parser).file = file
        try:
            if fast:
                # a few objects per token, all kept: see solver.bulk (about half the time otherwise)
                try:
                    with paused_gc():
                        return _driver(start).run(text)
                except _Fallback:
                    pass
            return parser.parse(text)
        except VisitError as e:
            if isinstance(e.orig_exc, InputError):
                raise e.orig_exc from None
            raise


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
