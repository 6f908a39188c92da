"""The ``portwise loop`` result: text report, JSON, and the |T|, arg T plot."""
from __future__ import annotations

import cmath
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from solver.analysis.loop import PM_WARN_DEG, LoopAnalysis
from solver.analysis.scenarios import UNITS
from solver.circuit.model import Circuit
from solver.diagnostics import Diagnostic
from solver.output.report import closing_lines, eng


def _c(z) -> dict | None:
    """A complex number as {"re", "im"}; None where it is undefined (nan); "inf" for infinity."""
    z = complex(z)
    if cmath.isnan(z):
        return None
    if cmath.isinf(z):
        return {"re": "inf" if z.real >= 0 else "-inf", "im": 0.0}
    return {"re": float(z.real), "im": float(z.imag)}


@dataclass
class LoopResult:
    """What ``portwise loop`` reports (:func:`solver.api.loop`)."""

    circuit: Circuit
    analysis: LoopAnalysis
    sweep: bool
    notes: list[str] = field(default_factory=list)
    warnings: list[Diagnostic] = field(default_factory=list)

    # --- JSON ---------------------------------------------------------------------------
    def _pick(self, arr):
        return [_c(z) for z in arr] if self.sweep else _c(arr[0])

    def to_dict(self) -> dict:
        a = self.analysis
        f = [float(x) for x in a.freqs]
        out: dict = {"around": a.around.name if a.around else None,
                     "frequency_hz": f if self.sweep else f[0],
                     "T": self._pick(a.T)}
        if a.around is not None:
            out["source"] = a.around.what
            g = a.gains[a.quantity]
            out.update({"G_inf": self._pick(g.G_inf), "G_0": self._pick(g.G_0), "G": self._pick(g.G),
                        "G_model": self._pick(g.model), "quantity": a.quantity})
            out["gains"] = {q: {"T": self._pick(x.T), "G_inf": self._pick(x.G_inf), "G_0": self._pick(x.G_0),
                                "G": self._pick(x.G), "G_model": self._pick(x.model)} for q, x in a.gains.items()}
            out["blackman"] = {q: {"dead": self._pick(b.dead), "T_short": self._pick(b.T_short),
                                   "T_open": self._pick(b.T_open), "Z": self._pick(b.formula),
                                   "Z_solve": self._pick(b.Z), "unit": UNITS[q]} for q, b in a.blackman.items()}
        else:
            inj = a.injection
            out.update({"break": inj.node, "toward": inj.toward, "T_v": self._pick(inj.T_v),
                        "T_i": self._pick(inj.T_i)})
        if a.margins is not None:
            m = a.margins
            out["margins"] = {"crossover_hz": m.crossover_hz, "phase_margin_deg": m.phase_margin_deg,
                              "gain_margin_db": m.gain_margin_db, "phase_crossover_hz": m.phase_crossover_hz,
                              "crossings_hz": list(m.crossings)}
        out["poles"] = None if a.poles is None else [
            {"re": p.s.real, "im": p.s.imag, "hz": p.hz, "zeta": p.zeta,
             "q": (None if p.q is None else (p.q if math.isfinite(p.q) else "inf")), "rhp": p.s.real > 0}
            for p in a.poles]
        out["notes"] = list(self.notes) + list(a.notes)
        out["warnings"] = [d.message for d in self.warnings]
        return out

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, allow_nan=False)

    # --- text ---------------------------------------------------------------------------
    def text(self) -> str:
        a, c = self.analysis, self.circuit
        out = [c.title or Path(c.file).stem]
        if a.around is not None:
            out.append(f"feedback around {a.around.name}: {a.around.what}")
        else:
            out.append(f"loop gain at node {a.injection.node} by double injection "
                       f"(toward {', '.join(a.injection.toward)})")
        out.extend(self.notes)
        out.extend(a.notes)
        if self.sweep:
            out += self._sweep_lines()
        else:
            out += self._point_lines()
        out += self._pole_lines()
        out.extend(closing_lines(c, self.notes))  # the cautions only with a hazardous supply
        return "\n".join(out)

    def _point_lines(self) -> list[str]:
        a = self.analysis
        f = float(a.freqs[0])
        out = ["", f"at {'DC' if f == 0 else eng(f, 'Hz')}"]
        out.append(f"  return ratio T       {_z(a.T[0], '', db=True)}")
        if a.around is None:
            inj = a.injection
            out.append(f"  T_v (series voltage) {_z(inj.T_v[0], '')}")
            out.append(f"  T_i (shunt current)  {_z(inj.T_i[0], '')}")
            out.append("  T = (T_v T_i - 1)/(T_v + T_i + 2)")
            return out
        for q, g in a.gains.items():
            u = UNITS[q]
            out.append("")
            out.append(f"asymptotic gain model, {q} = G_inf T/(1 + T) + G0/(1 + T)"
                       + ("  (T with the input port driven by an ideal source)" if q == "Av" else ""))
            if q == "Av":
                out.append(f"  T                    {_z(g.T[0], '', db=True)}")
            out.append(f"  G_inf                {_z(g.G_inf[0], u)}")
            out.append(f"  G0 (feedthrough)     {_z(g.G_0[0], u)}")
            out.append(f"  the identity         {_z(g.model[0], u)}")
            out.append(f"  {(q + ' from solve'):<21}{_z(g.G[0], u)}")
            ratio = g.G[0] / g.G_inf[0] if g.G_inf[0] != 0 and np.isfinite(g.G_inf[0]) else None
            if ratio is not None and np.isfinite(ratio):
                out.append(f"  {(q + '/G_inf'):<21}{_z(ratio, '')}  (how close to the ideal gain: 1)")
        out.append("")
        out.append("Blackman's formula, Z = Z_dead (1 + T_short)/(1 + T_open)")
        for q, b in a.blackman.items():
            out.append(f"  {q:<5} Z_dead {_z(b.dead[0], 'ohm')}   T_short {_z(b.T_short[0], '')}   "
                       f"T_open {_z(b.T_open[0], '')}")
            out.append(f"        -> {_z(b.formula[0], 'ohm')}   (solve: {_z(b.Z[0], 'ohm')})")
        return out

    def _sweep_lines(self) -> list[str]:
        a = self.analysis
        out = ["", f"loop gain over {eng(a.freqs[0], 'Hz')} to {eng(a.freqs[-1], 'Hz')}, {len(a.freqs)} points"]
        k = int(np.nanargmax(np.abs(np.where(np.isfinite(a.T), a.T, np.nan)))) if np.isfinite(a.T).any() else 0
        out.append(f"  largest |T|          {_z(a.T[k], '', db=True)} at {eng(a.freqs[k], 'Hz')}")
        if a.around is not None:
            g = a.gains[a.quantity]
            u = UNITS[a.quantity]
            out.append(f"  at {eng(a.freqs[0], 'Hz')}: T {_z(a.T[0], '', db=True)}, G_inf {_z(g.G_inf[0], u)}, "
                       f"{a.quantity} {_z(g.G[0], u)}")
        m = a.margins
        if m.crossover_hz is None:
            big = np.isfinite(a.T) & (np.abs(a.T) > 1)
            where = "above 1 everywhere" if big.all() else "below 1 everywhere" if not big.any() else "not crossing 1"
            out.append(f"  no crossover: |T| is {where} in the range")
        else:
            out.append(f"  crossover (|T| = 1)  {eng(m.crossover_hz, 'Hz')}"
                       + (f"  ({len(m.crossings)} crossings; the least margin shown)" if len(m.crossings) > 1 else ""))
            flag = f"   below {PM_WARN_DEG:g}°: expect peaking and ringing" if m.phase_margin_deg < PM_WARN_DEG else ""
            out.append(f"  phase margin         {m.phase_margin_deg:.1f}°{flag}")
        if m.gain_margin_db is None:
            out.append("  gain margin          none: T does not cross the negative real axis in the range")
        else:
            out.append(f"  gain margin          {m.gain_margin_db:.2f} dB at {eng(m.phase_crossover_hz, 'Hz')}")
        if a.around is not None:
            g = a.gains[a.quantity]
            err = np.abs(g.model - g.G) / np.maximum(np.abs(g.G), 1e-300)
            err = err[np.isfinite(err)]
            if err.size:
                out.append(f"  asymptotic identity for {a.quantity}: largest relative difference from solve "
                           f"{float(err.max()):.1e} over the sweep")
        return out

    def _pole_lines(self) -> list[str]:
        a = self.analysis
        if a.poles is None:
            return ["", "closed-loop poles: not computed (the system is too large)"]
        out = ["", "closed-loop poles (natural frequencies, signal zeroed)" if a.poles else
               "closed-loop poles: none (no capacitors or inductors)"]
        for p in a.poles:
            rad = f"{p.s.real:.5g}" + (f" {p.s.imag:+.5g}j" if p.s.imag else "")
            tail = f"   ζ {p.zeta:.3g}" + (f"   Q {p.q:.3g}" if p.q is not None and math.isfinite(p.q) else "")
            side = "   RIGHT HALF-PLANE: unstable" if p.s.real > 0 else ""
            out.append(f"  {rad:>26} rad/s   {eng(p.hz, 'Hz'):>12}{tail}{side}")
        return out


