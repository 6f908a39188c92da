"""portwise check: prove, refute or qualify the hand formulas written as claim lines."""
from __future__ import annotations

HELP = "check the netlist's claim lines (hand formulas) against the exact result"
DESCRIPTION = """\
Every 'claim Q = EXPR' must equal the exact quantity identically (for all symbol
values); every 'claim Q ~ EXPR within TOL' must be within TOL (relative) at the
nominal values and the analysis frequency. For a claim that is not exact, the
limits a designer takes that would make it exact are searched (ro → ∞, β → ∞
with gm fixed, gm → ∞, rx → 0, capacitors shorted or opened, RL → ∞, rs → 0,
the two halves of a symmetric circuit matched; one at a time, then in pairs,
within a time bound) and shown as "exact when ...". Limits that change the
device itself (rπ → 0 would set β to zero) are never offered."""
EPILOG = """\
example:
  portwise check circuits/mic_preamp.pw
  portwise check circuits/mic_preamp.pw --json

exit codes: 0 every claim holds, 1 a claim fails, 2 bad input (e.g. a claim naming
an unknown symbol). A claim that holds is a statement about the small-signal
model only: it is an estimate, not a safety assessment."""


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency (default as solve: the detected midband; DC without reactive parts)")
    p.add_argument("--json", action="store_true", help="print JSON")


def _z(z: complex) -> str:
    from solver.output.report import eng
    if z.imag == 0 or abs(z.imag) <= 1e-9 * abs(z):
        return eng(z.real)
    return f"{eng(z.real)}{z.imag:+.4g}j"


def table(verdicts) -> str:
    rows = [("line", "claim", "exact value", "claimed", "error", "verdict")]
    notes = []
    for v in verdicts:
        err = f"{v.rel_error * 100:.3g} %" if v.rel_error == v.rel_error else "nan"
        if v.kind == "exact":
            verdict = "holds (identical)" if v.holds else "FAILS (not identical)"
        else:
            verdict = ("holds" if v.holds else "FAILS") + f" (within {v.tolerance * 100:g} %)"
            verdict += ", identical" if v.exact else ""
        rows.append((str(v.line), v.text, _z(v.value), _z(v.claimed), err, verdict))
        if not v.exact:
            when = v.exact_when_words
            if when:
                said = f"exact when {'; or '.join(when)}"
            elif v.search_complete:
                said = "no designer's limit or pair of limits makes it exact"
            else:
                said = "no limit found that makes it exact"
            if v.search_note:
                said += f"; {v.search_note}"
            notes.append(f"  line {v.line}: {said}")
            if v.exact_expression:
                notes.append(f"    exact {v.quantity} = {v.exact_expression}")
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    lines = ["  ".join(c.ljust(w) if i != 0 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths))).rstrip()
             for r in rows]
    if notes:
        lines += ["", "not exact:"] + notes
    return "\n".join(lines)


def run(args) -> int:
    from solver.analysis.pipeline import load
    from solver.analysis.symbolic.claims import check
    from solver.cli.commands.common import emit_json, frequency, print_warnings
    from solver.output.report import CAUTION, eng
    at = frequency(args.at) if args.at is not None else None
    res = check(load(args.file), at)  # the same input checks as solve (pipeline.prepare)
    print_warnings(res.warnings)
    c, f, verdicts = res.circuit, res.frequency_hz, res.verdicts
    ok = res.holds
    if args.json:
        from solver.output.claims import verdict_json
        emit_json({"frequency_hz": f, "claims": [verdict_json(v) for v in verdicts]})
    else:
        print(f"{c.title or c.file}: {len(verdicts)} claim(s) at {'DC' if f == 0 else eng(f, 'Hz')}")
        print(table(verdicts))
        print("")
        print(("all claims hold." if ok else f"{sum(not v.holds for v in verdicts)} claim(s) fail."))
        print(CAUTION)
    return 0 if ok else 1
