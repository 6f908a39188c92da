"""Hand estimates of the band edges: open- and short-circuit time constants, Miller pole.

The capacitors fall in two groups by their role at midband: coupling and
bypass capacitors are shorts there (low-frequency group), device and wiring
capacitances are opens (high-frequency group). A capacitor is put in the
low-frequency group when its time constant with every other capacitor open
exceeds 1/omega_mid, i.e. its reactance at midband is below the resistance
it sees (common practice, no source).

* Open-circuit time constants (high corner): each high-frequency capacitor
  sees R_j0 with the other high-frequency capacitors open and the
  low-frequency ones shorted; omega_H ~ 1 / sum(R_j0 C_j).
* Short-circuit time constants (low corner): each low-frequency capacitor
  sees R_js with the other low-frequency capacitors shorted and the
  high-frequency ones open; omega_L ~ sum(1 / (R_js C_j)).
* Miller (single inverting stage): the feedback capacitance C_f between the
  control node and the output appears at the input as C_f (1 - K) with K the
  midband gain between those nodes; omega_M = 1 / (R_in0 (C_in + C_f (1 - K))).

Resistances are found by the same MNA stamps as everything else: a 1 A test
source across the capacitor's nodes, independent sources zeroed (the signal's
rs stays), shorted capacitors as 0 V sources.

References
----------
P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, *Analysis and Design of
Analog Integrated Circuits*, 5th ed., sections 7.2 (Miller effect) and 7.3
(zero-value / open-circuit time constants; short-circuit time constants),
from memory.
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., chapter 10
(low- and high-frequency response of the CS and CE amplifiers), from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

from solver.analysis import scenarios as table
from solver.circuit.elements import Capacitor, CurrentSource, Element, Inductor, VoltageSource
from solver.circuit.model import Circuit
from solver.engine.mna import SingularSystem, assemble

MAX_CAPACITORS = 200


@dataclass
class Term:
    """One capacitor's contribution: C, the resistance it sees, its group."""

    name: str
    capacitance: float
    resistance: float | None  # None: no finite resistance (no DC path)
    group: str  # "low" | "high"

    @property
    def tau(self) -> float | None:
        return None if self.resistance is None else self.resistance * self.capacitance


@dataclass
class Estimates:
    octc_f_high_hz: float | None = None
    sctc_f_low_hz: float | None = None
    miller_f_high_hz: float | None = None
    terms: list[Term] = field(default_factory=list)
    #: why an estimate is missing: key is the estimate name
    reasons: dict[str, str] = field(default_factory=dict)
    miller: dict = field(default_factory=dict)


def _config(c: Circuit, quantity: str, drive: bool) -> list[Element]:
    """The quantity's configuration of the scenario table: driven by the signal, or zeroed."""
    loaded = table.TABLE[quantity].loaded
    return list(table.configuration(c, "signal" if drive else "zeroed", loaded).elements)


def _with(els: list[Element], open_: set[str], short: set[str]) -> list[Element]:
    """Capacitors named in open_ removed, those in short replaced by 0 V sources."""
    out = []
    for e in els:
        if isinstance(e, Capacitor) and e.name in open_:
            continue
        if isinstance(e, Capacitor) and e.name in short:
            out.append(VoltageSource(f"{{short {e.name}}}", e.nodes, 0.0, None, "", None))
            continue
        out.append(e)
    return out


def resistance_seen(els: list[Element], ground: set[str], cap: Capacitor) -> float | None:
    """DC resistance between the capacitor's nodes in ``els`` (without the capacitor itself)."""
    a, b = cap.nodes
    rest = [e for e in els if e is not cap] + [CurrentSource("{test}", (b, a), 1.0, None, "", None)]
    try:
        sys_ = assemble(rest, ground)
        x = sys_.solve(0.0)
    except (SingularSystem, KeyError):
        return None
    r = (sys_.voltage(x, a) - sys_.voltage(x, b)).real
    return r if math.isfinite(r) else None


