"""Netlist to circuit model: flatten blocks, resolve names, evaluate and check every value.

Name resolution is lexical: a name is looked up in the scope of the block
instance it appears in, then in the top level. Values are evaluated lazily
and memoised, so ``let`` lines, element values and device quantities may
refer to each other in any order; a cycle is reported with its path.
Errors are collected and reported together.
"""
from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field

from solver.language import expr as ex
from solver.language import units as U
from solver.circuit.devices import BJT_QUANTITIES, DIODE_QUANTITIES, MOS_QUANTITIES, DeviceError, small_signal
from solver.diagnostics import Diagnostics, InputError, Loc, error
from solver.circuit.elements import CCCS, CCVS, VCCS, VCVS, Capacitor, Inductor, Nullor, Resistor, VoltageSource
from solver.circuit.model import PORT_QUANTITIES, Circuit, ClaimSpec, Device, Load, Signal, Supply
from solver.language.statements import (BlockStart, Claim, ElementStmt, End, Ground, Let, Netlist, Output, Param,
                                       Spread, Title, Use)
from solver.language.statements import Spec as SpecStmt

MAX_NESTING = 32
MAX_ELEMENTS = 2_000_000
QUANTITIES = PORT_QUANTITIES

_BJT_PARAMS = {"ic": U.AMP, "beta": U.ONE, "va": U.VOLT, "temp": U.KELVIN, "gm": U.SIEMENS,
               "rpi": U.OHM, "ro": U.OHM, "rx": U.OHM, "cpi": U.FARAD, "cmu": U.FARAD, "ft": U.HERTZ,
               "model": None, "is": U.AMP, "beta_r": U.ONE, "pmax": U.WATT}
_MOS_PARAMS = {"id": U.AMP, "vov": U.VOLT, "lambda": U.PER_VOLT, "gm": U.SIEMENS, "ro": U.OHM,
               "gmb": U.SIEMENS, "cgs": U.FARAD, "cgd": U.FARAD, "k": U.A_PER_V2, "vth": U.VOLT,
               "pmax": U.WATT}
_DIODE_PARAMS = {"is": U.AMP, "n": U.ONE, "id": U.AMP, "rd": U.OHM, "cj": U.FARAD, "temp": U.KELVIN,
                 "pmax": U.WATT}


class BiasPending(InputError):
    """A value that depends on a device's bias point, asked for before the bias solve."""


@dataclass(frozen=True)
class Spec:
    """What a statement keyword takes: node counts per group, value unit(s), parameters."""

    groups: tuple
    value: tuple | None  # allowed dimensions of the positional value
    params: dict
    terminals: str = ""


SPECS = {
    "resistor": Spec((2,), (U.OHM,), {}),
    "capacitor": Spec((2,), (U.FARAD,), {}),
    "inductor": Spec((2,), (U.HENRY,), {}),
    "vccs": Spec((2, 2), (U.SIEMENS,), {}),
    "vcvs": Spec((2, 2), (U.ONE,), {}),
    "cccs": Spec((2,), (U.ONE,), {}),
    "ccvs": Spec((2,), (U.OHM,), {}),
    "supply": Spec((2,), (U.VOLT, U.AMP), {}),
    "signal": Spec((2,), (U.VOLT, U.AMP), {"rs": U.OHM}),
    "load": Spec((2,), (U.OHM,), {}),
    # fp= (or gbw=) beside gain= makes a single-pole op-amp: A(s) = gain / (1 + s/(2 pi fp))
    "opamp": Spec((3,), None, {"gain": U.ONE, "fp": U.HERTZ, "gbw": U.HERTZ}, "OUT INP INN"),
    "npn": Spec((3,), None, _BJT_PARAMS, "C B E"),
    "pnp": Spec((3,), None, _BJT_PARAMS, "C B E"),
    "nmos": Spec(((3, 4),), None, _MOS_PARAMS, "D G S B"),
    "pmos": Spec(((3, 4),), None, _MOS_PARAMS, "D G S B"),
    "diode": Spec((2,), None, _DIODE_PARAMS, "A K"),
}
_DIMS = {"resistor": U.OHM, "capacitor": U.FARAD, "inductor": U.HENRY, "vccs": U.SIEMENS,
         "vcvs": U.ONE, "cccs": U.ONE, "ccvs": U.OHM, "load": U.OHM}


def _suggest(word: str, choices) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1)
    return f"; did you mean '{close[0]}'?" if close else ""


