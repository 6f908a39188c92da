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
    from solver.analysis.pipeline import load, prepare
    from solver.cli.commands.common import emit_json, print_warnings
    from solver.output.biasreport import bias_json, bias_report
    p = prepare(load(args.file), "bias")
    print_warnings(p.warnings)
    if args.json:
        emit_json(bias_json(p.bias, p.circuit))
    else:
        print(bias_report(p.circuit, p.bias))
    return 0
