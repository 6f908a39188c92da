"""portwise sensitivity: which parts matter, as normalised sensitivities, ranked."""
from __future__ import annotations

HELP = "normalised sensitivities (x/Q)·dQ/dx of the port quantities to every part, ranked"
DESCRIPTION = """\
For each port quantity, the normalised sensitivity S = (x/Q)·dQ/dx to every element value
and device parameter, complex at the analysis frequency and ranked by magnitude (S = 1:
the quantity moves 1 % per 1 % of the part). Small-signal values by the adjoint method
(one extra solve per read-out); for a circuit biased from its supplies, the DC parameters
(bias resistors, supplies, β, V_A, I_S...) through the bias point as well."""
EPILOG = """\
examples:
  portwise sensitivity circuits/hydrophone_ce_stage.pw
  portwise sensitivity circuits/hydrophone_cs_stage.pw Av Rin --at 10kHz --json"""


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("quantities", nargs="*", metavar="QUANTITY", help="port quantities (default: all the "
                   "circuit defines)")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency (default as for 'portwise solve')")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    add_force(p)


def run(args) -> int:
    from solver import api
    from solver.circuit.model import PORT_QUANTITIES
    from solver.cli.commands.common import emit_json, frequency, print_warnings
    from solver.diagnostics import error
    from solver.output.variation import sensitivity_report
    for q in args.quantities:
        if q not in PORT_QUANTITIES:
            raise error(None, f"unknown quantity '{q}' (one of {', '.join(PORT_QUANTITIES)})")
    at = frequency(args.at) if args.at is not None else None
    r = api.sensitivity(args.file, args.quantities or None, at, args.force)
    print_warnings(r.warnings)
    if args.json:
        emit_json(r.to_dict())
    else:
        print(sensitivity_report(r))
    return 0
