"""The Python API: the same results as the command line, as objects.

Examples
--------
>>> import solver
>>> c = solver.loads('''
... signal VS (in, gnd) 1 V, rs=50
... resistor R1 (in, out) 1k
... load RL (out, gnd) 1k
... ''')
>>> r = solver.solve(c)
>>> round(r.quantities["Gv"].real, 4)
0.4878
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

from solver.analysis import pipeline
from solver.analysis.pipeline import analysis_frequency, load, loads, read_source  # noqa: F401  (the API)
from solver.analysis.ports import UNITS, PortError, port_quantities, supply_gains, supply_rejection
from solver.analysis.singular import conditioning, explain_singular
from solver.bulk import paused_gc
from solver.circuit.model import Circuit
from solver.diagnostics import Diagnostic, InputError
from solver.output.jsonout import number as _num


@dataclass
class Result:
    """What ``portwise solve`` reports."""

    circuit: Circuit
    frequency_hz: float
    quantities: dict[str, complex]
    devices: dict[str, dict[str, float]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    #: the DC operating point (solver.analysis.bias.BiasResult) when a device needed the bias solve
    bias: object = None
    #: every warning found on the way (elaboration, DC view, bias, topology, conditioning)
    warnings: list[Diagnostic] = field(default_factory=list)
    #: with ``midband=True``: the capacitors' classification (solver.analysis.midband.Midband)
    midband: object = None
    #: {supply: {"gain": complex, "unit": "V/V" | "ohm", "psrr_db": float | None}} (PSRR = |Av/A_supply|)
    supply_rejection: dict[str, dict] = field(default_factory=dict)

    def to_json(self) -> str:
        """:meth:`to_dict` as a JSON string (infinite values as ``"inf"``)."""
        return _dumps(self.to_dict())

    def to_dict(self) -> dict:
        """The ``portwise solve --json`` object."""
        out = {
            "circuit": self.circuit.title or Path(self.circuit.file).stem,
            "frequency_hz": self.frequency_hz,
            "quantities": {k: {"re": _num(v.real), "im": _num(v.imag) if math.isfinite(v.real) else 0.0,
                               "unit": UNITS[k]} for k, v in self.quantities.items()},
            "devices": {name: {k: _num(v) for k, v in p.items()} for name, p in self.devices.items()},
        }
        out["supply_rejection"] = {
            name: {"gain": {"re": _num(r["gain"].real), "im": _num(r["gain"].imag), "unit": r["unit"]},
                   "psrr_db": None if r["psrr_db"] is None else _num(r["psrr_db"])}
            for name, r in self.supply_rejection.items()}
        if self.notes:  # e.g. "evaluated at the detected midband frequency"
            out["notes"] = list(self.notes)
        if self.midband is not None:
            out["midband"] = self.midband.to_dict()
        return out


from solver.output.jsonout import number as _num# noqa: E402  (one JSON rule for every command)


def _dumps(obj) -> str:
    import json
    return json.dumps(obj, indent=2, allow_nan=False)


def _circuit(circuit) -> Circuit:
    return circuit if isinstance(circuit, Circuit) else load(circuit)


class _Dictable:
    """``to_json()`` is ``to_dict()`` as a JSON string, the same object the command's ``--json`` prints."""

    def to_json(self) -> str:
        return _dumps(self.to_dict())

    def to_dict(self) -> dict:  # pragma: no cover - every result defines it
        raise NotImplementedError


DEVICE_COLUMNS = {"bjt": ("gm", "rpi", "ro", "re", "beta"), "mos": ("gm", "ro", "gmb")}


def device_table(c: Circuit) -> dict[str, dict[str, float]]:
    out = {}
    for d in c.devices:
        if d.is_bjt:
            keys = DEVICE_COLUMNS["bjt"] + tuple(k for k in ("rx", "cpi", "cmu") if d.ss.get(k))
        elif d.is_mos:
            keys = ("gm", "ro") + tuple(k for k in ("gmb", "cgs", "cgd") if d.ss.get(k))
        else:
            keys = ("rd",)
        out[d.name] = {k: d.ss[k] for k in keys if k in d.ss}
    return out