def undefined_message(name: str, known) -> str:
    """An undefined name, with the nearest defined names; a name that reads like an RKM code
    (``R9``, ``k7``) is never taken as a number: the code is written with a leading digit."""
    close = difflib.get_close_matches(name, sorted(known), n=3, cutoff=0.5)
    msg = f"undefined name '{name}'"
    if close:
        msg += "; nearest defined: " + ", ".join(f"'{n}'" for n in close)
    if U.looks_like_rkm(name):
        msg += f" (a value in the RKM code starts with a digit: write 0{name} for {U.rkm_example(name)})"
    return msg


@dataclass
class BlockDef:
    stmt: BlockStart
    body: list
    used: bool = False


@dataclass
class Entry:
    """A name in a scope."""

    kind: str  # let | param | element | device | instance | signal
    loc: Loc
    expr: ex.Expr | None = None
    scope: "Scope | None" = None  # where expr is evaluated / the instance's scope
    full: str = ""
    stmt: ElementStmt | None = None
    used: bool = False


@dataclass
class Scope:
    prefix: str  # "" at the top level, "X1." inside instance X1
    parent: "Scope | None"
    ports: dict[str, str] = field(default_factory=dict)
    names: dict[str, Entry] = field(default_factory=dict)

    def find(self, name: str) -> Entry | None:
        s = self
        while s is not None:
            if name in s.names:
                return s.names[name]
            s = s.parent
        return None


