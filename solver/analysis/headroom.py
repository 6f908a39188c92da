"""Headroom and output swing from the bias point: how far each transistor is from its region edges.

For every transistor at its DC operating point (magnitudes, so pnp and pmos read like npn
and nmos):

* ``saturation_v`` -- the margin to the edge of the amplifying region on the low-voltage
  side: V_CE - V_CE,sat for a BJT, V_DS - V_ov for a MOSFET. V_CE,sat is the Ebers–Moll
  edge of saturation at the bias current (:func:`solver.circuit.dcmodels.vce_sat`) for a
  bias-solved BJT, and 0.2 V for a BJT given directly by its operating point (``ic=``), whose
  junction model is not known (Sedra & Smith, 7th ed., section 6.1, from memory);
* ``cutoff_v`` -- the rise of V_CE (V_DS) along the AC load line that takes the current to
  zero: bias current x AC load, the AC load being the impedance the device's collector and
  emitter (drain and source) see with the device taken out, the signal zeroed behind its rs,
  the load in place, supplies as shorts, at the analysis frequency (the classic load-line
  construction; common practice, Sedra & Smith, section 7.1, from memory).

At the output port the largest symmetric swing follows from how the signal moves each
device's V_CE per volt of output (the signal-driven, loaded configuration of the scenario
table): each device limits the output swing in the direction that takes it toward an edge,
to its margin divided by that ratio. ``up_v`` and ``down_v`` are the limits for v_out rising
and falling; the smaller of the two is the symmetric swing.

These are linear, small-signal estimates of a large-signal limit: a guide to where clipping
starts, not a distortion figure.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

from solver.analysis import scenarios
from solver.circuit import dcmodels as dm
from solver.circuit.devices import expand, needs_bias, thermal_voltage
from solver.circuit.elements import CurrentSource
from solver.circuit.model import Circuit, Device
from solver.circuit.views import load_element, signal_elements
from solver.diagnostics import Diagnostic, Loc
from solver.engine.mna import SingularSystem, assemble

#: V_CE,sat of a BJT given by its operating point (no junction model): the textbook figure
#: (Sedra & Smith, *Microelectronic Circuits*, 7th ed., section 6.1, from memory)
VCE_SAT_GIVEN = 0.2
#: a device whose V_CE moves less than this per volt of output does not limit the swing
NEGLIGIBLE = 1e-9
_TEST = "{headroom}"


@dataclass
class DeviceHeadroom:
    """One transistor's margins (volts, magnitudes) and what they rest on."""

    name: str
    kind: str
    saturation_v: float
    cutoff_v: float
    vsat_v: float          # V_CE,sat (BJT) or V_ov (MOSFET)
    vsat_source: str       # "ebers-moll", "given (0.2 V)" or "square law"
    current_a: float       # |I_C| or |I_D| at the bias point
    ac_load_ohm: float     # the AC load along which the current falls to zero
    per_output: float | None = None  # d|V_CE| per volt of output rise (None: no signal path)

    def to_dict(self, number=float) -> dict:
        out = {"saturation_v": number(self.saturation_v), "cutoff_v": number(self.cutoff_v),
               ("vce_sat_v" if self.kind in ("npn", "pnp") else "vov_v"): number(self.vsat_v),
               "vsat_source": self.vsat_source, "current_a": number(self.current_a),
               "ac_load_ohm": number(self.ac_load_ohm)}
        if self.per_output is not None:
            out["per_output_v"] = number(self.per_output)
        return out


@dataclass
class Swing:
    """The output port's swing before a device leaves its region."""

    node: str
    reference: str
    up_v: float
    down_v: float
    up_limit: str = ""    # "Q1 cutoff", "Q2 saturation" ...
    down_limit: str = ""
    #: the signal's amplitude times |Gv| (|Zt| for a current signal): the swing the signal asks for
    needed_v: float | None = None

    @property
    def symmetric_v(self) -> float:
        return min(self.up_v, self.down_v)

    def to_dict(self, number=float) -> dict:
        out = {"node": self.node, "up_v": number(self.up_v), "down_v": number(self.down_v),
               "reference": self.reference, "symmetric_v": number(self.symmetric_v),
               "up_limited_by": self.up_limit, "down_limited_by": self.down_limit}
        if self.needed_v is not None:
            out["signal_peak_v"] = number(self.needed_v)
        return out


@dataclass
class Headroom:
    """Margins of every transistor and the output swing (None without a signal and output)."""

    frequency_hz: float
    devices: dict[str, DeviceHeadroom] = field(default_factory=dict)
    swing: Swing | None = None
    warnings: list[Diagnostic] = field(default_factory=list)
    #: devices left out, and why
    notes: list[str] = field(default_factory=list)

    def to_dict(self, number=float) -> dict:
        """Plain values; ``number`` maps each float (the output layer passes its JSON rule)."""
        out = {"headroom": {n: d.to_dict(number) for n, d in self.devices.items()},
               "swing": None if self.swing is None else self.swing.to_dict(number),
               "headroom_frequency_hz": self.frequency_hz}
        if self.notes:
            out["headroom_notes"] = list(self.notes)
        return out


