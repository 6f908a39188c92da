"""A frequency-response summary (:class:`solver.analysis.response.Summary`) as text, JSON and CSV."""
from __future__ import annotations

import cmath
import math
from pathlib import Path

import numpy as np

from solver.analysis import frequency as fr
from solver.analysis.response import Summary
from solver.analysis.scenarios import DEFINITIONS, UNITS
from solver.output.report import closing_lines, eng, phase_deg


def summary_json(sm: Summary) -> dict:
    """The ``portwise sweep --json`` object."""
    b = sm.band
    pts = [{"f": float(f), "re": _num(z.real), "im": _num(z.imag)} for f, z in zip(sm.freqs, sm.h)]
    if sm.psrr_db is not None:  # sweep --supply: the rejection at every point
        for pt, db in zip(pts, sm.psrr_db):
            pt["psrr_db"] = _jdb(db)
    summ: dict = {"midband_hz": None, "midband_db": None, "midband_phase_deg": None,
                  "f_low_hz": None, "f_high_hz": None, "bandwidth_hz": None, "gbw_hz": None}
    if b is not None:
        summ.update(midband_hz=b.midband_hz, midband_db=_db(b.midband),
                    midband_phase_deg=phase_deg(b.midband),
                    f_low_hz=b.f_low_hz, f_high_hz=b.f_high_hz, bandwidth_hz=b.bandwidth_hz,
                    gbw_hz=sm.gbw_hz)
    summ["poles"] = None if sm.poles is None else [_c(p) for p in sm.poles]
    summ["zeros"] = None if sm.zeros is None else [_c(z) for z in sm.zeros]
    est: dict = {"octc_f_high_hz": None, "sctc_f_low_hz": None, "miller_f_high_hz": None}
    if sm.estimates is not None:
        e = sm.estimates
        est.update(octc_f_high_hz=e.octc_f_high_hz, sctc_f_low_hz=e.sctc_f_low_hz,
                   miller_f_high_hz=e.miller_f_high_hz)
        est["errors"] = sm.errors()
        est["reasons"] = dict(e.reasons)
        est["time_constants"] = [{"capacitor": t.name, "c_farad": t.capacitance, "r_ohm": t.resistance,
                                  "tau_s": t.tau, "group": t.group} for t in e.terms]
    summ["estimates"] = est
    summ["notes"] = list(sm.notes)
    out = {"quantity": sm.quantity, "points": pts, "summary": summ}
    if sm.supply is not None:
        worst = _worst_psrr(sm)
        out["supply"] = sm.supply
        summ["psrr_min_db"] = None if worst is None else _jdb(worst[1])
        summ["psrr_min_hz"] = None if worst is None else worst[0]
    return out


def _jdb(db: float):
    from solver.output.jsonout import number
    return number(float(db))


def _worst_psrr(sm: Summary):
    """(frequency, dB) of the least supply rejection in the sweep, or None."""
    ok = [(float(f), float(d)) for f, d in zip(sm.freqs, sm.psrr_db) if not math.isnan(d)]
    return min(ok, key=lambda t: t[1]) if ok else None


def _num(x: float):
    return float(x) if math.isfinite(x) else None


def _c(z: complex) -> dict:
    return {"re": float(z.real), "im": float(z.imag)}


def _db(z: complex) -> float | None:
    return 20 * math.log10(abs(z)) if z != 0 and cmath.isfinite(z) else None


def _hz(x: float | None) -> str:
    return "none in the range" if x is None else eng(x, "Hz")


def _pz_lines(v: np.ndarray) -> list[str]:
    lines = []
    for p in v:
        if p == 0:
            lines.append(f"  {'0':>26}   {'0 Hz':>12}")
            continue
        q = fr.q_factor(p)
        rad = f"{p.real:.5g}" + (f" {'+' if p.imag > 0 else '-'} j{abs(p.imag):.5g}" if p.imag else "")  # a + jb
        tail = f"   Q {q:.3g}" if q is not None else ""
        side = "   (right half-plane)" if p.real > 0 else ""
        lines.append(f"  {rad:>26}   {eng(abs(p) / (2 * math.pi), 'Hz'):>12}{tail}{side}")
    return lines


