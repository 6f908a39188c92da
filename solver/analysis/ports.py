"""Port quantities from the numeric MNA engine.

Definitions (phasor ratios at s = j*2*pi*f):

* Rin  = v_in/i_in at the input port (signal's P, N), load in place;
* Rout = Thevenin impedance at the output port, load removed, signal zeroed (its rs stays);
* Avo  = v_out/v_in without the load;  Av = v_out/v_in with it;
* Gv   = v_out/v_sig with rs and load;  Gvo = same without the load;
* Ai   = i_load/i_in (only with a load);
* for a current signal Zt = v_out/i_sig (and Zto unloaded) replace Gv and Gvo.

Each quantity comes from its own solve of the same stamped circuit with the
signal, the load or a test source changed, so nothing is approximated.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.circuit.devices import expand
from solver.circuit.elements import CurrentSource, Element, Resistor, VoltageSource
from solver.engine.mna import SingularSystem, assemble
from solver.circuit.model import Circuit

INF = complex(math.inf, 0)
UNITS = {"Rin": "ohm", "Rout": "ohm", "Avo": "V/V", "Av": "V/V", "Gv": "V/V", "Gvo": "V/V",
         "Ai": "A/A", "Zt": "ohm", "Zto": "ohm"}
SIG_INT = "{sig}"  # the internal node between a Thevenin source and its rs


class PortError(Exception):
    """The port quantities cannot be computed (singular system); message names the scenario."""


def small_signal_elements(c: Circuit) -> list[Element]:
    """Passive/controlled elements, supplies as shorts (V) or opens (A), and expanded devices."""
    out = list(c.elements)
    out.extend(s.ss_element for s in c.supplies if s.ss_element is not None)
    for d in c.devices:
        out.extend(expand(d))
    return out


def signal_elements(c: Circuit, amplitude: float = 1.0, with_source: bool = True) -> list[Element]:
    """The signal as a Thevenin (V) or Norton (A) source with its rs; amplitude 0 zeroes it."""
    sig = c.signal
    p, n = sig.nodes
    out: list[Element] = []
    if sig.kind == "V":
        if sig.rs != 0:
            out.append(Resistor(f"{sig.name}.rs", (SIG_INT, p), sig.rs, f"{sig.name}.rs", sig.name, sig.loc))
            out.append(VoltageSource(sig.name, (SIG_INT, n), amplitude, None, sig.name, sig.loc))
        else:
            out.append(VoltageSource(sig.name, (p, n), amplitude, None, sig.name, sig.loc))
    else:
        if math.isfinite(sig.rs):
            out.append(Resistor(f"{sig.name}.rs", (p, n), sig.rs, f"{sig.name}.rs", sig.name, sig.loc))
        if with_source:
            # Norton: the source pushes i_sig into P (flows from N through the source to P)
            out.append(CurrentSource(sig.name, (n, p), amplitude, None, sig.name, sig.loc))
    return out


def load_element(c: Circuit) -> Element:
    ld = c.load
    return Resistor(ld.name, ld.nodes, ld.value, ld.name, ld.name, ld.loc)


@dataclass
class PortResult:
    frequency_hz: float
    quantities: dict[str, complex] = field(default_factory=dict)
    signal_kind: str = "V"


def _ratio(a: complex, b: complex) -> complex:
    if b == 0:
        return INF if a != 0 else complex(math.nan)
    return a / b


def _drive(c: Circuit, base, s: complex, loaded: bool):
    """Solve with the signal at amplitude 1: (v_in, i_in, v_out, i_load, v_sig)."""
    els = base + signal_elements(c, 1.0)
    if loaded:
        els.append(load_element(c))
    sys_ = assemble(els, c.ground)
    x = sys_.solve(s)
    p, n = c.signal.nodes
    v_in = sys_.voltage(x, p) - sys_.voltage(x, n)
    if c.signal.kind == "V":
        # branch current of the source flows from its + node through it: into the circuit is -j
        i_in = -sys_.branch_current(x, c.signal.name)
    else:
        i_in = 1.0 - (v_in / c.signal.rs if math.isfinite(c.signal.rs) else 0.0)
    op, on = c.output_port
    v_out = sys_.voltage(x, op) - sys_.voltage(x, on)
    i_load = None
    if loaded:
        lp, ln = c.load.nodes
        i_load = (sys_.voltage(x, lp) - sys_.voltage(x, ln)) / c.load.value
    return v_in, i_in, v_out, i_load


def output_impedance(c: Circuit, base, s: complex) -> complex:
    """Thevenin impedance at the output port: load removed, signal zeroed, 1 A test current."""
    els = base + signal_elements(c, 0.0, with_source=False)
    op, on = c.output_port
    test = CurrentSource("{test}", (on, op), 1.0, None, "", None)
    try:
        sys_ = assemble(els + [test], c.ground)
        x = sys_.solve(s)
        return sys_.voltage(x, op) - sys_.voltage(x, on)
    except SingularSystem:
        # the port may be a stiff (ideal) voltage output: drive it with 1 V instead
        vt = VoltageSource("{test}", (op, on), 1.0, None, "", None)
        sys_ = assemble(els + [vt], c.ground)
        x = sys_.solve(s)
        i = -sys_.branch_current(x, "{test}")
        return _ratio(1.0, i)


def port_quantities(c: Circuit, frequency_hz: float) -> PortResult:
    """Compute Rin, Rout, Avo, Av, Gv (or Zt), Gvo (or Zto), Ai at one frequency.

    Raises
    ------
    PortError
        When a needed solve is singular; the message says which one.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k\\noutput (a, gnd)\\n")
    >>> round(port_quantities(c, 0.0).quantities["Gv"].real, 6)
    0.5
    """
    s = 2j * math.pi * frequency_hz
    base = small_signal_elements(c)
    res = PortResult(frequency_hz, signal_kind=c.signal.kind)
    q = res.quantities
    current = c.signal.kind == "A"
    try:
        v_in, i_in, v_out, _ = _drive(c, base, s, loaded=False)
    except SingularSystem:
        raise PortError("the circuit without its load is singular at the input") from None
    avo = _ratio(v_out, v_in)
    gvo = v_out  # per unit signal
    try:
        r_out = output_impedance(c, base, s)
    except SingularSystem:
        raise PortError("the output port has no defined Thevenin impedance (singular system)") from None
    if c.load is not None:
        try:
            v_in_l, i_in_l, v_out_l, i_load = _drive(c, base, s, loaded=True)
        except SingularSystem:
            raise PortError("the circuit with its load is singular") from None
        q["Rin"] = _ratio(v_in_l, i_in_l)
        q["Rout"] = r_out
        q["Avo"] = avo
        q["Av"] = _ratio(v_out_l, v_in_l)
        q["Zt" if current else "Gv"] = v_out_l
        q["Zto" if current else "Gvo"] = gvo
        q["Ai"] = _ratio(i_load, i_in_l)
    else:
        q["Rin"] = _ratio(v_in, i_in)
        q["Rout"] = r_out
        q["Avo"] = avo
        q["Av"] = avo
        q["Zt" if current else "Gv"] = gvo
        q["Zto" if current else "Gvo"] = gvo
    return res


def default_frequency(c: Circuit) -> float:
    """1 kHz for a circuit with capacitors or inductors, DC otherwise."""
    return 1000.0 if c.reactive else 0.0


def is_real(z: complex, rel: float = 1e-9) -> bool:
    return not np.isfinite(z) or abs(z.imag) <= rel * max(abs(z.real), 1e-300)
