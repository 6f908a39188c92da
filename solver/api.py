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

from solver.bulk import paused_gc
from solver.diagnostics import Diagnostic, InputError, Loc, error
from solver.circuit.elaborate import elaborate
from solver.circuit.model import Circuit
from solver.language.parse import parse
from solver.analysis.ports import UNITS, PortError, default_frequency, port_quantities


def read_source(path: str | Path) -> str:
    """Read a netlist file as UTF-8; a bad byte is a diagnostic, not a traceback."""
    from solver.language.parse import MAX_FILE_BYTES
    p = Path(path)
    try:
        with p.open("rb") as f:  # never more than the limit: a huge or endless file stops here
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise error(None, f"cannot read '{path}': {e.strerror or e}") from None
    if len(data) > MAX_FILE_BYTES:
        raise error(Loc(str(path), 1, 1), f"file larger than {MAX_FILE_BYTES} bytes")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as e:
        line = data[: e.start].count(b"\n") + 1
        col = e.start - (data.rfind(b"\n", 0, e.start) + 1) + 1
        raise error(Loc(str(path), line, col), "invalid UTF-8 byte in the file") from None
    if text.startswith("\ufeff"):
        text = text[1:]
    if not text.strip():
        raise error(Loc(str(path), 1, 1), "the file is empty")
    return text


def loads(text: str, file: str = "<string>") -> Circuit:
    """Parse and elaborate netlist text into a :class:`~solver.circuit.model.Circuit`."""
    with paused_gc():  # bulk building; see solver.bulk
        return elaborate(parse(text, file))


def load(path: str | Path) -> Circuit:
    """Read, parse and elaborate a netlist file."""
    return loads(read_source(path), str(path))


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

    A device given by its DC parameters (no ic/gm, id/gm) is first biased by
    :func:`solver.analysis.bias.bias_circuit`; a transistor outside its amplifying region
    is an InputError unless ``force`` (then the result's notes warn).
    Raises InputError for a circuit that cannot be solved (e.g. singular).
    """
    c = circuit if isinstance(circuit, Circuit) else load(circuit)
    from solver.circuit import topology# name floating nodes, source loops and cut sets before solving
    from solver.analysis.bias import ensure_bias
    with paused_gc():
        bias = ensure_bias(c, force)
        topology.require_sound(c, "dc" if at is not None and float(at) == 0 else "ac")
        f, why = analysis_frequency(c, at)
        notes = (list(bias.notes) if bias else []) + why
        try:
            pr = port_quantities(c, f)
        except PortError as e:
            raise InputError(topology.explain_singular(c, f, str(e))) from None
        topology.warn_conditioning(c, f)
    return Result(c, f, pr.quantities, device_table(c), notes, bias)


def analysis_frequency(c: Circuit, at: float | None = None) -> tuple[float, list[str]]:
    """The frequency every analysis uses, and a note saying how it was chosen.

    ``at`` when given; else DC for a circuit without capacitors or inductors, else the detected
    midband (the flat top of the main gain), else 1 kHz when no flat top is found.
    """
    if at is not None:
        return float(at), []
    f = default_frequency(c)
    if not c.reactive:
        return f, []
    from solver.analysis.frequency import midband_frequency
    fm = midband_frequency(c)
    if fm is None:
        return f, [f"no --at given and no flat top found: evaluated at {_eng_hz(f)}"]
    return fm, [f"no --at given: evaluated at the detected midband frequency, {_eng_hz(fm)} "
                "(the flat top of the main gain)"]


def _eng_hz(f: float) -> str:
    from solver.output.report import eng
    return "DC" if f == 0 else eng(f, "Hz")
