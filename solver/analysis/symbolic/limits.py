"""The limits a designer takes, applied to rational functions on the engine's own polynomials.

A claim that is not exact is usually a hand formula that drops something on
purpose: the output resistance (ro → ∞), the base current (β → ∞ with gm fixed),
the load (RL → ∞), the source resistance (rs → 0), the coupling capacitors
(shorted), the device capacitances (opened). :func:`designer_moves` lists those
moves for a circuit -- and only those: a move such as rπ → 0 would set β to zero,
which changes the device rather than idealising it, so it is never offered.

Every quantity here is a ratio of two polynomials of the engine's ring over the
generators ``[s] + circuit symbols`` (those of
:class:`solver.analysis.symbolic.ports.SymbolicQuantity`). A limit along a
ray x_i -> x_i * t^w_i, t -> ∞, keeps the terms of highest weight sum(w_i m_i) in
numerator and denominator: when the two weights differ the limit is 0 or
unbounded, otherwise it is the ratio of the two top parts. One symbol to infinity
is w = +1, to zero w = -1; "gm → ∞ with β = gm·rπ fixed" is w = (+1, -1) on (gm, rπ).
A T-model α → 1 substitutes α = 1 - ε and sends ε to 0. "The halves match" maps
each symbol of one half of a symmetric circuit onto its mirror image. All of this
is exact; one symbol's limits stay inside python-flint (derivatives, exact division by the
symbol, substitution), the others cost one pass over the terms (R. Courant, F. John, *Introduction to
Calculus and Analysis*, vol. 1, limits of rational functions, from memory).

Identity of two rational functions is tested by cross-multiplying in the engine's
ring (python-flint when installed, :class:`solver.engine.symbolic.ring.Ring`).
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

from solver.engine.symbolic.stamper import S_NAME

#: default bounds of the exact-when search (per claim)
SEARCH_SECONDS = 0.75
MAX_COMBINATIONS = 2000
MAX_TERMS = 50_000  # above this many terms in the exact quantity only single moves are tried

_INF, _ZERO = "inf", "zero"  # degenerate limits


# --- rational functions on the engine's ring ------------------------------------------------------
@dataclass(frozen=True)
class Rat:
    """num/den, two polynomials of one :class:`~solver.engine.symbolic.ring.Ring` (den == 0: unbounded)."""

    num: object
    den: object
    ring: object

    @property
    def nterms(self) -> int:
        return len(self.num) + len(self.den)

    @property
    def gens(self) -> list[str]:
        return list(self.ring.names)

    def dicts(self) -> tuple[dict, dict]:
        """(num, den) as {exponent tuple: Fraction}."""
        return self.ring.to_dict(self.num), self.ring.to_dict(self.den)

    def value(self, point) -> complex:
        """Numeric value at one complex number per generator."""
        d = self.ring.evaluate(self.den, point)
        n = self.ring.evaluate(self.num, point)
        if d == 0:
            return complex(math.inf) if n != 0 else complex(math.nan)
        return n / d


def from_dicts(ring, num: dict, den: dict) -> Rat:
    """A Rat from {exponent tuple: Fraction} numerator and denominator over ``ring``'s generators."""
    return Rat(ring.from_dict(num), ring.from_dict(den), ring)


def _top(d: dict, weights):
    """(highest weight, the terms of that weight) of a polynomial along ``weights`` [(index, w)]."""
    best, part = None, {}
    for m, c in d.items():
        k = 0
        for i, w in weights:
            k += m[i] * w
        if best is None or k > best:
            best, part = k, {m: c}
        elif k == best:
            part[m] = c
    return best, part


def _strip(d: dict, i: int) -> dict:
    """Set the exponent of generator i to 0 in a top part (one power of it, so no terms merge)."""
    return {m[:i] + (0,) + m[i + 1:]: c for m, c in d.items()}


