"""portwise derive: a port quantity as an exact expression in the circuit's own symbols."""
from __future__ import annotations

HELP = "exact symbolic expression of a port quantity, written in design-oriented form"
DESCRIPTION = """\
Solve the small-signal circuit symbolically: every element value is a symbol
named after the element (RC, RL), the signal's resistance is VS.rs, a BJT gives
Q1.gm, Q1.rpi, Q1.ro (when finite) ... and s is the complex frequency. The
result is printed in the netlist's expression language, built from the circuit's
structure: parallel (||), series and divider forms and the extra-element form
H0*(1 + x/Zn)/(1 + x/Zd), with the device symbols Q1.beta = Q1.gm*Q1.rpi,
Q1.re = Q1.rpi/(Q1.beta + 1), Q1.alpha = Q1.beta/(Q1.beta + 1) where they shorten
it (e.g. -Q1.gm*(Q1.ro || RC || RL)). Big results are written once per shared part,
as 'where' lines below the expression; --expanded prints the flat ratio."""
EPILOG = """\
examples:
  portwise derive circuits/mic_preamp.pw Av
  portwise derive circuits/mic_preamp.pw Av --limit Q1.ro=oo
  portwise derive circuits/mic_preamp.pw all --keep RC,RL,Q1.gm --latex
  portwise derive circuits/mic_preamp.pw Gv --dominant 5% --json
  portwise derive circuits/mic_preamp.pw Rin --expanded
  portwise derive circuits/loadcell_diffpair.pw --supply VCC --keep RCB,RT,R1,R2

Symbols not kept take their netlist values. --dominant drops, coefficient by
coefficient of s, the terms whose summed size at the nominal values is within the
tolerance, and reports the error this causes at the analysis frequency.
Small-signal results are linear estimates, not a safety assessment."""

from solver.circuit.model import PORT_QUANTITIES

QUANTITY_CHOICES = PORT_QUANTITIES + ("all",)
LOOP_CHOICES = ("T", "Ginf", "G0")  # feedback around --around NAME (solver.analysis.symbolic.loop)
QUANTITY_CHOICES += LOOP_CHOICES


def _names(values) -> list[str]:
    out = []
    for v in values or ():
        out += [n.strip() for n in v.split(",") if n.strip()]
    return out


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("quantity", choices=QUANTITY_CHOICES, metavar="QUANTITY", nargs="?",
                   help="one of Rin Rout Avo Av Gv Gvo Ai (Zt Zto for a current signal; Acm CMRR "
                   "for a differential signal), or all")
    p.add_argument("--supply", metavar="NAME", help="derive the gain from this supply to the output (signal "
                   "zeroed, load in place) instead of a port quantity")
    p.add_argument("--keep", action="append", metavar="NAMES",
                   help="comma-separated symbols to keep symbolic (the others take their values)")
    p.add_argument("--numeric", action="append", metavar="NAMES",
                   help="comma-separated symbols to replace by their netlist values")
    p.add_argument("--limit", action="append", default=[], metavar="NAME=oo|0",
                   help="take a limit, e.g. Q1.ro=oo (repeatable, applied in order)")
    p.add_argument("--dominant", metavar="TOL", help="drop terms below TOL (e.g. 5%% or 0.05)")
    p.add_argument("--at", metavar="FREQ", help="frequency for the --dominant error (default as solve)")
    p.add_argument("--expand-bias", action="store_true",
                   help="write bias-form devices' gm, rpi, ro in terms of ic, beta, va and V_T")
    p.add_argument("--latex", action="store_true", help="print LaTeX (\\parallel for ||); with --json, add it")
    p.add_argument("--expanded", action="store_true", help="print the flat sum-of-products ratio")
    p.add_argument("--json", action="store_true", help="print JSON")
    from solver.cli.commands.common import add_force
    add_force(p)
    p.add_argument("--midband", action="store_true", help="derive from the midband circuit: coupling and bypass "
                   "capacitors shorted, device and wiring capacitances opened (the classification is listed)")
    p.add_argument("--around", metavar="NAME",
                   help="for T, Ginf, G0: the loop's controlled source (Q1, U1, G1), as portwise loop")


