"""Feedback around one controlled source: return ratio, asymptotic gain, Blackman, margins.

Every quantity here is read from the scenario table (:mod:`solver.analysis.scenarios`) on a
copy of the small-signal element list in which one controlled source X (value k) is
changed; the circuit model itself is never written.

* **Return ratio** T (Bode): X is replaced by an independent source of unit value (a 1 A
  current source for a vccs/cccs, a 1 V voltage source for a vcvs/ccvs), the signal is
  zeroed (its rs stays) and T = -k * x, with x the control variable this produces. T > 0
  at low frequency is negative feedback. By the matrix determinant lemma the MNA matrix,
  affine and of rank one in k, gives 1 + T = det A / det A(k = 0), Bode's return
  difference (the symbolic engine uses that form, :mod:`solver.analysis.symbolic.loop`).
* **Asymptotic gain model** (Rosenstark): G0 is the gain with k = 0 (direct feedthrough);
  G_inf the gain as k -> oo, computed with X replaced by a nullor (its output free, its
  control variable forced to zero); then G = G_inf T/(1 + T) + G0/(1 + T). The three terms
  are computed independently, so the identity is a check, not a definition. For Av the
  input port is driven by an ideal voltage source (the substitution theorem: Av of the
  circuit is Gv with the port voltage as the source), so its T is the return ratio with
  the input port shorted.
* **Blackman's formula**: a port impedance Z = Z_dead (1 + T_short)/(1 + T_open), Z_dead
  at k = 0, T_short and T_open the return ratios with the port shorted and open. Rin is
  seen with the load in place and the signal removed; Rout with the signal zeroed and the
  load removed (the scenario table's definitions).
* **Stability**: the crossover (|T| = 1), the phase margin 180 deg - |arg T| there, the
  gain margin -20 log10 |T| where T is real and negative, and the closed-loop poles (the
  natural frequencies of the circuit with the signal zeroed) with their damping.
* **Double injection** at a node (Middlebrook): the node is split into the side that drives
  it and the side the loop signal leaves toward; a series voltage and a shunt current
  injection give T_v = -v_y/v_x and T_i = -i_y/i_x, and T = (T_v T_i - 1)/(T_v + T_i + 2).
  It equals the return ratio of the loop's controlled source when the loop has one
  controlled source and no reverse path through the break.

References
----------
H. W. Bode, *Network Analysis and Feedback Amplifier Design*, Van Nostrand, 1945, ch. IV
(return ratio, return difference), from memory.
E. S. Rosenstark, "A simplified method of feedback amplifier analysis", IEEE Trans.
Education 17(4), 1974, from memory.
R. B. Blackman, "Effect of feedback on impedance", Bell Syst. Tech. J. 22, 1943, from memory.
R. D. Middlebrook, "Measurement of loop gain in feedback systems", Int. J. Electronics
38(4), 1975, from memory.
"""
from __future__ import annotations

import dataclasses
import difflib
import math
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import frequency as fr
from solver.analysis import scenarios as table
from solver.circuit.elements import (CCCS, CCVS, VCCS, VCVS, CurrentSource, Element, Nullor, VoltageSource)
from solver.circuit.model import Circuit
from solver.circuit.views import load_element, signal_elements, small_signal_elements
from solver.engine.mna import SingularSystem, assemble

#: the controlled sources a loop can be taken around
CONTROLLED = (VCCS, VCVS, CCCS, CCVS)
#: phase margin below which a warning is given (common practice, no source)
PM_WARN_DEG = 45.0
#: names of the elements the analysis adds (never a netlist name: braces are not in NAME)
SHORT, AMMETER, INJECT, SPLIT = "{short}", "{ammeter}", "{inject}", "{x}"


class LoopError(ValueError):
    """The loop cannot be taken as asked (unknown name, an ideal op-amp, a diode ...)."""


