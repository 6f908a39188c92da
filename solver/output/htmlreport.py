"""The design report: one self-contained HTML page built from a list of section builders.

Each builder takes the :class:`Context` and returns a :class:`Section` (its id, its
heading, its markup and its data, which is the JSON of the command that computes the
same numbers) or None when the section does not apply -- a section that does not
apply is left out, not shown empty. A part left out because the circuit is too large
for it is recorded with :meth:`Context.left_out` and listed at the top of the page.

The order of :data:`SECTIONS` is the order of the page:

1. netlist: title, listing with line numbers (claims, spreads, specs highlighted),
   version and date, warnings, the cautions;
2. bias: the DC operating point (when a device was bias-solved);
3. ports: the port quantities at the analysis frequency (``portwise solve --json``);
4. forms and claims: symbolic forms (small circuits only) and claim verdicts
   (``portwise check --json``);
5. frequency: Bode plot, midband, corners, poles and zeros, hand estimates
   (``portwise sweep --json`` over the report's range);
6. noise, sensitivity, spread, loop: optional analyses, rendered when the caller put
   their results in ``Context.extras`` (see :data:`OPTIONAL`).

A new section is one function here and one entry in :data:`SECTIONS`.
"""
from __future__ import annotations

import cmath
import math
import re
from dataclasses import dataclass, field
from html import escape

from solver.output.html import Num, Raw, Table, page, para, section
from solver.output.jsonout import number
from solver.output.report import CAUTION, eng, safety_notes

#: statement keywords whose lines the listing highlights (checked or varied statements)
HIGHLIGHT = ("claim", "spread", "spec")
_HL = re.compile(r"^\s*(" + "|".join(HIGHLIGHT) + r")\b")
#: the report's size limits (common practice, no source): above them a part is left out and said so
MAX_LISTING_LINES = 5000
MAX_CLAIM_UNKNOWNS = 60
#: symbolic forms: MNA unknowns, symbols, characters per form, seconds in all
FORM_LIMITS = (12, 16, 300)
FORM_SECONDS = 3.0
#: claims: the exact-when search can be long on a multi-stage circuit
CLAIM_SECONDS = 10.0


@dataclass
class Section:
    ident: str
    title: str
    html: str
    data: dict


@dataclass
class Options:
    at: float | None = None
    f_from: float | None = None
    f_to: float | None = None
    per_decade: int = 20
    quantity: str | None = None
    force: bool = False
    loop_around: tuple = ()


@dataclass
class Context:
    """What every builder reads: the solve result, the options and the optional analyses."""

    result: object              # solver.api.Result: circuit, frequency_hz, quantities, bias, warnings, to_dict()
    options: Options
    version: str
    date: str
    extras: dict = field(default_factory=dict)   # "noise", "sensitivity", "spread", "loop": result objects
    omitted: list = field(default_factory=list)  # (part, reason) left out for size
    notes: list = field(default_factory=list)

    @property
    def circuit(self):
        return self.result.circuit

    def left_out(self, part: str, reason: str) -> None:
        self.omitted.append((part, reason))


def _title(c) -> str:
    from pathlib import Path
    return c.title or Path(c.file).stem


# --- 1. title, listing, cautions -----------------------------------------------------------------
def netlist_section(ctx: Context) -> Section:
    c = ctx.circuit
    lines = c.source.splitlines()
    marked = [k for k, line in enumerate(lines, 1) if _HL.match(line)]
    shown = lines[:MAX_LISTING_LINES]
    if len(lines) > MAX_LISTING_LINES:
        ctx.left_out("netlist listing", f"{len(lines)} lines; the first {MAX_LISTING_LINES} are shown")
    rows = []
    for k, line in enumerate(shown, 1):
        cls = "l hl" if _HL.match(line) else "l"
        rows.append(f'<span class="{cls}" data-line="{k}">{escape(line) or " "}</span>')
    body = [f'<p class="meta">file {escape(c.file)} · {len(lines)} lines · portwise {escape(ctx.version)} · '
            f'{escape(ctx.date)}</p>']
    if marked:
        body.append(para("Highlighted lines state claims, spreads or specs: what the report checks or varies.",
                         "note"))
    body.append('<pre class="listing">' + "".join(rows) + "</pre>")
    data = {"title": _title(c), "file": c.file, "lines": len(lines), "highlighted_lines": marked,
            "version": ctx.version, "date": ctx.date}
    return Section("netlist", "Netlist", "".join(body), data)