def estimate(c: Circuit, quantity: str, midband_hz: float) -> Estimates:
    """OCTC, SCTC and Miller estimates for the circuit's response ``quantity``.

    Parameters
    ----------
    c : Circuit
    quantity : str
        The port quantity; it decides whether the load is in place.
    midband_hz : float
        Where the flat top is; it sorts the capacitors into the two groups.

    Returns
    -------
    Estimates
        Missing estimates carry a reason in ``reasons``.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, b) 10u\\n"
    ...           "resistor R1 (b, gnd) 1k\\ncapacitor C2 (b, gnd) 1n\\noutput (b, gnd)\\n")
    >>> e = estimate(c, "Gv", 1000.0)
    >>> round(e.sctc_f_low_hz, 3), round(e.octc_f_high_hz)
    (7.958, 318310)
    """
    est = Estimates()
    els = _config(c, quantity, drive=False)
    caps = [e for e in els if isinstance(e, Capacitor) and e.value > 0 and e.nodes[0] != e.nodes[1]]
    if any(isinstance(e, Inductor) for e in els):
        for k in ("octc", "sctc", "miller"):
            est.reasons[k] = "the circuit has inductors; the time-constant methods here treat capacitors only"
        return est
    if not caps:
        for k in ("octc", "sctc", "miller"):
            est.reasons[k] = "no capacitors"
        return est
    if len(caps) > MAX_CAPACITORS:  # two solves per capacitor: a hand method for hand-sized circuits
        for k in ("octc", "sctc", "miller"):
            est.reasons[k] = f"more than {MAX_CAPACITORS} capacitors ({len(caps)}); no hand estimate"
        return est
    w_mid = 2 * math.pi * midband_hz
    names = {e.name for e in caps}
    low, high = set(), set()
    for cap in caps:
        r = resistance_seen(_with(els, names - {cap.name}, set()), c.ground, cap)
        (low if r is None or w_mid * r * cap.value > 1 else high).add(cap.name)
    for cap in caps:
        if cap.name in high:  # OCTC: other high-group open, low group shorted
            r = resistance_seen(_with(els, high - {cap.name}, low), c.ground, cap)
            est.terms.append(Term(cap.name, cap.value, r, "high"))
        else:  # SCTC: other low-group shorted, high group open
            r = resistance_seen(_with(els, high, low - {cap.name}), c.ground, cap)
            est.terms.append(Term(cap.name, cap.value, r, "low"))
    hi = [t for t in est.terms if t.group == "high"]
    lo = [t for t in est.terms if t.group == "low"]
    if not hi:
        est.reasons["octc"] = "no capacitor is an open at midband"
    elif any(t.tau is None for t in hi):
        est.reasons["octc"] = "a capacitor sees no finite resistance"
    else:
        est.octc_f_high_hz = 1.0 / (2 * math.pi * sum(t.tau for t in hi))
    if not lo:
        est.reasons["sctc"] = "no capacitor is a short at midband"
    elif any(t.tau is None or t.tau == 0 for t in lo):
        est.reasons["sctc"] = "a capacitor sees no finite, non-zero resistance"
    else:
        est.sctc_f_low_hz = sum(1.0 / t.tau for t in lo) / (2 * math.pi)
    _miller(c, quantity, est, low, high)
    return est


def _miller(c: Circuit, quantity: str, est: Estimates, low: set[str], high: set[str]) -> None:
    tr = c.transistors
    if len(tr) != 1:
        est.reasons["miller"] = "the Miller estimate is for a single-transistor stage"
        return
    d = tr[0]
    n = d.name
    if d.is_bjt:
        ctrl = f"{n}:b" if d.ss.get("rx", 0) > 0 else d.nodes["B"]
        outn, com = d.nodes["C"], d.nodes["E"]
        cin, cf = f"{n}.cpi", f"{n}.cmu"
    else:
        ctrl, outn, com = d.nodes["G"], d.nodes["D"], d.nodes["S"]
        cin, cf = f"{n}.cgs", f"{n}.cgd"
    if cf not in high:
        est.reasons["miller"] = f"{cf} is not given (no feedback capacitance)"
        return
    els = _with(_config(c, quantity, drive=True), high, low)
    try:
        sys_ = assemble(els, c.ground)
        x = sys_.solve(0.0)
    except SingularSystem:
        est.reasons["miller"] = "the midband circuit is singular"
        return
    vb, vc, ve = (sys_.voltage(x, k) for k in (ctrl, outn, com))
    if vb == 0 or abs(ve) > 1e-6 * abs(vb):
        est.reasons["miller"] = f"{n} is not in a common-emitter/common-source connection at midband"
        return
    gain = (vc / vb).real
    if gain >= 0:
        est.reasons["miller"] = f"{n} is not an inverting stage (gain {gain:.3g})"
        return
    term = {t.name: t for t in est.terms}
    cap_in = term[cin].capacitance if cin in term else 0.0
    # the resistance at the control node with every high-group capacitor open
    r_in = resistance_seen(_with(_config(c, quantity, drive=False), high, low), c.ground,
                           Capacitor("{probe}", (ctrl, com), 1.0))
    if r_in is None or r_in <= 0:
        est.reasons["miller"] = "no finite resistance at the input node"
        return
    c_m = term[cf].capacitance * (1 - gain)
    est.miller_f_high_hz = 1.0 / (2 * math.pi * r_in * (cap_in + c_m))
    est.miller = {"device": n, "gain": gain, "r_in": r_in, "c_in": cap_in + c_m, "c_miller": c_m}