# --- the controlled source ------------------------------------------------------------------
@dataclass(frozen=True)
class Around:
    """The controlled source a loop is taken around."""

    name: str          # as asked (Q1, U1, G1, Q1.gm)
    element: Element   # the primitive of the small-signal network
    what: str          # words for the report

    @property
    def k(self) -> complex:
        return self.element.value

    @property
    def loc(self):
        return self.element.loc


def find_source(c: Circuit, name: str, base: list[Element] | None = None) -> Around:
    """The controlled source named ``name``: a transistor (its gm; α·i_e in the T model), an
    op-amp with a finite gain, a vccs/vcvs/cccs/ccvs, or a primitive by full name (``M2.gmb``).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (b, gnd) 1 V\\nnpn Q1 (c, b, e) gm=40m, beta=100\\n"
    ...           "resistor RE (e, gnd) 100\\nresistor RC (c, gnd) 1k\\noutput (c, gnd)\\n")
    >>> find_source(c, "Q1").what
    'gm of npn Q1 (hybrid-pi), VCCS Q1.gm'
    """
    base = small_signal_elements(c) if base is None else base
    by_name = {e.name: e for e in base}
    e = by_name.get(name)
    if isinstance(e, CONTROLLED):
        if e.origin and e.origin != name:
            dev = c.device(e.origin)
            label = f"{dev.kind} {dev.name}" if dev else e.origin
            return Around(name, e, f"{name.rsplit('.', 1)[-1]} of {label}, {type(e).__name__} {e.name}")
        if e.symbol and e.symbol.endswith(".gain"):
            return Around(name, e, f"gain of op-amp {name}, {type(e).__name__} {e.symbol}")
        return Around(name, e, f"{type(e).__name__.lower()} {name}")
    if isinstance(e, Nullor):
        raise LoopError(f"op-amp {name} is ideal (no gain=): its return ratio is infinite and the gain is "
                        f"G_inf itself; give gain= (and gbw= or fp=) to see the loop")
    dev = c.device(name)
    if dev is not None:
        if dev.kind == "diode":
            raise LoopError(f"{name} is a diode: it has no controlled source to take a loop around")
        key = "alpha" if dev.is_bjt and dev.model == "t" else "gm"
        e = by_name.get(f"{name}.{key}")
        if e is None:
            raise LoopError(f"{name} has no controlled source in its small-signal model ({key} is zero)")
        model = f" ({dev.model})" if dev.is_bjt else ""
        what = "α·i_e" if key == "alpha" else "gm"
        return Around(name, e, f"{what} of {dev.kind} {name}{model}, {type(e).__name__} {e.name}")
    names = [d.name for d in c.transistors] + [x.name for x in base if isinstance(x, CONTROLLED)
                                               and (not x.origin or c.device(x.origin) is None)]
    close = difflib.get_close_matches(name, names, n=1)
    hint = f"; did you mean '{close[0]}'?" if close else (f" (one of: {', '.join(names)})" if names
                                                        else " (the circuit has none)")
    raise LoopError(f"--around: '{name}' is not a transistor, op-amp or controlled source{hint}")


@dataclass(eq=False)
class _Null(Element):
    """The controlled source at k -> oo: a nullor. Its output (nodes p, n) carries a free
    branch current j (from p through it to n); its control variable is forced to zero (the
    voltage across ``ctrl``, or the current of ``sense``)."""

    ctrl: tuple[str, ...] = ()
    sense: Element | None = None
    needs_branch = True
    branch_kind = "v"

    def stamp(self, st):
        j = st.branch(self)
        a, b = st.node(self.nodes[0]), st.node(self.nodes[1])
        st.g(a, j, 1)
        st.g(b, j, -1)
        if self.sense is None:
            st.g(j, st.node(self.ctrl[0]), 1)
            st.g(j, st.node(self.ctrl[1]), -1)
            return
        for col, gk, ck in self.sense.current(st):
            if gk != 0:
                st.g(j, col, gk)
            if ck != 0:
                st.c(j, col, ck)

    def current(self, st):
        return [(st.branch(self), 1, 0)]


