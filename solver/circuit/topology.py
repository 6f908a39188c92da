"""Topology checks before any solve: mistakes that make the MNA system singular, named in netlist terms.

Modified nodal analysis fails in a few structural ways, each with a plain
graph reading (see the references):

* a group of nodes with no path to the reference node (floating): nothing
  fixes their potential;
* a group connected to the rest only through current-defined branches (current
  supplies, a current signal, vccs/cccs outputs, a transistor's gm): a *cut set*
  of current sources, so Kirchhoff's current law on the cut cannot hold in
  general and the potentials are undefined;
* a *loop* of voltage-defined branches (voltage supplies, which are shorts in
  the small-signal view, the voltage signal, vcvs/ccvs outputs, op-amp outputs,
  inductors at DC): Kirchhoff's voltage law fixes the same voltage twice;
* a node with a single connection (a warning: it carries no current, and is
  usually a misspelt node name).

Two views: the AC view (any frequency above zero: capacitors and inductors are
impedances) and the DC view (capacitors open, inductors short), used by a solve
at 0 Hz and by the bias solve.

Policy for values (checked in :mod:`solver.circuit.elaborate`): a zero R or L is an
error (it is a short: join the nodes), a zero C is an error (an open: leave it
out), a zero load is an error; a negative R, C, L or load is allowed (active
models use them) with a warning.

References
----------
C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network
analysis", IEEE Trans. Circuits and Systems 22(6), 1975 (from memory).
L. O. Chua, P.-M. Lin, *Computer-Aided Analysis of Electronic Circuits*,
Prentice-Hall 1975, chapter on the topological conditions for a unique
solution: no loops of voltage sources, no cut sets of current sources (from memory).
"""
from __future__ import annotations

import difflib
from typing import NamedTuple

from solver.circuit.elements import Element, Inductor, Nullor, Resistor
from solver.circuit.model import Circuit
from solver.circuit.views import dc_elements, is_reactive, small_signal_elements
from solver.diagnostics import MAX_REPORTED, Diagnostic, Loc

GND = "\0gnd"  # every reference-node alias maps here
MAX_LISTED = 8


class Branch(NamedTuple):
    """One element as the graph checks see it.

    name   -- the name shown to the user (``R1``, ``Q1.gm``, ``VS``)
    kind   -- "r" (an impedance), "v" (voltage-defined), "i" (current-defined)
    nodes  -- the two nodes the branch joins
    senses -- control terminals: they read a voltage and draw no current
    """

    name: str
    kind: str
    nodes: tuple[str, str]
    loc: Loc | None
    senses: tuple[str, ...] = ()
    origin: str = ""  # the netlist element or device it came from
    #: an ideal op-amp's output (a norator to the reference); its two senses are the
    #: inputs, a nullator: v+ = v- with no current
    nullor: bool = False


def branches(elements: list[Element], ground: set[str], view: str = "ac") -> list[Branch]:
    """The graph branches of primitive elements in the AC or the DC view.

    Examples
    --------
    >>> from solver.circuit.elements import Capacitor, Resistor
    >>> [b.kind for b in branches([Resistor("R1", ("a", "0"), 1.0), Capacitor("C1", ("a", "0"), 1.0)], {"0"})]
    ['r', 'r']
    >>> [b.name for b in branches([Capacitor("C1", ("a", "0"), 1.0)], {"0"}, view="dc")]
    []
    """
    canon = (lambda n: GND if n in ground else n)  # noqa: E731
    out = []
    for e in elements:
        kind = e.branch_kind
        if e.reactive:
            if view == "dc":
                if kind == "r":
                    continue  # a capacitor is open at DC
            else:
                kind = "r"  # capacitors and inductors are impedances at any frequency above zero
        if isinstance(e, Nullor):
            out_node, inp, inn = e.nodes
            out.append(Branch(e.name, "v", (canon(out_node), GND), e.loc, (canon(inp), canon(inn)), e.origin,
                              nullor=True))
            continue
        senses = tuple(canon(n) for n in getattr(e, "ctrl", ()) or ())
        out.append(Branch(e.name, kind, (canon(e.nodes[0]), canon(e.nodes[1])), e.loc, senses, e.origin))
    return out


