"""Plain-text tables of a DC operating point (``portwise bias`` and the top of ``portwise solve``)."""
from __future__ import annotations

from solver.circuit.model import Circuit
from solver.output.report import eng

_OP = {"bjt": (("ic", "IC", "A"), ("ib", "IB", "A"), ("vbe", "VBE", "V"), ("vce", "VCE", "V")),
       "mos": (("id", "ID", "A"), ("vgs", "VGS", "V"), ("vds", "VDS", "V")),
       "diode": (("id", "ID", "A"), ("vd", "VD", "V"))}
_SS = {"gm": ("gm", "S"), "rpi": ("rπ", "Ω"), "ro": ("ro", "Ω"), "re": ("re", "Ω"), "rd": ("rd", "Ω")}


def _kind(d) -> str:
    return "bjt" if d.is_bjt else "mos" if d.is_mos else "diode"


def bias_lines(c: Circuit, res) -> list[str]:
    """The operating point as report lines: nodes, devices (region, currents, power, derived values), supplies.

    Examples
    --------
    >>> from solver import loads
    >>> from solver.analysis.bias import solve_bias, apply_bias
    >>> c = loads("supply V1 (a, gnd) 5 V\\nsignal IS (k, gnd) 1 mA\\nresistor R (a, k) 1k\\n"
    ...           "diode D1 (k, gnd)\\noutput (k, gnd)")
    >>> r = solve_bias(c); apply_bias(c, r)
    >>> bias_lines(c, r)[0]
    'DC operating point (Newton–Raphson, 5 iterations)'
    """
    how = "Newton–Raphson" if res.method == "newton" else f"Newton–Raphson with {res.method}"
    out = [f"DC operating point ({how}, {res.iterations} iteration{'s' if res.iterations != 1 else ''})"]
    width = max((len(n) for n in res.nodes), default=1)
    out.append("  node voltages")
    for n, v in res.nodes.items():
        out.append(f"    {n:<{width}}  {eng(v, 'V')}")
    if c.devices:
        out.append("  devices")
    dw = max((len(d.name) for d in c.devices), default=1)
    for d in c.devices:
        op = res.devices[d.name]
        kind = _kind(d)
        cells = [f"{label} {eng(op[k], unit)}" for k, label, unit in _OP[kind]]
        cells.append(f"P {eng(op['power'], 'W')}")
        out.append(f"    {d.name:<{dw}}  {d.kind:<5} {op['region']:<10}  " + "   ".join(cells))
        ss = [f"{_SS[k][0]} {eng(d.ss[k], _SS[k][1])}" for k in _SS if k in d.ss]
        origin = "from the bias point" if d.ss and _from_bias(d) else "as given in the netlist"
        if ss:
            out.append(f"    {'':<{dw}}  small-signal {origin}: " + "   ".join(ss))
    if res.supplies:
        out.append("  supplies")
        sw = max(len(n) for n in res.supplies)
        for s in c.supplies:
            if s.name in res.supplies:
                i = res.supplies[s.name]
                out.append(f"    {s.name:<{sw}}  {eng(s.value, 'V')} delivers {eng(i, 'A')} "
                           f"({eng(i * s.value, 'W')})")
    return out


def _from_bias(d) -> bool:
    from solver.circuit.devices import needs_bias
    return needs_bias(d)


def bias_report(c: Circuit, res) -> str:
    """The full ``portwise bias`` text: title, table, warnings, cautions."""
    from solver.output.report import CAUTION, safety_notes
    out = [c.title or c.file, ""]
    out.extend(bias_lines(c, res))
    notes = list(res.notes) + safety_notes(c)
    out.append("")
    out.extend(notes)
    out.append(CAUTION)
    return "\n".join(out)