def swapped(els: list[Element], old: Element, new: Element | None) -> list[Element]:
    """``els`` with ``old`` replaced by ``new`` (dropped when None); senses rewired to ``new``."""
    out = []
    for e in els:
        if e is old:
            if new is not None:
                out.append(new)
            continue
        if isinstance(e, (CCCS, CCVS)) and e.sense is old:
            e = dataclasses.replace(e, sense=new)
        out.append(e)
    return out


def zeroed(src: Element) -> Element:
    """The source at k = 0 (its symbol dropped: the symbolic engine sees a plain 0)."""
    return dataclasses.replace(src, value=0.0, symbol=None)


def nulled(src: Element) -> Element:
    """The source at k -> oo: a nullor in its place."""
    if isinstance(src, (VCCS, VCVS)):
        return _Null(src.name, src.nodes, 0.0, None, src.origin, src.loc, ctrl=tuple(src.ctrl))
    return _Null(src.name, src.nodes, 0.0, None, src.origin, src.loc, sense=src.sense)


def injector(src: Element) -> Element:
    """The unit independent source that replaces ``src`` for the return ratio."""
    if isinstance(src, (VCCS, CCCS)):
        return CurrentSource(src.name, src.nodes, 1.0, None, src.origin, src.loc)
    return VoltageSource(src.name, src.nodes, 1.0, None, src.origin, src.loc)


# --- numeric evaluation over frequencies -------------------------------------------------------
def _control(sys_, src: Element) -> tuple[np.ndarray, np.ndarray]:
    """The control variable of ``src`` as coefficient vectors: x . (rg + s rc)."""
    n = sys_.stamper.size
    rg, rc = np.zeros(n, complex), np.zeros(n, complex)
    st = sys_.stamper
    if isinstance(src, (VCCS, VCVS)):
        for node, sign in ((src.ctrl[0], 1), (src.ctrl[1], -1)):
            if node not in st.ground and node not in st.nodes:  # a control node nothing else touches
                return np.full(n, np.nan, complex), rc               # floats: its voltage is undefined
            i = st.node(node)
            if i is not None:
                rg[i] += sign
        return rg, rc
    for col, gk, ck in src.sense.current(st):
        if col is not None:
            rg[col] += gk
            rc[col] += ck
    return rg, rc


def return_ratio(els: list[Element], ground, src: Element, freqs) -> np.ndarray:
    """T at every frequency of the element list ``els`` (which holds ``src``); nan where singular."""
    inj = swapped(els, src, injector(src))
    sys_ = assemble(inj, ground)
    s = 2j * np.pi * np.asarray(freqs, float)
    x = fr.solve_many(sys_, s)
    rg, rc = _control(sys_, src)
    with np.errstate(all="ignore"):
        return -src.value * (x @ rg + s * (x @ rc))


def _quantity(c: Circuit, quantity: str, base: list[Element], freqs) -> np.ndarray:
    try:
        return fr.response(fr.measured_scenario(c, quantity, base), freqs)
    except SingularSystem:
        return np.full(len(freqs), complex(math.nan, math.nan))


def _short(port) -> Element:
    return VoltageSource(SHORT, tuple(port), 0.0, None, "", None)


def av_circuit(c: Circuit) -> Circuit:
    """The circuit driven by an ideal voltage source at its input port: its Gv is Av of ``c``."""
    return dataclasses.replace(c, signal=dataclasses.replace(c.signal, kind="V", rs=0.0))


# --- the results -------------------------------------------------------------------------------
@dataclass
class Gain:
    """The asymptotic gain model of one gain: arrays over the frequencies."""

    quantity: str
    T: np.ndarray
    G_inf: np.ndarray
    G_0: np.ndarray
    G: np.ndarray   # from the scenario table's own measurement (as solve reports it)

    @property
    def model(self) -> np.ndarray:
        """G_inf T/(1 + T) + G0/(1 + T); undefined (nan) where T = 0: with no loop around the
        source (a grounded-emitter stage), G_inf is infinite and the model degenerates."""
        with np.errstate(all="ignore"):
            return np.where(self.T == 0, complex(math.nan, math.nan),
                            (self.G_inf * self.T + self.G_0) / (1 + self.T))


