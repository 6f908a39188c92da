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
from solver.output.cautions import CAUTION  # noqa: E402,F401  (the reports' closing words)

#: a gain whose phase is this close to 0° or 180° prints as a signed real (its phase noted once)
REAL_PHASE_DEG = 0.5
#: a part of a complex number below this fraction of the scale (the number's own size, or the
#: largest entry of its matrix) is rounding noise and prints as 0
NOISE = 1e-9


def phase_deg(z: complex) -> float:
    """The phase in degrees, in (-180°, 180°] (a negative real is +180°, never -180°).

    Examples
    --------
    >>> phase_deg(complex(-1, -0.0)), phase_deg(-1j)
    (180.0, -90.0)
    """
    p = math.degrees(cmath.phase(z))
    return p + 360.0 if p <= -180.0 else p


def complex_text(z: complex, unit: str = "", scale: float | None = None, digits: int = 4) -> str:
    """One complex style for every report: ``a + jb unit`` with one prefix for both parts; a part
    below ``NOISE`` times the scale (the number's own size, or its matrix's largest entry) is 0.

    Examples
    --------
    >>> complex_text(4349 - 227.8j, "Ω")
    '4.349 - j0.2278 kΩ'
    >>> complex_text(complex(4.235e-13, 1.2), "Ω", scale=1e4)
    'j1.2 Ω'
    >>> complex_text(complex(-3.759e5, 1e-9), "Ω")
    '-375.9 kΩ'
    >>> complex_text(complex(0.0729, 1.203))
    '0.0729 + j1.203'
    """
    u = UNIT_TEXT.get(unit, unit)
    if unit == "dB":  # a rejection ratio (CMRR): its real part is already in dB
        return decibel_text(z.real)
    if cmath.isinf(z) or cmath.isnan(z):
        return eng(z.real if not math.isnan(z.real) else z.imag, u)
    tiny = NOISE * (abs(z) if scale is None else scale)
    re_, im = (0.0 if abs(z.real) <= tiny else z.real), (0.0 if abs(z.imag) <= tiny else z.imag)
    if im == 0:
        return eng(re_, u, digits)
    big = max(abs(re_), abs(im))
    e = max(-15, min(12, int(math.floor(math.log10(big) / 3) * 3)))
    if (not u or "/" in u) and -3 <= e <= 3 or u in ("V/V", "A/A"):
        e = 0  # as eng(): ratios and plain numbers take no prefix
    prefix = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}[e]
    tail = f" {prefix}{u}" if u else (prefix and f" {prefix}")
    j = f"j{abs(im) / 10 ** e:.{digits}g}"
    if re_ == 0:
        return f"{'-' if im < 0 else ''}{j}{tail}"
    return f"{re_ / 10 ** e:.{digits}g} {'-' if im < 0 else '+'} {j}{tail}"


def snapped(z: complex) -> bool:
    """True for a finite complex number within REAL_PHASE_DEG of the real axis (0° or 180°)."""
    if not cmath.isfinite(z) or z == 0 or z.imag == 0:
        return False
    p = abs(phase_deg(z))
    return min(p, 180.0 - p) <= REAL_PHASE_DEG


def fmt_quantity(name: str, z: complex, unit: str, why_infinite: str = "") -> str:
    """A port quantity's value: a gain as a signed real when its phase is within 0.5° of 0° or
    180° (the report notes this once), else ``a + jb`` with its magnitude and phase."""
    u = UNIT_TEXT.get(unit, unit)
    gain = unit in ("V/V", "A/A")
    if cmath.isinf(z) or cmath.isnan(z):
        return eng(z.real, u) + (f"   ({why_infinite})" if why_infinite and cmath.isinf(z) else "")
    if abs(z.imag) <= 1e-6 * abs(z) or (gain and snapped(z)):
        text = eng(z.real if not snapped(z) else math.copysign(abs(z), z.real), u)
    else:
        text = f"{complex_text(z, u)}   (|{name}| {eng(abs(z), u)} ∠ {phase_deg(z):.2f}°)"
    if gain and z != 0:
        text += f"   {20 * math.log10(abs(z)):.2f} dB"
    return text


def closing_lines(c: Circuit, notes=()) -> list[str]:
    """The end of a text report: the extra-low-voltage cautions and the general caution, only
    when a supply, the signal or a node exceeds the limits (else nothing: README and --help say it)."""
    found = safety_notes(c)
    if found or any("extra-low-voltage" in n for n in notes):
        return ["", *found, CAUTION]
    return []


def infinite_reason(c: Circuit, name: str, quantities: dict | None = None) -> str:
    """Why a gain is infinite when an ideal op-amp makes it so (empty for anything else)."""
    from solver.circuit.elements import Nullor
    if not any(isinstance(e, Nullor) for e in c.elements):
        return ""
    if name == "Ai":
        return "ideal op-amp: its inputs draw no current, so i_in = 0; give gain= for a finite op-amp"
    if name in ("Avo", "Av") and (quantities or {}).get("Rin") == 0:
        return "ideal op-amp: the input port is a virtual ground, so v_in = 0; give gain= for a finite op-amp"
    if name in ("Avo", "Av", "Gv", "Gvo"):
        return "ideal op-amp: infinite open-loop gain; give gain= for a finite one"
    return ""


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
    midband = getattr(result, "midband", None)
    if midband is not None:
        out.append("small-signal analysis at midband: coupling and bypass capacitors shorted, device and "
                   "wiring capacitances opened")
        out.extend(midband.lines())
    elif f == 0 and not is_reactive(c):
        out.append("small-signal analysis: no capacitors or inductors, the results hold at any frequency")
    else:
        out.append(f"small-signal analysis at {'DC' if f == 0 else eng(f, 'Hz')}")
    out.extend(n for n in result.notes if midband is None or n != midband.note())
    if c.devices:
        out.append("")
        out.append("devices")
        out.extend(device_lines(c, result.devices))
    out.append("")
    out.append("port quantities" + (" (current signal: Zt = v_out/i_sig)" if c.signal.kind == "A" else ""))
    q = result.quantities
    # no load and no source resistance: Av, Gv and Gvo are Avo itself, said in one row
    same = ("Av", "Gv", "Gvo") if (c.load is None and c.signal.kind == "V" and c.signal.rs == 0
                                   and all(k in q and q[k] == q.get("Avo") for k in ("Av", "Gv", "Gvo"))) else ()
    real = [k for k, z in q.items() if UNITS[k] in ("V/V", "A/A") and snapped(z) and k not in same]
    for name, z in q.items():
        if name in same:
            continue
        line = f"  {name:<5} {fmt_quantity(name, z, UNITS[name], infinite_reason(c, name, q))}"
        if symbolic and name in symbolic:
            line += f"\n        = {symbolic[name]}"
        out.append(line)
        if name == "Avo" and same:
            out.append("  Av, Gv, Gvo = Avo (no load and no source resistance)")
    if real:
        out.append(f"  ({', '.join(real)}: phase within {REAL_PHASE_DEG:g}° of 0° or 180°, shown as signed "
                   "real numbers)")
    out.extend(rejection_lines(getattr(result, "supply_rejection", {})))
    out.extend(closing_lines(c, result.notes))
    return "\n".join(out)