def _extreme_flint(p, i: int, up: bool, x):
    """(weight, coefficient) of the highest (up) or lowest power of generator i in a flint polynomial.

    The highest: the d-th derivative over d!; the lowest: divide by x while x = 0 is a root,
    then set x = 0. Both stay in C (python-flint), with no pass over the terms in Python.
    """
    if up:
        d = p.degrees()[i]
        c = p
        for _ in range(d):
            c = c.derivative(i)
        return d, (c / math.factorial(d) if d > 1 else c)
    k = 0
    at0 = p.subs({i: 0})
    while at0 == 0:
        p = p / x
        k += 1
        at0 = p.subs({i: 0})
    return -k, at0


def ray_limit(r: Rat, weights) -> Rat | str:
    """Limit of r as x_i -> x_i t^w_i, t -> oo: a Rat, or "zero" / "inf" when degenerate."""
    ring = r.ring
    if r.num == 0:
        return _ZERO
    if r.den == 0:
        return _INF
    if ring.backend == "flint" and len(weights) == 1 and abs(weights[0][1]) == 1:
        i, w = weights[0]
        x = ring.gens[i]
        wn, pn = _extreme_flint(r.num, i, w > 0, x)
        wd, pd = _extreme_flint(r.den, i, w > 0, x)
        if wn > wd:
            return _INF
        if wn < wd:
            return _ZERO
        return Rat(pn, pd, ring)
    num, den = r.dicts()
    wn, pn = _top(num, weights)
    wd, pd = _top(den, weights)
    if wn > wd:
        return _INF
    if wn < wd:
        return _ZERO
    if len(weights) == 1:
        i = weights[0][0]
        pn, pd = _strip(pn, i), _strip(pd, i)
    return Rat(ring.from_dict(pn), ring.from_dict(pd), ring)


def _reflect(d: dict, i: int) -> dict:
    """x_i -> 1 - x_i (binomial expansion; device polynomials are of low degree in α)."""
    out: dict = {}
    for m, c in d.items():
        k = m[i]
        for j in range(k + 1):
            coef = c * math.comb(k, j) * (-1) ** j
            key = m[:i] + (j,) + m[i + 1:]
            out[key] = out.get(key, 0) + coef
    return {k: v for k, v in out.items() if v}


def _compose(r: Rat, images) -> Rat:
    """Substitute generator i by ``images[i]`` (flint compose)."""
    return Rat(r.num.compose(*images), r.den.compose(*images), r.ring)


def to_one(r: Rat, i: int) -> Rat | str:
    """Limit as x_i -> 1 (x_i = 1 - ε, ε -> 0)."""
    ring = r.ring
    if ring.backend == "flint":
        images = list(ring.gens)
        images[i] = ring.one - ring.gens[i]
        return ray_limit(_compose(r, images), [(i, -1)])
    num, den = r.dicts()
    return ray_limit(Rat(ring.from_dict(_reflect(num, i)), ring.from_dict(_reflect(den, i)), ring), [(i, -1)])


def merge(r: Rat, pairs) -> Rat:
    """Replace generator b by generator a for every (a, b) in pairs (x_b := x_a)."""
    ring = r.ring
    if ring.backend == "flint":
        images = list(ring.gens)
        for a, b in pairs:
            images[b] = ring.gens[a]
        return _compose(r, images)

    def one(d):
        out: dict = {}
        for m, c in d.items():
            k = list(m)
            for a, b in pairs:
                k[a] += k[b]
                k[b] = 0
            t = tuple(k)
            out[t] = out.get(t, 0) + c
        return {k: v for k, v in out.items() if v}
    num, den = r.dicts()
    return Rat(ring.from_dict(one(num)), ring.from_dict(one(den)), ring)


def identical(a: Rat, b: Rat) -> bool:
    """a and b are the same rational function: a.num*b.den - b.num*a.den == 0 in the ring."""
    if a.den == 0 or b.den == 0:
        return a.den == 0 and b.den == 0 and (a.num == 0) == (b.num == 0)
    return a.num * b.den - b.num * a.den == 0