class _Sets:
    """Union-find (disjoint sets) with path halving."""

    def __init__(self):
        self.parent: dict[str, str] = {}

    def find(self, x: str) -> str:
        p = self.parent
        p.setdefault(x, x)
        while p[x] != x:
            p[x] = p[p[x]]
            x = p[x]
        return x

    def union(self, a: str, b: str) -> bool:
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


def is_internal(node: str) -> bool:
    """A node the expansion made (the signal's behind its rs, a transistor's inner base, an
    op-amp's pole): never shown as a node, since the user never wrote it."""
    return node.startswith("{") or ":" in node


def describe_node(node: str, circuit: Circuit) -> str:
    """A node as the messages name it: an internal node by the element it belongs to."""
    if node == GND:
        return "the reference node"
    if node == "{sig}":
        return f"signal '{circuit.signal.name}'" if circuit.signal else "the signal"
    if ":" in node:
        owner = node.split(":", 1)[0]
        kind = next((d.kind for d in circuit.devices if d.name == owner), "op-amp")
        return f"{kind} '{owner}'"
    return f"'{node}'"


def _shown_nodes(nodes) -> list[str]:
    """The nodes of a group as the user wrote them (internal ones only when there is nothing else)."""
    user = [n for n in nodes if not is_internal(n)]
    return sorted(user or nodes)


def reference_hint(circuit: Circuit, nodes, bs) -> str:
    """Why a group may miss the reference: a node spelt like it in another case, or no element on it."""
    ground = sorted(circuit.ground, key=lambda g: g != "gnd")
    alike = [n for n in nodes if n.lower() in ("gnd", "ground") and n not in circuit.ground]
    if alike:
        return (f"; node names are case sensitive: '{alike[0]}' is not the reference node '{ground[0]}' "
                f"(write {ground[0]}, or add 'ground {alike[0]}' to make it another name for the reference)")
    if not any(GND in b.nodes for b in bs):
        return (f"; no element is connected to the reference node '{ground[0]}' (node names are case sensitive; "
                "'ground NODE' makes NODE another name for the reference)")
    return ""


def list_names(items, key=str) -> str:
    """At most MAX_LISTED items, then a count of the rest."""
    items = list(items)
    shown = ", ".join(key(x) for x in items[:MAX_LISTED])
    return shown + (f" and {len(items) - MAX_LISTED} more" if len(items) > MAX_LISTED else "")


def _label(b: Branch) -> str:
    return f"{b.name} (line {b.loc.line})" if b.loc else b.name


def _opamp(b: Branch) -> str:
    return f"op-amp {b.origin or b.name}" + (f" (line {b.loc.line})" if b.loc else "")


def _first_loc(bs, fallback: Loc) -> Loc:
    locs = [b.loc for b in bs if b.loc is not None]
    return min(locs, key=lambda l: (l.line, l.col)) if locs else fallback


class _Ctx(NamedTuple):
    """What every pass of :func:`check_branches` reads."""

    circuit: Circuit
    bs: list
    where: Loc
    dc: str
    context: str
    ports: list

    @property
    def present(self) -> set[str]:
        """Every node a branch touches or senses, and the reference."""
        out = {GND}
        for b in self.bs:
            out.update(b.nodes)
            out.update(b.senses)
        return out


def check_branches(bs: list[Branch], circuit: Circuit, view: str = "ac", port_nodes=(),
                   context: str = "", single: bool = True, tied: bool = False,
                   reactive: bool | None = None) -> list[Diagnostic]:
    """All graph checks on one set of branches; errors and warnings in netlist terms.

    Linear in the number of branches (union-find, one pass per check), so it
    costs about as much as stamping the circuit.

    Parameters
    ----------
    bs : list of Branch
    circuit : Circuit
        For names and the fallback location.
    view : "ac" or "dc"
        Only changes the wording (the branches already reflect the view).
    port_nodes : iterable of str
        Nodes that a port observes: they count as one more connection and must exist.
    context : str
        Appended to each message (e.g. " without the load").
    single : bool
        Also warn about nodes with a single connection.
    tied : bool
        Leave out the groups with no path to the reference that no control input
        reads (the bias solve ties those to the reference through a high resistance,
        with its own warning): their voltage does not change any other result.
    reactive : bool, optional
        Whether the circuit has capacitors or inductors (the DC wording says what the
        view left out); by default :func:`solver.circuit.views.is_reactive`.

    Returns
    -------
    list of Diagnostic
    """
    if view == "dc" and (is_reactive(circuit) if reactive is None else reactive):
        dc = " in the DC view (capacitors open, inductors shorted)"
    else:
        dc = ""
    k = _Ctx(circuit, bs, Loc(circuit.file, 1, 1), dc, context,
             [GND if n in circuit.ground else n for n in port_nodes])
    diags = _port_nodes(k)
    if diags:
        return diags
    diags = _voltage_loops(k) + _nullor_inputs(k) + _floating_groups(k, tied)
    if single:
        diags += _single_connections(k)
    return diags