def header(ctx: Context, sections: list[Section]) -> str:
    """Title, cautions, warnings, what was left out, and the contents."""
    c = ctx.circuit
    out = [f"<h1>{escape(_title(c))}</h1>",
           f'<p class="meta">Design report · portwise {escape(ctx.version)} · {escape(ctx.date)} · '
           f"{escape(c.file)}</p>"]
    for n in safety_notes(c):
        out.append(f'<div class="caution">{escape(n)}</div>')
    out.append(f'<div class="caution">{escape(CAUTION)}</div>')
    warnings = list(getattr(ctx.result, "warnings", []) or [])
    if warnings:
        srcs = {c.file: c.source}
        out.append('<section id="warnings"><h2>Warnings</h2>' +
                   "".join(f'<div class="warn">{escape(w.format(srcs))}</div>' for w in warnings) + "</section>")
    if ctx.omitted:
        items = "".join(f"<li><b>{escape(p)}</b>: {escape(r)}</li>" for p, r in ctx.omitted)
        out.append(f'<section id="left-out"><h2>Left out for size</h2><ul>{items}</ul></section>')
    toc = "".join(f'<li><a href="#{s.ident}">{escape(s.title)}</a></li>' for s in sections)
    out.append(f"<nav><ol>{toc}</ol></nav>")
    return "".join(out)


# --- 2. operating point ------------------------------------------------------------------------
_OP_COLUMNS = {"bjt": (("ic", "IC", "A"), ("ib", "IB", "A"), ("vbe", "VBE", "V"), ("vce", "VCE", "V")),
               "mos": (("id", "ID", "A"), ("vgs", "VGS", "V"), ("vds", "VDS", "V")),
               "diode": (("id", "ID", "A"), ("vd", "VD", "V"))}


def bias_tables(c, res) -> str:
    """Node voltages, devices (region, currents, voltages, power), supplies: the operating point."""
    from solver.output.biasreport import _kind
    how = "Newton–Raphson" if res.method == "newton" else f"Newton–Raphson with {res.method}"
    out = [para(f"DC operating point by {how}, {res.iterations} iteration{'s' if res.iterations != 1 else ''}. "
                "Currents flow into the device terminal; voltages are the first terminal's potential "
                "minus the second's.", "note")]
    for n in res.notes:
        out.append(f'<div class="warn">{escape(n)}</div>')
    t = Table(["node", "voltage"])
    for n, v in res.nodes.items():
        t.add(n, Num(v, "V"))
    out.append("<h3>Node voltages</h3>" + t.html())
    for kind, title in (("bjt", "Bipolar transistors"), ("mos", "MOSFETs"), ("diode", "Diodes")):
        devs = [d for d in c.devices if _kind(d) == kind]
        if not devs:
            continue
        cols = _OP_COLUMNS[kind]
        t = Table(["device", "type", "region"] + [lab for _, lab, _ in cols] + ["power"])
        for d in devs:
            op = res.devices[d.name]
            t.add(d.name, d.kind, op["region"], *[Num(op[k], u) for k, _, u in cols], Num(op["power"], "W"))
        out.append(f"<h3>{title}</h3>" + t.html())
    if res.supplies:
        t = Table(["supply", "voltage", "current delivered", "power"])
        for s in c.supplies:
            if s.name in res.supplies:
                i = res.supplies[s.name]
                t.add(s.name, Num(s.value, "V"), Num(i, "A"), Num(i * s.value, "W"))
        out.append("<h3>Supplies</h3>" + t.html())
    return "".join(out)


def bias_section(ctx: Context) -> Section | None:
    res = getattr(ctx.result, "bias", None)
    if res is None:
        return None
    from solver.output.biasreport import bias_json
    c = ctx.circuit
    return Section("bias", "Operating point", bias_tables(c, res), bias_json(res, c))


# --- 3. port quantities ------------------------------------------------------------------------
_SS_NAMES = {"gm": ("gm", "S"), "rpi": ("rπ", "Ω"), "ro": ("ro", "Ω"), "re": ("re", "Ω"), "beta": ("β", ""),
             "gmb": ("gmb", "S"), "rx": ("rx", "Ω"), "cpi": ("cπ", "F"), "cmu": ("cμ", "F"),
             "cgs": ("cgs", "F"), "cgd": ("cgd", "F"), "rd": ("rd", "Ω")}


def _unit(u: str) -> str:
    return "Ω" if u == "ohm" else u


def port_table(quantities: dict, units: dict) -> str:
    """One row per quantity: value (magnitude, sign kept when real), phase, dB; exact re/im on the row."""
    from solver.analysis.scenarios import DEFINITIONS
    t = Table(["quantity", "meaning", "value", "phase", "dB"])
    for q, z in quantities.items():
        u = _unit(units[q])
        real = cmath.isfinite(z) and abs(z.imag) <= 1e-6 * abs(z)
        shown = z.real if (real or not cmath.isfinite(z)) else abs(z)
        ph = math.degrees(cmath.phase(z)) if cmath.isfinite(z) else math.nan
        db = 20 * math.log10(abs(z)) if units[q] in ("V/V", "A/A") and z != 0 and cmath.isfinite(z) else None
        im = z.imag if math.isfinite(z.real) else 0.0
        # the exact complex value rides on each row, for readers and tests that want every digit
        t.add(q, DEFINITIONS.get(q, ""), Num(shown, u),
              Num(ph, "", text=f"{ph:.2f}°") if math.isfinite(ph) else "",
              Num(db, "", text=f"{db:.2f} dB") if db is not None else "",
              attrs={"data-quantity": q, "data-re": _dv(z.real), "data-im": _dv(im)})
    return t.html()