class Resolver:
    """Lazy, memoised evaluation of every named value with cycle detection.

    The symbolic engine reuses :meth:`resolve` to map claim names to symbols.
    """

    def __init__(self, diags: Diagnostics, ground: set[str]):
        self.diags = diags
        self.ground = ground
        self.memo: dict[tuple, ex.Value] = {}
        self.active: list[tuple] = []
        self.devices: dict[str, Device] = {}
        self.top: Scope | None = None

    # -- names -----------------------------------------------------------------
    def resolve(self, ref: ex.Ref, scope: Scope):
        """(entry, attribute or None) for a reference, or raise InputError."""
        head, *rest = ref.parts
        entry = scope.find(head)
        if entry is None:
            if head in ex.CONSTANTS and not rest:
                return None, head
            known = set()
            s = scope
            while s:
                known |= set(s.names)
                s = s.parent
            raise error(ref.loc, undefined_message(head, known))
        entry.used = True
        while entry.kind == "instance" and rest:
            inner = entry.scope.names.get(rest[0])
            if inner is None:
                raise error(ref.loc, f"block instance '{entry.full}' has no '{rest[0]}'"
                            f"{_suggest(rest[0], entry.scope.names)}")
            inner.used = True
            entry, rest = inner, rest[1:]
        if entry.kind == "instance":
            raise error(ref.loc, f"'{ref.name}' is a block instance, not a value")
        if entry.kind in ("let", "param", "element") and rest:
            raise error(ref.loc, f"'{'.'.join(ref.parts[:-len(rest)])}' has no '{'.'.join(rest)}'")
        if entry.kind == "signal":
            if rest not in ([], ["rs"]):
                raise error(ref.loc, f"a signal has only '.rs', not '.{'.'.join(rest)}'")
            return entry, (rest[0] if rest else None)
        if entry.kind == "device":
            dev_kind = entry.stmt.keyword
            allowed = (BJT_QUANTITIES if dev_kind in ("npn", "pnp") else
                       MOS_QUANTITIES if dev_kind in ("nmos", "pmos") else
                       ("gain",) if dev_kind == "opamp" else DIODE_QUANTITIES)
            if len(rest) != 1 or rest[0] not in allowed:
                what = ".".join(rest) if rest else "nothing"
                raise error(ref.loc, f"'{entry.full}' is a {dev_kind}; name one of its quantities "
                            f"({', '.join(entry.full + '.' + q for q in allowed[:6])}...), not {what}"
                            + (_suggest(rest[0], allowed) if len(rest) == 1 else ""))
            return entry, rest[0]
        return entry, None

    def rebound(self, devices) -> "Resolver":
        """A resolver of the same names whose devices are ``devices`` (e.g. a biased copy's).

        Values are evaluated afresh (nothing memoised carries over), so a name that waited
        for the bias (``Q1.gm`` in a claim or a ``let``) has its value here.
        """
        new = Resolver(self.diags, self.ground)
        new.top = self.top
        new.devices = dict(self.devices)
        new.devices.update({d.name: d for d in devices})
        return new

    def lookup(self, scope: Scope):
        return lambda ref: self.value_of_ref(ref, scope)

    def value_of_ref(self, ref: ex.Ref, scope: Scope) -> ex.Value:
        entry, attr = self.resolve(ref, scope)
        if entry is None:
            return ex.Value(ex.CONSTANTS[attr], None)
        return self.value_of(entry, attr, ref.loc)

    # -- values ------------------------------------------------------------------
    def value_of(self, entry: Entry, attr: str | None, where: Loc) -> ex.Value:
        key = (entry.full, attr)
        if key in self.memo:
            return self.memo[key]
        if key in self.active:
            i = self.active.index(key)
            path = " -> ".join(k[0] + (f".{k[1]}" if k[1] else "") for k in self.active[i:] + [key])
            raise error(entry.loc, f"cyclic definition: {path}")
        self.active.append(key)
        try:
            v = self._compute(entry, attr)
        finally:
            self.active.pop()
        self.memo[key] = v
        return v

    def _compute(self, entry: Entry, attr):
        if entry.kind in ("let", "param"):
            return ex.evaluate(entry.expr, self.lookup(entry.scope))
        if entry.kind == "element":
            st = entry.stmt
            v = ex.evaluate(st.value, self.lookup(entry.scope))
            return ex.Value(v.x, v.dim if v.dim is not None else _DIMS.get(st.keyword))
        if entry.kind == "signal":
            st = entry.stmt
            if attr == "rs":
                p = next((p for p in st.params if p.key == "rs"), None)
                if p is None:
                    kind = self.signal_kind(entry)
                    return ex.Value(0.0 if kind == "V" else math.inf, U.OHM)
                v = ex.evaluate(p.value, self.lookup(entry.scope))
                return ex.Value(v.x, U.OHM)
            v = ex.evaluate(st.value, self.lookup(entry.scope))
            return v
        if entry.kind == "device":
            dev = self.device(entry)
            if entry.stmt.keyword == "opamp":
                return ex.Value(dev.params.get("gain", math.inf), U.ONE)
            if attr not in dev.ss:
                if not dev.ss:
                    raise BiasPending(error(entry.loc, f"{entry.full}.{attr} is not known before the bias solve")
                                      .diagnostics)
                raise error(entry.loc, f"{entry.full} has no {attr} (not given and not derivable)")
            return ex.Value(dev.ss[attr], _QDIMS.get(attr))
        raise AssertionError(entry.kind)

    def signal_kind(self, entry: Entry) -> str:
        v = self.value_of(entry, None, entry.loc)
        return "A" if v.dim == U.AMP else "V"

    def device(self, entry: Entry) -> Device:
        if entry.full in self.devices:
            return self.devices[entry.full]
        st = entry.stmt
        spec = SPECS[st.keyword]
        params: dict[str, float] = {}
        model = "hybrid-pi"
        for p in st.params:
            if p.key == "model":
                model = _model_name(p)
                continue
            if p.key not in spec.params:
                continue  # reported by _check_shape; a reference (Q1.re) may get here first
            v = ex.evaluate(p.value, self.lookup(entry.scope))
            want = spec.params[p.key]
            if v.dim is not None and want is not None and v.dim != want:
                raise error(p.value.loc, f"{p.key}= expects {U.dim_name(want)}, got {U.dim_name(v.dim)}")
            params[p.key] = v.x
        names = spec.terminals.split()
        nodes = {t: self.node(n, entry.scope) for t, n in zip(names, st.groups[0])}
        _check_current_sign(st, params)
        dev = Device(st.keyword, entry.full, nodes, params, model, st.loc)
        if st.keyword != "opamp":
            from solver.circuit.devices import needs_bias
            if not needs_bias(dev):
                try:
                    dev.ss = small_signal(dev)
                except DeviceError as e:
                    p = next((p for p in st.params if p.key == e.key), None)
                    raise error(p.loc if p else entry.loc, f"{entry.full}: {e}") from None
        self.devices[entry.full] = dev
        return dev

    def node(self, n, scope: Scope) -> str:
        name = n.name
        if name in self.ground:
            return name
        if name in scope.ports:
            return scope.ports[name]
        return scope.prefix + name


_QDIMS = {"gm": U.SIEMENS, "gmb": U.SIEMENS, "rpi": U.OHM, "ro": U.OHM, "re": U.OHM, "rx": U.OHM,
          "rd": U.OHM, "beta": U.ONE, "alpha": U.ONE, "cpi": U.FARAD, "cmu": U.FARAD, "cgs": U.FARAD,
          "cgd": U.FARAD, "cj": U.FARAD, "ic": U.AMP, "id": U.AMP, "vt": U.VOLT, "vov": U.VOLT,
          "lambda": U.PER_VOLT, "ft": U.HERTZ}