def _port_nodes(k: _Ctx) -> list[Diagnostic]:
    """A node that only a port observes does not exist in the system."""
    circuit, bs, where, dc, context = k.circuit, k.bs, k.where, k.dc, k.context
    diags: list[Diagnostic] = []
    present = k.present
    for n in dict.fromkeys(k.ports):
        if n not in present:
            diags.append(Diagnostic("error", circuit.output_loc or (circuit.load.loc if circuit.load else where),
                                    f"port node {describe_node(n, circuit)} is not connected to any element{context}{dc}"))
    return diags


def _voltage_loops(k: _Ctx) -> list[Diagnostic]:
    """Loops of voltage-defined branches: Kirchhoff's voltage law fixes a voltage twice."""
    circuit, bs, where, dc, context = k.circuit, k.bs, k.where, k.dc, k.context
    diags: list[Diagnostic] = []
    vsets, vadj = _Sets(), {}
    for b in bs:
        if b.kind != "v":
            continue
        a, c = b.nodes
        if a == c or not vsets.union(a, c):
            loop = [b] if a == c else _path(vadj, a, c) + [b]
            diags.append(Diagnostic(
                "error", b.loc or where,
                f"a loop of voltage-defined branches{dc}: {list_names(loop, _label)}; Kirchhoff's voltage law "
                f"fixes the same voltage twice (add a resistance in the loop or remove one source){context}"))
            continue
        vadj.setdefault(a, []).append((c, b))
        vadj.setdefault(c, []).append((a, b))
    return diags


def _nullor_inputs(k: _Ctx) -> list[Diagnostic]:
    """An ideal op-amp's input pair (a nullator: v+ = v-) on one node, or closing a loop
    of voltage-defined branches (op-amp outputs, norators, left out: their voltage is free) or
    of other input pairs: the input condition then repeats what the loop fixes."""
    circuit, bs, where, dc, context = k.circuit, k.bs, k.where, k.dc, k.context
    diags: list[Diagnostic] = []
    # branches (op-amp outputs, norators, left out: their voltage is free) or of other input
    # pairs: the input condition then repeats what the loop fixes, and nothing sets the output
    nsets, nadj = _Sets(), {}
    for b in bs:
        if b.kind == "v" and not b.nullor and b.nodes[0] != b.nodes[1] and nsets.union(*b.nodes):
            a, c = b.nodes
            nadj.setdefault(a, []).append((c, b))
            nadj.setdefault(c, []).append((a, b))
    for b in bs:
        if not b.nullor:
            continue
        a, c = b.senses
        name = _opamp(b)
        if a == c:
            diags.append(Diagnostic(
                "error", b.loc or where,
                f"{name} has both inputs on {describe_node(a, circuit)}{dc}: its input condition v+ = v- says nothing, "
                f"so nothing sets its output (connect the inputs to different nodes){context}"))
            continue
        if not nsets.union(a, c):
            loop = _path(nadj, a, c)
            diags.append(Diagnostic(
                "error", b.loc or where,
                f"the inputs of {name}, {describe_node(a, circuit)} and {describe_node(c, circuit)}, are already tied by "
                f"{list_names(loop, lambda x: _label(x) if not x.nullor else 'the inputs of ' + _opamp(x))}"
                f"{dc}: its input condition v+ = v- repeats what they fix, so nothing sets its output "
                f"(an input at a supply rail or the signal is an AC short; feed the output back instead){context}"))
            continue
        nadj.setdefault(a, []).append((c, b))
        nadj.setdefault(c, []).append((a, b))
    return diags


