"""Text reports of portwise spread, sensitivity and tune."""
from __future__ import annotations

import math

from solver.output.jsonout import number

from solver.language.units import eng

_UNITS = {"Rin": "Ω", "Rout": "Ω", "Zt": "Ω", "Zto": "Ω"}


def _v(x: float, q: str) -> str:
    if not math.isfinite(x):
        return str(x)
    u = _UNITS.get(q, "")
    return eng(x, u) if u else f"{x:.5g}"


def spread_report(r) -> str:
    """The Monte Carlo summary: spreads, per-quantity statistics, yields, worst case."""
    lines = [f"Monte Carlo: {r.samples} samples (seed {r.seed}) at "
             f"{'DC' if r.frequency_hz == 0 else eng(r.frequency_hz, 'Hz')}; magnitudes", ""]
    lines.append("spreads:")
    for s in r.spreads:
        lines.append(f"  {s.name:<12} {s.lo:.5g} .. {s.hi:.5g}  {s.dist}  (line {s.line})")
    lines.append("")
    head = f"  {'':<6}" + "".join(f"{h:>12}" for h in ("mean", "std", "min", "p1", "p50", "p99", "max"))
    lines.append(head)
    for q, st in r.quantities.items():
        lines.append(f"  {q:<6}" + "".join(f"{_v(st[k], q):>12}" for k in
                                           ("mean", "std", "min", "p1", "p50", "p99", "max")))
    if r.yields:
        lines += ["", "yield (95 % Wilson score interval):"]
        for y in r.yields:
            lines.append(f"  line {y['line']}: spec {y['spec']:<24} {100 * y['fraction']:6.2f} %  "
                         f"[{100 * y['low']:.2f} .. {100 * y['high']:.2f} %]  ({y['passed']} of {y['counted']})")
    lines += ["", f"out of the amplifying region: {r.out_of_region} samples"
              + (f"; no bias point: {r.failed}" if r.failed else "")]
    if r.worst:
        lines += ["", "worst case (corners of the spread ranges):"]
        for q, w in r.worst.items():
            conf = ""
            if "confirmed" in w:
                conf = "; the sensitivity-sign corners are the extremes" if w["confirmed"] else \
                    "; found only by trying every corner (the sensitivity signs missed it)"
            lines.append(f"  {q:<6} min {_v(w['min'], q):>10} at {_corner(w['corner_min'])}")
            lines.append(f"  {'':<6} max {_v(w['max'], q):>10} at {_corner(w['corner_max'])}  ({w['method']}{conf})")
    for n in r.notes:
        lines.append(f"note: {n}" if not n.lower().startswith(("note", "warning", "caution")) else n)
    lines += ["", "Small-signal results are estimates, not a safety assessment."]
    return "\n".join(lines)


def _corner(c: dict) -> str:
    return ", ".join(f"{k}={v:.5g}" for k, v in c.items())


def sensitivity_report(r) -> str:
    lines = [f"normalized sensitivities S = (x/Q)·dQ/dx at "
             f"{'DC' if r.frequency_hz == 0 else eng(r.frequency_hz, 'Hz')}, largest first", ""]
    for q, rows in r.quantities.items():
        lines.append(f"{q} = {r.values[q].real:.6g}{r.values[q].imag:+.6g}j")
        for row in rows:
            s = row["normalized"]
            mag = abs(s)
            lines.append(f"  {row['parameter']:<14} {row['value']:>12.5g}   |S| {mag:9.4g}   "
                         f"S = {s.real:+.4g}{s.imag:+.4g}j   ({row['via']})")
        lines.append("")
    for n in r.notes:
        lines.append(n if n.lower().startswith(("note", "warning", "caution")) else f"note: {n}")
    return "\n".join(lines).rstrip()


def tune_report(r) -> str:
    q = r.quantity
    what = f"{q} = {r.target:g}" if r.target < 0 else f"|{q}| = {r.target:g}"
    lines = [f"{r.parameter} = {r.value:.6g} gives {what} (now {r.nominal:.6g})"]
    if len(r.roots) > 1:
        lines.append("other solutions in range: " + ", ".join(f"{x:.6g}" for x in r.roots if x != r.value))
    if r.series:
        lines.append(f"{r.series} neighbours:")
        for side in ("below", "above"):
            nb = getattr(r, side)
            if nb is not None:
                lines.append(f"  {side:<6} {nb['value']:.5g} -> |{q}| = {nb['result']:.5g}")
    lines.append(f"method: {r.method}")
    for n in r.notes:
        lines.append(n if n.lower().startswith(("note", "warning", "caution")) else f"note: {n}")
    return "\n".join(lines)


def spread_json(r) -> dict:
    """The JSON object of ``portwise spread`` (the issue's shape, numbers by one rule)."""
    out = {"samples": r.samples, "seed": r.seed, "frequency_hz": r.frequency_hz,
           "quantities": {q: {k: number(v) for k, v in st.items()} for q, st in r.quantities.items()},
           "yield": [{k: number(v) if isinstance(v, float) else v for k, v in y.items()} for y in r.yields],
           "out_of_region": r.out_of_region, "failed": r.failed,
           "spreads": [{"name": s.name, "lo": s.lo, "hi": s.hi, "dist": s.dist, "line": s.line}
                       for s in r.spreads]}
    if r.worst is not None:
        out["worst"] = {q: {k: (number(v) if isinstance(v, float) else v) for k, v in w.items()}
                        for q, w in r.worst.items()}
    if r.notes:
        out["notes"] = list(r.notes)
    return out


def sensitivity_json(r) -> dict:
    """The JSON object of ``portwise sensitivity`` (the issue's shape, numbers by one rule)."""

    def cplx(z):
        return {"re": number(z.real), "im": number(z.imag)}
    out = {"frequency_hz": r.frequency_hz,
           "values": {q: cplx(v) for q, v in r.values.items()},
           "quantities": {q: [{"parameter": row["parameter"], "value": number(row["value"]),
                               "normalized": cplx(row["normalized"]), "via": row["via"]} for row in rows]
                          for q, rows in r.quantities.items()}}
    if r.notes:
        out["notes"] = list(r.notes)
    return out


def tune_json(r) -> dict:
    """The JSON object of ``portwise tune`` (the issue's shape, numbers by one rule)."""
    out = {"parameter": r.parameter, "value": number(r.value), "quantity": r.quantity,
           "target": number(r.target), "series": r.series,
           "below": r.below and {k: number(v) for k, v in r.below.items()},
           "above": r.above and {k: number(v) for k, v in r.above.items()},
           "roots": [number(x) for x in r.roots], "nominal": number(r.nominal),
           "magnitude": r.magnitude, "method": r.method, "frequency_hz": r.frequency_hz}
    if r.notes:
        out["notes"] = list(r.notes)
    return out