# --- the moves ---------------------------------------------------------------------------------------------
@dataclass
class Move:
    """One designer's limit.

    key   -- machine form, ``NAME -> oo`` / ``NAME -> 0`` (joined by `` and `` for a group)
    words -- how a designer says it (``Q1.β → ∞ (gm fixed)``, ``CIN shorted``)
    symbols -- generator indices it touches (two moves on one symbol are not combined)
    """

    key: str
    words: str
    symbols: frozenset
    kind: str  # "ray", "one", "merge"
    arg: object

    @property
    def cost(self) -> int:
        """0: one symbol's ray (stays in flint), 1: compose (α → 1, the halves), 2: a ray of several symbols."""
        if self.kind == "ray":
            return 0 if len(self.arg) == 1 else 2
        return 1

    def apply(self, r):
        if isinstance(r, str):
            return r
        if self.kind == "ray":
            return ray_limit(r, self.arg)
        if self.kind == "one":
            return to_one(r, self.arg)
        return merge(r, self.arg)


def _ray(key, words, weights):
    return Move(key, words, frozenset(i for i, _ in weights), "ray", list(weights))


_DEVICE_CAP_WORDS = {"cpi": "cπ", "cmu": "cμ"}


def designer_moves(c, gens, values=None, s: complex = 0j, exact: Rat | None = None) -> list[Move]:
    """The limits a designer takes in circuit ``c``, over the generators ``gens`` ([s] + symbols).

    Order: the devices' ideal limits, the load and the source, capacitors, then the
    other resistors both ways. ``values`` (symbol -> nominal value), ``s`` and
    ``exact`` let a capacitor be classed as coupling/bypass (shorting it changes
    ``exact`` at ``s`` less than opening it) or not.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (b, gnd) 1 mV, rs=1k\\nnpn Q1 (c, b, gnd) gm=40m, rpi=2k5, ro=100k\\n"
    ...           "resistor RC (c, gnd) 5k\\noutput (c, gnd)\\n")
    >>> from solver.analysis.symbolic.ports import circuit_symbols
    >>> [m.words for m in designer_moves(c, ["s"] + circuit_symbols(c))][:4]
    ['Q1.ro → ∞', 'Q1.β → ∞ (gm fixed)', 'Q1.gm → ∞ (rπ fixed)', 'Q1.gm → ∞ (β fixed)']
    """
    from solver.analysis.symbolic.ports import scenario_elements
    from solver.circuit.elements import Capacitor, Inductor, Resistor
    idx = {g: i for i, g in enumerate(gens)}
    els = [e for e in scenario_elements(c) if e.symbol in idx]
    models = {d.name: d for d in c.devices}
    sig = c.signal.name if c.signal is not None else None
    load = c.load.name if c.load is not None else None
    device, source, caps, dcaps, inductors, resistors = [], [], [], [], [], []
    by_dev: dict[str, dict[str, object]] = {}
    for e in els:
        if e.origin != e.symbol and e.symbol.startswith(e.origin + "."):
            by_dev.setdefault(e.origin, {})[e.symbol[len(e.origin) + 1:]] = e
    for dev, parts in by_dev.items():
        i = lambda a: idx[f"{dev}.{a}"]  # noqa: E731
        model = models.get(dev)
        is_t = model is not None and model.model == "t"
        if dev == sig:
            if "rs" in parts:
                source.append(_ray(f"{dev}.rs -> 0", f"{dev}.rs → 0 (ideal source)", [(i("rs"), -1)]))
            continue
        if "ro" in parts:
            device.append(_ray(f"{dev}.ro -> oo", f"{dev}.ro → ∞", [(i("ro"), 1)]))
        if is_t:
            if "alpha" in parts:
                device.append(Move(f"{dev}.alpha -> 1", f"{dev}.β → ∞ (α → 1)", frozenset({i("alpha")}), "one",
                                   i("alpha")))
            if "re" in parts:
                device.append(_ray(f"{dev}.re -> 0", f"{dev}.gm → ∞ (re → 0, α fixed)", [(i("re"), -1)]))
        else:
            if "rpi" in parts:
                device.append(_ray(f"{dev}.rpi -> oo", f"{dev}.β → ∞ (gm fixed)", [(i("rpi"), 1)]))
            if "gm" in parts:
                fixed = " (rπ fixed)" if "rpi" in parts else ""
                device.append(_ray(f"{dev}.gm -> oo", f"{dev}.gm → ∞{fixed}", [(i("gm"), 1)]))
                if "rpi" in parts:
                    device.append(_ray(f"{dev}.gm -> oo with {dev}.beta fixed", f"{dev}.gm → ∞ (β fixed)",
                                       [(i("gm"), 1), (i("rpi"), -1)]))
        if "gmb" in parts:
            device.append(_ray(f"{dev}.gmb -> 0", f"{dev}.gmb → 0 (no body effect)", [(i("gmb"), -1)]))
        if "rx" in parts:
            device.append(_ray(f"{dev}.rx -> 0", f"{dev}.rx → 0", [(i("rx"), -1)]))
        if "rmu" in parts:
            device.append(_ray(f"{dev}.rmu -> oo", f"{dev}.rμ → ∞", [(i("rmu"), 1)]))
        if "gain" in parts:
            device.append(_ray(f"{dev}.gain -> oo", f"{dev} ideal (gain → ∞)", [(i("gain"), 1)]))
        for a, e in parts.items():
            if isinstance(e, Capacitor):
                dcaps.append(e.symbol)
                device.append(_ray(f"{e.symbol} -> 0", f"{dev}.{_DEVICE_CAP_WORDS.get(a, a)} opened",
                                   [(idx[e.symbol], -1)]))
    for e in els:
        if e.origin != e.symbol:
            continue
        k = idx[e.symbol]
        if isinstance(e, Capacitor):
            caps.append(e.symbol)
        elif isinstance(e, Inductor):
            inductors.append(e.symbol)
        elif isinstance(e, Resistor):
            if e.symbol == load:
                source.append(_ray(f"{e.symbol} -> oo", f"{e.symbol} → ∞ (unloaded)", [(k, 1)]))
            else:
                resistors.append(_ray(f"{e.symbol} -> oo", f"{e.symbol} → ∞", [(k, 1)]))
                resistors.append(_ray(f"{e.symbol} -> 0", f"{e.symbol} → 0", [(k, -1)]))
    coupling = [x for x in caps if _short_like(exact, idx[x], values, gens, s)]
    cap_moves = []
    if S_NAME in idx and len(caps) + len(dcaps) + len(inductors) > 1:  # one alone: its own name says it
        if caps and coupling == caps and not dcaps and not inductors:
            inf_words = "coupling capacitors shorted (s → ∞)" if len(caps) > 1 else f"{caps[0]} shorted (s → ∞)"
        else:
            inf_words = "every capacitor shorted" + (", every inductor opened" if inductors else "") + " (s → ∞)"
        cap_moves.append(_ray(f"{S_NAME} -> oo", inf_words, [(idx[S_NAME], 1)]))
        cap_moves.append(_ray(f"{S_NAME} -> 0", "DC: every capacitor opened (s → 0)", [(idx[S_NAME], -1)]))
    if len(coupling) > 1 and (len(coupling) < len(caps) or dcaps or inductors):
        cap_moves.append(_ray(" and ".join(f"{x} -> oo" for x in coupling),
                              f"coupling capacitors shorted ({', '.join(coupling)})",
                              [(idx[x], 1) for x in coupling]))
    if len(dcaps) > 1:
        cap_moves.append(_ray(" and ".join(f"{x} -> 0" for x in dcaps), "device capacitances opened",
                              [(idx[x], -1) for x in dcaps]))
    for x in caps:
        cap_moves.append(_ray(f"{x} -> oo", f"{x} shorted", [(idx[x], 1)]))
        cap_moves.append(_ray(f"{x} -> 0", f"{x} opened", [(idx[x], -1)]))
    for x in inductors:
        cap_moves.append(_ray(f"{x} -> 0", f"{x} shorted", [(idx[x], -1)]))
        cap_moves.append(_ray(f"{x} -> oo", f"{x} opened", [(idx[x], 1)]))
    moves = device + source + cap_moves + resistors
    halves = matched_halves(c, gens)
    if halves:
        pairs = [(idx[a], idx[b]) for a, b in halves]
        moves.insert(0, Move("halves match: " + ", ".join(f"{b} = {a}" for a, b in halves), "the halves match",
                             frozenset(), "merge", pairs))
    return moves


