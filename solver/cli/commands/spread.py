"""portwise spread: Monte Carlo over the netlist's spread lines, yields against its spec lines."""
from __future__ import annotations

HELP = "Monte Carlo over the 'spread' lines: statistics, yields against 'spec' lines, worst case"
DESCRIPTION = """\
Draw every 'spread' value (uniform over its range by default, or normal with the range as
+-3 sigma), re-solve the bias point of each sample when devices are biased from supplies,
and solve the port quantities of all samples at once. Report, for each quantity, the mean,
standard deviation, minimum, maximum and the 1st, 50th and 99th percentiles of its
magnitude; the yield against every 'spec' line with its 95 % Wilson score interval; and
how many samples left the amplifying region (those are left out, and said). --worst adds
the worst case over the corners of the ranges."""
EPILOG = """\
examples:
  portwise spread circuits/hydrophone_cs_stage.pw --samples 5000 --seed 7
  portwise spread circuits/hydrophone_cs_stage.pw --worst --json
  portwise spread circuits/hydrophone_cs_stage.pw --plot spread.png"""

MAX_SAMPLES = 10_000_000


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force, add_overwrite
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--samples", type=int, default=1000, metavar="N", help="Monte Carlo samples (default 1000)")
    p.add_argument("--seed", type=int, metavar="S", help="seed of the random generator (default: a fresh one, "
                   "reported so that the run can be repeated)")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency (default as for 'portwise solve')")
    p.add_argument("--worst", action="store_true", help="add the worst case: the corners of the spread "
                   "ranges (all 2^k corners up to 12 spreads)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    p.add_argument("--plot", metavar="FILE", help="write histograms with the spec limits (.png or .svg)")
    add_overwrite(p)
    add_force(p)


def run(args) -> int:
    from pathlib import Path

    from solver import api
    from solver.cli.commands.common import emit_json, frequency, plot_format, print_warnings, refuse_existing, write_file
    from solver.diagnostics import error
    from solver.output.variation import spread_report
    if not (2 <= args.samples <= MAX_SAMPLES):
        raise error(None, f"--samples: between 2 and {MAX_SAMPLES}")
    if args.seed is not None and args.seed < 0:
        raise error(None, "--seed: a non-negative integer")
    fmt = None
    if args.plot:
        fmt = plot_format(args.plot)
        refuse_existing([args.plot], args.overwrite)  # before the work, not after it
    at = frequency(args.at) if args.at is not None else None
    r = api.spread(args.file, samples=args.samples, seed=args.seed, at=at, worst=args.worst, force=args.force)
    print_warnings(r.warnings)
    if args.plot:
        from solver.analysis.scenarios import UNITS
        from solver.output.histogram import histograms
        img = histograms(r.magnitudes, r.specs, fmt, r.circuit.title or Path(r.circuit.file).stem, UNITS)
        write_file(args.plot, img, args.overwrite)
    if args.json:
        emit_json(r.to_dict())
    else:
        print(spread_report(r))
    return 0