def solve(circuit: Circuit | str | Path, at: float | None = None, force: bool = False,
          midband: bool = False) -> Result:
    """Port quantities of a circuit at ``at`` hertz (default: the detected midband if reactive, else DC).

    A device given by its DC parameters (no ic/gm, id/gm) is first biased
    (:func:`solver.analysis.pipeline.prepare`); a transistor outside its amplifying
    region is an InputError unless ``force`` (then the result's notes warn).
    ``midband``: the midband circuit instead (:func:`midband_circuit`: coupling and bypass
    capacitors shorted, device and wiring capacitances opened; ``result.midband`` lists
    the classification). Raises InputError for a circuit that cannot be solved (e.g. singular).
    """
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    if midband:
        return _solve_midband(c, force)
    with paused_gc():
        p = pipeline.prepare(c, "ports", "dc" if at is not None and float(at) == 0 else "ac", force)
        f, why = analysis_frequency(p.circuit, at)
        try:
            pr = port_quantities(p.circuit, f)
        except PortError as e:
            raise p.fail(explain_singular(p.circuit, f, str(e))) from None
        warnings = p.warnings + conditioning(p.circuit, f)
        rejection = _rejection(p.circuit, f, pr.quantities)
        from solver.analysis import scenarios
        if scenarios.why_undefined(p.circuit, "Acm") is None and "Acm" not in pr.quantities:
            why.append("Acm and CMRR are not given: the circuit with the signal applied common-mode is "
                       "singular (a signal node held by a voltage source?)")
    return Result(p.circuit, f, pr.quantities, device_table(p.circuit), p.notes + why, p.bias, warnings,
                  supply_rejection=rejection)


def _rejection(c: Circuit, f: float, quantities: dict) -> dict:
    """Supply rejection of every supply at f: its gain to v_out and PSRR against Av."""
    from solver.analysis import scenarios
    if not c.supplies:
        return {}
    gains = supply_gains(c, f)
    return supply_rejection(gains, quantities["Av"], {n: scenarios.supply_unit(c, n) for n in gains})


def headroom(circuit: Circuit | str | Path, at: float | None = None):
    """Headroom of every transistor and the output swing from the DC operating point.

    Returns a :class:`HeadroomResult`: the :class:`solver.analysis.headroom.Headroom`
    (``.devices``, ``.swing``, ``.warnings``) with ``.to_dict()`` and ``.to_json()`` in the
    JSON rule of every command; ``at`` is where the AC load is taken (default: the
    analysis frequency of ``solve``).

    Examples
    --------
    >>> import solver
    >>> h = solver.headroom(solver.loads('''
    ... supply VCC (vcc, gnd) 10 V
    ... supply IB (vcc, b) 10 uA
    ... npn Q1 (c, b, gnd) beta=100
    ... resistor RC (vcc, c) 4k
    ... '''))
    >>> round(h.devices["Q1"].cutoff_v, 3), h.swing is None
    (4.0, True)
    """
    from solver.analysis.headroom import headroom as _headroom, headroom_frequency
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    with paused_gc():
        p = pipeline.prepare(c, "bias")
        f = float(at) if at is not None else headroom_frequency(p.circuit)[0]
        h = _headroom(p.circuit, p.bias, f)
    h.warnings[:0] = p.warnings
    return HeadroomResult(h)


class HeadroomResult:
    """:func:`headroom`'s result: the analysis value, and its JSON form ("headroom", "swing")."""

    def __init__(self, h):
        self.value = h

    def __getattr__(self, name):
        return getattr(self.value, name)

    def to_dict(self) -> dict:
        return self.value.to_dict(_num)

    def to_json(self) -> str:
        import json
        return json.dumps(self.to_dict(), allow_nan=False)


def midband_circuit(circuit: Circuit | str | Path, force: bool = False):
    """``(midband circuit, classification)`` of a circuit, biased first when it needs it.

    See :func:`solver.analysis.midband.midband_circuit`; the classification's ``.lines()``
    and ``.to_dict()`` list what was shorted and what opened.
    """
    from solver.analysis.midband import check_midband, midband_circuit as _midband
    p = pipeline.prepare(_circuit(circuit), "ports", "ac", force)
    m, classes = _midband(p.circuit)
    errors = check_midband(m)
    if errors:
        raise p.fail(errors)
    return m, classes, p


def _solve_midband(c: Circuit, force: bool) -> Result:
    with paused_gc():
        m, classes, p = midband_circuit(c, force)
        try:
            pr = port_quantities(m, 0.0)
        except PortError as e:
            raise p.fail(explain_singular(m, 0.0, str(e))) from None
        warnings = p.warnings + conditioning(m, 0.0)
    r = Result(m, 0.0, pr.quantities, device_table(m), p.notes + [classes.note()], p.bias, warnings)
    r.midband = classes
    return r


# --- the other commands as functions ------------------------------------------------------------
@dataclass
class BiasReport(_Dictable):
    """What ``portwise bias`` reports: the DC operating point of a circuit."""

    circuit: Circuit
    #: solver.analysis.bias.BiasResult: node voltages, device currents and regions, supply currents
    bias: object
    notes: list[str] = field(default_factory=list)
    warnings: list[Diagnostic] = field(default_factory=list)
    #: solver.analysis.headroom.Headroom of the transistors (None without any)
    headroom: object = None

    @property
    def nodes(self) -> dict[str, float]:
        return self.bias.nodes

    @property
    def devices(self) -> dict[str, dict]:
        return self.bias.devices

    def to_dict(self) -> dict:
        from solver.output.biasreport import bias_json
        out = bias_json(self.bias, self.circuit, self.headroom)
        if self.notes:
            out["notes"] = list(self.notes)
        return out


