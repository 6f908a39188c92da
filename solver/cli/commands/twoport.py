"""portwise twoport: z, y, h, g, ABCD and S parameters between the input and output ports."""
from __future__ import annotations

HELP = "two-port parameters z, y, h, g, ABCD, S between the input and output ports; Touchstone"
DESCRIPTION = """\
The two-port between the input port (the signal's nodes, signal and its rs
removed) and the output port (load removed), port currents flowing into the
network. z, y, h and g are measured with the drives that define them; a matrix
that does not exist for the network is reported as such (null in JSON, with a
reason). ABCD follows from a matrix with forward transmission; S is measured
with both ports terminated in the reference impedance z0.
With --touchstone FILE.s2p and --from/--to, S-parameters over a log sweep are
written in the Touchstone 1.1 format."""
EPILOG = """\
examples:
  portwise twoport circuits/hydrophone_ce_stage.pw --at 10kHz
  portwise twoport circuits/hydrophone_ce_stage.pw --at 10kHz --z0 75 --json
  portwise twoport circuits/hydrophone_ce_stage.pw --from 1kHz --to 100MHz --points 101 --touchstone ce.s2p"""


def add_arguments(p) -> None:
    p.add_argument("file", help="netlist file (.pw)")
    p.add_argument("--at", metavar="FREQ", help="analysis frequency, e.g. 10kHz (needed unless only "
                   "--touchstone is asked for)")
    p.add_argument("--z0", metavar="OHMS", default="50", help="reference impedance for S (default 50 Ω)")
    p.add_argument("--touchstone", metavar="FILE", help="write S-parameters over --from/--to (.s2p)")
    p.add_argument("--from", dest="f_from", metavar="FREQ", help="lowest sweep frequency (Touchstone)")
    p.add_argument("--to", dest="f_to", metavar="FREQ", help="highest sweep frequency (Touchstone)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--points", type=int, metavar="N", help="log-spaced sweep points in all")
    g.add_argument("--per-decade", type=int, metavar="N", help="sweep points per decade (default 20)")
    from solver.cli.commands.common import add_force, add_overwrite
    add_overwrite(p)
    add_force(p)
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the report")


def _z0(text: str) -> float:
    import math

    from solver.diagnostics import error
    from solver.language.units import OHM
    from solver.cli.commands.common import option_quantity
    v = option_quantity(text, "--z0", (None, OHM), "a reference impedance is in Ω")
    if not (v > 0 and math.isfinite(v)):
        raise error(None, "--z0: a positive resistance")
    return v


def to_json(tp) -> dict:
    from solver.output.twoportjson import twoport_json
    return twoport_json(tp)


def _cell(z: complex, unit: str, scale: float | None = None) -> str:
    from solver.output.report import complex_text
    return complex_text(z, unit, scale)


