"""portwise sweep: frequency response of a port quantity, band edges, poles and zeros, estimates."""
from __future__ import annotations

HELP = "frequency response: midband, -3 dB corners, poles and zeros, hand estimates, Bode plot"
DESCRIPTION = """\
Evaluate one port quantity (default Gv) at log-spaced frequencies and summarize
it: the midband level and phase (at the flat top of the response), the
-3 dB corners f_low and f_high (located by root finding between sweep points),
bandwidth and gain-bandwidth product, the poles and zeros of the quantity
(finite generalized eigenvalues of the MNA pencils, rad/s) and the designer's
hand estimates beside the exact corners: open-circuit time constants (f_high),
short-circuit time constants (f_low) and, for a single inverting stage, the
Miller-approximation pole."""
EPILOG = """\
examples:
  portwise sweep circuits/hydrophone_ce_stage.pw --from 1Hz --to 100MHz
  portwise sweep circuits/hydrophone_ce_stage.pw --from 1Hz --to 100MHz --per-decade 40 --plot bode.svg
  portwise sweep circuits/hydrophone_ce_stage.pw --from 10Hz --to 10MHz --quantity Rin --csv rin.csv --json
  portwise sweep circuits/contact_pickup_preamp.pw --from 1Hz --to 10MHz --supply VBAT

--supply NAME sweeps the gain from that supply to v_out (the signal zeroed, the load in
place) instead of a port quantity, and gives the supply rejection PSRR = 20 log10 |Av/A_supply|
at every point (a psrr_db column in the CSV and the JSON points)."""

from solver.circuit.model import PORT_QUANTITIES as QUANTITY_CHOICES  # noqa: E402


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--from", dest="f_from", metavar="FREQ", required=True, help="lowest frequency, e.g. 1Hz")
    p.add_argument("--to", dest="f_to", metavar="FREQ", required=True, help="highest frequency, e.g. 100MHz")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--points", type=int, metavar="N", help="number of log-spaced points in all")
    g.add_argument("--per-decade", type=int, metavar="N", help="points per decade (default 20)")
    p.add_argument("--quantity", choices=QUANTITY_CHOICES, metavar="Q",
                   help="Gv (default; Zt for a current signal), Gvo, Av, Avo, Ai, Rin, Rout, Zt, Zto, Acm")
    p.add_argument("--supply", metavar="NAME", help="sweep the gain from this supply to the output and its "
                   "rejection PSRR = 20 log10 |Av/A_supply| (instead of a port quantity)")
    p.add_argument("--plot", metavar="FILE", help="write a Bode plot (.png or .svg)")
    p.add_argument("--csv", metavar="FILE", help="write f_hz, magnitude_db, phase_deg, re, im")
    from solver.cli.commands.common import add_force, add_overwrite
    add_overwrite(p)
    add_force(p)
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")


MAX_POINTS = 1_000_000


def run(args) -> int:
    from pathlib import Path

    from solver.analysis.frequency import ResponseError, default_quantity, frequencies
    from solver.analysis.pipeline import load, prepare
    from solver.analysis.response import analyse
    from solver.cli.commands.common import emit_json, frequency, plot_format, print_warnings, refuse_existing, write_file
    from solver.diagnostics import error
    from solver.output.sweep import csv_text, summary_json, text_report
    f_from = frequency(args.f_from, "--from")
    f_to = frequency(args.f_to, "--to")
    if f_from <= 0:
        raise error(None, "--from: a log sweep starts above 0 Hz")
    if f_to <= f_from:
        raise error(None, "--to must be above --from")
    if args.points is not None and not (2 <= args.points <= MAX_POINTS):
        raise error(None, f"--points: between 2 and {MAX_POINTS}")
    if args.per_decade is not None and not (1 <= args.per_decade <= 100_000):
        raise error(None, "--per-decade: between 1 and 100000")
    plot_fmt = plot_format(args.plot)
    refuse_existing((args.csv, args.plot), args.overwrite)  # before any work, so nothing is half written
    p = prepare(load(args.file), "ports", "ac", args.force)
    c = p.circuit
    quantity = args.quantity or default_quantity(c)
    if args.supply is not None and args.quantity is not None:
        raise error(None, "--supply and --quantity: choose one (--supply sweeps the supply's own gain)")
    freqs = frequencies(f_from, f_to, args.points, args.per_decade)
    if len(freqs) > MAX_POINTS:
        raise error(None, f"the sweep would have {len(freqs)} points (at most {MAX_POINTS})")
    try:
        sm = analyse(c, quantity, freqs, args.supply)
    except ResponseError as e:
        raise error(None, f"{'--supply' if args.supply is not None else '--quantity'}: {e}") from None
    print_warnings(p.warnings)
    if args.csv:
        write_file(args.csv, csv_text(freqs, sm.h, sm.psrr_db), args.overwrite)
    if args.plot:
        from solver.output.plot import bode
        b = sm.band
        img = bode(freqs, sm.h, plot_fmt, c.title or Path(c.file).stem, sm.quantity,
                   {"f_low": b.f_low_hz, "f_high": b.f_high_hz} if b else None,
                   (summary_json(sm)["summary"]["midband_db"] if b else None))
        write_file(args.plot, img, args.overwrite)
    if args.json:
        emit_json(summary_json(sm))
    else:
        print(text_report(sm))
    return 0