def bias(circuit: Circuit | str | Path) -> BiasReport:
    """The DC operating point (``portwise bias``); a device outside its region is a warning, not an error.

    Examples
    --------
    >>> import solver
    >>> b = solver.bias(solver.loads("supply VCC (vcc, gnd) 9 V\\nresistor R1 (vcc, b) 10k\\n"
    ...                              "resistor R2 (b, gnd) 10k\\n"))
    >>> round(b.nodes["b"], 6), round(b.to_dict()["supplies"]["VCC"], 9)  # 9 V / 20 kΩ
    (4.5, 0.00045)
    """
    c = _circuit(circuit)
    with paused_gc():
        p = pipeline.prepare(c, "bias")
        from solver.analysis.headroom import bias_headroom
        h = bias_headroom(p.circuit, p.bias)
    return BiasReport(p.circuit, p.bias, list(p.bias.notes), p.warnings + (h.warnings if h is not None else []), h)


@dataclass
class Derivation(_Dictable):
    """What ``portwise derive`` reports: each quantity's exact expression."""

    circuit: Circuit
    frequency_hz: float
    #: solver.analysis.symbolic.derive results, one per quantity (.quantity, .plain, .latex, .sympy, .symbols)
    results: list
    tolerance: float | None = None
    warnings: list[Diagnostic] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: with ``midband=True``: the capacitors' classification (solver.analysis.midband.Midband)
    midband: object = None
    #: the exact ratio written whatever its size; LaTeX in the dictionary
    expanded: bool = False
    latex: bool = False

    @property
    def expressions(self) -> dict[str, str]:
        """quantity -> the expression as the netlist language writes it."""
        return {d.quantity: d.plain for d in self.results}

    def to_dict(self) -> dict:
        from solver.output.derivation import derive_json
        return derive_json(self.results, self.tolerance, self.frequency_hz, expanded=self.expanded,
                           latex=self.latex, midband=self.midband, notes=self.notes)


def derive(circuit: Circuit | str | Path, quantity: str | list[str] = "Av", keep=None, numeric=(), limits=(),
           dominant: float | None = None, at: float | None = None, expand_bias: bool = False,
           force: bool = False, midband: bool = False, expanded: bool = False, latex: bool = False,
           around: str | None = None) -> Derivation:
    """Exact symbolic port quantities (``portwise derive``).

    ``quantity`` is a name, a list of names or ``"all"``; ``keep`` the symbols kept symbolic
    (the others take their values), ``numeric`` the symbols replaced by their values,
    ``limits`` ``"Q1.ro=oo"``-style texts applied in order, ``dominant`` a tolerance (0.05)
    for the dominant-term pruning, ``midband`` the midband circuit (see :func:`midband_circuit`),
    ``expanded`` the flat sum-of-products ratio instead of the design-oriented form, ``latex``
    each form's LaTeX in the dictionary, ``around`` the controlled source of T, Ginf and G0.

    Examples
    --------
    >>> import solver
    >>> d = solver.derive(solver.loads("signal VS (in, gnd) 1 V\\nresistor R1 (in, out) 1k\\n"
    ...                                "load RL (out, gnd) 1k\\n"), "Av")
    >>> d.expressions["Av"]
    'RL/(R1 + RL)'
    """
    from solver.analysis import scenarios
    from solver.analysis.symbolic.claims import parse_limit
    from solver.analysis.symbolic.derive import derive as _derive
    from solver.analysis.symbolic.ports import circuit_symbols
    c, classes = _circuit(circuit), None
    if midband:
        c, classes, p = midband_circuit(c, force)
        notes = list(p.notes) + [classes.note()]
        at = 0.0
    else:
        p = pipeline.prepare(c, "ports", "dc" if at is not None and float(at) == 0 else "ac", force)
        c, notes = p.circuit, list(p.notes)
    if quantity == "all":
        qs = scenarios.quantities(c)
    else:
        qs = [quantity] if isinstance(quantity, str) else list(quantity)
        from solver.analysis.symbolic.loop import LOOP_QUANTITIES
        for q in qs:
            why = None if q in LOOP_QUANTITIES else scenarios.why_undefined(c, q)
            if why:
                from solver.diagnostics import error
                raise error(None, f"{q} is not defined here: {why}")
    limits = [parse_limit(t, circuit_symbols(c)) for t in limits]
    f, _ = analysis_frequency(c, at)
    results = _derive(c, qs, list(keep) if keep else None, list(numeric or ()), limits, dominant, f, expand_bias,
                      expanded, around=around)
    return Derivation(c, f, results, dominant, p.warnings, notes, classes, expanded, latex)


