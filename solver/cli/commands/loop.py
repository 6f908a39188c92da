"""portwise loop: return ratio, asymptotic gain model, Blackman's formula, stability margins."""
from __future__ import annotations

HELP = "feedback: return ratio around a source, G_inf and G0, Blackman's Rin/Rout, phase margin"
DESCRIPTION = """\
Take the feedback loop around one controlled source (--around: a transistor's gm,
an op-amp's gain, a vccs/vcvs/cccs/ccvs) and report its return ratio T (the source
replaced by a unit independent one, the signal zeroed, T = -k x the control it
produces), the asymptotic gain model G = G_inf T/(1+T) + G0/(1+T) beside solve's G
for Gv (Zt for a current signal) and Av, and Blackman's formula
Z = Z_dead (1 + T_short)/(1 + T_open) for Rin and Rout. Over a sweep (--from, --to):
the crossover, the phase margin, the gain margin and the closed-loop poles with
their damping. --break NODE measures the loop gain at a node by double injection
instead (no single source needed; see the caveat it prints)."""
EPILOG = """\
examples:
  portwise loop circuits/strain_bridge_amp.pw --around U1
  portwise loop circuits/pin_tia_front_end.pw --around U1 --from 1kHz --to 1GHz --plot loop.svg
  portwise loop circuits/mic_preamp.pw --around Q1 --json
  portwise loop circuits/pin_tia_front_end.pw --break out --toward RF --from 1kHz --to 1GHz

A phase margin under 45 degrees (common practice) and a right half-plane pole are warnings.
Small-signal results are linear estimates, not a safety assessment."""

MAX_POINTS = 100_000


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force, add_overwrite
    p.add_argument("file", help="netlist file (.pw)")
    g = p.add_mutually_exclusive_group(required=True)
    g.add_argument("--around", metavar="NAME", help="the controlled source: Q1, M1, U1, G1 (or Q1.gm)")
    g.add_argument("--break", dest="break_node", metavar="NODE", help="double-injection loop gain at NODE")
    p.add_argument("--toward", action="append", metavar="NAMES",
                   help="with --break: the elements (comma-separated) on the side the loop signal leaves "
                        "NODE toward (default: all but the one element whose output drives NODE)")
    p.add_argument("--at", metavar="FREQ", help="one frequency (default: as solve, the detected midband)")
    p.add_argument("--from", dest="f_from", metavar="FREQ", help="sweep from this frequency")
    p.add_argument("--to", dest="f_to", metavar="FREQ", help="sweep to this frequency")
    p.add_argument("--points", type=int, metavar="N", help="sweep points in all (default 20 per decade)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    p.add_argument("--plot", metavar="FILE", help="with a sweep: write |T| and ∠T (.png or .svg)")
    add_overwrite(p)
    add_force(p)


def run(args) -> int:
    import sys
    from pathlib import Path

    from solver.api import loop
    from solver.cli.commands.common import frequency, plot_format, print_warnings, refuse_existing, write_file
    from solver.diagnostics import error
    at = frequency(args.at) if args.at is not None else None
    sweep = args.f_from is not None or args.f_to is not None
    if sweep and (args.f_from is None or args.f_to is None):
        raise error(None, "a sweep needs both --from and --to")
    if sweep and at is not None:
        raise error(None, "give --at or --from/--to, not both")
    if args.points is not None and not sweep:
        raise error(None, "--points goes with --from and --to")
    f_from = frequency(args.f_from, "--from") if sweep else None
    f_to = frequency(args.f_to, "--to") if sweep else None
    if sweep and f_from <= 0:
        raise error(None, "--from: a log sweep starts above 0 Hz")
    if sweep and f_to <= f_from:
        raise error(None, "--to must be above --from")
    if args.points is not None and not (2 <= args.points <= MAX_POINTS):
        raise error(None, f"--points: between 2 and {MAX_POINTS}")
    if args.toward and not args.break_node:
        raise error(None, "--toward goes with --break")
    toward = [n.strip() for v in args.toward or () for n in v.split(",") if n.strip()] or None
    fmt = None
    if args.plot:
        if not sweep:
            raise error(None, "--plot needs a sweep (--from and --to)")
        fmt = plot_format(args.plot)
        refuse_existing([args.plot], args.overwrite)  # before the work, not after it
    r = loop(args.file, around=args.around, at=at, f_from=f_from, f_to=f_to, points=args.points,
             break_node=args.break_node, toward=toward, force=args.force)
    print_warnings(r.warnings)
    if args.plot:
        from solver.output.loopreport import loop_plot
        c = r.circuit
        write_file(args.plot, loop_plot(r.analysis, fmt, c.title or Path(c.file).stem), args.overwrite)
    if args.json:
        sys.stdout.write(r.to_json() + "\n")
    else:
        print(r.text())
    return 0