def _dv(x: float) -> str:
    from solver.output.html import data_value
    return data_value(x)


def device_params_table(table: dict) -> str:
    if not table:
        return ""
    keys = []
    for vals in table.values():
        keys += [k for k in vals if k not in keys]
    t = Table(["device"] + [_SS_NAMES.get(k, (k, ""))[0] for k in keys])
    for name, vals in table.items():
        t.add(name, *[Num(vals[k], _SS_NAMES.get(k, (k, ""))[1]) if k in vals else "" for k in keys])
    return t.html()


def ports_section(ctx: Context) -> Section:
    from solver.analysis.ports import UNITS
    from solver.circuit.views import is_reactive
    r, c = ctx.result, ctx.circuit
    f = r.frequency_hz
    if f == 0 and not is_reactive(c):
        where = "No capacitors or inductors: the values hold at any frequency."
    else:
        where = f"At {'DC' if f == 0 else eng(f, 'Hz')}."
    body = [para(where + (" Current signal: Zt = v_out/i_sig." if c.signal.kind == "A" else ""))]
    body += [para(n, "note") for n in r.notes if n and not n.startswith("DC operating point")
             and n not in getattr(r.bias, "notes", [])]
    body.append(port_table(r.quantities, UNITS))
    if r.devices:
        body.append("<h3>Small-signal parameters</h3>" + device_params_table(r.devices))
    return Section("ports", "Port quantities", "".join(body), r.to_dict())


# --- 4. symbolic forms and claims --------------------------------------------------------------
def _formula(text: str, lhs: str, relation: str = "=") -> str:
    """MathML of a formula printed in the netlist language, through our own parser (never sympify)."""
    from solver.language.mathml import math as mathml
    from solver.language.parse import parse_expression
    try:
        return mathml(parse_expression(text), lhs, relation)
    except Exception:  # a form our language cannot read back: show the text itself
        return f"<code>{escape(lhs)} {escape(relation)} {escape(text)}</code>"


def formula_html(quantity: str, text: str, where=None) -> str:
    """A derived form as a display formula, with its "where" lines (shared sub-expressions) below it."""
    out = [f'<div class="formula" data-quantity="{escape(quantity)}">{_formula(text, quantity)}']
    for line in where or ():
        name, sep, rhs = str(line).partition(" = ")
        out.append(f'<div class="note">where {_formula(rhs, name.strip())}</div>' if sep
                   else para("where " + str(line), "note"))
    return "".join(out) + "</div>"


class _OutOfTime(BaseException):  # not an Exception: nothing on the way may swallow it
    pass


def _alarm(signum, frame):
    raise _OutOfTime()


def within(seconds: float, fn, *args):
    """``(True, fn(*args))``, or ``(False, None)`` when it took longer than ``seconds``.

    A timer interrupt (as ``portwise solve --symbolic`` uses); where there is none (not the
    main thread, or no ``setitimer``) ``fn`` runs to the end.
    """
    import signal
    import threading
    if seconds <= 0:
        return False, None
    if not (hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread()):
        return True, fn(*args)
    old = signal.signal(signal.SIGALRM, _alarm)
    try:
        try:
            signal.setitimer(signal.ITIMER_REAL, seconds)
            return True, fn(*args)
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
    except _OutOfTime:  # also when the one-shot timer fires during the clean-up above
        return False, None
    finally:
        signal.signal(signal.SIGALRM, old)