def _bjt_margins(dev: Device, op: dict) -> tuple[float, float, str, float]:
    """(V_CE margin, V_CE,sat, its source, |I_C|) of a BJT at its operating point."""
    pol = 1 if dev.kind == "npn" else -1
    vce = pol * op["vce"]
    if needs_bias(dev):  # bias-solved: its junction model is known
        p = dev.params
        m = dm.BJTModel(p.get("is", 1e-15), p.get("beta", 100.0), p.get("beta_r", 1.0),
                        p.get("va", math.inf), thermal_voltage(p.get("temp", 300.0)), 1)
        ic = abs(op["ic"])
        vsat, source = dm.vce_sat(ic, m), "ebers-moll"
    else:
        ic = abs(dev.ss.get("ic", dev.params.get("ic", abs(op["ic"]))))
        vsat, source = VCE_SAT_GIVEN, f"given ({VCE_SAT_GIVEN:g} V)"
    return vce - vsat, vsat, source, ic


def _mos_margins(dev: Device, op: dict) -> tuple[float, float, str, float]:
    pol = 1 if dev.kind == "nmos" else -1
    vov = op["vov"] if needs_bias(dev) else dev.params.get("vov", op["vov"])
    i_d = abs(op["id"]) if needs_bias(dev) else abs(dev.ss.get("id", dev.params.get("id", op["id"])))
    return pol * op["vds"] - vov, vov, "square law", i_d


def _terminals(dev: Device) -> tuple[str, str]:
    return (dev.nodes["C"], dev.nodes["E"]) if dev.is_bjt else (dev.nodes["D"], dev.nodes["S"])


def ac_load(c: Circuit, dev: Device, s: complex) -> float:
    """|Z| seen between the device's collector and emitter (drain and source) with it taken out.

    The rest of the small-signal network stays (other devices, supplies as shorts), the signal
    is zeroed behind its rs and the load is in place; inf when nothing conducts between them.
    """
    hi, lo = _terminals(dev)
    els = list(c.elements)
    els.extend(x.ss_element for x in c.supplies if x.ss_element is not None)
    for d in c.devices:
        if d is not dev:
            els.extend(expand(d))
    if c.signal is not None:
        els.extend(signal_elements(c, 0.0, with_source=False))
    if c.load is not None:
        els.append(load_element(c))
    els.append(CurrentSource(_TEST, (lo, hi), 1.0, None, "", None))  # 1 A into the collector node
    try:
        sys_ = assemble(els, c.ground)
        x = sys_.solve(s)
    except (SingularSystem, KeyError):
        return math.inf
    return abs(sys_.voltage(x, hi) - sys_.voltage(x, lo))


def _per_output(c: Circuit, devs: list[Device], s: complex) -> dict[str, float]:
    """d|V_CE| per volt of output rise for each device, under the signal (load in place)."""
    cfg = scenarios.configuration(c, "signal", True)
    try:
        sys_ = assemble(list(cfg.elements), c.ground)
        x = sys_.solve(s)
    except SingularSystem:
        return {}
    p, n = c.output_port
    vout = sys_.voltage(x, p) - sys_.voltage(x, n)
    if vout == 0:
        return {}
    out = {}
    for d in devs:
        hi, lo = _terminals(d)
        k = (sys_.voltage(x, hi) - sys_.voltage(x, lo)) / vout
        pol = 1 if d.kind in ("npn", "nmos") else -1
        # the phasor ratio's size, signed by its real part (in phase or inverted at midband)
        out[d.name] = pol * math.copysign(abs(k), k.real if k.real != 0 else 1.0)
    return out


def headroom_frequency(c: Circuit) -> tuple[float, list[str]]:
    """The analysis frequency of the port quantities when the circuit has a signal and an output
    port (the midband), else 1 kHz for a reactive circuit and DC otherwise."""
    from solver.analysis.pipeline import analysis_frequency, default_frequency
    if signal_side(c):
        return analysis_frequency(c)
    return default_frequency(c), []


def signal_side(c: Circuit) -> bool:
    """True when the circuit has a signal and an output port whose configurations pass the
    pipeline's graph checks (``portwise bias`` does not require them, so they are checked here)."""
    if c.signal is None or not c.has_output:
        return False
    from solver.circuit import topology
    configs = [(list(cfg.elements), "") for cfg in scenarios.signal_configurations(c)]
    return not any(d.severity == "error" for d in topology.check(c, configs, "ac"))