def _floating_groups(k: _Ctx, tied: bool) -> list[Diagnostic]:
    """Groups with no path to the reference through impedances and voltage-defined
    branches: a cut set of current sources, floating, or only sensed (see ``tied``)."""
    circuit, bs, where, dc, context = k.circuit, k.bs, k.where, k.dc, k.context
    diags: list[Diagnostic] = []
    sets = _Sets()
    find = sets.find
    present = k.present
    for n in present:
        find(n)
    for b in bs:
        if b.kind != "i":
            sets.union(*b.nodes)
    root = find(GND)
    members: dict[str, list[str]] = {}
    for n in present:
        r = find(n)
        if r != root:
            members.setdefault(r, []).append(n)
    if members:
        inner: dict[str, list[Branch]] = {}
        cut: dict[str, list[Branch]] = {}
        sensed: dict[str, list[Branch]] = {}
        idle: dict[str, list[Branch]] = {}  # elements with both ends on one node of the group
        for b in bs:
            ra, rb = find(b.nodes[0]), find(b.nodes[1])
            if b.nodes[0] == b.nodes[1] and ra != root:
                idle.setdefault(ra, []).append(b)
            if b.kind != "i":
                if ra != root:
                    inner.setdefault(ra, []).append(b)
            elif ra != rb:
                for r in {ra, rb} - {root}:
                    cut.setdefault(r, []).append(b)
            for r in {find(n) for n in b.senses} - {root, ra, rb}:
                sensed.setdefault(r, []).append(b)
        for r, nodes in list(members.items())[:MAX_REPORTED]:
            shown = list_names(_shown_nodes(nodes), lambda n: describe_node(n, circuit))
            hint = reference_hint(circuit, nodes, bs)
            one = len(_shown_nodes(nodes)) == 1
            what = "node" if one else "nodes"
            if r in cut:
                c_ = cut[r]
                msg = (f"{what} {shown} connect{'s' if one else ''} to the rest of the circuit only through "
                       f"current-defined branch{'es' if len(c_) > 1 else ''} {list_names(c_, _label)}{dc}: a cut set "
                       f"of current sources leaves {'its' if one else 'their'} voltage undefined (add a "
                       f"resistance to the reference, e.g. a transistor's ro or a bias resistor){context}{hint}")
                loc = _first_loc(c_, where)
            elif r in inner:
                if tied and r not in sensed:
                    continue
                msg = (f"{what} {shown} {'has' if one else 'have'} no path to the reference node{dc}{context}"
                       f" (joined by {list_names(inner[r], _label)}){hint}")
                if tied:
                    msg += (f"; {list_names(sensed[r], _label)} read{'s' if len(sensed[r]) == 1 else ''}"
                            f" {'its' if one else 'their'} voltage, so the bias is undefined (add a bias"
                            " resistor to a fixed voltage)")
                loc = _first_loc(inner[r], where)
            else:
                s_ = sensed.get(r, [])
                msg = (f"{what} {shown} {'is' if one else 'are'} only sensed by {list_names(s_, _label)}"
                       f" (a control input draws no current): nothing sets {'its' if one else 'their'}"
                       f" voltage{dc}{context}{hint}")
                loc = _first_loc(s_, where)
            if r in idle:  # the likely cause is the element that joins nothing: blame it, not its neighbours
                i_ = idle[r]
                msg = (f"{list_names(i_, _label)} {'has' if len(i_) == 1 else 'have'} both ends on "
                       f"{describe_node(i_[0].nodes[0], circuit)}, so {'it joins' if len(i_) == 1 else 'they join'} "
                       f"nothing: {msg}")
                loc = _first_loc(i_, where)
            diags.append(Diagnostic("error", loc, msg))
    return diags


def _single_connections(k: _Ctx) -> list[Diagnostic]:
    """Nodes with a single connection (warnings), with a spelling hint."""
    circuit, bs, where, dc, context = k.circuit, k.bs, k.where, k.dc, k.context
    diags: list[Diagnostic] = []
    count: dict[str, int] = {}
    first: dict[str, Branch] = {}
    for b in bs:
        for n in {*b.nodes, *b.senses}:
            count[n] = count.get(n, 0) + 1
            first.setdefault(n, b)
    for n in k.ports:
        count[n] = count.get(n, 0) + 1
    lonely = [n for n, m in count.items() if m == 1 and n != GND and not n.startswith("{") and ":" not in n]
    busy = [n for n, m in count.items() if m >= 2 and n != GND] if len(lonely) <= MAX_REPORTED else []
    at = _node_locs(circuit) if lonely else {}
    for n in lonely[:MAX_REPORTED]:
        b = first[n]
        hint = difflib.get_close_matches(n, busy, n=1) if busy else []
        diags.append(Diagnostic(
            "warning", at.get((b.origin, n)) or b.loc or where,
            f"node {describe_node(n, circuit)} has a single connection ({_label(b)}): no current flows "
            f"through it{'; did you mean ' + repr(hint[0]) + '?' if hint else ''}"))
    return diags