def forms_section(ctx: Context) -> Section | None:
    import time

    from solver.analysis import scenarios
    from solver.analysis.symbolic.derive import derive
    from solver.analysis.symbolic.ports import circuit_symbols, scenario_elements
    from solver.engine.mna import Stamper
    c = ctx.circuit
    nsym = len(circuit_symbols(c))
    size = Stamper(scenario_elements(c), c.ground).size
    max_unknowns, max_symbols, max_chars = FORM_LIMITS
    if nsym > max_symbols or size > max_unknowns:
        ctx.left_out("symbolic forms", f"{size} MNA unknowns and {nsym} symbols; the report derives forms up to "
                     f"{max_unknowns} unknowns and {max_symbols} symbols "
                     "(portwise derive with --keep works at any size)")
        return None
    body = [para("Each port quantity in the circuit's own symbols (s is the complex frequency); "
                 "∥ is the parallel combination x∥y = xy/(x+y).", "note")]
    forms, long, slow = {}, [], []
    end = time.monotonic() + FORM_SECONDS  # one budget for all quantities; each finished one is kept
    for q in scenarios.quantities(c):
        try:
            done, got = within(end - time.monotonic(), derive, c, [q])
        except Exception:  # the numeric sections stand on their own; a form is an extra
            done, got = True, None
        if not done:
            slow.append(q)
            continue
        if not got or len(got[0].plain) > max_chars:
            long.append(q)
            continue
        d = got[0]
        forms[q] = d.plain
        body.append(formula_html(q, d.plain, getattr(d, "where", None)))
    if long:
        body.append(para(f"Not shown ({', '.join(long)}): longer than {max_chars} characters; "
                         "portwise derive gives them.", "note"))
    if slow:
        body.append(para(f"Not shown ({', '.join(slow)}): not derived within the report's {FORM_SECONDS:g} s; "
                         "portwise derive gives them.", "note"))
    return Section("forms", "Symbolic forms", "".join(body),
                   {"quantities": forms, "not_shown": long + slow})


def claims_section(ctx: Context) -> Section | None:
    c = ctx.circuit
    if not c.claims:
        return None
    from solver.analysis.symbolic.ports import scenario_elements
    from solver.engine.mna import Stamper
    size = Stamper(scenario_elements(c), c.ground).size
    if size > MAX_CLAIM_UNKNOWNS:
        ctx.left_out("claims", f"{size} MNA unknowns; the report checks claims up to {MAX_CLAIM_UNKNOWNS} "
                     "(portwise check works at any size)")
        return None
    from solver.analysis.symbolic.claims import check_claims
    from solver.language.mathml import math as mathml
    from solver.output.claims import verdict_json
    f = ctx.result.frequency_hz
    done, verdicts = within(CLAIM_SECONDS, check_claims, c, f)
    if not done:
        ctx.left_out("claims", f"checking them took longer than {CLAIM_SECONDS:g} s (portwise check has no "
                     "time limit)")
        return None
    by_line = {cl.line: cl for cl in c.claims}
    t = Table(["line", "claim", "exact value", "claimed", "error", "verdict"])
    notes = []
    for v in verdicts:
        cl = by_line[v.line]
        rel = "=" if v.kind == "exact" else "≈"
        formula = mathml(cl.expr, v.quantity, rel)
        if v.kind != "exact":
            formula += f" <span class=\"note\">within {v.tolerance * 100:g} %</span>"
        if v.kind == "exact":
            word = "holds (identical)" if v.holds else "FAILS (not identical)"
        else:
            word = ("holds" if v.holds else "FAILS") + (", identical" if v.exact else "")
        err = v.rel_error
        t.add(str(v.line), Raw(formula), _znum(v.value), _znum(v.claimed),
              Num(err, "", text=f"{100 * err:.3g} %") if math.isfinite(err) else "∞",
              Raw(f'<span class="{"ok" if v.holds else "bad"}">{escape(word)}</span>'))
        if not v.exact:
            words = getattr(v, "exact_when_words", None)  # as a designer says it, where the check gives it
            when = list(words) if words else [w.replace(" -> oo", " → ∞").replace(" -> 0", " → 0")
                                              for w in v.exact_when]
            text = ("exact when " + "; or ".join(when)) if when else \
                "no single limit or pair of limits makes it exact"
            notes.append(f"<li>line {v.line}: {escape(text)}"
                         + ("; the exact quantity: " + _formula(v.exact_expression, v.quantity)
                            if v.exact_expression else "") + "</li>")
    ok = sum(v.holds for v in verdicts)
    body = [para(f"{ok} of {len(verdicts)} claim(s) hold at {'DC' if f == 0 else eng(f, 'Hz')}."), t.html()]
    if notes:
        body.append("<h3>Not exact</h3><ul>" + "".join(notes) + "</ul>")
    return Section("claims", "Claims", "".join(body),
                   {"frequency_hz": f, "claims": [verdict_json(v) for v in verdicts]})


def _znum(z: complex):
    if not cmath.isfinite(z):
        return eng(z.real)
    if abs(z.imag) <= 1e-9 * abs(z):
        return Num(z.real, "")
    return Num(z.real, "", text=f"{eng(z.real)}{z.imag:+.4g}j")


# --- 5. frequency response ---------------------------------------------------------------------
DEFAULT_RANGE = (1.0, 1e8)


