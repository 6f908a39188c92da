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
    #: {supply: {"gain": complex, "unit": "V/V" | "ohm", "psrr_db": float | None}} (PSRR = |Av/A_supply|)
    supply_rejection: dict[str, dict] = field(default_factory=dict)

    def to_json(self) -> dict:
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
        return out


from solver.output.jsonout import number as _num# noqa: E402  (one JSON rule for every command)


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


def solve(circuit: Circuit | str | Path, at: float | None = None, force: bool = False) -> Result:
    """Port quantities of a circuit at ``at`` hertz (default: the detected midband if reactive, else DC).

    A device given by its DC parameters (no ic/gm, id/gm) is first biased
    (:func:`solver.analysis.pipeline.prepare`); a transistor outside its amplifying
    region is an InputError unless ``force`` (then the result's notes warn).
    Raises InputError for a circuit that cannot be solved (e.g. singular).
    """
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
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
                  rejection)


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


# --- tolerances, Monte Carlo and part values (issue 14) ------------------------------------------
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


# --- feedback: portwise loop (issue 15) ------------------------------------------------------------
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