@dataclass
class CheckResult(_Dictable):
    """What ``portwise check`` reports: a verdict for every claim line."""

    circuit: Circuit
    frequency_hz: float
    #: solver.analysis.symbolic.claims.Verdict, one per claim
    verdicts: list
    warnings: list[Diagnostic] = field(default_factory=list)

    @property
    def holds(self) -> bool:
        return all(v.holds for v in self.verdicts)

    def to_dict(self) -> dict:
        from solver.output.claims import verdict_json
        return {"frequency_hz": self.frequency_hz, "claims": [verdict_json(v) for v in self.verdicts]}


def check(circuit: Circuit | str | Path, at: float | None = None, force: bool = False) -> CheckResult:
    """The claim lines checked against the exact result (``portwise check``); ``.holds`` for all of them."""
    from solver.analysis.symbolic.claims import check as check_circuit
    res = check_circuit(_circuit(circuit), at, force)  # the same input checks as solve (pipeline.prepare)
    return CheckResult(res.circuit, res.frequency_hz, res.verdicts, res.warnings)


@dataclass
class Sweep(_Dictable):
    """What ``portwise sweep`` reports: a frequency response and its summary."""

    circuit: Circuit
    #: solver.analysis.response.Summary: .freqs, .h, .band, .poles, .zeros, .estimates
    summary: object
    warnings: list[Diagnostic] = field(default_factory=list)

    @property
    def frequencies(self):
        return self.summary.freqs

    @property
    def response(self):
        return self.summary.h

    def to_dict(self) -> dict:
        from solver.output.sweep import summary_json
        return summary_json(self.summary)


def sweep(circuit: Circuit | str | Path, start: float, stop: float, points: int | None = None,
          per_decade: int | None = None, quantity: str | None = None, force: bool = False) -> Sweep:
    """The frequency response of one port quantity from ``start`` to ``stop`` hertz (``portwise sweep``).

    Examples
    --------
    >>> import solver
    >>> sw = solver.sweep(solver.loads("signal VS (in, gnd) 1 V\\nresistor R1 (in, out) 1k\\n"
    ...                                "capacitor C1 (out, gnd) 159.155n\\noutput (out, gnd)\\n"), 10, 1e5)
    >>> round(sw.summary.band.f_high_hz)  # 1/(2 pi R C), from memory
    1000
    """
    from solver.analysis.frequency import ResponseError, default_quantity, frequencies
    from solver.analysis.response import analyse
    from solver.diagnostics import error
    if not 0 < start < stop:
        raise error(None, "a sweep needs 0 < start < stop")
    c = _circuit(circuit)
    with paused_gc():
        p = pipeline.prepare(c, "ports", "ac", force)
        c = p.circuit
        q = quantity or default_quantity(c)
        try:
            sm = analyse(c, q, frequencies(start, stop, points, per_decade))
        except ResponseError as e:
            raise error(None, f"quantity {q}: {e}") from None
    return Sweep(c, sm, p.warnings)


@dataclass
class TwoPortResult(_Dictable):
    """What ``portwise twoport`` reports: z, y, h, g, ABCD and S at one frequency."""

    circuit: Circuit
    #: solver.analysis.twoport.TwoPort: .matrices (name -> 2x2 array or None), .reasons
    twoport: object
    warnings: list[Diagnostic] = field(default_factory=list)

    @property
    def matrices(self) -> dict:
        return self.twoport.matrices

    def to_dict(self) -> dict:
        from solver.output.twoportjson import twoport_json
        return twoport_json(self.twoport)


def twoport(circuit: Circuit | str | Path, at: float, z0: float = 50.0, force: bool = False) -> TwoPortResult:
    """The two-port parameters between the input and output ports at ``at`` hertz (``portwise twoport``).

    Examples
    --------
    >>> import solver
    >>> tp = solver.twoport(solver.loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 100\\n"
    ...                                  "resistor R2 (b, gnd) 1k\\nload RL (b, gnd) 1k\\n"), at=0)
    >>> [round(float(v.real), 6) for v in tp.matrices["z"].ravel()]  # a tee: z11 = R1 + R2, z12 = z21 = z22 = R2
    [1100.0, 1000.0, 1000.0, 1000.0]
    """
    from solver.analysis.twoport import TwoPortError, two_port
    from solver.diagnostics import error
    c = _circuit(circuit)
    p = pipeline.prepare(c, "twoport", "dc" if float(at) == 0 else "ac", force)
    c = p.circuit
    try:
        tp = two_port(c, float(at), z0)
    except TwoPortError as e:
        raise error(c.output_loc or (c.load.loc if c.load else None), str(e)) from None
    return TwoPortResult(c, tp, p.warnings)