@dataclass
class Blackman:
    """Z = Z_dead (1 + T_short)/(1 + T_open) at one port: arrays over the frequencies."""

    quantity: str
    dead: np.ndarray
    T_short: np.ndarray
    T_open: np.ndarray
    Z: np.ndarray   # the scenario table's own measurement

    @property
    def formula(self) -> np.ndarray:
        out = np.empty(len(self.dead), complex)
        for k, (zd, ts, to) in enumerate(zip(self.dead, self.T_short, self.T_open)):
            out[k] = blackman_value(complex(zd), complex(ts), complex(to))
        return out


def blackman_value(zd: complex, ts: complex, to: complex) -> complex:
    """Z_dead (1 + T_short)/(1 + T_open), with the degenerate ports: a dead impedance of 0
    stays 0 whatever T_short is (the short meets a voltage source), an infinite one stays
    infinite (an open port node that floats has no T_open).

    Examples
    --------
    >>> blackman_value(1000, 9, 0)
    (10000+0j)
    >>> blackman_value(0, complex("nan"), 4)
    0j
    """
    if zd == 0:
        return 0j
    if not np.isfinite(zd):
        return complex(math.inf, 0)
    if not (np.isfinite(ts) and np.isfinite(to)):
        return complex(math.nan, math.nan)
    return complex(zd * (1 + ts) / (1 + to)) if 1 + to != 0 else complex(math.inf, 0)


@dataclass
class Margins:
    crossover_hz: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    phase_crossover_hz: float | None
    crossings: list[float] = field(default_factory=list)


@dataclass
class Pole:
    s: complex     # rad/s
    zeta: float    # damping ratio -Re(s)/|s|

    @property
    def hz(self) -> float:
        return abs(self.s) / (2 * math.pi)

    @property
    def q(self) -> float | None:
        return None if self.s.imag == 0 else (1 / (2 * self.zeta) if self.zeta > 0 else math.inf)


@dataclass
class Injection:
    """Middlebrook's double injection at a node: arrays T_v, T_i and their combination T."""

    node: str
    toward: list[str]
    v_x: np.ndarray   # the load side's voltage per 1 V injected in series
    i_x: np.ndarray   # the current into the load side per 1 A injected in shunt

    @property
    def T_v(self) -> np.ndarray:
        """-v_y/v_x, with v_y = v_x - 1 V."""
        with np.errstate(all="ignore"):
            return np.where(self.v_x == 0, complex(math.inf, 0), -(self.v_x - 1) / np.where(self.v_x == 0, 1, self.v_x))

    @property
    def T_i(self) -> np.ndarray:
        """-i_y/i_x, with i_y = i_x - 1 A (infinite for an ideal voltage driver: i_x = 0)."""
        with np.errstate(all="ignore"):
            return np.where(self.i_x == 0, complex(math.inf, 0), -(self.i_x - 1) / np.where(self.i_x == 0, 1, self.i_x))

    @property
    def T(self) -> np.ndarray:
        """(T_v T_i - 1)/(T_v + T_i + 2), computed as 1/(1 + T) = 1/(1 + T_v) + 1/(1 + T_i)
        = v_x + i_x, which stays finite where T_v or T_i is infinite."""
        with np.errstate(all="ignore"):
            return 1 / (self.v_x + self.i_x) - 1


# --- the analysis around a controlled source ---------------------------------------------------
@dataclass
class LoopAnalysis:
    around: Around | None
    freqs: np.ndarray
    T: np.ndarray
    gains: dict[str, Gain]
    blackman: dict[str, Blackman]
    quantity: str
    poles: list[Pole] | None
    margins: Margins | None = None
    injection: Injection | None = None
    notes: list[str] = field(default_factory=list)