def text_report(sm: Summary) -> str:
    c, b = sm.circuit, sm.band
    if sm.supply is not None:
        from solver.analysis.scenarios import supply_unit
        unit = supply_unit(c, sm.supply)
        what = f"the gain from supply {sm.supply} to v_out (signal zeroed, load in place)"
        label = f"A_{sm.supply}"
    else:
        label = sm.quantity
        unit = UNITS[sm.quantity]
        what = f"{sm.quantity} = {DEFINITIONS[sm.quantity]}"
    out = [c.title or Path(c.file).stem,
           f"frequency response of {what}, "
           f"{eng(sm.freqs[0], 'Hz')} to {eng(sm.freqs[-1], 'Hz')}, {len(sm.freqs)} points", ""]
    if b is None:
        out.append("no flat top in the range (the response is nowhere flat, or zero or not finite): "
                   "no midband and no corners")
    else:
        db = _db(b.midband)
        # an impedance's level in Ω, never "dB" of ohms
        level = f"{db:.2f} dB" if db is not None and unit != "ohm" else eng(abs(b.midband), "Ω" if unit == "ohm" else unit)
        out.append(f"  midband         {level}  ∠ {phase_deg(b.midband):.1f}°   "
                   f"(|{label}| = {eng(abs(b.midband), unit if unit != 'ohm' else 'Ω')} at "
                   f"{'DC' if b.midband_hz == 0 else eng(b.midband_hz, 'Hz')})")
        out.append(f"  f_low  (-3 dB)  {_hz(b.f_low_hz)}")
        out.append(f"  f_high (-3 dB)  {_hz(b.f_high_hz)}")
        if b.bandwidth_hz is not None:
            out.append(f"  bandwidth       {eng(b.bandwidth_hz, 'Hz')}")
        if sm.gbw_hz is not None:
            out.append(f"  gain-bandwidth  {eng(sm.gbw_hz, 'Hz')}")
    if sm.psrr_db is not None:
        out.extend(_psrr_lines(sm))
    for title, v in (("poles", sm.poles), ("zeros", sm.zeros)):
        if v is None:
            continue
        out.append("")
        out.append(f"{title} ({len(v)}){'' if len(v) else ': none'}" + ("   rad/s, natural frequency"
                                                                          if len(v) else ""))
        out.extend(_pz_lines(v))
    out.extend(_estimate_lines(sm))
    if sm.notes:
        out.append("")
        out.extend(f"note: {n}" for n in sm.notes)
    out.extend(closing_lines(c))
    return "\n".join(out)


def _psrr_lines(sm: Summary) -> list[str]:
    """PSRR = 20 log10 |Av / A_supply| at each decade of the sweep and its least value."""
    from solver.output.report import decibel_text
    out = ["", f"supply rejection PSRR = 20·log10|Av/A_{sm.supply}|"]
    f = sm.freqs
    picks = sorted({int(np.argmin(np.abs(np.log10(f) - d)))
                    for d in range(int(math.ceil(math.log10(f[0]))), int(math.floor(math.log10(f[-1]))) + 1)}
                   | {0, len(f) - 1})
    for k in picks:
        out.append(f"  {eng(f[k], 'Hz'):>12}   {decibel_text(float(sm.psrr_db[k]))}")
    worst = _worst_psrr(sm)
    if worst is not None:
        out.append(f"  least in the range: {decibel_text(worst[1])} at {eng(worst[0], 'Hz')}")
    return out


def _estimate_lines(sm: Summary) -> list[str]:
    """The hand estimates beside the exact corners, and the capacitor time constants."""
    e, b = sm.estimates, sm.band
    out: list[str] = []
    if e is None:
        return out
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
    return out


def csv_text(freqs: np.ndarray, h: np.ndarray, psrr_db: np.ndarray | None = None) -> str:
    """f_hz, magnitude_db, phase_deg, re, im (and psrr_db for a supply sweep); empty cells where
    the response is not finite (psrr_db: inf where the supply's gain is exactly 0)."""
    lines = ["f_hz,magnitude_db,phase_deg,re,im" + (",psrr_db" if psrr_db is not None else "")]
    for k, (f, z) in enumerate(zip(freqs, h)):
        if cmath.isfinite(z):
            db = f"{20 * math.log10(abs(z)):.10g}" if z != 0 else ""
            line = f"{f:.10g},{db},{phase_deg(z):.10g},{z.real:.12g},{z.imag:.12g}"
        else:
            line = f"{f:.10g},,,,"
        if psrr_db is not None:
            d = float(psrr_db[k])
            line += "," + ("" if math.isnan(d) else "inf" if math.isinf(d) and d > 0 else f"{d:.10g}")
        lines.append(line)
    return "\n".join(lines) + "\n"
