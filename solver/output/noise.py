"""The noise analysis as text, JSON and CSV (densities one-sided, in V/√Hz or A/√Hz)."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from solver.analysis import noise as nm
from solver.circuit.model import Circuit
from solver.language.units import eng
from solver.output.jsonout import number
from solver.output.report import CAUTION, safety_notes

NOISE_CAUTION = "A noise estimate is no substitute for a measurement of the built circuit."
KIND_TEXT = {"thermal": "thermal", "shot": "shot", "flicker": "flicker", "en": "op-amp en", "in": "op-amp in"}


def _sqrt(a) -> np.ndarray:
    with np.errstate(all="ignore"):
        return np.sqrt(np.asarray(a, float))


def correlation(nz: nm.Noise) -> np.ndarray:
    """The normalised correlation of en and in, C / (en in) (0 where either is zero)."""
    d = np.sqrt(nz.en2 * nz.in2)
    with np.errstate(all="ignore"):
        return np.where(d > 0, nz.corr / np.where(d > 0, d, 1), 0j)


def units(nz: nm.Noise) -> dict:
    inp = "A/√Hz" if nz.current_signal else "V/√Hz"
    return {"output_density": "V/√Hz", "input_density": inp, "en": "V/√Hz", "in": "A/√Hz",
            "output_rms": "V", "input_rms": "A" if nz.current_signal else "V"}


def contributions_json(nz: nm.Noise) -> list[dict]:
    rows = []
    for r in nm.contributions(nz):
        rows.append({"element": r["element"], "kind": r["kind"], "where": r["where"],
                     "share": number(r["share"]),
                     # over the band: V rms at the output; at one frequency: V/√Hz
                     "output": number(math.sqrt(r["power"]))})
    return rows


def noise_json(c: Circuit, nz: nm.Noise, notes: list[str] | None = None) -> dict:
    """The JSON object of ``portwise noise`` (the issue's shape, with a few extra keys)."""
    def arr(a):
        return [number(float(x)) for x in a]

    k = nz.at_index
    rho = correlation(nz)
    tot = nz.totals
    return {
        "circuit": c.title or Path(c.file).stem,
        "frequency_hz": arr(nz.freqs),
        "output_density": arr(_sqrt(nz.output_psd)),
        "input_density": arr(_sqrt(nz.input_psd)),
        "en": arr(_sqrt(nz.en2)),
        "in": arr(_sqrt(nz.in2)),
        "correlation": {"re": arr(rho.real), "im": arr(rho.imag)},
        "nf_db": arr(nz.nf_db),
        "rs_opt_ohm": arr(nz.rs_opt),
        "nf_min_db": arr(nz.nf_min_db),
        "total": {"band_hz": [float(x) for x in tot["band_hz"]],
                  **{key: (None if tot[key] is None else number(tot[key]))
                     for key in ("output_rms", "input_rms", "nf_db", "snr_db")}},
        "optimum": {"rs_ohm": number(float(nz.rs_opt[k])), "nf_min_db": number(float(nz.nf_min_db[k])),
                    "at_hz": float(nz.freqs[k])},
        "contributions": contributions_json(nz),
        "temperature_k": nm.T_DEFAULT,
        "t0_k": nm.T0,
        "signal": {"name": c.signal.name, "kind": "current" if nz.current_signal else "voltage",
                   "rs_ohm": number(c.signal.rs), "amplitude": abs(c.signal.value)},
        "units": units(nz),
        "assumptions": list(nm.ASSUMPTIONS),
        "notes": list(notes or []),
    }


def csv_text(nz: nm.Noise) -> str:
    """One row per frequency: densities, en, in, their correlation, NF, the optimum."""
    rho = correlation(nz)
    head = ("f_hz,output_density_v_rthz,input_density_{},en_v_rthz,in_a_rthz,corr_re,corr_im,"
            "nf_db,rs_opt_ohm,nf_min_db").format("a_rthz" if nz.current_signal else "v_rthz")
    lines = [head]
    cols = [nz.freqs, _sqrt(nz.output_psd), _sqrt(nz.input_psd), _sqrt(nz.en2), _sqrt(nz.in2),
            rho.real, rho.imag, nz.nf_db, nz.rs_opt, nz.nf_min_db]
    for row in zip(*cols):
        lines.append(",".join("" if not math.isfinite(v) else f"{v:.10g}" for v in map(float, row)))
    return "\n".join(lines) + "\n"


def _signed(x: float) -> str:
    """+0.183, -0.006; a value that rounds to zero is +0.000 (no "-0.000")."""
    text = f"{x:+.3f}"
    return "+0.000" if text == "-0.000" else text


def _db(x: float) -> str:
    return "∞ dB" if math.isinf(x) else "nan" if math.isnan(x) else f"{x:.2f} dB"


def text_report(c: Circuit, nz: nm.Noise, notes: list[str] | None = None) -> str:
    out = [c.title or c.file]
    port = ", ".join(c.output_port)
    where = f"load {c.load.name} in place" if c.load is not None else "no load"
    f = nz.freqs
    if nz.band:
        out.append(f"noise at the output port ({port}), {where}, {eng(f[0], 'Hz')} to {eng(f[-1], 'Hz')}, "
                   f"{len(f)} points")
    else:
        out.append(f"noise at the output port ({port}), {where}, at {eng(f[0], 'Hz')}")
    out.extend(notes or [])
    k = nz.at_index
    inu = "A/√Hz" if nz.current_signal else "V/√Hz"
    gname = "Zt" if nz.current_signal else "Gv"
    sig = c.signal
    rs_text = eng(sig.rs, "Ω")
    rho = correlation(nz)[k]
    out.append("")
    out.append(f"at {eng(f[k], 'Hz')}" + (" (midband of the sweep)" if nz.band else ""))
    rows = [("output noise", f"{eng(math.sqrt(nz.output_psd[k]), 'V/√Hz')}"),
            ("input-referred", f"{eng(math.sqrt(nz.input_psd[k]), inu)}   (output / |{gname}|, "
                               f"|{gname}| = {eng(abs(nz.gain[k]), 'Ω' if nz.current_signal else 'V/V')})"),
            ("en (input shorted)", eng(math.sqrt(nz.en2[k]), "V/√Hz")),
            ("in (input open)", eng(math.sqrt(nz.in2[k]), "A/√Hz")),
            ("correlation of en, in", f"{_signed(rho.real)} {_signed(rho.imag)}j"),
            ("noise figure", f"{_db(float(nz.nf_db[k]))} for rs = {rs_text} at {nm.T0:g} K"),
            ("optimum source", f"Rs_opt = {eng(float(nz.rs_opt[k]), 'Ω')}   NF_min = {_db(float(nz.nf_min_db[k]))}")]
    w = max(len(a) for a, _ in rows)
    out.extend(f"  {a:<{w}}  {b}" for a, b in rows)
    tot = nz.totals
    if nz.band:
        out.append("")
        out.append(f"over {eng(f[0], 'Hz')} to {eng(f[-1], 'Hz')} (integrated power, then square root)")
        snr = tot["snr_db"]
        rows = [("output rms", eng(tot["output_rms"], "V")),
                ("input-referred rms", eng(tot["input_rms"], "A" if nz.current_signal else "V")),
                ("average noise figure", _db(tot["nf_db"])),
                ("signal-to-noise", (f"{snr:.2f} dB" if snr is not None else "n/a") +
                 f" for the signal's {eng(abs(sig.value), 'A' if nz.current_signal else 'V')} amplitude "
                 f"(a sine at {eng(f[k], 'Hz')}, rms = amplitude/√2)")]
        w = max(len(a) for a, _ in rows)
        out.extend(f"  {a:<{w}}  {b}" for a, b in rows)
    out.append("")
    out.append("contributions to the output noise power" + (" over the band" if nz.band else f" at {eng(f[0], 'Hz')}"))
    contrib = nm.contributions(nz)
    ew = max([len("element")] + [len(r["element"]) for r in contrib])
    out.append(f"  {'element':<{ew}}  {'kind':<10} {'where':<10} {'share':>8}  {'output':>12}")
    for r in contrib:
        val = math.sqrt(r["power"])
        out.append(f"  {r['element']:<{ew}}  {KIND_TEXT[r['kind']]:<10} {r['where'] or '-':<10} "
                   f"{100 * r['share']:7.2f} %  {eng(val, 'V' if nz.band else 'V/√Hz'):>12}")
    if nz.band and len(f) > 2:
        out.append("")
        out.append("spot values")
        out.append(f"  {'f':>10}  {'output':>12}  {'input':>12}  {'en':>12}  {'in':>12}  {'NF':>9}")
        for i in _spot_rows(f):
            out.append(f"  {eng(f[i], 'Hz'):>10}  {eng(math.sqrt(nz.output_psd[i]), 'V/√Hz'):>12}  "
                       f"{eng(math.sqrt(nz.input_psd[i]), inu):>12}  {eng(math.sqrt(nz.en2[i]), 'V/√Hz'):>12}  "
                       f"{eng(math.sqrt(nz.in2[i]), 'A/√Hz'):>12}  {_db(float(nz.nf_db[i])):>9}")
    out.append("")
    out.append("assumed: " + "; ".join(nm.ASSUMPTIONS) + ".")
    out.extend(safety_notes(c))
    out.append(NOISE_CAUTION + " " + CAUTION)
    return "\n".join(out)


def _spot_rows(f: np.ndarray) -> list[int]:
    """About one row per decade: the grid points nearest to the powers of ten, and the ends."""
    idx = {0, len(f) - 1}
    for p in range(math.floor(math.log10(f[0])), math.ceil(math.log10(f[-1])) + 1):
        if f[0] <= 10.0 ** p <= f[-1]:
            idx.add(int(np.argmin(np.abs(np.log10(f) - p))))
    return sorted(idx)