def _in_line_order(diags: list[Diagnostic]) -> list[Diagnostic]:
    """Errors, then warnings, each in line order."""
    def key(d):
        return (d.severity != "error", (d.loc.line, d.loc.col) if d.loc else (0, 0))
    return sorted(diags, key=key)


def _path(adj: dict, a: str, b: str) -> list[Branch]:
    """The branches on the (unique) path from a to b in a forest, by breadth-first search."""
    prev = {a: None}
    todo = [a]
    while todo:
        nxt = []
        for n in todo:
            for m, br in adj.get(n, ()):
                if m not in prev:
                    prev[m] = (n, br)
                    nxt.append(m)
        todo = nxt
        if b in prev:
            break
    out = []
    while prev.get(b):
        b, br = prev[b]
        out.append(br)
    return out[::-1]


def check(circuit: Circuit, configs, view: str = "ac") -> list[Diagnostic]:
    """Topology diagnostics of the configurations an analysis solves.

    Parameters
    ----------
    circuit : Circuit
        For names and locations.
    configs : list of (list of Element, str)
        Each configuration's elements and the words its messages end with
        (e.g. " without the load"); the first is the main one. The scenario
        table (:mod:`solver.analysis.scenarios`) gives them.
    view : "ac" or "dc"

    Returns
    -------
    list of Diagnostic
        Errors first, then warnings, without repeats. Single connections are
        counted once, in the AC view of the first configuration; after the
        first configuration with errors the others are not checked (its errors
        explain theirs).

    Examples
    --------
    >>> from solver.api import loads
    >>> from solver.circuit.views import load_element, signal_elements, small_signal_elements
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nresistor R2 (c, d) 1k\\nload RL (a, gnd) 1k\\n")
    >>> els = small_signal_elements(c) + signal_elements(c) + [load_element(c)]
    >>> [d.message.split(":")[0] for d in check(c, [(els, "")]) if d.severity == "error"]
    ["nodes 'c', 'd' have no path to the reference node (joined by R2 (line 3))"]
    """
    port_nodes = tuple(circuit.output_port) if circuit.has_output else ()
    seen, errors, warnings = set(), [], []
    for i, (elements, context) in enumerate(configs):
        found = check_branches(branches(elements, circuit.ground, view), circuit, view, port_nodes, context,
                               single=(i == 0 and view == "ac"))
        if i == 0 and view != "ac":
            found += [d for d in check_branches(branches(elements, circuit.ground, "ac"), circuit, "ac",
                                                port_nodes, "", single=True) if d.severity == "warning"]
        for d in found:
            key = d.message.replace(context, "") if context else d.message
            if key in seen:
                continue
            seen.add(key)
            (errors if d.severity == "error" else warnings).append(d)
        if errors:
            break
    return _in_line_order(errors + warnings)