def gains(c: Circuit, src: Element, base: list[Element], freqs) -> dict[str, Gain]:
    """The asymptotic gain model of the main gain (Gv or Zt) and of Av."""
    out = {}
    b0, binf = swapped(base, src, zeroed(src)), swapped(base, src, nulled(src))
    main = table.main_gain(c)
    for q, cq in ((main, c), ("Av", av_circuit(c))):
        gq = "Gv" if q == "Av" else q
        if table.why_undefined(c, q):
            continue
        dead = table.configuration(cq, "zeroed", True, base).elements
        T = return_ratio(list(dead), c.ground, src, freqs)
        g_inf = np.where(T == 0, complex(math.inf, 0), _quantity(cq, gq, binf, freqs))
        out[q] = Gain(q, T, g_inf, _quantity(cq, gq, b0, freqs), _quantity(c, q, base, freqs))
    return out


def blackman(c: Circuit, src: Element, base: list[Element], freqs) -> dict[str, Blackman]:
    """Blackman's formula at the input (Rin) and the output (Rout) port."""
    b0 = swapped(base, src, zeroed(src))
    loaded = [load_element(c)] if c.load is not None else []
    zeroed_signal = signal_elements(c, 0.0, with_source=False)
    ports = {"Rin": (c.signal.nodes, base + loaded), "Rout": (c.output_port, base + zeroed_signal)}
    out = {}
    for q, (port, els) in ports.items():
        ts = return_ratio(els + [_short(port)], c.ground, src, freqs)
        to = return_ratio(els, c.ground, src, freqs)
        out[q] = Blackman(q, _quantity(c, q, b0, freqs), ts, to, _quantity(c, q, base, freqs))
    return out


def closed_loop_poles(c: Circuit, base: list[Element]) -> list[Pole] | None:
    """Natural frequencies of the circuit with the signal zeroed and the load in place
    (None above the eigenvalue limit of :mod:`solver.analysis.frequency`)."""
    els = list(table.configuration(c, "zeroed", True, base).elements)
    sys_ = assemble(els, c.ground)
    if sys_.stamper.size > fr.EIG_LIMIT:
        return None
    roots = fr.pencil_roots(sys_, fr.Readout(np.zeros(sys_.stamper.size, complex), 1.0))
    out = []
    for p in fr._tidy(roots):
        p = complex(p)
        out.append(Pole(p, -p.real / abs(p) if p != 0 else 1.0))
    return out


def margins(freqs, T, evaluate) -> Margins:
    """Crossover, phase margin and gain margin of T over a sweep.

    ``evaluate(f)`` gives T at one frequency (to refine each crossing by root finding).
    The phase margin is 180 deg - |arg T| at the crossover (the angular distance from -1);
    with several crossovers, the one with the least margin is reported. The gain margin
    is -20 log10 |T| where T crosses the negative real axis (the least, with several);
    None when it does not.

    Examples
    --------
    >>> import numpy as np
    >>> f = np.logspace(0, 6, 121)
    >>> T = lambda f: 1000 / (1 + 1j * f / 10) / (1 + 1j * f / 1e4)
    >>> m = margins(f, T(f), lambda x: complex(T(np.array([x]))[0]))
    >>> round(m.phase_margin_deg, 2), m.gain_margin_db is None
    (51.9, True)
    """
    from scipy.optimize import brentq
    lf = np.log10(np.asarray(freqs, float))
    T = np.asarray(T, complex)
    ok = np.isfinite(T) & (T != 0)
    mag = np.where(ok, np.log(np.abs(np.where(ok, T, 1))), np.nan)

    def refine(fn, a, b):
        try:
            return 10.0 ** brentq(fn, a, b, xtol=1e-13, rtol=1e-13)
        except ValueError:
            return 10.0 ** (0.5 * (a + b))

    crossings = []
    for i in range(len(T) - 1):
        if ok[i] and ok[i + 1] and mag[i] * mag[i + 1] <= 0 and not (mag[i] == 0 and i > 0 and mag[i - 1] * mag[i + 1] > 0):
            if mag[i] == 0:
                crossings.append(float(freqs[i]))
                continue
            crossings.append(refine(lambda x: math.log(abs(evaluate(10.0 ** x))), lf[i], lf[i + 1]))
    phase_cross = []
    for i in range(len(T) - 1):
        if ok[i] and ok[i + 1] and T[i].imag * T[i + 1].imag <= 0 and (T[i].real < 0 or T[i + 1].real < 0):
            if T[i].imag == 0 and T[i].real < 0:
                phase_cross.append(float(freqs[i]))
                continue
            f180 = refine(lambda x: evaluate(10.0 ** x).imag, lf[i], lf[i + 1])
            if evaluate(f180).real < 0:
                phase_cross.append(f180)
    pm = fc = None
    for f in crossings:
        m = 180.0 - abs(math.degrees(np.angle(evaluate(f))))
        if pm is None or m < pm:
            pm, fc = m, f
    gm = f180 = None
    for f in phase_cross:
        g = -20 * math.log10(abs(evaluate(f)))
        if gm is None or g < gm:
            gm, f180 = g, f
    return Margins(fc, pm, gm, f180, crossings)