def sweep_range(c, quantity: str, opts: Options, f_analysis: float = 0.0) -> tuple[float, float]:
    """The report's sweep range: the options', else a decade below the lowest pole or zero to two
    decades above the highest one (and ten times the analysis frequency), clamped to 1 mHz .. 1 THz.

    Falls back to DEFAULT_RANGE when the poles are not computed (a large system) or there are none.
    """
    from solver.analysis import frequency as fr
    lo, hi = DEFAULT_RANGE
    if opts.f_from is None or opts.f_to is None:
        try:
            poles, zeros = fr.poles_zeros(fr.scenario(c, quantity))
            w = [abs(p) / (2 * math.pi) for p in list(poles) + list(zeros) if p != 0 and cmath.isfinite(p)]
        except fr.ResponseError:
            w = []
        if w:
            lo = 10.0 ** (math.floor(math.log10(min(w))) - 1)
            hi = 10.0 ** (math.ceil(math.log10(max(max(w), f_analysis * 10))) + 2)
            lo, hi = max(lo, 1e-3), min(hi, 1e12)
    f0 = opts.f_from if opts.f_from is not None else lo
    f1 = opts.f_to if opts.f_to is not None else hi
    if f1 <= f0:  # one end given beyond the other's default: keep four decades
        f0, f1 = (f0, f0 * 1e4) if opts.f_from is not None else (f1 / 1e4, f1)
    return f0, f1


def frequency_section(ctx: Context) -> Section | None:
    from solver.circuit.views import is_reactive
    c = ctx.circuit
    if not is_reactive(c):
        return None
    from solver.analysis.frequency import default_quantity, frequencies
    from solver.analysis.response import analyse
    from solver.output.sweep import summary_json
    q = ctx.options.quantity or default_quantity(c)
    f0, f1 = sweep_range(c, q, ctx.options, ctx.result.frequency_hz)
    freqs = frequencies(f0, f1, per_decade=ctx.options.per_decade)
    sm = analyse(c, q, freqs)
    data = summary_json(sm)
    data["range"] = {"from_hz": f0, "to_hz": f1, "per_decade": ctx.options.per_decade}
    for n in sm.notes:
        if "not computed above" in n:
            ctx.left_out("poles and zeros", n)
    if sm.estimates is not None:
        for k, r in sm.estimates.reasons.items():
            if r.startswith("more than"):
                ctx.left_out("hand estimates", r)
                break
    return Section("frequency", "Frequency response", summary_html(sm, data), data)


def summary_html(sm, data: dict | None = None) -> str:
    """Bode plot, band summary, poles and zeros, hand estimates of a sweep Summary (report and notebook)."""
    from solver.analysis.scenarios import DEFINITIONS, UNITS
    from solver.output.svg import bode_svg
    from solver.output.sweep import summary_json
    data = data or summary_json(sm)
    s = data["summary"]
    b = sm.band
    q = sm.quantity
    out = [para(f"{q} = {DEFINITIONS[q]}, {eng(sm.freqs[0], 'Hz')} to {eng(sm.freqs[-1], 'Hz')}, "
                f"{len(sm.freqs)} points.")]
    out.append(bode_svg(sm.freqs, sm.h, q, {"f_low": s["f_low_hz"], "f_high": s["f_high_hz"]} if b else None,
                        s["midband_db"] if b else None, f"Bode plot of {q}"))
    if b is None:
        out.append(para("No flat top in the range: no midband and no corners.", "note"))
    else:
        t = Table(["", "value"])
        t.add("midband", Num(s["midband_db"], "", text=f"{s['midband_db']:.2f} dB") if s["midband_db"] is not None
              else Num(abs(b.midband), _unit(UNITS[q])))
        t.add("midband phase", Num(s["midband_phase_deg"], "", text=f"{s['midband_phase_deg']:.1f}°"))
        t.add("|" + q + "| at midband", Num(abs(b.midband), _unit(UNITS[q])))
        t.add("midband frequency", Num(s["midband_hz"], "Hz") if s["midband_hz"] else "DC")
        for key, label in (("f_low_hz", "f_low (−3 dB)"), ("f_high_hz", "f_high (−3 dB)"),
                           ("bandwidth_hz", "bandwidth"), ("gbw_hz", "gain–bandwidth")):
            t.add(label, Num(s[key], "Hz") if s[key] is not None else "none in the range")
        out.append(t.html())
    for key, title in (("poles", "Poles"), ("zeros", "Zeros")):
        v = s[key]
        if v is None:
            continue
        if not v:
            out.append(para(f"{title}: none.", "note"))
            continue
        t = Table(["re (rad/s)", "im (rad/s)", "natural frequency", "Q", ""])
        from solver.analysis.frequency import q_factor
        for p in v:
            z = complex(p["re"], p["im"])
            qf = q_factor(z) if z != 0 else None
            t.add(Num(z.real, "", 5, text=f"{z.real:.5g}"), Num(z.imag, "", 5, text=f"{z.imag:.5g}"),
                  Num(abs(z) / (2 * math.pi), "Hz"), Num(qf, "", 3) if qf is not None else "",
                  "right half-plane" if z.real > 0 else "")
        out.append(f"<h3>{title} ({len(v)})</h3>" + t.html())
    out.append(_estimates_html(sm, s))
    if sm.notes:
        out += [para("note: " + n, "note") for n in sm.notes]
    out.append(para("The estimates are hand methods and approximate by nature.", "note"))
    return "".join(out)