def text_report(c, tp) -> str:
    from pathlib import Path

    from solver.output.report import closing_lines, eng, phase_deg
    from solver.analysis.twoport import NAMES, UNITS
    titles = {"z": "z (open-circuit impedance)", "y": "y (short-circuit admittance)", "h": "h (hybrid)",
              "g": "g (inverse hybrid)", "abcd": "ABCD (transmission; I2 out of port 2)",
              "s": f"S (scattering, z0 = {eng(tp.z0, 'Ω')})"}
    (a, b), (p, q) = tp.ports
    out = [c.title or Path(c.file).stem,
           f"two-port at {'DC' if tp.frequency_hz == 0 else eng(tp.frequency_hz, 'Hz')}: port 1 ({a}, {b}) "
           f"signal removed, port 2 ({p}, {q}) load removed", ""]
    for name in NAMES:
        m = tp.matrices.get(name)
        out.append(titles[name])
        if m is None:
            out.append(f"  does not exist: {tp.reasons.get(name, '')}")
            out.append("")
            continue
        u = UNITS[name]
        labels = ("A", "B", "C", "D") if name == "abcd" else tuple(f"{name}{k}" for k in ("11", "12", "21", "22"))
        # rounding noise relative to the matrix's largest entry (in its own units: like entries only)
        scale = max(abs(m[i, j]) for i in range(2) for j in range(2) if u[2 * i + j] == u[0]) if name != "abcd" \
            else None
        cells = [_cell(m[i, j], u[2 * i + j], scale if u[2 * i + j] == u[0] else None)
                 for i in range(2) for j in range(2)]
        w = max(len(x) for x in cells)
        for i in range(2):
            out.append(f"  {labels[2 * i]:<4} {cells[2 * i]:<{w}}   {labels[2 * i + 1]:<4} {cells[2 * i + 1]}")
        if name == "s":
            import math
            for i, j in ((0, 0), (1, 0), (0, 1), (1, 1)):
                z = m[i, j]
                db = f"{20 * math.log10(abs(z)):.2f} dB" if z != 0 else "-inf dB"
                out.append(f"  |S{i + 1}{j + 1}| {db} ∠ {round(phase_deg(z), 1) + 0.0:.1f}°")  # never "-0.0°"
        out.append("")
    out.extend(closing_lines(c))
    return "\n".join(out).rstrip("\n")


def run(args) -> int:
    from pathlib import Path

    from solver.analysis.frequency import frequencies
    from solver.analysis.pipeline import load, prepare
    from solver.analysis.twoport import TwoPortError, s_sweep, two_port
    from solver.diagnostics import error
    from solver.output.touchstone import touchstone
    from solver.cli.commands.common import emit_json, frequency, print_warnings, refuse_existing, write_file
    z0 = _z0(args.z0)
    sweep = args.f_from is not None or args.f_to is not None
    if args.touchstone and not (args.f_from and args.f_to):
        raise error(None, "--touchstone needs --from and --to")
    if sweep and not args.touchstone:
        raise error(None, "--from/--to sweep the S-parameters into --touchstone FILE")
    if args.at is None and not args.touchstone:
        raise error(None, "give --at FREQ (or --touchstone FILE with --from/--to)")
    at = frequency(args.at) if args.at is not None else None
    if args.touchstone:
        f_from, f_to = frequency(args.f_from, "--from"), frequency(args.f_to, "--to")
        if not 0 < f_from < f_to:
            raise error(None, "--from/--to: 0 < from < to")
        if args.points is not None and not 2 <= args.points <= 1_000_000:
            raise error(None, "--points: between 2 and 1000000")
        if args.per_decade is not None and not 1 <= args.per_decade <= 100_000:
            raise error(None, "--per-decade: between 1 and 100000")
    refuse_existing((args.touchstone,), args.overwrite)
    p = prepare(load(args.file), "twoport", "dc" if at == 0 else "ac", args.force)  # faults inside the network, named first
    c = p.circuit
    try:
        tp = two_port(c, at, z0) if at is not None else None
        if args.touchstone:
            freqs = frequencies(f_from, f_to, args.points, args.per_decade)
            s = s_sweep(c, freqs, z0)
    except TwoPortError as e:
        raise error(c.output_loc or (c.load.loc if c.load else None), str(e)) from None
    print_warnings(p.warnings)
    if args.touchstone:
        import numpy as np
        if not np.all(np.isfinite(s)):
            raise error(None, "the terminated network is singular at some sweep frequencies")
        (a, b), (p, q) = (tuple(c.signal.nodes), tuple(c.output_port))
        text = touchstone(freqs, s, z0, [f"{c.title or Path(c.file).stem}: 2-port S-parameters from portwise",
                                         f"port 1 = ({a}, {b}) signal removed; port 2 = ({p}, {q}) load removed",
                                         "small-signal estimates, not a safety assessment"])
        write_file(args.touchstone, text, args.overwrite)
    if tp is None:
        return 0
    if args.json:
        emit_json(to_json(tp))
    else:
        print(text_report(c, tp))
    return 0
