"""The one pipeline every command runs: load, the input checks, the bias, the topology checks.

Every command (solve, bias, derive, check, sweep, twoport, and the Python API)
calls :func:`prepare`, so each sees the same checks in the same order:

1. what the purpose needs: a signal and an output port for a small-signal
   analysis (a bias check needs neither);
2. the DC view's source laws (:func:`solver.circuit.topology.check_dc_sources`):
   loops of voltage-defined branches and nodes fed only by a current supply;
3. the bias solve when a device is given by DC parameters (a transistor outside its
   amplifying region stops a small-signal analysis unless ``force``);
4. the graph checks of the configurations the analysis solves (the scenario
   table's signal-driven configurations, or the two-port's terminated network).

It returns a :class:`Prepared` value: the circuit to analyse (the netlist's own,
or its biased copy), the operating point, and every warning found on the way.
Nothing is written onto the circuit model.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from solver.analysis import scenarios
from solver.analysis.bias import (BiasError, BiasResult, bias_circuit, biased, cautions, needs_bias_solve,
                                  region_problems, region_text, solve_bias)
from solver.bulk import paused_gc
from solver.circuit import topology
from solver.circuit.elaborate import elaborate
from solver.circuit.model import Circuit
from solver.circuit.views import is_reactive
from solver.diagnostics import Diagnostic, InputError, Loc, error
from solver.language import parse as parser
from solver.language.units import eng

#: what each purpose needs of the netlist
PURPOSES = ("bias", "ports", "twoport")


def read_source(path: str | Path) -> str:
    """Read a netlist file as UTF-8; a bad byte is a diagnostic, not a traceback."""
    limit = parser.MAX_FILE_BYTES  # read at the call: a test may lower it
    p = Path(path)
    try:
        with p.open("rb") as f:  # never more than the limit: a huge or endless file stops here
            data = f.read(limit + 1)
    except OSError as e:
        raise error(None, f"cannot read '{path}': {e.strerror or e}") from None
    if len(data) > limit:
        raise error(Loc(str(path), 1, 1), f"file larger than {limit} bytes")
    utf16 = _utf16(data)
    if utf16:
        raise error(Loc(str(path), 1, 1), f"the file is {utf16}, not UTF-8: save the file as UTF-8")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as e:
        line = data[: e.start].count(b"\n") + 1
        col = e.start - (data.rfind(b"\n", 0, e.start) + 1) + 1
        byte = data[e.start]
        seen = bytes([byte]).decode("cp1252", "replace")
        guess = f" (in Latin-1 or Windows-1252 it would be '{seen}')" if byte >= 0xA0 and seen.isprintable() else ""
        raise error(Loc(str(path), line, col), f"invalid UTF-8 byte 0x{byte:02X} in the file{guess}: "
                    "save the file as UTF-8") from None
    if text.startswith("\ufeff"):
        text = text[1:]
    if not text.strip():
        raise error(Loc(str(path), 1, 1), "the file is empty")
    return text


def _utf16(data: bytes) -> str:
    """'UTF-16' (with its byte order) when the bytes look like it: a byte-order mark, or every
    other byte zero in an ASCII-only text (common practice, no source)."""
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        return "UTF-16 (it starts with a UTF-16 byte-order mark)"
    head = data[:200]
    if len(head) >= 4 and head.count(0) * 2 >= len(head) - 1:
        return "UTF-16 (every other byte is zero)"
    return ""


def loads(text: str, file: str = "<string>") -> Circuit:
    """Parse and elaborate netlist text into a :class:`~solver.circuit.model.Circuit`."""
    with paused_gc():  # bulk building; see solver.bulk
        return elaborate(parser.parse(text, file))


def load(path: str | Path) -> Circuit:
    """Read, parse and elaborate a netlist file."""
    return loads(read_source(path), str(path))


@dataclass
class Prepared:
    """A circuit ready for an analysis, and what was found on the way.

    circuit  -- the circuit to analyse: the netlist's own, or its biased copy
    source   -- the circuit as elaborated (never changed)
    bias     -- the DC operating point when it was solved, else None
    warnings -- every warning so far (elaboration, DC view, bias, topology), in order found
    notes    -- cautions and region warnings of the bias solve, for the reports
    """

    circuit: Circuit
    source: Circuit
    bias: BiasResult | None = None
    warnings: list[Diagnostic] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def fail(self, errors: list[Diagnostic]) -> InputError:
        """An InputError with these errors and the warnings found so far."""
        return InputError(list(errors) + [w for w in self.warnings if w not in errors])


def _requirements(c: Circuit, purpose: str) -> list[Diagnostic]:
    where = Loc(c.file, 1, 1)
    out = []
    if purpose == "bias":
        return out
    if c.signal is None:
        out.append(Diagnostic("error", where, "the circuit has no signal: add 'signal NAME (P, N) VALUE'"))
    if not c.has_output:
        out.append(Diagnostic("error", where, "the circuit has no output port: add a 'load' or an 'output (P, N)'"))
    return out


def _unbiased(c: Circuit) -> list[Diagnostic]:
    """Devices without a small-signal model (no operating point given and none solved)."""
    out = []
    for dev in c.devices:
        if not dev.ss:
            what = {"npn": "ic=", "pnp": "ic=", "nmos": "id= and vov=", "pmos": "id= and vov="}.get(dev.kind, "id=")
            out.append(Diagnostic("error", dev.loc or Loc(c.file, 1, 1),
                                  f"{dev.name} has no operating point, so its small-signal model is unknown: "
                                  f"give {what} (or gm=), or solve the bias first"))
    return out


def _region_warnings(c: Circuit, res: BiasResult, purpose: str) -> list[Diagnostic]:
    """A bias-solved transistor outside its amplifying region, as a warning at its line: a finding
    of the bias check; for a small-signal analysis only reached with ``force``."""
    why = ("a small-signal analysis refuses it unless forced (--force; force=True from Python)" if purpose == "bias" else
           "the small-signal results do not describe this circuit (analysed because forced)")
    return [Diagnostic("warning", d.loc, f"{region_text(d, res.devices[d.name])}: outside its amplifying "
                       f"region; {why}") for d in region_problems(c, res)]


def prepare(c: Circuit, purpose: str = "ports", view: str = "ac", force: bool = False) -> Prepared:
    """Run the input checks and the bias solve that an analysis of ``purpose`` needs.

    Parameters
    ----------
    c : Circuit
        As elaborated (:func:`load`, :func:`loads`); not changed.
    purpose : {"bias", "ports", "twoport"}
        "bias": the DC operating point only (no signal or output port needed, the bias
        always solved, devices outside their amplifying region reported, not refused);
        "ports": a small-signal analysis of the port quantities (solve, derive, check,
        sweep); "twoport": the two-port between the ports.
    view : {"ac", "dc"}
        The view of the graph checks: "dc" for an analysis at 0 Hz.
    force : bool
        Analyse transistors outside their amplifying region (the notes warn).

    Returns
    -------
    Prepared

    Raises
    ------
    InputError
        With every error found at the first step that has errors, and the warnings so far.

    Examples
    --------
    >>> c = loads("supply VCC (vcc, gnd) 9 V\\nresistor R1 (vcc, b) 10k\\nresistor R2 (b, gnd) 10k\\n")
    >>> p = prepare(c, "bias")  # no signal and no output port: a bias network alone
    >>> round(p.bias.nodes["b"], 3), round(p.bias.supplies["VCC"], 9)
    (4.5, 0.00045)
    """
    if purpose not in PURPOSES:
        raise ValueError(f"purpose is one of {PURPOSES}")
    p = Prepared(c, c, warnings=list(c.warnings))
    errors = _requirements(c, purpose)
    if errors:
        raise p.fail(errors)
    # the DC view's own faults; the AC view's checks below see the rest (a bias solve sees all)
    bias_first = purpose == "bias" or needs_bias_solve(c)
    dc_errors = [d for d in topology.check_dc_sources(c, ac_checked=not bias_first) if d.severity == "error"]
    if dc_errors and bias_first:
        raise p.fail(dc_errors)
    if purpose == "bias":
        try:
            p.bias = solve_bias(c)
        except BiasError as e:
            raise p.fail([Diagnostic("error", e.loc or Loc(c.file, 1, 1), str(e))]) from None
        p.bias.notes.extend(cautions(c, p.bias))
        p.circuit = biased(c, p.bias)
    elif needs_bias_solve(c):
        try:
            p.circuit, p.bias = bias_circuit(c, force)
        except InputError as e:
            raise p.fail(e.diagnostics) from None
    if p.bias is not None:
        p.warnings += [w for w in p.bias.warnings if w not in p.warnings]
        p.notes = list(p.bias.notes)
        p.warnings += _region_warnings(c, p.bias, purpose)
    if purpose == "bias":
        return p
    errors = _unbiased(p.circuit)
    if errors:
        raise p.fail(errors)
    if purpose == "twoport":
        found = topology.check_two_port(p.circuit, view)
    else:
        configs = [(list(cfg.elements), "" if k == 0 else f" {cfg.description}")
                   for k, cfg in enumerate(scenarios.signal_configurations(p.circuit))]
        found = topology.check(p.circuit, configs, view)
    errors = [d for d in found if d.severity == "error"]
    p.warnings += [d for d in found if d.severity == "warning" and d not in p.warnings]
    if errors or dc_errors:
        raise p.fail(sorted(errors + dc_errors, key=lambda d: (d.loc.line, d.loc.col) if d.loc else (0, 0)))
    return p


def default_frequency(c: Circuit) -> float:
    """1 kHz for a circuit with capacitors or inductors, DC otherwise."""
    return 1000.0 if is_reactive(c) else 0.0


def analysis_frequency(c: Circuit, at: float | None = None) -> tuple[float, list[str]]:
    """The frequency every analysis uses, and a note saying how it was chosen.

    ``at`` when given; else DC for a circuit without capacitors or inductors, else the detected
    midband (the flat top of the main gain), else 1 kHz when no flat top is found.
    """
    if at is not None:
        return float(at), []
    f = default_frequency(c)
    if not is_reactive(c):
        return f, []
    from solver.analysis.frequency import midband_frequency
    fm = midband_frequency(c)
    if fm is None:
        return f, [f"no analysis frequency given and no flat top found: evaluated at {_hz(f)}"]
    return fm, [f"no analysis frequency given: evaluated at the detected midband frequency, {_hz(fm)} "
                "(the flat top of the main gain)"]


def _hz(f: float) -> str:
    return "DC" if f == 0 else eng(f, "Hz")