def check_two_port(circuit: Circuit, view: str = "ac") -> list[Diagnostic]:
    """Topology diagnostics of the network that ``portwise twoport`` measures.

    The network is the circuit without its signal and load; the graph checks run
    with both ports terminated (a resistance across each), the configuration of
    the S-parameter measurement, so that a fault inside the network is named
    instead of every matrix coming out as "does not exist".

    Parameters
    ----------
    circuit : Circuit
    view : "ac" or "dc"

    Returns
    -------
    list of Diagnostic
        Errors first, then warnings.

    Examples
    --------
    >>> from solver.api import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nresistor R2 (x, y) 1k\\nload RL (b, gnd) 1k\\n")
    >>> [d.message.split(" (joined")[0] for d in check_two_port(c) if d.severity == "error"]
    ["nodes 'x', 'y' have no path to the reference node with both ports terminated"]
    """
    if circuit.signal is None or not circuit.has_output:
        return []
    ends = [Resistor("port 1 termination", tuple(circuit.signal.nodes), 1.0, None, "", circuit.signal.loc),
            Resistor("port 2 termination", tuple(circuit.output_port), 1.0, None, "",
                     circuit.output_loc or (circuit.load.loc if circuit.load else None))]
    network = branches(small_signal_elements(circuit), circuit.ground, view)
    present = {GND} | {n for b in network for n in (*b.nodes, *b.senses)}
    diags = []
    for k, end in enumerate(ends, 1):
        for n in dict.fromkeys(GND if n in circuit.ground else n for n in end.nodes):
            if n not in present:
                diags.append(Diagnostic("error", end.loc or Loc(circuit.file, 1, 1),
                                        f"port {k} node {describe_node(n, circuit)} is not connected to any element of "
                                        "the network (the two-port leaves out the signal and the load)"))
    if diags:
        return diags
    diags = check_branches(network + branches(ends, circuit.ground, view), circuit, view,
                           context=" with both ports terminated")
    return _in_line_order(diags)


def device_branches(c: Circuit) -> list[Branch]:
    """The large-signal devices as graph branches of the bias solve's DC view.

    A transistor's junctions and a diode conduct (impedances: "r"); a MOSFET's channel
    joins drain and source, and its gate only reads a voltage (a sense).

    Examples
    --------
    >>> from solver.api import loads
    >>> c = loads("supply VDD (vdd, gnd) 5 V\\nsignal VS (g, gnd) 1 V\\nnmos M1 (d, g, gnd) k=1m, vth=1\\n"
    ...           "resistor RD (vdd, d) 1k\\noutput (d, gnd)\\n")
    >>> [(b.name, b.nodes, b.senses) for b in device_branches(c)]
    [('M1', ('d', '\\x00gnd'), ('g',))]
    """
    canon = (lambda n: GND if n in c.ground else n)  # noqa: E731
    out = []
    for d in c.devices:
        t = {k: canon(n) for k, n in d.nodes.items()}
        if d.is_bjt:
            out += [Branch(d.name, "r", (t["B"], t["E"]), d.loc, (), d.name),
                    Branch(d.name, "r", (t["B"], t["C"]), d.loc, (), d.name)]
        elif d.is_mos:
            out.append(Branch(d.name, "r", (t["D"], t["S"]), d.loc, (t["G"],), d.name))
        else:
            out.append(Branch(d.name, "r", (t["A"], t["K"]), d.loc, (), d.name))
    return out


def check_bias(circuit: Circuit, linear: list[Element]) -> list[Diagnostic]:
    """Graph checks of the bias solve's DC view, before Newton–Raphson starts.

    Parameters
    ----------
    circuit : Circuit
    linear : list of Element
        The linear elements at DC (:func:`solver.analysis.bias.dc_elements`): supplies at their
        values, the signal zeroed behind its rs, the load in place.

    Returns
    -------
    list of Diagnostic
        Errors: loops of voltage-defined branches (inductors are shorts here), cut sets
        of current-defined branches, and groups with no DC path to the reference whose
        voltage a control input reads (a MOSFET gate, an op-amp input, a controlled
        source). A group that nothing reads is left to the bias solve, which ties it to
        the reference and warns.

    Examples
    --------
    >>> from solver.api import loads
    >>> from solver.analysis.bias import dc_elements
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nsignal VS (a, gnd) 1 mV\\ninductor L1 (vcc, gnd) 1 mH\\n"
    ...           "resistor R1 (a, gnd) 1k\\nload RL (a, gnd) 10k\\n")
    >>> [d.message.split(";")[0] for d in check_bias(c, dc_elements(c))]
    ['a loop of voltage-defined branches in the DC view (capacitors open, inductors shorted): L1 (line 3), VCC (line 1)']
    """
    bs = branches(linear, circuit.ground, "dc") + device_branches(circuit)
    diags = check_branches(bs, circuit, "dc", single=False, tied=True,
                           reactive=any(e.reactive for e in linear))
    return _in_line_order(diags)