# --- tolerances, Monte Carlo and part values ------------------------------------------
def _circuit(circuit) -> Circuit:
    return circuit if isinstance(circuit, Circuit) else load(circuit)


class _JSON:
    """.to_dict() and .to_json() of an analysis result, by the output layer's JSON rule."""

    _json = None

    def to_dict(self) -> dict:
        return self._json(self)

    def to_json(self) -> str:
        import json
        return json.dumps(self.to_dict(), indent=2, allow_nan=False)


def _as(cls, result):
    from dataclasses import fields
    return cls(**{f.name: getattr(result, f.name) for f in fields(result)})


def _result_classes():
    from solver.analysis.sensitivity import SensitivityResult as _Sens
    from solver.analysis.spread import SpreadResult as _Spread
    from solver.analysis.tune import TuneResult as _Tune
    from solver.output import variation as out
    return {
        "sensitivity": type("SensitivityResult", (_JSON, _Sens), {"_json": staticmethod(out.sensitivity_json)}),
        "spread": type("SpreadResult", (_JSON, _Spread), {"_json": staticmethod(out.spread_json)}),
        "tune": type("TuneResult", (_JSON, _Tune), {"_json": staticmethod(out.tune_json)}),
    }


_CLASSES: dict = {}


def _wrap(kind, result):
    if not _CLASSES:
        _CLASSES.update(_result_classes())
    return _as(_CLASSES[kind], result)


def sensitivity(circuit: Circuit | str | Path, quantities=None, at: float | None = None, force: bool = False):
    """Normalised sensitivities (x/Q)·dQ/dx of port quantities, ranked (see solver.analysis.sensitivity).

    Returns a :class:`solver.analysis.sensitivity.SensitivityResult` (``.to_dict()``,
    ``.to_json()``, ``.warnings``).
    """
    from solver.analysis.sensitivity import sensitivity as run
    with paused_gc():
        return _wrap("sensitivity", run(_circuit(circuit), quantities, at, force))


def spread(circuit: Circuit | str | Path, samples: int = 1000, seed: int | None = None, at: float | None = None,
           worst: bool = False, force: bool = False):
    """Monte Carlo over the netlist's ``spread`` lines (see solver.analysis.spread).

    Returns a :class:`solver.analysis.spread.SpreadResult` (``.to_dict()``, ``.to_json()``,
    ``.warnings``).
    """
    from solver.analysis.spread import spread as run
    with paused_gc():
        return _wrap("spread", run(_circuit(circuit), samples, seed, at, worst, force))


def tune(circuit: Circuit | str | Path, quantity: str, target: float, vary: str, series: str | None = None,
         at: float | None = None, force: bool = False):
    """The value of ``vary`` that makes ``quantity`` reach ``target`` (see solver.analysis.tune).

    Returns a :class:`solver.analysis.tune.TuneResult`; raises
    :class:`solver.analysis.tune.NoSolution` when no value in range reaches the target.
    """
    from solver.analysis.tune import tune as run
    with paused_gc():
        return _wrap("tune", run(_circuit(circuit), quantity, target, vary, series, at, force))


# --- feedback: portwise loop ------------------------------------------------------------
def loop(circuit: Circuit | str | Path, around: str | None = None, at: float | None = None,
         f_from: float | None = None, f_to: float | None = None, points: int | None = None,
         break_node: str | None = None, toward: list[str] | None = None, force: bool = False):
    """The feedback loop around a controlled source (``around``) or at a node (``break_node``).

    One frequency (``at``, default as :func:`solve`), or a log sweep ``f_from`` .. ``f_to``
    (``points``, default 20 per decade) with the crossover, phase and gain margins.
    Returns a :class:`solver.output.loopreport.LoopResult` (``.to_dict()``, ``.to_json()``,
    ``.text()``, ``.warnings``). See :mod:`solver.analysis.loop`.

    Examples
    --------
    >>> import solver
    >>> c = solver.loads('''
    ... signal VS (p, gnd) 1 V
    ... opamp U1 (out, p, fb) gain=1000
    ... resistor R1 (fb, gnd) 1k
    ... resistor R2 (out, fb) 9k
    ... output (out, gnd)
    ... ''')
    >>> r = solver.loop(c, around="U1")
    >>> round(r.to_dict()["T"]["re"], 6), round(r.to_dict()["G_inf"]["re"], 6)
    (100.0, 10.0)
    """
    import numpy as np

    from solver.analysis import loop as L
    from solver.analysis.frequency import frequencies
    from solver.diagnostics import error
    from solver.output.loopreport import LoopResult, warnings_for
    if (around is None) == (break_node is None):
        raise error(None, "give one of --around NAME or --break NODE")
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    sweep = f_from is not None or f_to is not None
    with paused_gc():
        p = pipeline.prepare(c, "ports", "dc" if not sweep and at is not None and float(at) == 0 else "ac", force)
        notes = list(p.notes)
        if sweep:
            if f_from is None or f_to is None or not (0 < f_from < f_to):
                raise error(None, "a sweep needs 0 < --from < --to")
            freqs = frequencies(f_from, f_to, points)
        else:
            f, why = analysis_frequency(p.circuit, at)
            notes += why
            freqs = np.array([f])
        try:
            if around is not None:
                a = L.analyse_loop(p.circuit, around, freqs, sweep)
            else:
                a = L.analyse_break(p.circuit, break_node, toward, freqs, sweep)
        except L.LoopError as e:
            raise p.fail([Diagnostic("error", None, str(e))]) from None
    return LoopResult(p.circuit, a, sweep, notes, p.warnings + warnings_for(a))