def tolerance(text: str) -> float:
    from solver.diagnostics import error
    from solver.language.units import ONE
    from solver.cli.commands.common import option_quantity
    hint = "a tolerance is a fraction below 1 or a percentage (5%)"
    v = option_quantity(text, "--dominant", (None, ONE), hint)
    if not (0 <= v < 1):
        raise error(None, f"--dominant: {hint}")
    return v


def run(args) -> int:
    from solver.analysis import scenarios
    from solver.analysis.pipeline import analysis_frequency, load, prepare
    from solver.analysis.symbolic.claims import parse_limit
    from solver.analysis.symbolic.derive import derive
    from solver.analysis.symbolic.ports import circuit_symbols
    from solver.cli.commands.common import emit_json, frequency, print_warnings
    from solver.diagnostics import error
    at = frequency(args.at) if args.at is not None else None
    p = prepare(load(args.file), "ports", "dc" if at == 0 else "ac", args.force)  # the same input checks as solve
    c = p.circuit
    print_warnings(p.warnings)
    midband = None
    if args.midband:  # the midband circuit goes down the same derive path
        from solver.analysis.midband import check_midband, midband_circuit
        c, midband = midband_circuit(c)
        if check_midband(c):
            raise p.fail(check_midband(c))
        at = 0.0
    if (args.quantity is None) == (args.supply is None):
        raise error(None, "give a QUANTITY or --supply NAME (one of the two)")
    if args.supply is not None:
        if args.around:
            raise error(None, "--around goes with a loop quantity, not with --supply")
        from solver.analysis.scenarios import SUPPLY, supply_names
        if args.supply not in supply_names(c):
            raise error(None, f"--supply: no supply '{args.supply}' (supplies: "
                        f"{', '.join(supply_names(c)) or 'none'})")
        qs = [SUPPLY + args.supply]
    elif args.quantity in LOOP_CHOICES:
        if not args.around:
            raise error(None, f"{args.quantity} needs --around NAME (the controlled source of the loop)")
        qs = [args.quantity]
    elif args.around:
        raise error(None, f"--around goes with {', '.join(LOOP_CHOICES)}, not {args.quantity}")
    elif args.quantity == "all":
        qs = scenarios.quantities(c)
    else:
        why = scenarios.why_undefined(c, args.quantity)
        if why:
            raise error(None, f"{args.quantity} is not defined here: {why}")
        qs = [args.quantity]
    syms = circuit_symbols(c)
    limits = [parse_limit(t, syms) for t in args.limit]
    keep = _names(args.keep) if args.keep else None
    numeric = _names(args.numeric)
    tol = tolerance(args.dominant) if args.dominant is not None else None
    f, _ = analysis_frequency(c, at)
    results = derive(c, qs, keep, numeric, limits, tol, f, args.expand_bias, args.expanded, around=args.around)
    if not results:
        raise error(None, f"{args.quantity} is not defined here: the circuit with the signal applied "
                    "common-mode is singular")
    if args.json:
        from solver.output.derivation import derive_json
        obj = derive_json(results, tol, f, expanded=args.expanded, latex=args.latex, midband=midband)
        if args.supply is not None:  # the gain from that supply to the output
            for item in obj.get("quantities", [obj]):
                item["supply"] = args.supply
        emit_json(obj)
        return 0
    if midband is not None:
        print("\n".join(midband.lines()))
    for d in results:
        label = f"A_{args.supply}" if args.supply is not None else d.quantity
        if args.latex:
            print(f"{label} = {d.latex}")
        else:
            print(f"{label} = {d.plain}")
            for name, text in d.where:
                print(f"  where {name} = {text}")
        if d.pruned is not None:
            print(f"  dominant terms ({tol:.3g} tolerance): dropped {d.pruned.dropped}, kept {d.pruned.kept}; "
                  f"error at {f:g} Hz {d.pruned.error_at_f:.3g} (bound {d.pruned.bound_at_f:.3g})")
    return 0