def analyse_loop(c: Circuit, name: str, freqs, sweep: bool) -> LoopAnalysis:
    """Return ratio, asymptotic gain model, Blackman's formula (and with ``sweep`` the margins)
    around the controlled source ``name`` of a prepared circuit, at the frequencies ``freqs``."""
    base = small_signal_elements(c)
    a = find_source(c, name, base)
    freqs = np.asarray(freqs, float)
    g = gains(c, a.element, base, freqs)
    main = table.main_gain(c)
    res = LoopAnalysis(a, freqs, g[main].T, g, blackman(c, a.element, base, freqs), main,
                       closed_loop_poles(c, base))
    if a.element.origin and c.device(a.element.origin) is not None:
        dev = c.device(a.element.origin)
        if dev.is_bjt and dev.model == "t":
            res.notes.append(f"{dev.name} is drawn with the T model: the loop is taken around α·i_e, whose "
                             "dead network (α = 0) keeps re between base and emitter, so T differs from the "
                             "hybrid-pi model's T around gm (both give the same G)")
    for q, x in g.items():
        if np.any(x.T == 0):
            res.notes.append(f"no loop around {a.name} for {q}" + ("" if np.all(x.T == 0) else " at some frequencies")
                             + ": T = 0, so G_inf is infinite and the asymptotic gain model does not apply "
                             f"({q} is the source's direct transmission alone)")
    if sweep:
        dead = list(table.configuration(c, "zeroed", True, base).elements)
        res.margins = margins(freqs, res.T, lambda f: complex(return_ratio(dead, c.ground, a.element, [f])[0]))
    return res


# --- double injection at a node --------------------------------------------------------------
def _attached(els: list[Element], node: str) -> dict[str, list[Element]]:
    """Netlist names (an element's origin, or its own name) of the primitives touching ``node``."""
    out: dict[str, list[Element]] = {}
    for e in els:
        if node in e.nodes or node in getattr(e, "ctrl", ()):
            out.setdefault(e.origin or e.name, []).append(e)
    return out


def split_node(els: list[Element], node: str, toward: list[str]) -> list[Element]:
    """``els`` with ``node`` split: the terminals of the ``toward`` elements move to NODE{x}."""
    new_node = node + SPLIT
    moved = {}
    out = []
    for e in els:
        if (e.origin or e.name) in toward and (node in e.nodes or node in getattr(e, "ctrl", ())):
            kw = {"nodes": tuple(new_node if n == node else n for n in e.nodes)}
            if hasattr(e, "ctrl"):
                kw["ctrl"] = tuple(new_node if n == node else n for n in e.ctrl)
            ne = dataclasses.replace(e, **kw)
            moved[id(e)] = ne
            out.append(ne)
        else:
            out.append(e)
    # a current-controlled source keeps sensing the same (moved) element
    return [dataclasses.replace(e, sense=moved[id(e.sense)]) if isinstance(e, (CCCS, CCVS)) and
            id(e.sense) in moved else e for e in out]


