"""portwise solve: port quantities of a netlist at one frequency."""
from __future__ import annotations

HELP = "port quantities Rin, Rout, Avo, Av, Gv, Gvo, Ai (Acm, CMRR, PSRR) at one frequency"
DESCRIPTION = """\
Expand every transistor into its small-signal model, solve the MNA system and
print the port quantities: Rin (input port = the signal's nodes, load in place),
Rout (output port, load removed, signal zeroed), Avo and Av (v_out/v_in without
and with the load), Gvo and Gv (v_out/v_sig; Zt = v_out/i_sig for a current
signal) and Ai = i_load/i_in. A differential signal (neither node the reference)
also gives the common-mode gain Acm (1 V from the reference to both signal nodes,
rs split equally, no load) and CMRR = 20 log10 |Avo/Acm|; every supply its gain to
the output (signal zeroed, load in place) and PSRR = 20 log10 |Av/A_supply|. With
a bias solve, the headroom and output swing of the bias point follow."""
EPILOG = """\
example:
  portwise solve circuits/mic_preamp.pw --at 10kHz
  portwise solve circuits/mic_preamp.pw --json
  portwise solve circuits/mic_preamp.pw --symbolic"""


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency, e.g. 10kHz (default: the detected midband "
                   "frequency; DC for a circuit without capacitors or inductors)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    from solver.cli.commands.common import add_force
    add_force(p)
    p.add_argument("--midband", action="store_true", help="solve the midband circuit: coupling and bypass "
                   "capacitors shorted, device and wiring capacitances opened (each capacitor classified by its "
                   "time constant against the band; the classification is listed)")
    p.add_argument("--symbolic", action="store_true", help="also show each port quantity as a formula in the "
                   "circuit's symbols when the circuit is small enough to do so quickly (loads sympy: "
                   "about half a second more; 'portwise derive' does any size)")


def run(args) -> int:
    from solver import api
    from solver.cli.commands.common import emit_json, frequency, print_warnings
    from solver.output.report import solve_report
    c = api.load(args.file)
    at = frequency(args.at) if args.at is not None else None
    if args.midband and at is not None:
        from solver.diagnostics import error
        raise error(None, "--midband is the band's middle, without a frequency: give --midband or --at, not both")
    result = api.solve(c, at, force=args.force, midband=args.midband)
    c = result.circuit
    h = None
    if result.bias is not None:  # headroom and swing from the bias point, at the same frequency
        from solver.analysis.headroom import headroom
        h = headroom(c, result.bias, result.frequency_hz)
    print_warnings(result.warnings + (h.warnings if h is not None else []))
    if args.json:
        obj = result.to_dict()
        if result.bias is not None:
            from solver.output.biasreport import bias_json
            obj["bias"] = bias_json(result.bias, c, h)
            obj["notes"] = result.notes
        emit_json(obj)
    else:
        if result.bias is not None:
            from solver.output.biasreport import bias_lines, headroom_lines
            result.notes[:0] = [""] + bias_lines(c, result.bias) + headroom_lines(h) + ([""] if result.notes else [])
        symbolic = None
        if args.symbolic:
            from solver.analysis.symbolic.quick import quick_symbolic
            symbolic = quick_symbolic(c)
        print(solve_report(result, symbolic=symbolic))
    return 0
