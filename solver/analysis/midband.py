"""The midband circuit: coupling and bypass capacitors shorted, device and wiring capacitances opened.

In the band between the low and the high corner a capacitor is either large (its
reactance far below the resistance it sees: a coupling or bypass capacitor, a short
there) or small (far above: a device or wiring capacitance, an open there). Each
netlist capacitor is classified by where its time constant with every other
capacitor open, tau = R0 C, falls against the band: tau > 1/omega_mid puts it in the
shorted group, else it is opened (the same rule as the time-constant estimates,
:mod:`solver.analysis.timeconstants`). A device's own capacitances (cπ, cμ, cgs,
cgd, cj, an op-amp's pole) are device capacitances and are opened. The midband
circuit has no capacitor left, so its port quantities are real and its formulas
are the midband formulas of a hand analysis.

References
----------
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., chapter 10 (the
midband: coupling and bypass capacitors as shorts, device capacitances as opens),
from memory.
P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, *Analysis and Design of Analog
Integrated Circuits*, 5th ed., section 7.3 (open- and short-circuit time constants),
from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from solver.analysis import scenarios as table
from solver.analysis.timeconstants import resistance_seen
from solver.circuit.elements import Capacitor, Inductor, VoltageSource
from solver.circuit.model import Circuit
from solver.diagnostics import error
from solver.language.units import eng

DEVICE_CAPACITANCES = ("cpi", "cmu", "cgs", "cgd", "cj")


@dataclass
class Classified:
    """One capacitor and what the midband circuit does with it."""

    name: str
    capacitance: float
    tau: float | None  # R0*C with every other capacitor open; None: no finite resistance (a series cap)
    action: str  # "shorted" | "opened"
    role: str  # "coupling or bypass" | "wiring" | "device"


@dataclass
class Midband:
    """The classification of every capacitor, and the frequency it was made against."""

    frequency_hz: float
    items: list[Classified] = field(default_factory=list)

    @property
    def shorted(self) -> list[str]:
        return [i.name for i in self.items if i.action == "shorted"]

    @property
    def opened(self) -> list[str]:
        return [i.name for i in self.items if i.action == "opened"]

    def note(self) -> str:
        """One line for a report or a result's notes."""
        parts = []
        if self.shorted:
            parts.append(f"{', '.join(self.shorted)} shorted (coupling or bypass)")
        if self.opened:
            parts.append(f"{', '.join(self.opened)} opened (device or wiring)")
        return (f"midband circuit (classified against {eng(self.frequency_hz, 'Hz')}): "
                + ("; ".join(parts) if parts else "no capacitors"))

    def lines(self) -> list[str]:
        """The classification as a small table: capacitor, value, time constant, what was done."""
        out = [f"midband: capacitors classified by their time constant against 1/(2π·{eng(self.frequency_hz, 'Hz')})"
               f" = {eng(1 / (2 * math.pi * self.frequency_hz), 's')}"]
        w = max((len(i.name) for i in self.items), default=4)
        for i in self.items:
            tau = ("" if i.role == "device" else "τ: no finite R" if i.tau is None else f"τ {eng(i.tau, 's')}")
            out.append(f"  {i.name:<{w}}  {eng(i.capacitance, 'F'):>9}  {tau:<14} {i.action} ({i.role})")
        return out

    def to_dict(self) -> dict:
        return {"frequency_hz": self.frequency_hz, "shorted": self.shorted, "opened": self.opened,
                "capacitors": [{"name": i.name, "c_farad": i.capacitance, "tau_s": i.tau, "action": i.action,
                                "role": i.role} for i in self.items]}


def check_midband(m: Circuit) -> list:
    """The graph checks of the midband circuit's configurations (a short can close a loop of
    voltage-defined branches); errors and warnings."""
    from solver.circuit import topology
    configs = [(list(cfg.elements), "" if k == 0 else f" {cfg.description}")
               for k, cfg in enumerate(table.signal_configurations(m))]
    return [d for d in topology.check(m, configs, "ac") if d.severity == "error"]


def midband_circuit(c: Circuit, frequency_hz: float | None = None) -> tuple[Circuit, Midband]:
    """The circuit at midband and the classification of its capacitors.

    Parameters
    ----------
    c : Circuit
        With its small-signal parameters known (biased if it needed the bias solve).
    frequency_hz : float, optional
        The middle of the band to classify against; by default the detected midband
        (the flat top of the main gain), else 1 kHz.

    Returns
    -------
    (Circuit, Midband)
        A new circuit (``c`` is not changed) with no capacitors, and the classification.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, b) 10u\\n"
    ...           "resistor R1 (b, gnd) 1k\\ncapacitor C2 (b, gnd) 1n\\noutput (b, gnd)\\n")
    >>> m, classes = midband_circuit(c)
    >>> classes.shorted, classes.opened
    (['C1'], ['C2'])
    """
    if any(isinstance(e, Inductor) for e in c.elements):
        raise error(None, "the midband circuit is made for capacitors only; this circuit has inductors")
    if frequency_hz is None:
        from solver.analysis.frequency import midband_frequency
        frequency_hz = midband_frequency(c) or 1000.0
    w_mid = 2 * math.pi * frequency_hz
    els = list(table.configuration(c, "zeroed", table.TABLE[table.main_gain(c)].loaded).elements)
    caps = [e for e in els if isinstance(e, Capacitor)]
    own = {e.name for e in c.elements if isinstance(e, Capacitor) and e.origin == e.name}
    result = Midband(frequency_hz)
    short: set[str] = set()
    for cap in caps:
        if cap.name not in own:  # a device's capacitance (or an op-amp's pole)
            result.items.append(Classified(cap.name, cap.value, None, "opened", "device"))
            continue
        others = [e for e in els if not (isinstance(e, Capacitor) and e is not cap)]
        r = resistance_seen(others, c.ground, cap)
        tau = None if r is None else r * cap.value
        if tau is None or w_mid * tau > 1:
            short.add(cap.name)
            result.items.append(Classified(cap.name, cap.value, tau, "shorted", "coupling or bypass"))
        else:
            result.items.append(Classified(cap.name, cap.value, tau, "opened", "wiring"))
    elements = []
    for e in c.elements:
        if isinstance(e, Capacitor):
            if e.name in short:  # a short: a 0 V source, as a voltage supply is in the small-signal view
                elements.append(VoltageSource(e.name, e.nodes, 0.0, None, e.origin, e.loc))
            continue
        elements.append(e)
    devices = [replace(d, ss={k: (0.0 if k in DEVICE_CAPACITANCES else v) for k, v in d.ss.items()})
               for d in c.devices]
    values = {k: v for k, v in c.values.items() if k not in {i.name for i in result.items}}
    out = replace(c, elements=elements, devices=devices, values=values)
    return out, result