def bias_headroom(c: Circuit, bias) -> Headroom | None:
    """Headroom and swing of a bias point as ``portwise bias`` reports them, or None when the
    circuit has no transistor or its small-signal side cannot be set up (the operating point
    still stands then)."""
    from solver.diagnostics import InputError
    if not any(d.is_bjt or d.is_mos for d in c.devices):
        return None
    try:
        f, _ = headroom_frequency(c)
        return headroom(c, bias, f)
    except InputError:  # e.g. a signal-side topology fault
        return None


def headroom(c: Circuit, bias, frequency_hz: float) -> Headroom:
    """Margins of every transistor of the biased circuit ``c`` and the output swing.

    Parameters
    ----------
    c : Circuit
        The biased circuit (:func:`solver.analysis.bias.biased`): every device has its
        small-signal parameters.
    bias : BiasResult
        The operating point.
    frequency_hz : float
        Where the AC load and the signal's path to each device are evaluated (the midband).

    Examples
    --------
    >>> from solver import loads
    >>> from solver.analysis.pipeline import prepare
    >>> p = prepare(loads('''supply VCC (vcc, gnd) 10 V
    ... signal VS (in, gnd) 10 mV
    ... capacitor CIN (in, b) 10u
    ... supply IB (vcc, b) 10 uA
    ... npn Q1 (c, b, gnd) beta=100
    ... resistor RC (vcc, c) 4k
    ... output (c, gnd)
    ... '''), "bias")
    >>> h = headroom(p.circuit, p.bias, 1e3)
    >>> round(h.devices["Q1"].cutoff_v, 3), round(h.swing.up_v, 3)  # 1 mA through 4 kΩ
    (4.0, 4.0)
    """
    s = 2j * math.pi * frequency_hz
    res = Headroom(frequency_hz)
    from solver.analysis.bias import amplifying
    devs = []
    for d in c.devices:
        if not (d.is_bjt or d.is_mos) or d.name not in bias.devices:
            continue
        if not needs_bias(d) and not amplifying(d, bias.devices[d.name]):
            # given by its operating point, but the DC view does not bias it (AC-only netlist)
            res.notes.append(f"{d.name} is given by its operating point and the DC view does not put it in "
                             "its amplifying region: its headroom is not known and it is left out")
            continue
        devs.append(d)
    for d in devs:
        op = bias.devices[d.name]
        sat, vsat, source, current = (_bjt_margins if d.is_bjt else _mos_margins)(d, op)
        r_ac = ac_load(c, d, s)
        cut = current * r_ac if current > 0 else 0.0
        res.devices[d.name] = DeviceHeadroom(d.name, d.kind, sat, cut, vsat, source, current, r_ac)
    if not devs or not signal_side(c):
        return res
    ks = _per_output(c, devs, s)
    up, down = math.inf, math.inf
    up_by = down_by = ""
    for d in devs:
        k = ks.get(d.name)
        h = res.devices[d.name]
        h.per_output = k
        if k is None or abs(k) < NEGLIGIBLE:
            continue
        # |V_CE| rising moves the device toward cutoff, falling toward saturation
        rise_edge, fall_edge = (h.cutoff_v, "cutoff"), (h.saturation_v, "saturation")
        lim_up = (rise_edge if k > 0 else fall_edge)
        lim_down = (fall_edge if k > 0 else rise_edge)
        u, dn = max(lim_up[0], 0.0) / abs(k), max(lim_down[0], 0.0) / abs(k)
        if u < up:
            up, up_by = u, f"{d.name} {lim_up[1]}"
        if dn < down:
            down, down_by = dn, f"{d.name} {lim_down[1]}"
    p, n = c.output_port
    res.swing = Swing(p, n, up, down, up_by, down_by)
    needed = _needed(c, frequency_hz)
    res.swing.needed_v = needed
    if needed is not None and res.swing.symmetric_v < needed:
        where = c.output_loc or (c.load.loc if c.load is not None else None) or Loc(c.file, 1, 1)
        res.warnings.append(Diagnostic(
            "warning", where,
            f"the output can swing ±{res.swing.symmetric_v:.4g} V before the first region edge "
            f"({up_by if up <= down else down_by}), but the signal's amplitude "
            f"({abs(c.signal.value):g} {c.signal.kind}) times |{scenarios.main_gain(c)}| asks for "
            f"{needed:.4g} V peak: the stage clips"))
    return res


def _needed(c: Circuit, frequency_hz: float) -> float | None:
    """The output amplitude the signal asks for: its amplitude times |Gv| (|Zt| for a current signal)."""
    from solver.analysis.ports import PortError, port_quantities
    q = scenarios.main_gain(c)
    try:
        g = port_quantities(c, frequency_hz, which=[q]).quantities.get(q)
    except PortError:
        return None
    if g is None or not math.isfinite(abs(g)):
        return None
    return abs(c.signal.value) * abs(g)