def _short_like(exact, i, values, gens, s) -> bool:
    """A capacitor whose short changes ``exact`` at s less than its opening: coupling or bypass."""
    if exact is None or values is None:
        return True
    point = [s] + [values[g] for g in gens[1:]]
    v0 = exact.value(point)
    if not all(map(math.isfinite, (v0.real, v0.imag))):
        return True

    def dist(lim):
        if isinstance(lim, str):
            return math.inf
        v = lim.value(point)
        return abs(v - v0) if all(map(math.isfinite, (v.real, v.imag))) else math.inf
    return dist(ray_limit(exact, [(i, 1)])) <= dist(ray_limit(exact, [(i, -1)]))


# --- symmetric halves ----------------------------------------------------------------------------------------
def _close(a, b) -> bool:
    a, b = complex(a), complex(b)
    return abs(a - b) <= 1e-12 * max(abs(a), abs(b), 1e-300)


def matched_halves(c, gens) -> list[tuple[str, str]]:
    """Symbol pairs (a, b) of a circuit made of two mirror halves, or [] when it is not.

    Devices of the same kind with equal small-signal values are paired; their
    terminals give a node swap (an involution fixing ``gnd``) under which every
    other element must map onto an element of the same kind and value (or onto
    itself, as a load between the two outputs does). The signal's own elements are
    left out: a differential drive is antisymmetric. Only a proposal: the claim is
    tested exactly after the substitution.
    """
    from solver.analysis.symbolic.ports import scenario_elements
    names = set(gens)
    sig = c.signal.name if c.signal is not None else None
    els = [e for e in scenario_elements(c) if e.origin != sig]
    devs: dict[str, dict] = {}
    passive = []
    for e in els:
        if e.symbol is not None and e.origin != e.symbol and e.symbol.startswith(e.origin + "."):
            devs.setdefault(e.origin, {})[e.symbol[len(e.origin) + 1:]] = e
        else:
            passive.append(e)

    def same(p, q):
        return (set(p) == set(q)
                and all(type(p[a]) is type(q[a]) and _close(p[a].value, q[a].value) for a in p))
    node_map: dict[str, str] = {g: g for g in c.ground}
    pairs = []
    used = set()

    def bind(x, y, trial):
        for u, v in ((x, y), (y, x)):
            if trial.get(u, v) != v:
                return False
            trial[u] = v
        return True
    order = list(devs)
    for k, a in enumerate(order):
        if a in used:
            continue
        for b in order[k + 1:]:
            if b in used or not same(devs[a], devs[b]):
                continue
            trial = dict(node_map)
            ok = all(bind(x, y, trial) for attr in devs[a] for x, y in zip(devs[a][attr].nodes, devs[b][attr].nodes))
            if ok:
                node_map = trial
                used |= {a, b}
                pairs += [(devs[a][attr].symbol, devs[b][attr].symbol) for attr in sorted(devs[a])]
                break
    if not pairs:
        return []
    done = set()
    for e in passive:
        if e.name in done:
            continue
        want = tuple(node_map.get(n, n) for n in e.nodes)
        if set(want) == set(e.nodes):
            done.add(e.name)
            continue
        mate = next((f for f in passive if f is not e and f.name not in done and type(f) is type(e)
                     and _close(f.value, e.value) and set(f.nodes) == set(want)), None)
        if mate is None:
            return []
        done |= {e.name, mate.name}
        if e.symbol is not None and mate.symbol is not None:
            pairs.append((e.symbol, mate.symbol))
    return [(a, b) for a, b in pairs if a in names and b in names]