def _z(z, unit: str, db: bool = False) -> str:
    z = complex(z)
    if cmath.isnan(z):
        return "undefined"
    u = {"ohm": "Ω"}.get(unit, unit)
    if cmath.isinf(z):
        return "infinite"
    if z == 0:
        return f"0 {u}".rstrip()
    if abs(z.imag) <= 1e-9 * abs(z):
        text = eng(z.real, u) if u else f"{z.real:.5g}"
    else:
        mag = eng(abs(z), u) if u else f"{abs(z):.5g}"
        text = f"{mag} ∠ {math.degrees(cmath.phase(z)):.2f}°"
    if db and z != 0:
        text += f"  ({20 * math.log10(abs(z)):.2f} dB)"
    return text


def warnings_for(a: LoopAnalysis) -> list[Diagnostic]:
    """A phase margin under 45° (common practice, no source) and right half-plane poles."""
    loc = a.around.loc if a.around is not None else None
    who = f"around {a.around.name}" if a.around is not None else f"at node {a.injection.node}"
    out = []
    m = a.margins
    if m is not None and m.phase_margin_deg is not None and m.phase_margin_deg < PM_WARN_DEG:
        out.append(Diagnostic("warning", loc, f"phase margin {m.phase_margin_deg:.1f}° {who} at "
                              f"{eng(m.crossover_hz, 'Hz')} is under {PM_WARN_DEG:g}° (common practice): "
                              "the closed loop peaks and rings"))
    rhp = [p for p in (a.poles or []) if p.s.real > 0]
    if rhp:
        out.append(Diagnostic("warning", loc, f"{len(rhp)} closed-loop pole(s) in the right half-plane "
                              f"(first at {rhp[0].s.real:.4g} {rhp[0].s.imag:+.4g}j rad/s): the circuit is "
                              "unstable and the small-signal gains describe no steady state"))
    return out