def break_toward(c: Circuit, node: str, toward: list[str] | None, base: list[Element]) -> list[str]:
    """Check the break point and decide the side the loop signal leaves the node toward.

    Without ``toward`` exactly one of the netlist elements at the node must drive it (a
    controlled source's, transistor's or op-amp's output terminal): every other element is
    the load side.
    """
    if node in c.ground:
        raise LoopError(f"--break: '{node}' is the ground node; break the loop at another node")
    els = list(table.configuration(c, "zeroed", True, base).elements)
    at = _attached(els, node)
    if not at:
        nodes = sorted({n for e in els for n in e.nodes if n not in c.ground and "{" not in n and ":" not in n})
        close = difflib.get_close_matches(node, nodes, n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise LoopError(f"--break: '{node}' is not a node of the circuit{hint}")
    names = sorted(at)
    if toward:
        bad = [t for t in toward if t not in at]
        if bad:
            raise LoopError(f"--toward: {', '.join(bad)} not connected to node '{node}' (there: {', '.join(names)})")
        if set(toward) == set(at):
            raise LoopError(f"--toward: name the elements on one side of '{node}', not all of them")
        return list(toward)
    if len(at) >= 2:
        drivers = [n for n in names if any(isinstance(e, CONTROLLED) and node in e.nodes
                                           or isinstance(e, Nullor) and e.nodes[0] == node for e in at[n])]
        if len(drivers) == 1:
            return [n for n in names if n != drivers[0]]
    raise LoopError(f"--break {node}: say which side the loop signal leaves the node toward with "
                    f"--toward NAME[,NAME] (elements at '{node}': {', '.join(names)})")


def double_injection(c: Circuit, node: str, toward: list[str], freqs) -> Injection:
    """Middlebrook's T_v and T_i at ``node`` split toward the ``toward`` elements, signal zeroed."""
    base = small_signal_elements(c)
    els = split_node(list(table.configuration(c, "zeroed", True, base).elements), node, toward)
    x = node + SPLIT
    s = 2j * np.pi * np.asarray(freqs, float)
    # series voltage injection: v(x) = v(y) + 1 V
    sys_v = assemble(els + [VoltageSource(INJECT, (x, node), 1.0, None, "", None)], c.ground)
    xv = fr.solve_many(sys_v, s)
    vy = xv[:, sys_v.stamper.node(node)]
    vx = xv[:, sys_v.stamper.node(x)]
    # shunt current injection into y; a 0 V ammeter carries i_x from y into the x side
    sys_i = assemble(els + [VoltageSource(AMMETER, (node, x), 0.0, None, "", None),
                            CurrentSource(INJECT, (sorted(c.ground)[0], node), 1.0, None, "", None)], c.ground)
    xi = fr.solve_many(sys_i, s)
    ix = xi[:, sys_i.stamper.branches[AMMETER]]
    # the injection sets v_x - v_y = 1 V and i_x - i_y = 1 A (i_y from the driving side into the node)
    assert np.allclose(vx - vy, 1.0, equal_nan=True) or not np.isfinite(vx).all()
    return Injection(node, list(toward), vx, ix)


def analyse_break(c: Circuit, node: str, toward: list[str] | None, freqs, sweep: bool) -> LoopAnalysis:
    """The loop gain at a node by double injection, with margins over a sweep."""
    base = small_signal_elements(c)
    side = break_toward(c, node, toward, base)
    freqs = np.asarray(freqs, float)
    inj = double_injection(c, node, side, freqs)
    res = LoopAnalysis(None, freqs, inj.T, {}, {}, table.main_gain(c), closed_loop_poles(c, base),
                       injection=inj)
    res.notes.append(REVERSE_CAVEAT)
    if sweep:
        res.margins = margins(freqs, res.T, lambda f: complex(double_injection(c, node, side, [f]).T[0]))
    return res


REVERSE_CAVEAT = ("the double-injection loop gain is a property of the break point: it equals the return "
                  "ratio of a controlled source only when the loop has that one source and no reverse path "
                  "(a signal that returns through the break the other way, e.g. a bilateral passive network or "
                  "a second loop through the node); where there is one, break the loop elsewhere or use --around")
