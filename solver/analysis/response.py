"""The frequency-response summary that ``portwise sweep`` prints: one object, two renderings.

:func:`analyse` runs the sweep, finds the band, the poles and zeros and the
hand estimates; :meth:`Summary.to_json` and :func:`text_report` render it.
"""
from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from solver.analysis import frequency as fr
from solver.circuit.model import Circuit
from solver.analysis.ports import UNITS
from solver.analysis.timeconstants import Estimates, estimate

GAINS = ("Gv", "Gvo", "Av", "Avo", "Ai", "Zt", "Zto")
RATIOS = ("Gv", "Gvo", "Av", "Avo", "Ai")  # dimensionless: a gain-bandwidth product in Hz
DEFINITIONS = {"Gv": "v_out/v_sig", "Gvo": "v_out/v_sig, no load", "Av": "v_out/v_in",
               "Avo": "v_out/v_in, no load", "Ai": "i_load/i_in", "Rin": "v_in/i_in",
               "Rout": "output impedance, load removed", "Zt": "v_out/i_sig", "Zto": "v_out/i_sig, no load"}


@dataclass
class Summary:
    circuit: Circuit
    quantity: str
    freqs: np.ndarray
    h: np.ndarray
    band: fr.Band | None
    poles: np.ndarray | None
    zeros: np.ndarray | None
    estimates: Estimates | None
    notes: list[str] = field(default_factory=list)

    @property
    def gbw_hz(self) -> float | None:
        b = self.band
        if b is None or b.bandwidth_hz is None or self.quantity not in RATIOS:
            return None
        return abs(b.midband) * b.bandwidth_hz

    def errors(self) -> dict[str, float | None]:
        """Relative error of each estimate against the exact corner (estimate/exact - 1)."""
        b, e = self.band, self.estimates
        out: dict[str, float | None] = {}
        if e is None or b is None:
            return out
        pairs = (("octc_f_high_hz", e.octc_f_high_hz, b.f_high_hz),
                 ("sctc_f_low_hz", e.sctc_f_low_hz, b.f_low_hz),
                 ("miller_f_high_hz", e.miller_f_high_hz, b.f_high_hz))
        for key, est, exact in pairs:
            out[key] = None if est is None or exact is None else est / exact - 1.0
        return out

    def to_json(self) -> dict:
        b = self.band
        pts = [{"f": float(f), "re": _num(z.real), "im": _num(z.imag)} for f, z in zip(self.freqs, self.h)]
        summ: dict = {"midband_hz": None, "midband_db": None, "midband_phase_deg": None,
                      "f_low_hz": None, "f_high_hz": None, "bandwidth_hz": None, "gbw_hz": None}
        if b is not None:
            summ.update(midband_hz=b.midband_hz, midband_db=_db(b.midband),
                        midband_phase_deg=math.degrees(cmath.phase(b.midband)),
                        f_low_hz=b.f_low_hz, f_high_hz=b.f_high_hz, bandwidth_hz=b.bandwidth_hz,
                        gbw_hz=self.gbw_hz)
        summ["poles"] = None if self.poles is None else [_c(p) for p in self.poles]
        summ["zeros"] = None if self.zeros is None else [_c(z) for z in self.zeros]
        est: dict = {"octc_f_high_hz": None, "sctc_f_low_hz": None, "miller_f_high_hz": None}
        if self.estimates is not None:
            e = self.estimates
            est.update(octc_f_high_hz=e.octc_f_high_hz, sctc_f_low_hz=e.sctc_f_low_hz,
                       miller_f_high_hz=e.miller_f_high_hz)
            est["errors"] = self.errors()
            est["reasons"] = dict(e.reasons)
            est["time_constants"] = [{"capacitor": t.name, "c_farad": t.capacitance, "r_ohm": t.resistance,
                                      "tau_s": t.tau, "group": t.group} for t in e.terms]
        summ["estimates"] = est
        summ["notes"] = list(self.notes)
        return {"quantity": self.quantity, "points": pts, "summary": summ}


def _num(x: float):
    return float(x) if math.isfinite(x) else None


def _c(z: complex) -> dict:
    return {"re": float(z.real), "im": float(z.imag)}


def _db(z: complex) -> float | None:
    return 20 * math.log10(abs(z)) if z != 0 and cmath.isfinite(z) else None


def analyse(c: Circuit, quantity: str, freqs: np.ndarray) -> Summary:
    """Sweep, band, poles and zeros, estimates (gains only) for one quantity.

    Raises
    ------
    frequency.ResponseError
        For a quantity the circuit does not define.
    """
    sc = fr.scenario(c, quantity)
    h = fr.response(sc, freqs)
    notes = []
    if not np.all(np.isfinite(h)):
        notes.append(f"{int((~np.isfinite(h)).sum())} sweep point(s) are singular or infinite")
    b = fr.band(sc, freqs, h)
    try:
        poles, zeros = fr.poles_zeros(sc)
    except fr.ResponseError as e:
        poles = zeros = None
        notes.append(str(e))
    est = None
    if quantity in GAINS and b is not None:
        est = estimate(c, quantity, b.midband_hz)
    elif quantity not in GAINS:
        notes.append("time-constant estimates are given for gains only")
    return Summary(c, quantity, freqs, h, b, poles, zeros, est, notes)