# --- noise (portwise noise) -----------------------------------------------------------------------
#: the band of a noise analysis when none is given (an instrument front end's audio-to-ultrasound
#: range; common practice, no source) and its default density of points
NOISE_BAND_HZ = (10.0, 100e3)
NOISE_PER_DECADE = 20


@dataclass
class NoiseResult:
    """What ``portwise noise`` reports: the arrays of :class:`solver.analysis.noise.Noise` and more.

    ``noise`` holds the arrays (power spectral densities); :meth:`to_dict` gives the JSON object
    of the command (densities in V/√Hz, A/√Hz) and :meth:`to_json` the same as a string.
    """

    circuit: Circuit
    noise: object
    notes: list[str] = field(default_factory=list)
    bias: object = None
    warnings: list[Diagnostic] = field(default_factory=list)

    @property
    def frequency_hz(self):
        return self.noise.freqs

    @property
    def totals(self) -> dict:
        return dict(self.noise.totals)

    @property
    def contributions(self) -> list[dict]:
        from solver.analysis.noise import contributions
        return contributions(self.noise)

    def to_dict(self) -> dict:
        from solver.output.noise import noise_json
        return noise_json(self.circuit, self.noise, self.notes)

    def to_json(self) -> str:
        import json
        return json.dumps(self.to_dict(), indent=2, allow_nan=False)

    def text(self) -> str:
        from solver.output.noise import text_report
        return text_report(self.circuit, self.noise, self.notes)


def noise(circuit: Circuit | str | Path, f_from: float | None = None, f_to: float | None = None,
          points: int | None = None, at: float | None = None, force: bool = False,
          frequencies=None) -> NoiseResult:
    """Small-signal noise of a circuit: densities, en and in, noise figure, band totals, contributions.

    Parameters
    ----------
    circuit : Circuit, or a netlist file name
    f_from, f_to : float, optional
        The band in Hz (log-spaced, ``points`` in all, default 20 per decade); default
        :data:`NOISE_BAND_HZ`.
    at : float, optional
        One frequency instead of a band (every array has one value; no band totals).
    force : bool
        Analyse transistors outside their amplifying region (the notes warn).
    frequencies : array of float, optional
        Explicit frequencies (Hz, positive, increasing) instead of f_from/f_to/points.

    Returns
    -------
    NoiseResult

    Raises
    ------
    InputError
        Bad input, or a circuit that cannot be solved.

    Examples
    --------
    >>> import solver
    >>> c = solver.loads("signal VS (a, gnd) 1 V, rs=1k\\nresistor R1 (a, gnd) 1k\\nload RL (a, gnd) 1k, noise=off\\n")
    >>> r = solver.noise(c, at=1e3)
    >>> round(r.to_dict()["output_density"][0] * 1e9, 3)   # sqrt(4kT (2/1k)) (1k || 1k || 1k), nV/√Hz
    1.919
    >>> [(row["element"], round(row["share"], 3)) for row in r.contributions]
    [('VS', 0.5), ('R1', 0.5)]
    """
    import numpy as np

    from solver.analysis import noise as nm
    from solver.analysis.frequency import frequencies as log_freqs
    from solver.diagnostics import error
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    notes: list[str] = []
    if frequencies is not None:
        freqs = np.asarray(frequencies, float)
    elif at is not None:
        if not at > 0:
            raise error(None, "noise is computed above 0 Hz: give a positive frequency")
        freqs = np.array([float(at)])
    else:
        if f_from is None and f_to is None:
            f_from, f_to = NOISE_BAND_HZ
            notes.append(f"no band given: {f_from:g} Hz to {f_to / 1e3:g} kHz (give --from and --to)")
        elif f_from is None or f_to is None:
            raise error(None, "give both ends of the band (--from and --to)")
        if not 0 < f_from < f_to:
            raise error(None, "the band needs 0 < from < to")
        freqs = log_freqs(f_from, f_to, points, None if points else NOISE_PER_DECADE)
    if freqs.size == 0 or not np.all(freqs > 0) or np.any(np.diff(freqs) <= 0):
        raise error(None, "noise frequencies are positive and increasing")
    with paused_gc():
        p = pipeline.prepare(c, "ports", "ac", force)
        nz = nm.analyse(p.circuit, freqs)
        bad = ~np.isfinite(nz.gain)
        if bad.any():
            f_bad = float(freqs[np.argmax(bad)])
            raise p.fail(explain_singular(p.circuit, f_bad, f"the system is singular at {f_bad:g} Hz"))
    return NoiseResult(p.circuit, nz, p.notes + notes, p.bias, list(p.warnings))


