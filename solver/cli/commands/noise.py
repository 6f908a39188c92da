"""portwise noise: output and input-referred noise, en and in, noise figure, who contributes."""
from __future__ import annotations

HELP = "noise: output and input-referred densities, en/in, noise figure, optimum Rs, contributions"
DESCRIPTION = """\
Small-signal noise of the circuit by the adjoint method, on the same circuit,
scenario and stamps as solve and sweep: the output noise density at the output
port with the load in place and the same referred to the signal source (divided
by |Gv|, or |Zt| for a current signal), the two-port equivalent input generators
en (input shorted) and in (input open) with their correlation, the spot noise
figure for the signal's rs (IEEE: source at T0 = 290 K), the optimum source
resistance and NF_min, totals over the band (integrated power, then square root),
the signal-to-noise ratio for the signal's amplitude, and each generator's share
of the output noise power. Densities are one-sided. Generators: thermal noise of
resistors (temp=, noise=off), BJT shot, rx thermal and base flicker (fc=), MOSFET
channel thermal (gamma=) and flicker (fc=), diode shot, op-amp en/in (fce=, fci=).
All generators are taken as uncorrelated (grammar/README.md, docs/noise.md)."""
EPILOG = """\
examples:
  portwise noise circuits/mic_preamp.pw
  portwise noise circuits/mic_preamp.pw --from 10Hz --to 100kHz --points 200 --plot noise.svg
  portwise noise circuits/mic_preamp.pw --at 1kHz --json
  portwise noise circuits/photodiode_tia.pw --from 1Hz --to 1MHz --csv noise.csv"""

MAX_POINTS = 1_000_000


def add_arguments(p) -> None:
    from solver.cli.commands.common import add_force, add_overwrite
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--from", dest="f_from", metavar="F1", help="lowest frequency of the band (default 10Hz)")
    p.add_argument("--to", dest="f_to", metavar="F2", help="highest frequency of the band (default 100kHz)")
    p.add_argument("--points", type=int, metavar="N", help="number of log-spaced points (default 20 per decade)")
    p.add_argument("--at", metavar="F", help="one frequency instead of a band (every array has one value)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    p.add_argument("--csv", metavar="FILE", help="write f_hz, densities, en, in, correlation, NF, optimum per point")
    p.add_argument("--plot", metavar="FILE", help="write the input-referred density and NF (.png or .svg)")
    add_overwrite(p)
    add_force(p)


def run(args) -> int:
    from pathlib import Path

    from solver import api
    from solver.cli.commands.common import emit_json, frequency, plot_format, print_warnings, refuse_existing, write_file
    from solver.diagnostics import error
    if args.at is not None and (args.f_from is not None or args.f_to is not None or args.points is not None):
        raise error(None, "--at gives one frequency; it does not combine with --from, --to or --points")
    at = frequency(args.at, "--at") if args.at is not None else None
    if at is not None and at <= 0:
        raise error(None, "--at: noise is computed above 0 Hz")
    f_from = frequency(args.f_from, "--from") if args.f_from is not None else None
    f_to = frequency(args.f_to, "--to") if args.f_to is not None else None
    if (f_from is None) != (f_to is None):
        raise error(None, "give both --from and --to (or neither, for 10 Hz to 100 kHz)")
    if f_from is not None:
        if f_from <= 0:
            raise error(None, "--from: a log sweep starts above 0 Hz")
        if f_to <= f_from:
            raise error(None, "--to must be above --from")
    if args.points is not None and not (2 <= args.points <= MAX_POINTS):
        raise error(None, f"--points: between 2 and {MAX_POINTS}")
    plot_fmt = plot_format(args.plot)
    refuse_existing((args.csv, args.plot), args.overwrite)  # before any work, so nothing is half written
    c = api.load(args.file)
    res = api.noise(c, f_from, f_to, args.points, at, force=args.force)
    print_warnings(res.warnings)
    c, nz = res.circuit, res.noise
    if args.csv:
        from solver.output.noise import csv_text
        write_file(args.csv, csv_text(nz), args.overwrite)
    if args.plot:
        import numpy as np

        from solver.output.noiseplot import noise_plot
        img = noise_plot(nz.freqs, np.sqrt(nz.input_psd), nz.nf_db, plot_fmt, c.title or Path(c.file).stem,
                         "A/√Hz" if nz.current_signal else "V/√Hz", nz.nf_min_db, float(nz.freqs[nz.at_index]))
        write_file(args.plot, img, args.overwrite)
    if args.json:
        emit_json(res.to_dict())
    else:
        print(res.text())
    return 0