# --- text ------------------------------------------------------------------------------------
def _hz(x: float | None) -> str:
    from solver.output.report import eng
    return "none in the range" if x is None else eng(x, "Hz")


def _pz_lines(v: np.ndarray) -> list[str]:
    from solver.output.report import eng
    lines = []
    for p in v:
        if p == 0:
            lines.append(f"  {'0':>26}   {'0 Hz':>12}")
            continue
        q = fr.q_factor(p)
        rad = f"{p.real:.5g}" + (f" {p.imag:+.5g}j" if p.imag else "")
        tail = f"   Q {q:.3g}" if q is not None else ""
        side = "   (right half-plane)" if p.real > 0 else ""
        lines.append(f"  {rad:>26}   {eng(abs(p) / (2 * math.pi), 'Hz'):>12}{tail}{side}")
    return lines


def text_report(sm: Summary) -> str:
    from solver.output.report import CAUTION, eng, safety_notes
    c, b = sm.circuit, sm.band
    unit = UNITS[sm.quantity]
    out = [c.title or Path(c.file).stem,
           f"frequency response of {sm.quantity} = {DEFINITIONS[sm.quantity]}, "
           f"{eng(sm.freqs[0], 'Hz')} to {eng(sm.freqs[-1], 'Hz')}, {len(sm.freqs)} points", ""]
    if b is None:
        out.append("no flat top in the range (the response is nowhere flat, or zero or not finite): "
                   "no midband and no corners")
    else:
        db = _db(b.midband)
        level = f"{db:.2f} dB" if db is not None else eng(abs(b.midband), unit)
        out.append(f"  midband         {level}  ∠ {math.degrees(cmath.phase(b.midband)):.1f}°   "
                   f"(|{sm.quantity}| = {eng(abs(b.midband), unit if unit != 'ohm' else 'Ω')} at "
                   f"{'DC' if b.midband_hz == 0 else eng(b.midband_hz, 'Hz')})")
        out.append(f"  f_low  (-3 dB)  {_hz(b.f_low_hz)}")
        out.append(f"  f_high (-3 dB)  {_hz(b.f_high_hz)}")
        if b.bandwidth_hz is not None:
            out.append(f"  bandwidth       {eng(b.bandwidth_hz, 'Hz')}")
        if sm.gbw_hz is not None:
            out.append(f"  gain-bandwidth  {eng(sm.gbw_hz, 'Hz')}")
    for title, v in (("poles", sm.poles), ("zeros", sm.zeros)):
        if v is None:
            continue
        out.append("")
        out.append(f"{title} ({len(v)}){'' if len(v) else ': none'}" + ("   rad/s, natural frequency"
                                                                          if len(v) else ""))
        out.extend(_pz_lines(v))
    e = sm.estimates
    if e is not None:
        out.append("")
        out.append("hand estimates                       estimate        exact     error")
        err = sm.errors()
        rows = (("f_high, open-circuit time consts", e.octc_f_high_hz, b.f_high_hz, "octc_f_high_hz", "octc"),
                ("f_low, short-circuit time consts", e.sctc_f_low_hz, b.f_low_hz, "sctc_f_low_hz", "sctc"),
                ("f_high, Miller approximation", e.miller_f_high_hz, b.f_high_hz, "miller_f_high_hz", "miller"))
        for label, est, exact, key, rk in rows:
            if est is None:
                out.append(f"  {label:<33}  not given: {e.reasons.get(rk, 'no exact corner')}")
                continue
            r = err.get(key)
            out.append(f"  {label:<33}{eng(est, 'Hz'):>12} {_hz(exact):>12} "
                       f"{'' if r is None else f'{100 * r:+8.2f} %'}")
        if e.miller:
            m = e.miller
            out.append(f"    Miller: {m['device']} gain K = {m['gain']:.4g}, C_in = {eng(m['c_in'], 'F')}, "
                       f"R at the input = {eng(m['r_in'], 'Ω')}")
        if e.terms:
            out.append("  capacitor time constants (short: a short at midband, SCTC; open: OCTC)")
            for t in e.terms:
                r = "no finite R" if t.resistance is None else f"sees {eng(t.resistance, 'Ω')}"
                tau = "" if t.tau is None else f"τ = {eng(t.tau, 's')}"
                grp = "short" if t.group == "low" else "open"
                out.append(f"    {t.name:<10} {eng(t.capacitance, 'F'):>10}  {r:<18} {tau:<16} {grp}")
    if sm.notes:
        out.append("")
        out.extend(f"note: {n}" for n in sm.notes)
    out.append("")
    out.extend(safety_notes(c))
    out.append("The estimates are hand methods and approximate by nature. " + CAUTION)
    return "\n".join(out)


def csv_text(freqs: np.ndarray, h: np.ndarray) -> str:
    """f_hz, magnitude_db, phase_deg, re, im; empty cells where the response is not finite."""
    lines = ["f_hz,magnitude_db,phase_deg,re,im"]
    for f, z in zip(freqs, h):
        if cmath.isfinite(z):
            db = f"{20 * math.log10(abs(z)):.10g}" if z != 0 else ""
            lines.append(f"{f:.10g},{db},{math.degrees(cmath.phase(z)):.10g},{z.real:.12g},{z.imag:.12g}")
        else:
            lines.append(f"{f:.10g},,,,")
    return "\n".join(lines) + "\n"