def _estimates_html(sm, s: dict) -> str:
    e = s["estimates"]
    if sm.estimates is None:
        return ""
    b = s
    t = Table(["hand estimate", "estimate", "exact", "error"])
    rows = (("f_high, open-circuit time constants", "octc_f_high_hz", "f_high_hz", "octc"),
            ("f_low, short-circuit time constants", "sctc_f_low_hz", "f_low_hz", "sctc"),
            ("f_high, Miller approximation", "miller_f_high_hz", "f_high_hz", "miller"))
    for label, key, exact, rk in rows:
        est = e[key]
        if est is None:
            t.add(label, "not given: " + e.get("reasons", {}).get(rk, "no exact corner"), "", "")
            continue
        r = e["errors"].get(key)
        t.add(label, Num(est, "Hz"), Num(b[exact], "Hz") if b[exact] is not None else "none in the range",
              Num(r, "", text=f"{100 * r:+.2f} %") if r is not None else "")
    out = "<h3>Hand estimates beside the exact corners</h3>" + t.html()
    m = sm.estimates.miller
    if m:
        out += para(f"Miller: {m['device']} gain K = {m['gain']:.4g}, C_in = {eng(m['c_in'], 'F')}, "
                    f"R at the input = {eng(m['r_in'], 'Ω')}.", "note")
    if e.get("time_constants"):
        t = Table(["capacitor", "C", "R seen", "τ", "group"])
        for tc in e["time_constants"]:
            t.add(tc["capacitor"], Num(tc["c_farad"], "F"),
                  Num(tc["r_ohm"], "Ω") if tc["r_ohm"] is not None else "no finite R",
                  Num(tc["tau_s"], "s") if tc["tau_s"] is not None else "",
                  "short (SCTC)" if tc["group"] == "low" else "open (OCTC)")
        out += "<h3>Capacitor time constants</h3>" + t.html()
    return out


# --- 6. optional analyses (noise, sensitivities, spread, loop gain) ----------------------------
#: extras key -> (section id, heading); a builder renders ctx.extras[key] when the caller supplied it
OPTIONAL = {"noise": ("noise", "Noise"), "sensitivity": ("sensitivity", "Sensitivities"),
            "spread": ("spread", "Spread and yield"), "loop": ("loop", "Loop gain")}


def _optional(ctx: Context, key: str, render) -> Section | None:
    res = ctx.extras.get(key)
    if res is None:
        return None
    ident, title = OPTIONAL[key]
    data = res.to_dict() if hasattr(res, "to_dict") else dict(res)
    return Section(ident, title, render(res, data), data)


def _generic(res, data: dict) -> str:
    """An analysis without a renderer of its own: its scalar results as a table."""
    t = Table(["result", "value"])
    for k, v in data.items():
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            t.add(k, Num(float(v), ""))
    return t.html()


def si(x: float, digits: int = 4) -> str:
    """A plain number with an SI prefix and no unit (``si(2.2e6) == '2.2 M'``), for unitless columns."""
    return eng(float(x), "_", digits)[:-1].rstrip()


def _cell(v, unit: str = ""):
    if isinstance(v, bool) or v is None:
        return "" if v is None else ("yes" if v else "no")
    if isinstance(v, (int, float)):
        return Num(float(v), unit) if unit else Num(float(v), "", text=si(v))
    if isinstance(v, dict) and "re" in v:
        return _znum(complex(float(v["re"]), float(v["im"])))
    return str(v)


