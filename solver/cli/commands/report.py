"""portwise report: a design report in one self-contained HTML file."""
from __future__ import annotations

HELP = "a design report: one self-contained HTML file (listing, bias, port quantities, forms, claims, Bode plot)"
DESCRIPTION = """\
Write one HTML file that opens in any current browser without network access
(inline style, plots as inline SVG, formulas as MathML) and prints to PDF from
the browser. Contents, in order: the title and the netlist listing with line
numbers (claims, spreads and specs highlighted), portwise's version, the date and
the cautions; the DC operating point (when bias-solved); the port quantities at
the analysis frequency; symbolic forms of each quantity (small circuits) and the
claims with their verdicts; the frequency response (Bode plot, midband, corners,
poles and zeros, hand estimates beside the exact corners); the loop gain around
every op-amp with a gain (margins, closed-loop poles). A section that does
not apply is left out; a part left out because the circuit is too large for it
is listed at the top of the report."""
EPILOG = """\
examples:
  portwise report circuits/hydrophone_ce_stage.pw -o ce_stage.html
  portwise report circuits/mic_preamp.pw -o mic.html --overwrite
  portwise report circuits/hydrophone_ce_stage.pw -o ce.html --from 1Hz --to 100MHz --json

--json prints each section's data (the JSON of the command that computes the same
numbers: solve, bias, check, sweep) as one object. Set SOURCE_DATE_EPOCH for a
fixed date on the report. Small-signal results are estimates, not a safety assessment."""

from solver.circuit.model import PORT_QUANTITIES as QUANTITY_CHOICES  # noqa: E402


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force, add_overwrite
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("-o", "--output", metavar="NAME.html", required=True, help="the HTML file to write")
    add_overwrite(p)
    p.add_argument("--at", metavar="FREQ", help="analysis frequency of the port quantities and claims "
                   "(default as solve: the detected midband; DC without reactive parts)")
    p.add_argument("--from", dest="f_from", metavar="FREQ", help="lowest frequency of the frequency response "
                   "(default: two decades below the lowest pole or zero)")
    p.add_argument("--to", dest="f_to", metavar="FREQ", help="highest frequency of the frequency response")
    p.add_argument("--per-decade", type=int, default=20, metavar="N", help="sweep points per decade (default 20)")
    p.add_argument("--quantity", choices=QUANTITY_CHOICES, metavar="Q",
                   help="the swept quantity (default Gv; Zt for a current signal)")
    p.add_argument("--loop-around", action="append", default=[], metavar="NAME",
                   help="also show the loop gain around this transistor or controlled source (repeatable; "
                   "every op-amp with a gain= is shown anyway)")
    add_force(p)
    p.add_argument("--json", action="store_true", help="also print each section's data as one JSON object")


def run(args) -> int:
    from pathlib import Path

    from solver import api
    from solver.cli.commands.common import emit_json, frequency, print_warnings, refuse_existing, write_file
    from solver.diagnostics import error
    out = Path(args.output)
    if out.suffix.lower() not in (".html", ".htm"):
        raise error(None, "-o: the file name ends in .html")
    refuse_existing([out], args.overwrite)  # before any work, so nothing is lost
    at = frequency(args.at) if args.at is not None else None
    f_from = frequency(args.f_from, "--from") if args.f_from is not None else None
    f_to = frequency(args.f_to, "--to") if args.f_to is not None else None
    if f_from is not None and f_from <= 0:
        raise error(None, "--from: a log sweep starts above 0 Hz")
    if f_from is not None and f_to is not None and f_to <= f_from:
        raise error(None, "--to must be above --from")
    if not (1 <= args.per_decade <= 1000):
        raise error(None, "--per-decade: between 1 and 1000")
    rep = api.report(api.load(args.file), at, f_from, f_to, args.per_decade, args.quantity, args.force,
                     loop_around=tuple(args.loop_around))
    print_warnings(rep.warnings)
    write_file(out, rep.html, args.overwrite)
    if args.json:
        emit_json(rep.to_dict())
    else:
        shown = ", ".join(s.title.lower() for s in rep.sections)
        print(f"wrote {out} ({len(rep.html.encode('utf-8')) // 1024 + 1} kB): {shown}")
        for part, reason in rep.left_out:
            print(f"  left out for size: {part}: {reason}")
    return 0
