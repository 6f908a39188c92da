"""portwise tune: the part value that makes a port quantity reach a target."""
from __future__ import annotations

HELP = "the value of one part that makes a port quantity reach a target, with standard values"
DESCRIPTION = """\
Solve for the value of one element or parameter (--vary) that makes a port quantity reach
a target (--set Q=TARGET, a magnitude; a negative target also asks for that sign). Exact for
a part that does not move the bias point (a network function is bilinear in one element
value); by root finding through the bias solve for one that does. Reports the neighbouring
standard values of an IEC 60063 series and what each gives. Exit 1 when no value in range
reaches the target."""
EPILOG = """\
examples:
  portwise tune circuits/mic_preamp.pw --set Av=30 --vary RE1
  portwise tune circuits/hydrophone_cs_stage.pw --set Av=15 --vary RS --series E12 --json"""


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--set", required=True, metavar="Q=TARGET", help="the quantity and its target, e.g. Av=40, "
                   "Rin=10k")
    p.add_argument("--vary", required=True, metavar="NAME", help="the element or parameter to solve for "
                   "(RE1, Q1.beta, VS.rs, a let name)")
    p.add_argument("--series", metavar="E24", help="IEC 60063 series for the neighbouring standard values: "
                   "E6, E12, E24 (default for R, C, L), E48, E96, E192")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency (default as for 'portwise solve')")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    add_force(p)


def run(args) -> int:
    import sys

    from solver import api
    from solver.analysis.tune import NoSolution
    from solver.circuit.model import PORT_QUANTITIES
    from solver.cli.commands.common import emit_json, frequency, option_quantity, print_warnings
    from solver.diagnostics import error
    from solver.language.units import OHM
    from solver.output.variation import tune_report
    q, sep, text = args.set.partition("=")
    q = q.strip()
    if not sep or q not in PORT_QUANTITIES:
        raise error(None, f"--set: QUANTITY=TARGET with QUANTITY one of {', '.join(PORT_QUANTITIES)}")
    text = text.strip()
    negative = text.startswith("-")
    target = option_quantity(text.lstrip("-+"), "--set", (None, OHM) if q in ("Rin", "Rout", "Zt", "Zto") else (None,),
                             "the target is a number (ohms for Rin, Rout, Zt, Zto)")
    target = -target if negative else target
    at = frequency(args.at) if args.at is not None else None
    try:
        r = api.tune(args.file, q, target, args.vary, args.series, at, args.force)
    except NoSolution as e:
        print(f"portwise: no solution: {e}", file=sys.stderr)
        return 1
    print_warnings(r.warnings)
    if args.json:
        emit_json(r.to_dict())
    else:
        print(tune_report(r))
    return 0
