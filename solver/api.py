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


@dataclass
class Sweep:
    """A frequency response (:func:`sweep`): the summary of ``portwise sweep``, and its Bode plot in Jupyter."""

    summary: object  # solver.analysis.response.Summary
    warnings: list[Diagnostic] = field(default_factory=list)

    def to_dict(self) -> dict:
        from solver.output.sweep import summary_json
        return summary_json(self.summary)

    def to_json(self) -> str:
        import json
        from solver.output.htmlreport import json_ready
        return json.dumps(json_ready(self.to_dict()), allow_nan=False)

    def _repr_html_(self) -> str:
        from solver.output import html as H
        from solver.output.htmlreport import summary_html
        return H.fragment(summary_html(self.summary))


def sweep(circuit: Circuit | str | Path, f_from: float = 1.0, f_to: float = 1e8, quantity: str | None = None,
          points: int | None = None, per_decade: int | None = None) -> Sweep:
    """The frequency response of ``portwise sweep``: midband, corners, poles and zeros, estimates.

    Examples
    --------
    >>> import solver
    >>> c = solver.loads("signal VS (a, gnd) 1 V, rs=1k\\ncapacitor C1 (a, gnd) 1u\\noutput (a, gnd)\\n")
    >>> s = sweep(c, 1, 1e5)
    >>> round(s.to_dict()["summary"]["f_high_hz"], 2)
    159.15
    >>> "<svg" in s._repr_html_()
    True
    """
    from solver.analysis.frequency import default_quantity, frequencies
    from solver.analysis.response import analyse
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    with paused_gc():
        p = pipeline.prepare(c, "ports", "ac")
        q = quantity or default_quantity(p.circuit)
        sm = analyse(p.circuit, q, frequencies(f_from, f_to, points, per_decade))
    return Sweep(sm, list(p.warnings))


@dataclass
class Expression:
    """One derived port quantity (:func:`derive`): plain text, LaTeX, and a formula in Jupyter.

    ``_repr_html_`` is MathML built from our own parse of the plain text (the netlist
    expression language), ``_repr_latex_`` the LaTeX of ``portwise derive --latex``.
    """

    derived: object  # solver.analysis.symbolic.derive.Derived

    @property
    def quantity(self) -> str:
        return self.derived.quantity

    @property
    def plain(self) -> str:
        return self.derived.plain

    @property
    def latex(self) -> str:
        return self.derived.latex

    def __str__(self) -> str:
        return f"{self.quantity} = {self.plain}"

    def to_dict(self) -> dict:
        return {"quantity": self.quantity, "expression": self.plain, "latex": self.latex}

    def to_json(self) -> str:
        import json
        return json.dumps(self.to_dict())

    def _repr_latex_(self) -> str:
        from solver.analysis.symbolic.printing import latex_name
        return f"$\\displaystyle {latex_name(self.quantity)} = {self.latex}$"

    def _repr_html_(self) -> str:
        from solver.output import html as H
        from solver.output.htmlreport import formula_html
        return H.fragment(formula_html(self.quantity, self.plain, getattr(self.derived, "where", None)))


def derive(circuit: Circuit | str | Path, quantities="all", keep=None, numeric=(), limits=()) -> list[Expression]:
    """Symbolic port quantities as ``portwise derive`` prints them; each shows as a formula in Jupyter.

    Examples
    --------
    >>> import solver
    >>> d = derive(solver.loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n"), ["Gv"])
    >>> str(d[0])
    'Gv = RL/(R1 + RL)'
    >>> "<math" in d[0]._repr_html_() and d[0]._repr_latex_().startswith("$")
    True
    """
    from solver.analysis import scenarios
    from solver.analysis.symbolic.derive import derive as _derive
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    p = pipeline.prepare(c, "ports", "ac")
    qs = scenarios.quantities(p.circuit) if quantities == "all" else list(quantities)
    return [Expression(d) for d in _derive(p.circuit, qs, keep, numeric, limits)]


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
