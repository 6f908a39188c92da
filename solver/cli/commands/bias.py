"""portwise bias: the DC operating point of a netlist."""
from __future__ import annotations

HELP = "DC operating point: node voltages, device currents, regions, derived gm, rπ, ro"
DESCRIPTION = """\
Solve the DC operating point by Newton–Raphson on the circuit's DC view
(capacitors open, inductors shorted, the signal zeroed behind its rs, supplies
at their values, the load in place) and print the node voltages, each device's
currents, terminal voltages, region and power, and the small-signal parameters
that follow from the bias point. pnp and pmos values keep their signs."""
EPILOG = """\
example:
  portwise bias circuits/contact_pickup_preamp.pw
  portwise bias circuits/contact_pickup_preamp.pw --json"""


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")


def run(args) -> int:
    from solver import api
    from solver.analysis.bias import BiasError, apply_bias, solve_bias, to_json
    from solver.output.biasreport import bias_report
    from solver.diagnostics import Diagnostic, InputError, Loc
    from solver.cli.commands.common import emit_json, print_warnings
    c = api.load(args.file)
    try:
        res = solve_bias(c)
    except BiasError as e:
        raise InputError([Diagnostic("error", e.loc or Loc(c.file, 1, 1), str(e))]) from None
    apply_bias(c, res)
    print_warnings(c)
    if res.warnings:
        from solver.cli import print_diagnostics
        print_diagnostics(res.warnings)
    if args.json:
        emit_json(to_json(res, c))
    else:
        print(bias_report(c, res))
    return 0
