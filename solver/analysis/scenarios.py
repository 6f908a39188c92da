"""The scenario table: what each port quantity measures, read by every engine and analysis.

A port quantity is the ratio of two linear read-outs of one linear circuit with
one unit excitation. The table below says, for each quantity, which excitation
drives the circuit, whether the load is in place, and which read-outs make the
numerator and the denominator. It is the only place that decides this: the
numeric solve (:mod:`solver.analysis.ports`), the sweeps
(:mod:`solver.analysis.frequency`), the symbolic engine
(:mod:`solver.analysis.symbolic.ports`), the time-constant estimates, the
topology checks of the configurations and every later analysis read it.

Definitions (phasor ratios at s = j 2 pi f; currents into the port):

======  ============================================  =========  ======  ==============
name    meaning                                       drive      load    read-out
======  ============================================  =========  ======  ==============
Rin     input resistance at the signal's (P, N)       signal     yes     v_in / i_in
Rout    Thevenin impedance at the output port,        test       no      v_out / 1
        signal zeroed (its rs stays)
Avo     open-circuit voltage gain                     signal     no      v_out / v_in
Av      loaded voltage gain                           signal     yes     v_out / v_in
Gv      overall gain from the source (voltage sig.)   signal     yes     v_out / 1
Gvo     the same without the load                     signal     no      v_out / 1
Ai      current gain                                  signal     yes     i_load / i_in
Zt      transimpedance from the source (current sig.) signal     yes     v_out / 1
Zto     the same without the load                     signal     no      v_out / 1
Acm     common-mode gain (differential signal only)   common     no      v_out / 1
======  ============================================  =========  ======  ==============

Acm drives the signal common-mode: one volt from the reference to both signal nodes
together, the signal's rs split equally between the two sides (rs/2 each), signal source
otherwise absent; it is defined when neither signal node is the reference. CMRR is not a
row but a ratio of two (:data:`DECIBELS`): 20 log10 |Avo / Acm| in dB, Avo being the
differential gain; every engine takes the two rows and forms the ratio in its own domain.

Supply rejection uses one more configuration per supply (:func:`supply_measurement`): the
supply's small-signal source at unit amplitude (1 V in series for a voltage supply, 1 A for
a current supply), every other source zeroed (the signal behind its rs), the load in place;
the read-out is v_out. PSRR = 20 log10 |Av / A_supply|.

"load: yes" means the load when the circuit has one; without a load, Av = Avo,
Gv = Gvo and Ai is not defined. The signal drives at unit amplitude, so "/ 1" is
"per unit of the source" (v_sig or i_sig).

Rout has two measurements, in the order of :data:`ROUT_ORDER`: a 1 A test current
into the output port (Rout = v_out), and, when that system is singular (a stiff,
ideal voltage output has no defined voltage response to a forced current), a 1 V
test source (Rout = 1 / i_test). Every engine applies this one rule with its own
test of "singular": the numeric solve at the analysis frequency, the sweep at a
probe frequency away from any pole, the symbolic engine by a determinant that is
identically zero.

References
----------
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., section 1.5
(amplifier models: Rin, Rout, Avo, the loaded gain and the overall gain Gv), from memory.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

from solver.circuit.elements import CurrentSource, Element, VoltageSource
from solver.circuit.model import PORT_QUANTITIES, Circuit
from solver.circuit.views import common_mode_elements, is_differential, load_element, signal_elements, \
    small_signal_elements

#: every port quantity, in report order
QUANTITIES = PORT_QUANTITIES
UNITS = {"Rin": "ohm", "Rout": "ohm", "Avo": "V/V", "Av": "V/V", "Gv": "V/V", "Gvo": "V/V",
         "Ai": "A/A", "Zt": "ohm", "Zto": "ohm", "Acm": "V/V", "CMRR": "dB"}
DEFINITIONS = {"Rin": "v_in/i_in", "Rout": "output impedance, load removed", "Avo": "v_out/v_in, no load",
               "Av": "v_out/v_in", "Gv": "v_out/v_sig", "Gvo": "v_out/v_sig, no load", "Ai": "i_load/i_in",
               "Zt": "v_out/i_sig", "Zto": "v_out/i_sig, no load",
               "Acm": "v_out/v_cm, signal applied common-mode, no load", "CMRR": "20·log10|Avo/Acm|"}
#: dimensionless gains (a gain-bandwidth product in Hz); Zt, Zto are transimpedances
RATIOS = ("Gv", "Gvo", "Av", "Avo", "Ai")
GAINS = ("Gv", "Gvo", "Av", "Avo", "Ai", "Zt", "Zto")
#: the name of the test source at the output port (Rout)
TEST = "{test}"
#: every engine: a common-mode or supply read-out smaller than this times the solution's largest
#: node voltage is the round-off of a cancellation (two matched halves), not a gain: it reads as
#: exactly 0, so a perfectly matched pair with an ideal tail has CMRR inf. A matched pair
#: leaves about 1e-13 (a few hundred times the double-precision epsilon, amplified by the
#: system's conditioning); 1e-11 leaves a margin of a hundred. A real mismatch gives a
#: common-mode gain many decades above it (common practice, no source).
CANCELLED = 1e-11


def branch_only(terms) -> bool:
    """True for a read-out made only of source branch currents (i_in through the signal, say).

    Such a current at the round-off level of the solution's largest branch current is 0 (the
    :data:`CANCELLED` rule, read against currents): an ideal op-amp's input draws none, so
    Rin is infinite rather than a huge number of random sign.
    """
    return bool(terms) and all(t.kind == "branch" for t in terms)
#: the drive prefix of a supply's configuration ("supply:VCC")
SUPPLY = "supply:"
#: the Rout measurements, in the order they are tried: the first whose system is not singular
ROUT_ORDER = ("test-current", "test-voltage")


class QuantityError(ValueError):
    """A quantity the circuit does not define (Ai without a load, Gv with a current signal)."""


@dataclass(frozen=True)
class Row:
    """One line of the table: the excitation, the load, the two read-outs."""

    drive: str           # "signal" | "test"
    loaded: bool         # the load in place (when the circuit has one)
    num: str             # read-out names, see Term
    den: str | None      # None: per unit excitation
    signal: str | None = None  # "V" or "A": only for that kind of signal


TABLE = {
    "Rin": Row("signal", True, "v_in", "i_in"),
    "Rout": Row("test", False, "v_out", None),
    "Avo": Row("signal", False, "v_out", "v_in"),
    "Av": Row("signal", True, "v_out", "v_in"),
    "Gv": Row("signal", True, "v_out", None, "V"),
    "Gvo": Row("signal", False, "v_out", None, "V"),
    "Zt": Row("signal", True, "v_out", None, "A"),
    "Zto": Row("signal", False, "v_out", None, "A"),
    "Ai": Row("signal", True, "i_load", "i_in"),
    "Acm": Row("common", False, "v_out", None, "V"),
}
#: quantities that are the ratio of two rows in dB: name -> (numerator row, denominator row)
DECIBELS = {"CMRR": ("Avo", "Acm")}
#: the quantities that need a differential signal (neither node the reference)
DIFFERENTIAL = ("Acm", "CMRR")
assert tuple(TABLE) + tuple(DECIBELS) == QUANTITIES  # one row per quantity, in report order


def decibels(num: complex, den: complex) -> float:
    """20 log10 |num / den| in dB: inf when den is 0, -inf when num is 0 (nan for 0/0).

    Examples
    --------
    >>> decibels(-100, 0.01), decibels(1, 0)
    (80.0, inf)
    """
    a, b = abs(num), abs(den)
    if b == 0:
        return math.inf if a != 0 else math.nan
    if a == 0:
        return -math.inf
    if math.isinf(a) or math.isnan(a) or math.isnan(b):
        return math.nan if math.isinf(b) or math.isnan(a) or math.isnan(b) else math.inf
    return 20.0 * math.log10(a / b)


def quantities(c: Circuit) -> list[str]:
    """The port quantities this circuit defines, in report order.

    Examples
    --------
    >>> from solver import loads
    >>> quantities(loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, gnd) 1k\\noutput (a, gnd)\\n"))
    ['Rin', 'Rout', 'Avo', 'Av', 'Gv', 'Gvo']
    """
    return [q for q in QUANTITIES if why_undefined(c, q) is None]


def main_gain(c: Circuit) -> str:
    """The overall gain of the circuit: Gv for a voltage signal, Zt for a current signal."""
    return "Zt" if c.signal.kind == "A" else "Gv"


def why_undefined(c: Circuit, quantity: str) -> str | None:
    """None when ``quantity`` is defined for the circuit, else the reason in words."""
    if quantity not in QUANTITIES:
        return f"unknown quantity '{quantity}' (one of {', '.join(QUANTITIES)})"
    if quantity in DIFFERENTIAL:
        if c.signal.kind != "V":
            return f"{quantity} needs a voltage signal applied common-mode; this circuit has a current signal"
        if not is_differential(c):
            grounded = next(n for n in c.signal.nodes if n in c.ground)
            return (f"{quantity} needs a differential signal (neither node the reference); "
                    f"{c.signal.name} has a node at the reference ({grounded})")
        return None
    row = TABLE[quantity]
    if quantity == "Ai" and c.load is None:
        return "Ai needs a load"
    if row.signal is not None and row.signal != c.signal.kind:
        other = "Zt" if row.signal == "V" else "Gv"
        kind = {"V": "voltage", "A": "current"}
        return (f"{quantity} needs a {kind[row.signal]} signal; this circuit has a "
                f"{kind[c.signal.kind]} signal (use {other}{quantity[2:] if len(quantity) > 2 else ''})")
    return None


# --- read-outs ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class Term:
    """One term of a linear read-out y = sum of terms.

    kind -- "node": the voltage of node ``name``; "branch": the branch current of element
            ``name`` (from its first node through it); "unit": the excitation itself (1)
    sign -- +1 or -1
    per  -- when given, the term is divided by this element's value (a voltage across a
            resistor read as its current); each engine takes the reciprocal in its own domain
    """

    kind: str
    name: str = ""
    sign: int = 1
    per: Element | None = None


@dataclass(frozen=True)
class Configuration:
    """One linear circuit to solve: its elements and the key that says which it is."""

    drive: str       # "signal" | "zeroed" | "test-current" | "test-voltage" | "common" | "supply:NAME"
    loaded: bool
    elements: tuple[Element, ...]

    @property
    def key(self) -> tuple[str, bool]:
        return self.drive, self.loaded

    @property
    def description(self) -> str:
        if self.drive == "signal":
            return "with the load" if self.loaded else "without the load"
        if self.drive == "zeroed":
            return "with the signal zeroed"
        if self.drive == "common":
            return "with the signal applied common-mode"
        if self.drive.startswith(SUPPLY):
            return f"driven from supply {self.drive[len(SUPPLY):]}"
        return "at the output port test"


@dataclass(frozen=True)
class Measurement:
    """A quantity as the ratio of two read-outs of one configuration (den None: per unit)."""

    quantity: str
    config: Configuration
    num: tuple[Term, ...]
    den: tuple[Term, ...] | None


def _voltage(p: str, n: str, per: Element | None = None) -> tuple[Term, ...]:
    return (Term("node", p, 1, per), Term("node", n, -1, per))


def _readout(c: Circuit, name: str, cfg: Configuration) -> tuple[Term, ...]:
    p, n = c.signal.nodes
    if name == "v_in":
        return _voltage(p, n)
    if name == "v_out":
        return _voltage(*c.output_port)
    if name == "i_load":
        return _voltage(*c.load.nodes, per=_named(cfg, c.load.name))
    if name == "i_in":
        if c.signal.kind == "V":
            # the source's branch current flows from its + node through it: into the circuit is -j
            return (Term("branch", c.signal.name, -1),)
        # Norton: the unit source current, less what its rs takes
        if math.isfinite(c.signal.rs):
            return (Term("unit"),) + tuple(Term(t.kind, t.name, -t.sign, _named(cfg, f"{c.signal.name}.rs"))
                                           for t in _voltage(p, n))
        return (Term("unit"),)
    if name == "i_test":
        return (Term("branch", TEST, -1),)
    if name == "one":
        return (Term("unit"),)
    raise AssertionError(name)


def _named(cfg: Configuration, name: str) -> Element:
    return next(e for e in cfg.elements if e.name == name)


# --- configurations -------------------------------------------------------------------------------
def configuration(c: Circuit, drive: str, loaded: bool, base: list[Element] | None = None) -> Configuration:
    """The elements of one configuration (``base``: the small-signal network, if already built).

    drive "signal": the signal at unit amplitude; "zeroed": the signal zeroed (its rs stays:
    a voltage signal is a short behind it, a current signal an open); "test-current" /
    "test-voltage": zeroed, and a unit test source at the output port; "common": the signal
    applied common-mode (:func:`~solver.circuit.views.common_mode_elements`); "supply:NAME":
    the signal zeroed and that supply's small-signal source at unit amplitude.
    """
    base = small_signal_elements(c) if base is None else base
    loaded = loaded and c.load is not None
    if drive == "signal":
        els = base + signal_elements(c, 1.0)
    elif drive == "common":
        els = base + common_mode_elements(c, 1.0)
    elif drive.startswith(SUPPLY):
        els = _supply_driven(c, drive[len(SUPPLY):], base)
    else:
        els = base + signal_elements(c, 0.0, with_source=False)
        op, on = c.output_port if c.has_output else (None, None)
        if drive == "test-current":  # 1 A into the output's P node
            els.append(CurrentSource(TEST, (on, op), 1.0, None, "", None))
        elif drive == "test-voltage":
            els.append(VoltageSource(TEST, (op, on), 1.0, None, "", None))
    if loaded:
        els.append(load_element(c))
    return Configuration(drive, loaded, tuple(els))


def _supply_driven(c: Circuit, name: str, base: list[Element]) -> list[Element]:
    """The small-signal network with supply ``name`` at unit amplitude, the signal zeroed."""
    sup = next((s for s in c.supplies if s.name == name), None)
    if sup is None:
        raise QuantityError(f"no supply '{name}' (supplies: {', '.join(s.name for s in c.supplies) or 'none'})")
    if sup.ss_element is not None:  # a voltage supply: its short becomes a 1 V source (same name, same branch)
        els = [replace(e, value=1.0) if e is sup.ss_element else e for e in base]
    else:  # a current supply: open in the small-signal view, 1 A from P to N through it
        els = base + [CurrentSource(sup.name, sup.nodes, 1.0, None, sup.name, sup.loc)]
    return els + signal_elements(c, 0.0, with_source=False) if c.signal is not None else els


def supply_names(c: Circuit) -> list[str]:
    """The supplies whose rejection is reported, in netlist order."""
    return [s.name for s in c.supplies]


def supply_unit(c: Circuit, name: str) -> str:
    """The unit of the gain from a supply to v_out: V/V for a voltage supply, ohm for a current one."""
    return "V/V" if next(s for s in c.supplies if s.name == name).kind == "V" else "ohm"


def supply_measurement(c: Circuit, name: str, base: list[Element] | None = None) -> Measurement:
    """The gain from supply ``name`` to the output: v_out per unit of the supply, load in place.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nsignal VS (a, gnd) 1 V\\nresistor R1 (vcc, a) 1k\\n"
    ...           "resistor R2 (a, gnd) 1k\\noutput (a, gnd)\\n")
    >>> m = supply_measurement(c, "VCC")
    >>> m.config.drive, [t.name for t in m.num], m.den
    ('supply:VCC', ['a', 'gnd'], None)
    """
    cfg = configuration(c, SUPPLY + name, True, base)
    return Measurement(f"{SUPPLY}{name}", cfg, _readout(c, "v_out", cfg), None)


def measurement(c: Circuit, quantity: str, rout: str = ROUT_ORDER[0],
                base: list[Element] | None = None) -> Measurement:
    """The configuration and read-outs that define ``quantity`` for this circuit.

    Parameters
    ----------
    c : Circuit
        A circuit whose devices all have their small-signal parameters.
    quantity : str
    rout : one of :data:`ROUT_ORDER`
        The Rout measurement.
    base : list of Element, optional
        The small-signal network, when the caller has built it already.

    Raises
    ------
    QuantityError
        When the circuit does not define the quantity.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k\\nload RL (a, gnd) 1k\\n")
    >>> m = measurement(c, "Av")
    >>> m.config.key, [t.name for t in m.num], [t.name for t in m.den]
    (('signal', True), ['a', 'gnd'], ['a', 'gnd'])
    """
    why = why_undefined(c, quantity)
    if why:
        raise QuantityError(why)
    if quantity in DECIBELS:
        raise QuantityError(f"{quantity} is the ratio of {' and '.join(DECIBELS[quantity])} in dB, "
                            "not one measurement: measure those two")
    row = TABLE[quantity]
    if row.drive == "test":
        cfg = configuration(c, rout, False, base)
        if rout == "test-voltage":
            return Measurement(quantity, cfg, _readout(c, "one", cfg), _readout(c, "i_test", cfg))
        return Measurement(quantity, cfg, _readout(c, "v_out", cfg), None)
    cfg = configuration(c, row.drive, row.loaded, base)
    den = None if row.den is None else _readout(c, row.den, cfg)
    return Measurement(quantity, cfg, _readout(c, row.num, cfg), den)


def chosen(c: Circuit, quantity: str, singular, base: list[Element] | None = None) -> Measurement:
    """The measurement of ``quantity`` after the table's rule for Rout, with each engine's test.

    ``singular(m)`` says whether a measurement's system is singular in the caller's engine
    (numeric at the analysis frequency, at a probe frequency for a sweep, an identically
    zero determinant for the symbolic engine). Rout takes the first of :data:`ROUT_ORDER`
    that is not singular, the last one regardless; every other quantity has one measurement.
    """
    orders = ROUT_ORDER if quantity in TABLE and TABLE[quantity].drive == "test" else ROUT_ORDER[:1]
    for k, rout in enumerate(orders):
        m = measurement(c, quantity, rout, base)
        if k + 1 == len(orders) or not singular(m):
            return m
    raise AssertionError("unreachable")


def signal_configurations(c: Circuit, base: list[Element] | None = None) -> list[Configuration]:
    """The distinct signal-driven configurations the port quantities use, the loaded one first."""
    base = small_signal_elements(c) if base is None else base
    keys = dict.fromkeys(TABLE[q].loaded and c.load is not None for q in quantities(c)
                         if q in TABLE and TABLE[q].drive == "signal")
    return [configuration(c, "signal", loaded, base) for loaded in sorted(keys, reverse=True)]


# --- the noise analysis (solver.analysis.noise) ------------------------------------------------
#: what the noise analysis reads in the main gain's configuration (signal-driven, load in place,
#: the one Gv or Zt uses): the output voltage, and the input port's voltage and current, from
#: which the equivalent input generators en, in follow (see solver.analysis.noise)
NOISE_READOUTS = ("v_out", "v_in", "i_in")


def noise_measurement(c: Circuit, base: list[Element] | None = None) -> tuple[Configuration, dict]:
    """The configuration of the noise analysis and its read-outs ``{name: terms}``.

    It is the configuration of the main gain (:func:`main_gain`: Gv, or Zt for a current
    signal): the signal at unit amplitude with its rs, the load in place. Noise sources are
    further excitations of this very system; with the signal's own excitation set to zero it
    is the "zeroed" circuit whose output noise is measured.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k\\nload RL (a, gnd) 1k\\n")
    >>> cfg, reads = noise_measurement(c)
    >>> cfg.key, sorted(reads)
    (('signal', True), ['i_in', 'v_in', 'v_out'])
    """
    m = measurement(c, main_gain(c), base=base)
    return m.config, {name: _readout(c, name, m.config) for name in NOISE_READOUTS}