def _check_current_sign(st: ElementStmt, params: dict) -> None:
    """The sign convention of ic= and id=: the bias current's magnitude for every polarity.

    A pnp or pmos may also be given the signed value of the bias report (current into the
    collector or drain, negative in the amplifying region): -1.5 mA and 1.5 mA mean the same.
    An npn or nmos conducts into its collector or drain, so a negative value there is a
    mistake, not a convention.
    """
    key = {"npn": "ic", "nmos": "id"}.get(st.keyword)
    if key and params.get(key, 0.0) < 0:
        p = next(p for p in st.params if p.key == key)
        raise error(p.value.loc, f"{key}= of an {st.keyword} is the current into its "
                    f"{'collector' if key == 'ic' else 'drain'}, positive in the amplifying region "
                    f"(got {params[key]:g} A); a negative {key}= is for a p-type device")


def _model_name(p: Param) -> str:
    v = p.value
    if isinstance(v, ex.Ref) and v.parts in (("t",), ("T",)):
        return "t"
    if isinstance(v, ex.Ref) and v.parts in (("hybrid_pi",), ("hybridpi",)):
        return "hybrid-pi"
    if (isinstance(v, ex.Binary) and v.op == "-" and isinstance(v.left, ex.Ref) and isinstance(v.right, ex.Ref)
            and v.left.parts == ("hybrid",) and v.right.parts == ("pi",)):
        return "hybrid-pi"
    raise error(v.loc, "model= is hybrid-pi or t")


def _opamp_pole(s: ElementStmt, params: dict) -> float | None:
    """The op-amp's pole frequency from fp= or gbw= (= gain * fp); None for a flat gain."""
    where = {p.key: p.value.loc for p in s.params}
    if "fp" in params and "gbw" in params:
        raise error(where["gbw"], "give fp= (pole frequency) or gbw= (gain-bandwidth), not both")
    key = "fp" if "fp" in params else "gbw" if "gbw" in params else None
    if key is None:
        return None
    if "gain" not in params:
        raise error(where[key], f"{key}= needs gain= (the DC open-loop gain)")
    if not (params[key] > 0 and math.isfinite(params[key])):
        raise error(where[key], f"{key} must be a positive frequency")
    if not params["gain"] > 0:
        raise error(where["gain"], "a single-pole op-amp needs a positive gain=")
    return params["fp"] if key == "fp" else params["gbw"] / params["gain"]


def _single_pole_opamp(full: str, nodes, gain: float, fp: float, loc) -> list:
    """gain/(1 + s/wp) as primitives: 1 S into 1 Ω || 1/wp F (a unit pole), then a VCVS of the gain."""
    out, inp, inn = nodes
    pole = f"{full}:pole"
    return [VCCS(f"{full}.gp", ("gnd", pole), 1.0, None, full, loc, ctrl=(inp, inn)),
            Resistor(f"{full}.rp", (pole, "gnd"), 1.0, None, full, loc),
            Capacitor(f"{full}.cp", (pole, "gnd"), 1.0 / (2 * math.pi * fp), None, full, loc),
            VCVS(full, (out, "gnd"), gain, f"{full}.gain", full, loc, ctrl=(pole, "gnd"))]


# ---------------------------------------------------------------------------------
def elaborate(nl: Netlist) -> Circuit:
    """Build the :class:`Circuit` of a parsed netlist, or raise InputError with every problem found.

    Examples
    --------
    >>> from solver.language.parse import parse
    >>> c = elaborate(parse("signal VS (a, gnd) 1 V\\nload RL (a, gnd) 1k\\n"))
    >>> c.load.value
    1000.0
    """
    return _Elaborator(nl).run()