def noise_html(res, data: dict) -> str:
    """Input-referred density plot, noise figure and band totals, the top ten contributions
    (from the JSON of ``portwise noise``)."""
    from solver.output.svg import line_svg
    f = data["frequency_hz"]
    u = data.get("units", {})
    unit_in = u.get("input_density", "V/√Hz") if isinstance(u, dict) else "V/√Hz"
    out = [para(f"Input-referred noise density, {eng(f[0], 'Hz')} to {eng(f[-1], 'Hz')}, {len(f)} points; "
                f"temperature {data.get('temperature_k', '')} K.")]
    num = [x if isinstance(x, (int, float)) else float("nan") for x in data["input_density"]]
    if len(f) > 1:
        out.append(line_svg(f, [("input density", num)], f"input density ({unit_in})", logy=True,
                            label="input-referred noise density"))
    t = Table(["", "value"])
    tot = data.get("total", {})
    band = tot.get("band_hz")
    if band:
        t.add("band", f"{eng(band[0], 'Hz')} to {eng(band[-1], 'Hz')}")
    unit_sig = "A" if data.get("signal", {}).get("kind") == "current" else "V"
    for key, label, unit in (("output_rms", "output noise (rms)", "V"), ("input_rms", "input noise (rms)", unit_sig),
                             ("nf_db", "noise figure over the band (dB)", ""), ("snr_db", "signal-to-noise (dB)", "")):
        if tot.get(key) is not None:
            t.add(label, _cell(tot[key], unit))
    opt = data.get("optimum", {})
    if opt:
        t.add("optimum source resistance", _cell(opt.get("rs_ohm"), "Ω"))
        t.add("minimum noise figure (dB)", _cell(opt.get("nf_min_db")))
    out.append(t.html())
    rows = sorted(data.get("contributions", []), key=lambda r: -(r["share"] if isinstance(r["share"], float) else 0))
    if rows:
        t = Table(["element", "kind", "where", "share", "output"])
        for r in rows[:10]:
            t.add(r["element"], r.get("kind", ""), r.get("where", ""),
                  Num(r["share"], "", text=f"{100 * r['share']:.3g} %") if isinstance(r["share"], float) else "",
                  _cell(r.get("output"), "V"))
        out.append("<h3>Contributions (top ten)</h3>" + t.html())
    return "".join(out)


#: the quantities whose sensitivities the report shows (the JSON keeps every one)
SENSITIVITY_SHOWN = ("Gv", "Zt", "Av", "Rin", "Rout")


def sensitivity_html(res, data: dict) -> str:
    """The ten largest normalised sensitivities (x/Q)·dQ/dx of the main quantities (``portwise sensitivity``)."""
    f = data.get("frequency_hz")
    qs = data.get("quantities", {})
    shown = [q for q in SENSITIVITY_SHOWN if q in qs] or list(qs)
    out = [para("Normalised sensitivities S = (x/Q)·∂Q/∂x (a 1 % rise in x moves Q by S %), the ten largest"
                + (f", at {'DC' if not f else eng(f, 'Hz')}" if f is not None else "")
                + (f"; {', '.join(q for q in qs if q not in shown)} in the JSON" if len(shown) < len(qs) else "")
                + ".")]
    for q in shown:
        t = Table(["parameter", "value", "S (real part)", "S (imaginary part)", "via"])
        for r in qs[q][:10]:
            v, z = r.get("value"), r.get("normalized") or {}
            t.add(r["parameter"], Num(float(v), "", text=si(v)) if isinstance(v, (int, float)) else "",
                  Num(float(z["re"]), "", text=f"{float(z['re']):.4g}") if "re" in z else "",
                  Num(float(z["im"]), "", text=f"{float(z['im']):.3g}") if "im" in z else "",
                  r.get("via", ""))
        out.append(f"<h3>{escape(q)}</h3>" + t.html())
    return "".join(out)


def spread_html(res, data: dict) -> str:
    """Statistics, a histogram of each quantity and the yield of each spec (``portwise spread``)."""
    from solver.output.svg import histogram_svg
    out = [para(f"Monte Carlo: {data.get('samples')} samples, seed {data.get('seed')}"
                + (f", at {eng(data['frequency_hz'], 'Hz')}" if data.get("frequency_hz") else "") + ".")]
    stats = data.get("quantities", {})
    keys = []
    for st in stats.values():
        keys += [k for k in st if k not in keys]
    from solver.analysis.scenarios import UNITS
    if stats:
        t = Table(["quantity"] + keys)
        for q, st in stats.items():
            u = _unit(UNITS.get(q, ""))
            t.add(q, *[_cell(st.get(k), "" if k in ("std_rel", "cv") else u) for k in keys])
        out.append("<p class=\"note\">Magnitudes of the port quantities over the samples.</p>" + t.html())
    for q, arr in (getattr(res, "magnitudes", None) or {}).items():
        u = _unit(UNITS.get(q, ""))
        out.append(f"<h3>|{escape(q)}|</h3>" + histogram_svg(arr, xlabel=f"|{q}| ({u})", label=f"histogram of |{q}|"))
    ys = data.get("yield", [])
    if ys:
        cols = []
        for y in ys:
            cols += [k for k in y if k not in cols]
        t = Table(cols)
        for y in ys:
            t.add(*[_cell(y.get(k)) for k in cols])
        out.append("<h3>Yield</h3>" + t.html())
    for n in data.get("notes", []):
        out.append(para(n, "note"))
    return "".join(out)


def noise_section(ctx: Context) -> Section | None:
    return _optional(ctx, "noise", noise_html)


def sensitivity_section(ctx: Context) -> Section | None:
    return _optional(ctx, "sensitivity", sensitivity_html)


