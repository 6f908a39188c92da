"""The element views every analysis starts from: the circuit as lists of primitive elements.

A :class:`~solver.circuit.model.Circuit` keeps its supplies, signal, load and
transistors apart because each analysis treats them differently. A *view*
turns them into primitives that the MNA stamps understand:

* :func:`small_signal_elements` -- the linear network: elements, voltage supplies
  as shorts (current supplies open), every device expanded into its small-signal
  model. No signal, no load: the scenario table adds those.
* :func:`signal_elements` -- the signal as a Thevenin (voltage) or Norton (current)
  source with its rs, at a given amplitude; amplitude 0 zeroes it (rs stays).
* :func:`load_element` -- the load as a resistor.
* :func:`dc_elements` -- the linear part of the DC view of the bias solve:
  capacitors open (they stamp only into C), inductors shorts (their stamp at s = 0),
  supplies at their values, the signal zeroed behind its rs, the load in place.

These are pure functions of the circuit: nothing here writes onto it.
"""
from __future__ import annotations

import math

from solver.circuit.devices import expand
from solver.circuit.elements import CurrentSource, Element, Resistor, VoltageSource
from solver.circuit.model import Circuit

#: the internal node between a Thevenin signal source and its rs (never shown to the user)
SIG_INT = "{sig}"


def small_signal_elements(c: Circuit) -> list[Element]:
    """Passive and controlled elements, supplies as shorts (V) or opens (A), expanded devices.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nsignal VS (a, gnd) 1 V\\nresistor R1 (a, vcc) 1k\\n"
    ...           "output (a, gnd)\\n")
    >>> [type(e).__name__ for e in small_signal_elements(c)]
    ['Resistor', 'VoltageSource']
    """
    out = list(c.elements)
    out.extend(s.ss_element for s in c.supplies if s.ss_element is not None)
    for d in c.devices:
        out.extend(expand(d))
    return out


def signal_elements(c: Circuit, amplitude: float = 1.0, with_source: bool = True) -> list[Element]:
    """The signal as a Thevenin (V) or Norton (A) source with its rs; amplitude 0 zeroes it.

    ``with_source=False`` leaves out a current signal's source (an open); a voltage
    signal's source always stays (at amplitude 0 it is the short behind rs).
    """
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


#: the internal nodes between the common-mode sources and the two halves of rs
CM_INT = ("{cm+}", "{cm-}")


def is_differential(c: Circuit) -> bool:
    """True when neither of the signal's nodes is the reference (a differential input).

    Examples
    --------
    >>> from solver import loads
    >>> is_differential(loads("signal VS (a, b) 1 V\\nresistor R1 (a, gnd) 1k\\nresistor R2 (b, gnd) 1k\\n"))
    True
    """
    return c.signal is not None and not any(n in c.ground for n in c.signal.nodes)


def common_mode_elements(c: Circuit, amplitude: float = 1.0) -> list[Element]:
    """The signal applied common-mode: ``amplitude`` from the reference to both signal nodes together.

    The signal's rs is split equally between the two sides: rs/2 in series with each node,
    built as two resistors of value rs in parallel so that both engines keep the one symbol
    ``VS.rs`` (rs || rs = rs/2). Each side has its own source of the same amplitude; two equal
    sources from the reference are the one common-mode source seen by both halves.
    """
    sig = c.signal
    ref = "gnd" if "gnd" in c.ground else sorted(c.ground)[0]
    out: list[Element] = []
    for node, inner, tag in zip(sig.nodes, CM_INT, "+-"):
        if sig.rs != 0 and math.isfinite(sig.rs):
            for k in "ab":
                out.append(Resistor(f"{sig.name}.rs{tag}{k}", (inner, node), sig.rs, f"{sig.name}.rs",
                                    sig.name, sig.loc))
            out.append(VoltageSource(f"{sig.name}.cm{tag}", (inner, ref), amplitude, None, sig.name, sig.loc))
        else:
            out.append(VoltageSource(f"{sig.name}.cm{tag}", (node, ref), amplitude, None, sig.name, sig.loc))
    return out


def load_element(c: Circuit) -> Element:
    ld = c.load
    return Resistor(ld.name, ld.nodes, ld.value, ld.name, ld.name, ld.loc)


def dc_elements(c: Circuit, scale: float = 1.0) -> list[Element]:
    """The circuit's linear elements at DC, supplies scaled by ``scale`` (source stepping).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nresistor R1 (vcc, a) 1k\\nresistor R2 (a, gnd) 1k\\n")
    >>> [(e.name, e.value) for e in dc_elements(c, 0.5)][-1]
    ('VCC', 4.5)
    """
    out = list(c.elements)  # capacitors stamp only into C: open at s = 0
    for s in c.supplies:
        cls = VoltageSource if s.kind == "V" else CurrentSource
        out.append(cls(s.name, s.nodes, s.value * scale, None, s.name, s.loc))
    if c.signal is not None:
        out.extend(signal_elements(c, 0.0, with_source=c.signal.kind == "V"))
    if c.load is not None:
        out.append(load_element(c))
    return out


def is_reactive(c: Circuit) -> bool:
    """True when the small-signal circuit has a capacitor or an inductor (its own or a device's).

    Examples
    --------
    >>> from solver import loads
    >>> is_reactive(loads("signal VS (a, gnd) 1 V\\ncapacitor C1 (a, gnd) 1n\\noutput (a, gnd)\\n"))
    True
    """
    if any(e.reactive for e in c.elements):
        return True
    for d in c.devices:
        if d.ss:
            if any(e.reactive for e in expand(d)):
                return True
        elif any(d.params.get(k) for k in REACTIVE_PARAMS):  # bias pending: its capacitances as given
            return True
    return False


#: device parameters that give it a capacitance in the small-signal model
REACTIVE_PARAMS = ("cpi", "cmu", "ft", "cgs", "cgd", "cj")