def loop_plot(a: LoopAnalysis, fmt: str = "png", title: str = "") -> bytes:
    """|T| in dB and arg T against log frequency, in the style of :func:`solver.output.plot.bode`,
    with the crossover, the phase margin and the -180° line marked."""
    import matplotlib
    matplotlib.use("Agg", force=True)

    from matplotlib.figure import Figure

    from solver.output.plot import ACCENT, GRID, TRACE, encoded, finish, style_axes, unwrapped_phase
    freqs, h = np.asarray(a.freqs, float), np.asarray(a.T, complex)
    with np.errstate(all="ignore"):
        mag = 20 * np.log10(np.abs(h))
    phase = unwrapped_phase(h)
    fig = Figure(figsize=(7.5, 6.0), dpi=100)
    ax_m, ax_p = fig.subplots(2, 1, sharex=True)
    ax_m.semilogx(freqs, mag, color=TRACE, linewidth=1.6)
    ax_p.semilogx(freqs, phase, color=TRACE, linewidth=1.6)
    ax_m.axhline(0.0, color=GRID, linewidth=1.2)
    ax_m.set_ylabel("|T| (dB)")
    ax_p.set_ylabel("∠T (°)")
    ax_p.set_xlabel("frequency (Hz)")
    style_axes(ax_m, ax_p)
    finite = phase[np.isfinite(phase)]
    if finite.size:  # the -180° lines the unwrapped phase comes near
        for k in range(int(np.floor((finite.min() - 180) / 360)), int(np.ceil((finite.max() - 180) / 360)) + 1):
            line = 180 + 360 * k
            if finite.min() - 30 <= line <= finite.max() + 30 and line % 360 == 180:
                ax_p.axhline(line, color=ACCENT, linestyle=":", linewidth=0.9)
    m = a.margins
    if m is not None and m.crossover_hz is not None:
        fc = m.crossover_hz
        for ax in (ax_m, ax_p):
            ax.axvline(fc, color=ACCENT, linestyle="--", linewidth=1.0)
        ax_m.plot([fc], [0.0], "o", color=ACCENT, markersize=5)
        ax_m.annotate(f"f_c = {eng(fc, 'Hz', 3)}", xy=(fc, 1.0), xycoords=("data", "axes fraction"),
                      xytext=(4, -12), textcoords="offset points", color=ACCENT, fontsize=9)
        ax_p.annotate(f"PM = {m.phase_margin_deg:.1f}°", xy=(fc, 1.0), xycoords=("data", "axes fraction"),
                      xytext=(4, -12), textcoords="offset points", color=ACCENT, fontsize=9)
    if m is not None and m.gain_margin_db is not None:
        f180 = m.phase_crossover_hz
        for ax in (ax_m, ax_p):
            ax.axvline(f180, color=ACCENT, linestyle=":", linewidth=1.0)
        ax_m.annotate(f"GM = {m.gain_margin_db:.1f} dB", xy=(f180, 0.0), xycoords=("data", "axes fraction"),
                      xytext=(4, 6), textcoords="offset points", color=ACCENT, fontsize=9)
    finish(fig, title)
    return encoded(fig, fmt)
