"""Plain-text reports: engineering notation, units, gains in dB, phase when it matters."""
from __future__ import annotations

import cmath
import math

from solver.circuit.model import Circuit
from solver.circuit.views import is_reactive
from solver.language.units import eng  # noqa: F401  (the reports' number format)

UNIT_TEXT = {"ohm": "Ω", "V/V": "V/V", "A/A": "A/A"}
# IEC 61140 extra-low-voltage bands: 50 V a.c. rms, 120 V ripple-free d.c. (from memory)
ELV_DC_VOLTS = 120.0
ELV_AC_VOLTS = 50.0
CAUTION = ("Small-signal results are linear estimates around one operating point, not a safety "
           "assessment. Mains and high-voltage work follows local codes and licensed practice.")


def fmt_quantity(name: str, z: complex, unit: str) -> str:
    u = UNIT_TEXT.get(unit, unit)
    if unit == "dB":  # a rejection ratio (CMRR): its real part is already in dB
        return decibel_text(z.real)
    if cmath.isinf(z) or cmath.isnan(z):
        return eng(z.real, u)
    real = abs(z.imag) <= 1e-6 * abs(z)
    if real:
        text = eng(z.real, u)
    else:
        text = f"{eng(abs(z), u)} ∠ {math.degrees(cmath.phase(z)):.2f}°  ({z.real:.5g} {z.imag:+.4g}j)"
    if unit in ("V/V", "A/A") and z != 0:
        text += f"   {20 * math.log10(abs(z)):.2f} dB"
    return text


def decibel_text(db: float | None) -> str:
    """A ratio in dB for the reports: infinite when the rejected gain is exactly 0."""
    if db is None or math.isnan(db):
        return "undefined"
    if math.isinf(db):
        return "infinite (the rejected gain is 0)" if db > 0 else "-infinite"
    return f"{db:.2f} dB"


def rejection_lines(rejection: dict) -> list[str]:
    """The supply-rejection block of the solve report (PSRR = 20 log10 |Av / A_supply|)."""
    if not rejection:
        return []
    out = ["", "supply rejection (gain from the supply to v_out, signal zeroed, load in place)"]
    width = max(len(n) for n in rejection)
    for name, r in rejection.items():
        g = fmt_quantity(name, r["gain"], r["unit"]) if r["gain"] != 0 else "0 (no path to the output)"
        psrr = "" if r["psrr_db"] is None else f"   PSRR {decibel_text(r['psrr_db'])}"
        out.append(f"  {name:<{width}}  {g}{psrr}")
    return out


def safety_notes(c: Circuit) -> list[str]:
    notes = []
    for s in c.supplies:
        if s.kind == "V" and abs(s.value) > ELV_DC_VOLTS:
            notes.append(f"caution: supply {s.name} is {s.value:g} V, above the {ELV_DC_VOLTS:g} V d.c. "
                         "extra-low-voltage limit (IEC 61140): hazardous voltage, follow local codes.")
    sig = c.signal
    if sig is not None and sig.kind == "V" and abs(sig.value) / math.sqrt(2) > ELV_AC_VOLTS:
        # the signal's value is its amplitude (peak); the a.c. band is in rms
        notes.append(f"caution: signal {sig.name} is {abs(sig.value):g} V peak ({abs(sig.value) / math.sqrt(2):.4g} V "
                     f"rms), above the {ELV_AC_VOLTS:g} V a.c. extra-low-voltage limit (IEC 61140): hazardous "
                     "voltage, follow local codes.")
    return notes


def device_lines(c: Circuit, table: dict) -> list[str]:
    names = {"gm": ("gm", "S"), "rpi": ("rπ", "Ω"), "ro": ("ro", "Ω"), "re": ("re", "Ω"),
             "beta": ("β", ""), "gmb": ("gmb", "S"), "rx": ("rx", "Ω"), "cpi": ("cπ", "F"),
             "cmu": ("cμ", "F"), "cgs": ("cgs", "F"), "cgd": ("cgd", "F"), "rd": ("rd", "Ω")}
    lines = []
    width = max((len(n) for n in table), default=2)
    for d in c.devices:
        vals = table.get(d.name, {})
        kind = d.kind + (f" {d.model}" if d.is_bjt else "")
        cells = []
        for k, v in vals.items():
            label, unit = names.get(k, (k, ""))
            cells.append(f"{label} {eng(v, unit)}")
        lines.append(f"  {d.name:<{width}}  {kind:<14} " + "   ".join(cells))
    return lines


def solve_report(result, symbolic: dict | None = None) -> str:
    from solver.analysis.ports import UNITS
    c = result.circuit
    out = []
    out.append(c.title or c.file)
    f = result.frequency_hz
    if f == 0 and not is_reactive(c):
        out.append("small-signal analysis: no capacitors or inductors, the results hold at any frequency")
    else:
        out.append(f"small-signal analysis at {'DC' if f == 0 else eng(f, 'Hz')}")
    out.extend(result.notes)
    if c.devices:
        out.append("")
        out.append("devices")
        out.extend(device_lines(c, result.devices))
    out.append("")
    out.append("port quantities" + (" (current signal: Zt = v_out/i_sig)" if c.signal.kind == "A" else ""))
    for name, z in result.quantities.items():
        line = f"  {name:<5} {fmt_quantity(name, z, UNITS[name])}"
        if symbolic and name in symbolic:
            line += f"\n        = {symbolic[name]}"
        out.append(line)
    out.extend(rejection_lines(getattr(result, "supply_rejection", {})))
    notes = safety_notes(c)
    out.append("")
    out.extend(notes)
    out.append(CAUTION)
    return "\n".join(out)
