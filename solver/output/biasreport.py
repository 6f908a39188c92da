"""Plain-text tables of a DC operating point (``portwise bias`` and the top of ``portwise solve``)."""
from __future__ import annotations

from solver.circuit.devices import needs_bias
from solver.circuit.model import Circuit
from solver.output.jsonout import number as _num
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
    >>> from solver.analysis.bias import solve_bias, biased
    >>> c = loads("supply V1 (a, gnd) 5 V\\nsignal IS (k, gnd) 1 mA\\nresistor R (a, k) 1k\\n"
    ...           "diode D1 (k, gnd)\\noutput (k, gnd)")
    >>> r = solve_bias(c)
    >>> bias_lines(biased(c, r), r)[0]
    'DC operating point (Newton–Raphson, 5 iterations)'
    """
    how = "Newton–Raphson" if res.method == "newton" else f"Newton–Raphson with {res.method}"
    out = [f"DC operating point ({how}, {res.iterations} iteration{'s' if res.iterations != 1 else ''})"]
    from solver.circuit.topology import is_internal
    shown = {n: v for n, v in res.nodes.items() if not is_internal(n)}  # nodes the user wrote (the JSON keeps all)
    width = max((len(n) for n in shown), default=1)
    out.append("  node voltages")
    for n, v in shown.items():
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
    return needs_bias(d)


def headroom_lines(h) -> list[str]:
    """The headroom block: each transistor's margins to its region edges and the output swing.

    ``h`` is a :class:`solver.analysis.headroom.Headroom`.
    """
    if not h.devices and not h.notes:
        return []
    at = "DC" if h.frequency_hz == 0 else eng(h.frequency_hz, "Hz")
    out = [f"  headroom (margins to the region edges; AC load at {at})"]
    dw = max((len(n) for n in h.devices), default=1)
    for name, d in h.devices.items():
        bjt = d.kind in ("npn", "pnp")
        sat = (f"VCE - VCE,sat {eng(d.saturation_v, 'V')} (VCE,sat {eng(d.vsat_v, 'V')}, "
               f"{'Ebers–Moll at the bias current' if d.vsat_source == 'ebers-moll' else d.vsat_source})"
               if bjt else f"VDS - Vov {eng(d.saturation_v, 'V')} (Vov {eng(d.vsat_v, 'V')})")
        load = "no AC load (∞)" if d.ac_load_ohm == float("inf") else f"AC load {eng(d.ac_load_ohm, 'Ω')}"
        out.append(f"    {name:<{dw}}  to saturation: {sat}")
        out.append(f"    {'':<{dw}}  to cutoff: {eng(d.cutoff_v, 'V')} "
                   f"({'IC' if bjt else 'ID'} {eng(d.current_a, 'A')} × {load})")
    if h.swing is not None:
        w = h.swing
        port = w.node if w.reference in ("gnd", "0") else f"{w.node} - {w.reference}"
        out.append(f"  output swing at {port}: up {eng(w.up_v, 'V')} ({w.up_limit or 'no limit'}), "
                   f"down {eng(w.down_v, 'V')} ({w.down_limit or 'no limit'}); "
                   f"symmetric ±{eng(w.symmetric_v, 'V')}")
        if w.needed_v is not None:
            out.append(f"    the signal asks for ±{eng(w.needed_v, 'V')} at the output"
                       + (" — it clips" if w.symmetric_v < w.needed_v else ""))
    out.extend(f"  note: {n}" for n in h.notes)
    return out


def bias_report(c: Circuit, res, headroom=None) -> str:
    """The full ``portwise bias`` text: title, table, headroom, warnings, cautions."""
    from solver.output.report import closing_lines
    out = [c.title or c.file, ""]
    out.extend(bias_lines(c, res))
    if headroom is not None:
        out.extend(headroom_lines(headroom))
    if res.notes:
        out.append("")
        out.extend(res.notes)
    out.extend(closing_lines(c, res.notes))
    return "\n".join(out)


#: the reference directions of the bias JSON (and of the report), stated in the JSON itself
CONVENTIONS = {
    "currents": "into the device terminal: ic, ib, id are positive for an npn or nmos in its "
                "active/saturation region and negative for a pnp or pmos",
    "voltages": "vbe, vce, vgs, vds are the first terminal's potential minus the second's "
                "(negative for a pnp or pmos in its amplifying region)",
    "supplies": "current delivered out of the supply's first (P) node",
    "small_signal": "gm, rpi, ro, rd are magnitudes (positive) for every polarity",
}


def bias_json(res, c: Circuit, headroom=None) -> dict:
    """The ``portwise bias --json`` object (signed values for pnp and pmos, see CONVENTIONS).

    ``c`` is the biased circuit (its devices carry their small-signal parameters);
    ``headroom`` (:class:`solver.analysis.headroom.Headroom`) adds "headroom" and "swing".
    """
    keys = {"bjt": ("region", "ic", "ib", "vbe", "vce", "power"), "mos": ("region", "id", "vgs", "vds", "power"),
            "diode": ("region", "id", "vd", "power")}
    ss_keys = {"bjt": ("gm", "rpi", "ro"), "mos": ("gm", "ro"), "diode": ("rd",)}
    devices = {}
    for d in c.devices:
        kind = _kind(d)
        op = res.devices[d.name]
        entry = {k: (op[k] if k == "region" else _num(op[k])) for k in keys[kind]}
        entry.update({k: _num(d.ss[k]) for k in ss_keys[kind] if k in d.ss})
        devices[d.name] = entry
    out = {"nodes": {n: _num(v) for n, v in res.nodes.items()}, "devices": devices,
           "supplies": {n: _num(i) for n, i in res.supplies.items()},
           "iterations": res.iterations, "conventions": dict(CONVENTIONS)}
    if headroom is not None:
        out.update(headroom.to_dict(_num))
        out["conventions"]["headroom"] = HEADROOM_CONVENTION
    return out


HEADROOM_CONVENTION = ("volts, magnitudes for every polarity: saturation_v = VCE - VCE,sat (BJT; vsat_source "
                       "'ebers-moll' at the bias current, or 0.2 V for a device given by ic=) or VDS - Vov "
                       "(MOSFET); cutoff_v = bias current x AC load; swing up_v/down_v = how far v_out can "
                       "rise/fall before a device leaves its region")