# --- the design report and the notebook displays (issue 16) ---------------------------------------
def _result_html(self) -> str:
    """The port quantities (and the operating point) as the report shows them, for Jupyter."""
    from solver.analysis.ports import UNITS as _U
    from solver.output import html as H
    from solver.output import htmlreport as R
    c = self.circuit
    f = self.frequency_hz
    body = [f"<h3>{H.escape(c.title or Path(c.file).stem)}</h3>",
            H.para(f"Port quantities at {'DC' if f == 0 else R.eng(f, 'Hz')}.", "note"),
            R.port_table(self.quantities, _U)]
    if self.devices:
        body.append(R.device_params_table(self.devices))
    if self.bias is not None:
        body.append(R.bias_tables(c, self.bias))
    return H.fragment("".join(body))


Result._repr_html_ = _result_html  # defined here, beside the report code it shares


def _sweep_html(self) -> str:
    """The Bode plot, band, poles and zeros and hand estimates as the report shows them, for Jupyter."""
    from solver.output import html as H
    from solver.output.htmlreport import summary_html
    return H.fragment(summary_html(self.summary))


def _derivation_html(self) -> str:
    """Each derived quantity as a MathML formula (from our own parse of the plain text), for Jupyter."""
    from solver.output import html as H
    from solver.output.htmlreport import formula_html
    return H.fragment("".join(formula_html(d.quantity, d.plain, getattr(d, "where", None)) for d in self.results))


def _derivation_latex(self) -> str:
    """The LaTeX of ``portwise derive --latex``, one line per quantity, for Jupyter."""
    from solver.analysis.symbolic.printing import latex_name
    lines = [f"{latex_name(d.quantity)} = {d.latex}" for d in self.results]
    if len(lines) == 1:
        return f"$\\displaystyle {lines[0]}$"
    return "$$\\begin{aligned}" + r" \\ ".join(line.replace(" = ", " &= ", 1) for line in lines) + \
        "\\end{aligned}$$"


# defined here, beside the report code they share
Sweep._repr_html_ = _sweep_html
Derivation._repr_html_ = _derivation_html
Derivation._repr_latex_ = _derivation_latex


@dataclass
class Report:
    """The design report (:func:`report`): the HTML page, and each section's data as JSON."""

    html: str
    sections: list
    left_out: list
    warnings: list[Diagnostic] = field(default_factory=list)

    def to_dict(self) -> dict:
        from solver.output.htmlreport import json_ready
        return json_ready({"sections": {s.ident: s.data for s in self.sections},
                           "order": [s.ident for s in self.sections],
                           "left_out": [{"part": p, "reason": r} for p, r in self.left_out]})

    def to_json(self) -> str:
        import json
        return json.dumps(self.to_dict(), allow_nan=False)

    def _repr_html_(self) -> str:  # the whole page in a notebook: its style is scoped under .pw
        from solver.output import html as H
        body = self.html.split('<body class="pw">', 1)[1].rsplit("</body>", 1)[0]
        return H.fragment(body)


def _report_loops(c: Circuit, res: Result, opts) -> list:
    """The loops the report shows: around every op-amp with a finite gain, and ``opts.loop_around``.

    Over the report's sweep range when the circuit is reactive, else at the analysis frequency.
    """
    from solver.analysis.frequency import frequencies
    from solver.analysis.loop import CONTROLLED, LoopError
    from solver.circuit.views import is_reactive, small_signal_elements
    names = [e.name for e in small_signal_elements(res.circuit)
             if isinstance(e, CONTROLLED) and e.symbol and e.symbol.endswith(".gain")]
    names += [n for n in opts.loop_around if n not in names]
    out = []
    for n in names:
        try:
            if is_reactive(res.circuit) and opts.f_from is not None:
                pts = len(frequencies(opts.f_from, opts.f_to, per_decade=opts.per_decade))
                out.append(loop(c, around=n, f_from=opts.f_from, f_to=opts.f_to, points=pts, force=opts.force))
            else:
                out.append(loop(c, around=n, at=res.frequency_hz, force=opts.force))
        except InputError:
            if n in opts.loop_around:  # asked for by name: the user hears why not
                raise
        except LoopError:
            if n in opts.loop_around:
                raise
    return out


