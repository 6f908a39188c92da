"""portwise bias: the DC operating point of a netlist."""
from __future__ import annotations

HELP = "DC operating point: node voltages, device currents, regions, derived gm, rπ, ro"
DESCRIPTION = """\
Solve the DC operating point by Newton–Raphson on the circuit's DC view
(capacitors open, inductors shorted, the signal zeroed behind its rs, supplies
at their values, the load in place) and print the node voltages, each device's
currents, terminal voltages, region and power, and the small-signal parameters
that follow from the bias point. pnp and pmos values keep their signs.
Then the headroom: each transistor's margin to saturation (VCE - VCE,sat, VCE,sat
from the Ebers–Moll model at the bias current, or 0.2 V for a device given by
ic=; VDS - Vov for a MOSFET) and to cutoff (bias current x AC load), and the
largest swing at the output port before a device leaves its region, with a
warning when the signal's amplitude times |Gv| asks for more."""
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
    from solver.analysis.headroom import bias_headroom
    p = prepare(load(args.file), "bias")
    h = bias_headroom(p.circuit, p.bias)
    print_warnings(p.warnings + (h.warnings if h is not None else []))
    if args.json:
        emit_json(bias_json(p.bias, p.circuit, h))
    else:
        print(bias_report(p.circuit, p.bias, h))
    return 0