def check_dc_sources(circuit: Circuit, ac_checked: bool = False) -> list[Diagnostic]:
    """The DC view's checks that every command runs: can the supplies' own laws hold?

    Whatever the analysis, the circuit must have a DC state: a loop of voltage-defined
    branches in the DC view (two supplies on one rail, an inductor across a supply) fixes
    a voltage twice, and a group of nodes that a current supply feeds with no other DC path
    (``supply I1 (b, c) 1 mA`` with nothing else at b) breaks Kirchhoff's current law. Both
    are errors at the element's line. Floating groups are left to the analyses that need
    them (the bias solve ties them to the reference; a small-signal analysis does not see DC).

    With ``ac_checked`` (the small-signal checks run too) only what the AC view cannot see
    is reported: loops through a supply that an inductor closes (in the AC view it is an
    impedance; a loop of an inductor and the zeroed signal carries no DC source, so it
    does not matter to a small-signal analysis) and the current supplies' cut sets (in the
    AC view a current supply is open).

    Examples
    --------
    >>> from solver.api import loads
    >>> c = loads("supply I1 (b, c) 1 mA\\nsignal VS (c, gnd) 1 V\\nresistor R1 (c, gnd) 1k\\n"
    ...           "output (c, gnd)\\n")
    >>> [d.loc.line for d in check_dc_sources(c)]
    [1]
    """
    current_supplies = {s.name for s in circuit.supplies if s.kind == "A"}
    bs = [b._replace(senses=(), nullor=False) for b in branches(dc_elements(circuit), circuit.ground, "dc")
          if b.kind != "i" or b.name in current_supplies]
    bs += [b._replace(senses=()) for b in device_branches(circuit)]
    dc = " in the DC view (capacitors open, inductors shorted)" if is_reactive(circuit) else " in the DC view"
    k = _Ctx(circuit, bs, Loc(circuit.file, 1, 1), dc, "", [])
    loops = _inductor_loops(k) if ac_checked else _voltage_loops(k)
    return _in_line_order(loops + _floating_groups(k, tied=True))


def _inductor_loops(k: _Ctx) -> list[Diagnostic]:
    """Loops of voltage-defined branches that an inductor closes (the DC view's own loops).

    The other voltage-defined branches are joined first without a word (a loop of them is
    the AC view's to report), then each inductor: one whose ends are already joined closes
    a loop.
    """
    inductors = {e.name for e in k.circuit.elements if isinstance(e, Inductor)}
    supplies = {s.name for s in k.circuit.supplies}
    sets, adj, diags = _Sets(), {}, []
    for b in k.bs:
        if b.kind == "v" and b.name not in inductors and b.nodes[0] != b.nodes[1] and sets.union(*b.nodes):
            adj.setdefault(b.nodes[0], []).append((b.nodes[1], b))
            adj.setdefault(b.nodes[1], []).append((b.nodes[0], b))
    for b in k.bs:
        if b.kind != "v" or b.name not in inductors:
            continue
        a, c = b.nodes
        if a == c or not sets.union(a, c):
            loop = [b] if a == c else _path(adj, a, c) + [b]
            if not supplies & {x.name for x in loop}:
                continue
            diags.append(Diagnostic(
                "error", b.loc or k.where,
                f"a loop of voltage-defined branches{k.dc}: {list_names(loop, _label)}; Kirchhoff's voltage law "
                "fixes the same voltage twice (add a resistance in the loop or remove one source)"))
            continue
        adj.setdefault(a, []).append((c, b))
        adj.setdefault(c, []).append((a, b))
    return diags


def _node_locs(c: Circuit) -> dict[tuple[str, str], Loc]:
    """(element or device full name, node) -> where the node is written in its statement.

    Read from the elaborated scopes (:class:`solver.circuit.elaborate.Resolver`), so that a
    warning about a node can put its caret under the node name itself.
    """
    res = c.resolver
    top = getattr(res, "top", None)
    out: dict[tuple[str, str], Loc] = {}
    if top is None:
        return out
    todo, seen = [top], set()
    while todo:
        scope = todo.pop()
        if id(scope) in seen:
            continue
        seen.add(id(scope))
        for entry in scope.names.values():
            if entry.kind == "instance" and entry.scope is not None:
                todo.append(entry.scope)
            stmt = entry.stmt
            if stmt is None or entry.scope is None:
                continue
            for group in getattr(stmt, "groups", ()):
                for node in group:
                    out.setdefault((entry.full, res.node(node, entry.scope)), node.loc)
    return out