# --- the search ------------------------------------------------------------------------------------------
@dataclass
class Search:
    """What the exact-when search found and how far it looked."""

    found: list = field(default_factory=list)  # lists of Move, applied in order
    tried: int = 0
    total: int = 0
    complete: bool = True
    reason: str = ""  # why it stopped early ("" when complete)

    @property
    def keys(self) -> list[str]:
        return [" and ".join(m.key for m in ms) for ms in self.found]

    @property
    def words(self) -> list[str]:
        return [" and ".join(m.words for m in ms) for ms in self.found]

    def note(self) -> str:
        if self.complete:
            return ""
        return f"stopped looking after {self.tried} of {self.total} limits and pairs of limits ({self.reason})"


def _good(r) -> bool:
    return not isinstance(r, str) and r.num != 0 and r.den != 0


def search(exact: Rat, claimed: Rat, moves, seconds: float = SEARCH_SECONDS,
           max_combinations: int = MAX_COMBINATIONS, max_terms: int = MAX_TERMS) -> Search:
    """The moves, then pairs of moves, under which ``claimed`` becomes identical to ``exact``.

    A move that makes the exact quantity 0 or unbounded is not offered (it says
    nothing about the formula). Pairs are tried only when no single move works.
    The search stops after ``seconds`` or ``max_combinations`` and says so.
    """
    t0 = time.perf_counter()
    rank = {id(m): k for k, m in enumerate(moves)}
    moves = sorted(moves, key=lambda m: (m.cost, rank[id(m)]))  # cheap ones first: a time limit cuts the dear
    singles = []
    out = Search()
    n = len(moves)
    pairs_total = sum(1 for i in range(n) for j in range(i + 1, n) if not moves[i].symbols & moves[j].symbols)
    out.total = n + pairs_total

    def stop(reason=None):
        if reason:
            out.complete, out.reason = False, reason
        out.found.sort(key=lambda ms: [rank[id(m)] for m in ms])  # reported in the designer's order
        return out
    for m in moves:
        if time.perf_counter() - t0 > seconds:
            return stop(f"time limit {seconds:g} s")
        out.tried += 1
        le, lc = m.apply(exact), m.apply(claimed)
        if not _good(le) or not _good(lc):
            singles.append(None)
            continue
        singles.append((le, lc))
        if identical(le, lc):
            out.found.append([m])
    if out.found:
        out.total = n  # pairs are not needed
        return stop()
    if exact.nterms > max_terms:
        return stop(f"the exact quantity has {exact.nterms} terms, over {max_terms}")
    for i in range(n):
        if singles[i] is None:
            out.tried += sum(1 for j in range(i + 1, n) if not moves[i].symbols & moves[j].symbols)
            continue
        for j in range(i + 1, n):
            if moves[i].symbols & moves[j].symbols:
                continue
            if out.tried >= max_combinations:
                return stop(f"limit of {max_combinations} combinations")
            if time.perf_counter() - t0 > seconds:
                return stop(f"time limit {seconds:g} s")
            out.tried += 1
            le, lc = moves[j].apply(singles[i][0]), moves[j].apply(singles[i][1])
            if _good(le) and _good(lc) and identical(le, lc):
                out.found.append(sorted([moves[i], moves[j]], key=lambda m: rank[id(m)]))
    return stop()