def spread_section(ctx: Context) -> Section | None:
    return _optional(ctx, "spread", spread_html)


def loop_html(res) -> str:
    """One loop (a :class:`solver.output.loopreport.LoopResult`): margins, |T| and arg T, poles, the
    asymptotic gain model at the lowest frequency (report and notebook)."""
    from solver.analysis.scenarios import UNITS
    from solver.output.svg import bode_svg
    a = res.analysis
    head = (f"Loop around {a.around.name}: {a.around.what}." if a.around is not None else
            f"Loop at node {a.injection.node} by double injection.")
    out = [para(head)]
    out += [f'<div class="warn">{escape(w.message)}</div>' for w in res.warnings]
    out += [para(n, "note") for n in list(res.notes) + list(a.notes)]
    if res.sweep:
        out.append(bode_svg(a.freqs, a.T, "T", None, None, f"return ratio T around {head}"))
    m = a.margins
    t = Table(["", "value"])
    if res.sweep and m is not None:
        t.add("crossover (|T| = 1)", Num(m.crossover_hz, "Hz") if m.crossover_hz is not None else "none in the range")
        t.add("phase margin", Num(m.phase_margin_deg, "", text=f"{m.phase_margin_deg:.1f}°")
              if m.phase_margin_deg is not None else "none in the range")
        t.add("gain margin", Num(m.gain_margin_db, "", text=f"{m.gain_margin_db:.2f} dB")
              if m.gain_margin_db is not None else "none in the range")
        if m.phase_crossover_hz is not None:
            t.add("phase crossover", Num(m.phase_crossover_hz, "Hz"))
    f0 = float(a.freqs[0])
    at = "DC" if f0 == 0 else eng(f0, "Hz")
    t.add(f"T at {at}", _znum(complex(a.T[0])))
    if a.around is not None:
        g = a.gains[a.quantity]
        u = _unit(UNITS[a.quantity])
        for label, arr in (("G_inf", g.G_inf), ("G_0", g.G_0), (a.quantity, g.G),
                           (a.quantity + " by the model", g.model)):
            z = complex(arr[0])
            t.add(f"{label} at {at}", _znum(z) if u in ("V/V", "A/A") else
                  (Num(z.real, u) if abs(z.imag) <= 1e-9 * abs(z) else _znum(z)))
    out.append(t.html())
    if a.poles:
        t = Table(["re (rad/s)", "im (rad/s)", "natural frequency", "damping ζ", ""])
        for p in a.poles:
            t.add(Num(p.s.real, "", 5, text=f"{p.s.real:.5g}"), Num(p.s.imag, "", 5, text=f"{p.s.imag:.5g}"),
                  Num(p.hz, "Hz"), Num(p.zeta, "", 3, text=f"{p.zeta:.3g}"),
                  "right half-plane: unstable" if p.s.real > 0 else "")
        out.append("<h3>Closed-loop poles</h3>" + t.html())
    return "".join(out)


def loop_section(ctx: Context) -> Section | None:
    loops = ctx.extras.get("loop")
    if not loops:
        return None
    body = "".join(f'<div class="loop" data-around="{escape(r.analysis.around.name if r.analysis.around else "")}">'
                   f"{loop_html(r)}</div>" for r in loops)
    return Section("loop", "Loop gain", body, {"loops": [r.to_dict() for r in loops]})


SECTIONS = (netlist_section, bias_section, ports_section, forms_section, claims_section, frequency_section,
            noise_section, sensitivity_section, spread_section, loop_section)


@dataclass
class Built:
    html: str
    sections: list[Section]
    omitted: list

    def to_dict(self) -> dict:
        return {"sections": {s.ident: s.data for s in self.sections},
                "order": [s.ident for s in self.sections],
                "left_out": [{"part": p, "reason": r} for p, r in self.omitted]}


def build(ctx: Context, builders=SECTIONS) -> Built:
    """Run every builder in order, then assemble the page (header first: it lists what was left out)."""
    sections = [s for s in (b(ctx) for b in builders) if s is not None]
    body = [header(ctx, sections)]
    body += [section(s.ident, s.title, s.html) for s in sections]
    body.append(f'<footer class="meta"><p>{escape(CAUTION)}</p><p>Made by portwise {escape(ctx.version)} on '
                f"{escape(ctx.date)}.</p></footer>")
    return Built(page(f"{_title(ctx.circuit)} · portwise report", "".join(body)), sections, list(ctx.omitted))


def json_ready(obj):
    """Replace non-finite floats by the JSON strings of :func:`solver.output.jsonout.number`."""
    if isinstance(obj, float):
        return number(obj)
    if isinstance(obj, dict):
        return {k: json_ready(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_ready(v) for v in obj]
    return obj