def _optional_api(name: str, c: Circuit, *args, **kw):
    """``name(c, ...)`` of this module when that analysis exists here (the noise, sensitivity and
    spread work add theirs), else None; a circuit the analysis refuses is left out, not an error."""
    fn = globals().get(name)
    if fn is None:
        return None
    try:
        return fn(c, *args, **kw)
    except InputError:
        return None


def _report_noise(c: Circuit, res: Result, opts):
    """Noise over the default band of ``portwise noise`` (the same JSON as that command)."""
    return _optional_api("noise", c, force=opts.force)


def _report_sensitivity(c: Circuit, res: Result, opts):
    """Normalised sensitivities at the analysis frequency (``portwise sensitivity --at F``)."""
    return _optional_api("sensitivity", c, at=res.frequency_hz, force=opts.force)


def _report_spread(c: Circuit, res: Result, opts):
    """Monte Carlo over the netlist's spread lines, when it has some (a fixed seed: reproducible)."""
    if not getattr(res.circuit, "spreads", None):
        return None
    return _optional_api("spread", c, seed=REPORT_SPREAD_SEED, at=res.frequency_hz, force=opts.force)


REPORT_SPREAD_SEED = 1

#: optional analyses the report shows: key -> function(circuit, solve result, options) -> result(s) or None.
#: Their sections are builders in solver.output.htmlreport (noise, sensitivity, spread, loop); an
#: analysis whose API function is not in this module yet is simply absent from the report.
REPORT_ANALYSES: dict = {"noise": _report_noise, "sensitivity": _report_sensitivity, "spread": _report_spread,
                         "loop": _report_loops}


def report_date() -> str:
    """Now in UTC, or SOURCE_DATE_EPOCH when set (reproducible reports; reproducible-builds.org convention)."""
    import os
    from datetime import datetime, timezone
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    t = datetime.fromtimestamp(int(epoch), timezone.utc) if epoch and epoch.isdigit() else datetime.now(timezone.utc)
    return t.strftime("%Y-%m-%d %H:%M UTC")


def report(circuit: Circuit | str | Path, at: float | None = None, f_from: float | None = None,
           f_to: float | None = None, per_decade: int = 20, quantity: str | None = None,
           force: bool = False, date: str | None = None, loop_around: tuple = ()) -> Report:
    """The design report of ``portwise report``: one self-contained HTML page.

    Parameters
    ----------
    circuit : Circuit, str or Path
    at : float, optional
        The analysis frequency of the port quantities and claims (default as :func:`solve`).
    f_from, f_to : float, optional
        The frequency-response range (default: two decades beyond the poles and zeros).
    per_decade : int
        Sweep points per decade.
    quantity : str, optional
        The swept quantity (default Gv, Zt for a current signal).
    force : bool
        As for :func:`solve`.
    date : str, optional
        The date printed on the report (default :func:`report_date`).
    loop_around : names
        Transistors or controlled sources to show a loop around, besides every op-amp with a gain.

    Examples
    --------
    >>> import solver
    >>> r = report(solver.loads('title "divider"\\nsignal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\n'
    ...                         'load RL (b, gnd) 1k\\n'), date="2026-01-01")
    >>> [s.ident for s in r.sections][:3]
    ['netlist', 'ports', 'forms']
    >>> r.html.startswith("<!DOCTYPE html>")
    True
    """
    from solver import __version__
    from solver.output import htmlreport as R
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    from solver.analysis.frequency import default_quantity
    from solver.circuit.views import is_reactive
    res = solve(c, at, force)
    opts = R.Options(at, f_from, f_to, per_decade, quantity, force, tuple(loop_around))
    if is_reactive(res.circuit):  # one range for every swept section (frequency response, loop gain)
        q = quantity or default_quantity(res.circuit)
        opts.f_from, opts.f_to = R.sweep_range(res.circuit, q, opts, res.frequency_hz)
    ctx = R.Context(res, opts, __version__, date or report_date())
    for key, fn in REPORT_ANALYSES.items():
        out = fn(c, res, opts)
        if out:
            ctx.extras[key] = out
    with paused_gc():
        built = R.build(ctx)
    warnings = list(res.warnings)
    for r in ctx.extras.get("loop", ()):
        warnings += [w for w in r.warnings if w not in warnings]
    return Report(built.html, built.sections, built.omitted, warnings)
