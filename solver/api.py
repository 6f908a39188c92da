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
from solver.analysis.ports import UNITS, PortError, port_quantities
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

    def to_json(self) -> dict:
        out = {
            "circuit": self.circuit.title or Path(self.circuit.file).stem,
            "frequency_hz": self.frequency_hz,
            "quantities": {k: {"re": _num(v.real), "im": _num(v.imag) if math.isfinite(v.real) else 0.0,
                               "unit": UNITS[k]} for k, v in self.quantities.items()},
            "devices": {name: {k: _num(v) for k, v in p.items()} for name, p in self.devices.items()},
        }
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
    return Result(p.circuit, f, pr.quantities, device_table(p.circuit), p.notes + why, p.bias, warnings)


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
