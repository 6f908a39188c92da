"""Port quantities from the numeric MNA engine, as the scenario table defines them.

Each quantity is the ratio of two read-outs of one configuration of
:mod:`solver.analysis.scenarios`; configurations shared by several quantities
(the loaded drive gives Rin, Av, Gv and Ai) are stamped and solved once. Every
solve is exact for the linear circuit: nothing is approximated beyond the
small-signal model itself.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

from solver.analysis import scenarios as sc
from solver.circuit.model import Circuit
from solver.circuit.views import small_signal_elements
from solver.engine.mna import SingularSystem, System, assemble

INF = complex(math.inf, 0)
UNITS = sc.UNITS


class PortError(Exception):
    """The port quantities cannot be computed (singular system); message names the configuration."""


@dataclass
class PortResult:
    frequency_hz: float
    quantities: dict[str, complex] = field(default_factory=dict)
    signal_kind: str = "V"


def ratio(a: complex, b: complex) -> complex:
    """a / b, with a / 0 infinite (nan for 0 / 0)."""
    if b == 0:
        return INF if a != 0 else complex(math.nan)
    return a / b


CANCELLED = sc.CANCELLED


def read(system: System, x, terms, cancel: bool = False) -> complex:
    """The value of a read-out (a tuple of :class:`~solver.analysis.scenarios.Term`) in solution x.

    ``cancel``: a result at the round-off level of the solution (:data:`CANCELLED`) is 0, as a
    perfectly matched pair's common-mode output is; a read-out of branch currents only is held
    against the solution's branch currents the same way (:func:`~solver.analysis.scenarios.branch_only`).
    """
    if cancel or sc.branch_only(terms):
        import numpy as np
        n = len(system.stamper.nodes)
        part = x[:n] if cancel else x[n:]  # voltages against voltages, currents against currents
        scale = float(np.max(np.abs(part))) if len(part) else 0.0
        value = _sum(system, x, terms)
        return 0j if abs(value) <= CANCELLED * scale else value
    return _sum(system, x, terms)


def _sum(system: System, x, terms) -> complex:
    total = 0j
    for t in terms:
        if t.kind == "node":
            v = system.voltage(x, t.name)
        elif t.kind == "branch":
            v = system.branch_current(x, t.name)
        else:
            v = 1.0
        total += t.sign * (v / t.per.value if t.per is not None else v)
    return total


class _Solves:
    """One assembled and solved system per configuration key, at one complex frequency."""

    def __init__(self, c: Circuit, s: complex):
        self.c, self.s = c, s
        self.base = small_signal_elements(c)
        self.done: dict = {}

    def __call__(self, m: sc.Measurement):
        key = m.config.key
        if key not in self.done:
            system = assemble(list(m.config.elements), self.c.ground)
            self.done[key] = (system, system.solve(self.s))
        return self.done[key]

    def singular(self, m: sc.Measurement) -> bool:
        """True when the measurement's system is singular (the table then tries the next one)."""
        try:
            self(m)
            return False
        except SingularSystem:
            return True


def measure(c: Circuit, quantity: str, s: complex, solves: _Solves | None = None) -> complex:
    """One port quantity at complex frequency s (raises SingularSystem, QuantityError)."""
    solves = solves or _Solves(c, s)

    singular = solves.singular

    if quantity in sc.DECIBELS:
        num, den = (measure(c, q, s, solves) for q in sc.DECIBELS[quantity])
        return complex(sc.decibels(num, den), 0.0)
    m = sc.chosen(c, quantity, singular, solves.base)
    system, x = solves(m)
    cancel = m.config.drive == "common"
    return ratio(read(system, x, m.num, cancel), read(system, x, m.den) if m.den else 1.0)


def supply_gains(c: Circuit, frequency_hz: float, solves: _Solves | None = None) -> dict[str, complex]:
    """{supply: v_out per unit of that supply} at one frequency (load in place, signal zeroed).

    A supply whose configuration is singular is left out.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nsignal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (vcc, a) 1k\\n"
    ...           "resistor R2 (a, gnd) 1k\\noutput (a, gnd)\\n")
    >>> round(supply_gains(c, 0.0)["VCC"].real, 6)  # R2 || rs over R1 + R2 || rs
    0.333333
    """
    s = 2j * math.pi * frequency_hz
    solves = solves or _Solves(c, s)
    out = {}
    for name in sc.supply_names(c):
        m = sc.supply_measurement(c, name, solves.base)
        try:
            system, x = solves(m)
        except SingularSystem:
            continue
        out[name] = read(system, x, m.num, cancel=True)
    return out


def supply_rejection(gains: dict[str, complex], av: complex, units: dict[str, str]) -> dict[str, dict]:
    """PSRR = 20 log10 |Av / A_supply| for each supply gain, with the gain itself."""
    return {name: {"gain": g, "unit": units[name],
                   "psrr_db": sc.decibels(av, g) if units[name] == "V/V" else None}
            for name, g in gains.items()}


def port_quantities(c: Circuit, frequency_hz: float, which=None) -> PortResult:
    """Compute the port quantities (all that the circuit defines, or ``which``) at one frequency.

    Raises
    ------
    PortError
        When a needed solve is singular; the message says which configuration.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k\\noutput (a, gnd)\\n")
    >>> round(port_quantities(c, 0.0).quantities["Gv"].real, 6)
    0.5
    """
    s = 2j * math.pi * frequency_hz
    res = PortResult(frequency_hz, signal_kind=c.signal.kind)
    solves = _Solves(c, s)
    for q in sc.quantities(c):
        if which is not None and q not in which:
            continue
        try:
            res.quantities[q] = measure(c, q, s, solves)
        except SingularSystem:
            if q in sc.DIFFERENTIAL:  # e.g. a signal node tied to a supply: no common-mode drive
                continue
            if q == "Rout":
                raise PortError("the output port has no defined Thevenin impedance (singular system)") from None
            desc = sc.measurement(c, q, base=solves.base).config.description
            raise PortError(f"the circuit {desc} is singular") from None
    return res