class _Elaborator:
    def __init__(self, nl: Netlist):
        self.nl = nl
        self.diags = Diagnostics()
        self.ground = {"gnd", "0"}
        self.res = Resolver(self.diags, self.ground)
        self.blocks: dict[str, BlockDef] = {}
        self.circuit = Circuit("", nl.file, nl.source)
        self.circuit.ground = self.ground
        self.element_entries: list = []
        self.n_elements = 0
        self.scopes: list[tuple[str, Scope]] = []  # (block name, instance scope)
        self._pending: list = []  # (block body, instance scope), filled while declaring
        self._later: list = []  # spread and spec lines, read once every value is known

    # structure -----------------------------------------------------------------
    def _split_blocks(self) -> list:
        top, stack = [], []
        for s in self.nl.statements:
            if isinstance(s, BlockStart):
                if stack:
                    self.diags.error(s.loc, "blocks are defined at the top level, not inside another block")
                stack.append(BlockDef(s, []))
                continue
            if isinstance(s, End):
                if not stack:
                    self.diags.error(s.loc, "'end' without a 'block'")
                    continue
                b = stack.pop()
                if stack:
                    continue
                if b.stmt.name in self.blocks:
                    self.diags.error(b.stmt.loc, f"block '{b.stmt.name}' is defined twice "
                                     f"(first on line {self.blocks[b.stmt.name].stmt.loc.line})")
                else:
                    self.blocks[b.stmt.name] = b
                continue
            (stack[-1].body if stack else top).append(s)
        for b in stack:
            self.diags.error(b.stmt.loc, f"block '{b.stmt.name}' has no 'end'")
        return top

    def run(self) -> Circuit:
        top_stmts = self._split_blocks()
        # ground aliases first: they change how every node is read
        for s in top_stmts:
            if isinstance(s, Ground):
                self.ground.add(s.node.name)
        top = Scope("", None)
        self.res.top = top
        self._declare(top_stmts, top, depth=0)
        self._build(top_stmts, top)
        self._finish(top)
        self._spreads()
        self.diags.check()
        self.circuit.warnings = self.diags.warnings
        self.circuit.resolver = self.res
        return self.circuit

    def _add_name(self, scope: Scope, name: str, entry: Entry):
        if name in scope.names:
            first = scope.names[name].loc
            self.diags.error(entry.loc, f"'{scope.prefix}{name}' is defined twice (first on line {first.line})")
            return
        if name in ex.CONSTANTS or name in ex.FUNCTIONS:
            self.diags.error(entry.loc, f"'{name}' is a built-in name")
            return
        scope.names[name] = entry

    def _declare(self, stmts, scope: Scope, depth: int, chain=()):
        """First pass: every name of a scope, so that references are order-free."""
        for s in stmts:
            if isinstance(s, Let):
                self._add_name(scope, s.name, Entry("let", s.loc, s.value, scope, scope.prefix + s.name))
            elif isinstance(s, ElementStmt):
                kind = ("signal" if s.keyword == "signal" else
                        "device" if s.keyword in ("npn", "pnp", "nmos", "pmos", "opamp", "diode") else "element")
                self._add_name(scope, s.name, Entry(kind, s.name_loc, s.value, scope, scope.prefix + s.name, s))
            elif isinstance(s, Use):
                self._instantiate(s, scope, depth, chain)

    def _instantiate(self, s: Use, scope: Scope, depth: int, chain):
        b = self.blocks.get(s.block)
        if b is None:
            self.diags.error(s.block_loc, f"unknown block '{s.block}'{_suggest(s.block, self.blocks)}")
            return
        b.used = True
        if s.block in chain or depth >= MAX_NESTING:
            why = "uses itself" if s.block in chain else f"nests deeper than {MAX_NESTING} levels"
            self.diags.error(s.loc, f"block '{s.block}' {why}")
            return
        ports = b.stmt.ports
        if len(s.nodes) != len(ports):
            self.diags.error(s.loc, f"block '{s.block}' has {len(ports)} ports "
                             f"({', '.join(p.name for p in ports)}), got {len(s.nodes)} nodes")
            return
        inner = Scope(scope.prefix + s.instance + ".", self.res.top)
        self.scopes.append((s.block, inner))
        for p, n in zip(ports, s.nodes):
            if p.name in self.ground:
                self.diags.error(p.loc, f"a port cannot be the reference node '{p.name}'")
            inner.ports[p.name] = self.res.node(n, scope)
        given = {p.key: p for p in s.params}
        defaults = {p.key: p for p in b.stmt.params}
        for key, p in given.items():
            if key not in defaults:
                self.diags.error(p.loc, f"block '{s.block}' has no parameter '{key}'{_suggest(key, defaults)}")
        for key, d in defaults.items():
            if key in given:
                e = Entry("param", given[key].loc, given[key].value, scope, inner.prefix + key)
            else:
                e = Entry("param", d.loc, d.value, inner, inner.prefix + key)
            self._add_name(inner, key, e)
        self._add_name(scope, s.instance, Entry("instance", s.loc, None, inner, scope.prefix + s.instance))
        self._declare(b.body, inner, depth + 1, chain + (s.block,))
        self._pending.append((b.body, inner))

    def _build(self, stmts, scope: Scope):
        self._build_scope(stmts, scope, top=True)
        i = 0
        while i < len(self._pending):
            body, inner = self._pending[i]
            self._build_scope(body, inner, top=False)
            i += 1

    def _guard(self, fn, *args):
        try:
            return fn(*args)
        except InputError as e:
            self.diags.items.extend(e.diagnostics)
            return None

    def _build_scope(self, stmts, scope: Scope, top: bool):
        for s in stmts:
            if isinstance(s, Title):
                if not top:
                    self.diags.error(s.loc, "'title' belongs at the top level")
                self.circuit.title = s.text
            elif isinstance(s, Ground):
                if not top:
                    self.diags.error(s.loc, "'ground' belongs at the top level")
            elif isinstance(s, Output):
                if not top:
                    self.diags.error(s.loc, "'output' belongs at the top level")
                elif self.circuit.output is not None:
                    self.diags.error(s.loc, "a second 'output' statement")
                elif len(s.nodes) != 2:
                    self.diags.error(s.loc, f"output takes 2 nodes (P, N), got {len(s.nodes)}")
                else:
                    self.circuit.output = tuple(self.res.node(n, scope) for n in s.nodes)
                    self.circuit.output_loc = s.loc
            elif isinstance(s, Claim):
                if not top:
                    self.diags.error(s.loc, "claims belong at the top level")
                else:
                    self._guard(self._claim, s, scope)
            elif isinstance(s, (Spread, SpecStmt)):
                word = "spread" if isinstance(s, Spread) else "spec"
                if not top:
                    self.diags.error(s.loc, f"'{word}' lines belong at the top level")
                else:
                    self._later.append((s, scope))
            elif isinstance(s, Let):
                entry = scope.names.get(s.name)
                if entry is not None and entry.loc == s.loc:
                    try:
                        self.res.value_of(entry, None, s.loc)
                    except BiasPending:
                        pass  # depends on a bias point: evaluated when first used after the bias solve
                    except InputError as e:
                        self.diags.items.extend(e.diagnostics)
            elif isinstance(s, ElementStmt):
                entry = scope.names.get(s.name)
                if entry is None or entry.stmt is not s:
                    continue  # a duplicate, already reported
                self.n_elements += 1
                if self.n_elements > MAX_ELEMENTS:
                    raise error(s.loc, f"more than {MAX_ELEMENTS} elements")
                self._guard(self._element, s, entry, scope, top)

    def _check_shape(self, s: ElementStmt) -> bool:
        spec = SPECS[s.keyword]
        ok = True
        for want, got in zip(spec.groups, s.groups):
            counts = want if isinstance(want, tuple) else (want,)
            if len(got) not in counts:
                names = spec.terminals or ("P, N" if len(s.groups) == 1 else "")
                self.diags.error(s.groups[0][0].loc if got else s.loc,
                                 f"{s.keyword} takes {' or '.join(map(str, counts))} nodes"
                                 f"{f' ({names})' if names else ''}, got {len(got)}")
                ok = False
        for n in (n for g in s.groups for n in g):
            if n.name[0].isdigit() and n.name != "0":
                self.diags.error(n.loc, f"'{n.name}' is not a node name (names start with a letter or '_'; '0' is ground)")
                ok = False
        for p in s.params:
            if p.key not in spec.params:
                allowed = ", ".join(spec.params) or "none"
                self.diags.error(p.loc, f"{s.keyword} has no parameter '{p.key}'{_suggest(p.key, spec.params)}"
                                 f" (parameters: {allowed})")
                ok = False
        seen = set()
        for p in s.params:
            if p.key in seen:
                self.diags.error(p.loc, f"parameter '{p.key}' given twice")
                ok = False
            seen.add(p.key)
        return ok

    def _value(self, s: ElementStmt, entry: Entry) -> ex.Value:
        v = self.res.value_of(entry, None, s.loc)
        allowed = SPECS[s.keyword].value
        if v.dim is not None and v.dim not in allowed:
            hint = ""
            if v.dim == U.KELVIN and U.OHM in allowed:
                hint = " (K is kelvin; kilo is lowercase k)"
            raise error(s.value.loc, f"{s.keyword} value must be in {' or '.join(map(U.dim_name, allowed))}, "
                        f"got {U.dim_name(v.dim)}{hint}")
        if not math.isfinite(v.x):
            raise error(s.value.loc, f"{s.keyword} value is not finite")
        return v

    def _element(self, s: ElementStmt, entry: Entry, scope: Scope, top: bool):
        """Build one element statement into the circuit: a device, the signal, a supply, the
        load, or a linear primitive."""
        if not self._check_shape(s):
            return
        kw = s.keyword
        nodes = [tuple(self.res.node(n, scope) for n in g) for g in s.groups]
        if kw in ("npn", "pnp", "nmos", "pmos", "diode", "opamp"):
            self._device(s, entry, nodes)
        elif kw == "signal":
            self._signal(s, entry, nodes, top)
        elif kw == "supply":
            v = self._value(s, entry)
            kind = "A" if v.dim == U.AMP else "V"
            short = VoltageSource(entry.full, nodes[0], 0.0, None, entry.full, s.loc) if kind == "V" else None
            self.circuit.supplies.append(Supply(entry.full, nodes[0], kind, v.x, s.loc, short))
        elif kw == "load":
            self._load(s, entry, nodes, top)
        else:
            self._linear(s, entry, nodes, scope)

    def _device(self, s: ElementStmt, entry: Entry, nodes):
        c, full = self.circuit, entry.full
        dev = self.res.device(entry)
        if s.keyword != "opamp":
            if s.keyword in ("nmos", "pmos") and len(nodes[0]) == 4 and nodes[0][3] == nodes[0][2]:
                del dev.nodes["B"]  # the body tied to the source: no body effect
            c.devices.append(dev)
            return
        gain = dev.params.get("gain")
        fp = _opamp_pole(s, dev.params)
        if gain is None:
            c.elements.append(Nullor(full, nodes[0], 0.0, None, full, s.loc))
        elif fp is None:
            out, inp, inn = nodes[0]
            c.elements.append(VCVS(full, (out, "gnd"), gain, f"{full}.gain", full, s.loc, ctrl=(inp, inn)))
        else:
            c.elements.extend(_single_pole_opamp(full, nodes[0], gain, fp, s.loc))

    def _signal(self, s: ElementStmt, entry: Entry, nodes, top: bool):
        c, full = self.circuit, entry.full
        if not top:
            raise error(s.loc, "the signal belongs at the top level (it defines the input port)")
        if c.signal is not None:
            raise error(s.loc, f"a second signal (the first is '{c.signal.name}')")
        v = self._value(s, entry)
        rs = self.res.value_of(entry, "rs", s.loc)
        kind = "A" if v.dim == U.AMP else "V"
        if rs.dim not in (None, U.OHM):
            raise error(s.params[0].value.loc, f"rs= expects Ω, got {U.dim_name(rs.dim)}")
        if rs.x < 0:
            raise error(s.params[0].value.loc, "rs must not be negative")
        if kind == "A" and rs.x == 0:
            raise error(s.params[0].value.loc, "a current signal with rs=0 is shorted")
        c.signal = Signal(full, nodes[0], kind, v.x, rs.x, s.loc)
        c.values[f"{full}.rs"] = rs.x

    def _load(self, s: ElementStmt, entry: Entry, nodes, top: bool):
        c, full = self.circuit, entry.full
        if not top:
            raise error(s.loc, "the load belongs at the top level (it defines the output port)")
        if c.load is not None:
            raise error(s.loc, f"a second load (the first is '{c.load.name}')")
        v = self._value(s, entry)
        if v.x == 0:
            raise error(s.value.loc, "a load of 0 Ω shorts the output")
        if v.x < 0:
            self.diags.warning(s.value.loc, f"negative load value ({v.x:g})")
        c.load = Load(full, nodes[0], v.x, s.loc)
        c.values[full] = v.x

    def _linear(self, s: ElementStmt, entry: Entry, nodes, scope: Scope):
        kw, c, full = s.keyword, self.circuit, entry.full
        v = self._value(s, entry)
        if kw in ("resistor", "capacitor", "inductor") and v.x == 0:
            what = {"resistor": "a 0 Ω resistor is a short: join the nodes instead",
                    "capacitor": "a 0 F capacitor is an open: leave it out",
                    "inductor": "a 0 H inductor is a short: join the nodes instead"}[kw]
            raise error(s.value.loc, what)
        if kw in ("resistor", "capacitor", "inductor") and v.x < 0:
            self.diags.warning(s.value.loc, f"negative {kw} value ({v.x:g})")
        c.values[full] = v.x
        cls = {"resistor": Resistor, "capacitor": Capacitor, "inductor": Inductor, "vccs": VCCS,
               "vcvs": VCVS, "cccs": CCCS, "ccvs": CCVS}[kw]
        kwargs = {}
        if kw in ("vccs", "vcvs"):
            kwargs["ctrl"] = nodes[1]
        if kw in ("cccs", "ccvs"):
            kwargs["sense"] = s.sense  # resolved to an Element in _finish
        c.elements.append(cls(full, nodes[0], v.x, full, full, s.loc, **kwargs))
        self.element_entries.append((s, scope, c.elements[-1]))

    def _claim(self, s: Claim, scope: Scope):
        if s.quantity not in QUANTITIES:
            raise error(s.quantity_loc, f"unknown quantity '{s.quantity}' (one of {', '.join(QUANTITIES)})"
                        f"{_suggest(s.quantity, QUANTITIES)}")
        tol = None
        if s.kind == "approx":
            if s.tolerance is None:
                raise error(s.loc, "an approximate claim needs 'within TOL' (e.g. within 5%)")
            t = ex.evaluate(s.tolerance, self.res.lookup(scope))
            if t.dim not in (None, U.ONE) or not (t.x >= 0):
                raise error(s.tolerance.loc, "the tolerance is a non-negative fraction or percentage")
            tol = t.x
        elif s.tolerance is not None:
            raise error(s.tolerance.loc, "an exact claim (=) takes no tolerance; use '~' for an approximate one")
        try:
            ex.evaluate(s.value, self.res.lookup(scope))  # every name must resolve now
        except BiasPending:
            for r in ex.refs(s.value):  # the names must; bias-derived values come after the bias solve
                self.res.resolve(r, scope)
        self.circuit.claims.append(ClaimSpec(s.quantity, s.kind, s.value, tol, s.loc, s.loc.line))

    def _finish(self, top: Scope):
        c = self.circuit
        by_name = {e.name: e for e in c.elements}
        by_name.update({s.name: s.ss_element for s in c.supplies if s.ss_element is not None})
        for s, scope, el in self.element_entries:
            if isinstance(el, (CCCS, CCVS)):
                ref = s.sense
                entry = self._guard(self.res.resolve, ref, scope)
                if entry is None:
                    continue
                entry = entry[0]
                target = by_name.get(entry.full) if entry is not None else None
                if target is None:
                    if entry is not None and entry.full == (c.load.name if c.load else None):
                        self.diags.error(ref.loc, "the load cannot be a sensing element; sense a resistor in series")
                    elif entry is not None and any(s.name == entry.full for s in c.supplies):
                        self.diags.error(ref.loc, f"current supply '{ref.name}' carries no signal current")
                    elif entry is not None and c.signal and entry.full == c.signal.name:
                        self.diags.error(ref.loc, "the signal cannot be a sensing element; sense a resistor in series")
                    else:
                        self.diags.error(ref.loc, f"'{ref.name}' is not a two-terminal element whose current can be sensed")
                    continue
                if isinstance(target, (CCCS, CCVS)) and target.sense is el:
                    self.diags.error(ref.loc, "two current-controlled sources sense each other")
                    continue
                el.sense = target
        # a chain of current-controlled sources must end at an element that is not one
        for el in c.elements:
            seen, cur = set(), el
            while isinstance(cur, (CCCS, CCVS)) and isinstance(cur.sense, (CCCS, CCVS)):
                if cur.name in seen:
                    self.diags.error(el.loc, f"'{el.name}' senses a loop of current-controlled sources")
                    break
                seen.add(cur.name)
                cur = cur.sense
        if self.diags.errors:
            return
        for d in c.devices:
            for k, v in d.ss.items():
                c.values[f"{d.name}.{k}"] = v
        # a missing signal or output port is the analysis' business (solver.analysis.pipeline):
        # a DC operating point needs neither
        if c.load is not None and c.output is not None and set(c.load.nodes) != set(c.output):
            self.diags.error(c.output_loc, f"the output port differs from the load's nodes "
                             f"({', '.join(c.load.nodes)}); the load defines the output port")
        for port, what in ((c.signal and c.signal.nodes, "input"), (c.output_port if (c.load or c.output) else None, "output")):
            if port and port[0] == port[1]:
                self.diags.error(c.signal.loc if what == "input" else (c.output_loc or c.load.loc),
                                 f"the {what} port's two nodes are the same")
        self._unused(top)

    def _spreads(self):
        """The spread and spec lines (solver.circuit.spreads), after every value is known."""
        from solver.circuit.spreads import spec_line, spread_spec
        seen: dict[tuple, int] = {}
        for s, scope in self._later:
            if isinstance(s, SpecStmt):
                got = self._guard(spec_line, self.res, s, scope, self.nl.source)
                if got is not None:
                    self.circuit.specs.append(got)
                continue
            got = self._guard(spread_spec, self.res, s, scope, SPECS, self.nl.source)
            if got is None:
                continue
            key = (got.target, got.key)
            if key in seen:
                self.diags.error(s.loc, f"{got.name} has a spread already (line {seen[key]})")
                continue
            seen[key] = s.loc.line
            self.circuit.spreads.append(got)

    def _unused(self, top: Scope):
        for name, b in self.blocks.items():
            if not b.used:
                self.diags.warning(b.stmt.loc, f"block '{name}' is never used")
        for name, e in top.names.items():
            if e.kind == "let" and not e.used:
                self.diags.warning(e.loc, f"'{name}' is defined but never used")
        # a let inside a block: unused when no instance of the block uses it
        used: dict[tuple, bool] = {}
        names: dict[tuple, tuple] = {}
        for block, scope in self.scopes:
            for name, e in scope.names.items():
                if e.kind == "let":
                    key = (block, name, e.loc)
                    used[key] = used.get(key, False) or e.used
                    names[key] = (block, name)
        for key, u in used.items():
            if not u:
                block, name = names[key]
                self.diags.warning(key[2], f"'{name}' in block '{block}' is defined but never used")
