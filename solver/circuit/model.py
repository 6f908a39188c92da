"""The circuit model: what a netlist means, after blocks are flattened and values evaluated.

Plain dataclasses. Passive and controlled elements are already primitives
(:mod:`solver.circuit.elements`); transistors stay :class:`Device` objects until
:mod:`solver.circuit.devices` expands them, so that the bias solve and the reports see
them whole. Supplies, the signal and the load are kept apart because every
analysis treats them differently (small-signal: a voltage supply is a short).
"""
from __future__ import annotations

from dataclasses import dataclass, field

from solver.diagnostics import Diagnostic, Loc
from solver.circuit.elements import Element
from solver.language.expr import Expr


#: the port quantities a claim (and every analysis) may name; what each one measures is the
#: scenario table's business (solver.analysis.scenarios), which has one row per name
PORT_QUANTITIES = ("Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Zt", "Zto", "Ai")
#: a differential signal's common-mode gain and rejection ratio: Acm is a row of the
#: scenario table, CMRR = 20 log10 |Avo/Acm| in dB is derived from two rows
PORT_QUANTITIES += ("Acm", "CMRR")


@dataclass
class Device:
    """A transistor (npn, pnp, nmos, pmos) or diode with its evaluated parameters."""

    kind: str
    name: str
    nodes: dict[str, str]  # terminal letter -> node: C B E | D G S B | A K
    params: dict[str, float]
    model: str = "hybrid-pi"  # BJT only: "hybrid-pi" | "t"
    loc: Loc | None = None
    #: small-signal parameters (gm, rpi, ro, ...): set at elaboration for a device given by its
    #: operating point (ic=, gm=, ...); empty for one that needs the bias solve, whose biased copy
    #: (solver.analysis.bias.biased) carries them
    ss: dict[str, float] = field(default_factory=dict)

    @property
    def is_bjt(self) -> bool:
        return self.kind in ("npn", "pnp")

    @property
    def is_mos(self) -> bool:
        return self.kind in ("nmos", "pmos")


@dataclass
class Supply:
    name: str
    nodes: tuple[str, str]
    kind: str  # "V" | "A"
    value: float
    loc: Loc | None = None
    #: the small-signal element: a 0 V source (a short) for a voltage supply, None (open) for a current one
    ss_element: Element | None = None


@dataclass
class Signal:
    """The signal source and the input port (p, n). Voltage: Thevenin; current: Norton."""

    name: str
    nodes: tuple[str, str]
    kind: str  # "V" | "A"
    value: float
    rs: float  # series (V) or parallel (A) resistance; 0 or inf when absent
    loc: Loc | None = None


@dataclass
class Load:
    name: str
    nodes: tuple[str, str]
    value: float
    loc: Loc | None = None


@dataclass
class ClaimSpec:
    quantity: str
    kind: str  # "exact" | "approx"
    expr: Expr
    tolerance: float | None
    loc: Loc
    line: int


@dataclass
class SpreadSpec:
    """A ``spread`` line: one value that varies over the Monte Carlo samples.

    kind     -- "element" (a resistor, capacitor, controlled source...), "supply", "load",
                "rs" (the signal's source resistance), "device" (a device parameter) or "let"
                (a let or block parameter: every value that uses it moves with it)
    target   -- the full name of the element, supply, load, signal, device or let
    key      -- the device parameter (beta, va, vth...) for kind "device", else None
    lo, hi   -- the range; for dist "normal" the mean is the middle and (hi - lo)/6 is sigma
                (the range is +-3 sigma, common practice, no source)
    """

    name: str
    kind: str
    target: str
    key: str | None
    nominal: float
    lo: float
    hi: float
    dist: str
    text: str
    loc: Loc
    line: int


@dataclass
class SpecLine:
    """A ``spec`` line: the magnitude of ``quantity`` between lo and hi (in its own unit)."""

    quantity: str
    lo: float
    hi: float
    text: str
    loc: Loc
    line: int
    db: bool = False


@dataclass
class Circuit:
    title: str
    file: str
    source: str
    elements: list[Element] = field(default_factory=list)
    devices: list[Device] = field(default_factory=list)
    supplies: list[Supply] = field(default_factory=list)
    signal: Signal | None = None
    load: Load | None = None
    output: tuple[str, str] | None = None
    output_loc: Loc | None = None
    ground: set[str] = field(default_factory=lambda: {"gnd", "0"})
    claims: list[ClaimSpec] = field(default_factory=list)
    #: ``spread`` and ``spec`` lines (Monte Carlo, tolerances: solver.analysis.variation)
    spreads: list[SpreadSpec] = field(default_factory=list)
    specs: list[SpecLine] = field(default_factory=list)
    #: symbol name -> numeric value, for the symbolic engine and claims
    values: dict[str, float] = field(default_factory=dict)
    warnings: list[Diagnostic] = field(default_factory=list)
    #: name resolution for claims and derived expressions (see solver.circuit.elaborate.Resolver)
    resolver: object = None
    #: noise parameters of resistors, the load and the signal's rs: full name -> {"temp": K,
    #: "off": bool}, only for elements that give temp= or noise= (solver.analysis.noise reads it;
    #: a device's noise parameters stay in its params, noise=off as params["noise"] = 0.0)
    noise: dict[str, dict] = field(default_factory=dict)

    @property
    def has_output(self) -> bool:
        """True when the circuit names an output port (a load or an ``output`` line)."""
        return self.output is not None or self.load is not None

    @property
    def output_port(self) -> tuple[str, str]:
        if self.output is not None:
            return self.output
        return self.load.nodes

    @property
    def transistors(self) -> list[Device]:
        return [d for d in self.devices if d.kind != "diode"]

    def device(self, name: str) -> Device | None:
        """The device of that full name (``Q1``, ``S1.Q``), or None."""
        return next((d for d in self.devices if d.name == name), None)
