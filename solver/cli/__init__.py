"""The ``portwise`` command line.

Each subcommand lives in ``solver/commands/<name>.py`` with ``HELP``,
``add_arguments(parser)`` and ``run(args) -> int``. Heavy libraries (sympy,
matplotlib) are imported inside ``run`` only, to keep start-up quick.
Exit codes: 0 done, 1 a verdict failed (claims), 2 bad input.
"""
from __future__ import annotations

import argparse
import importlib
import sys

from solver.diagnostics import InputError

COMMANDS = ("solve", "derive", "check", "bias", "sweep", "twoport",
            "loop", "sensitivity", "spread", "tune")

EPILOG = """\
examples:
  portwise solve circuits/mic_preamp.pw
  portwise solve circuits/mic_preamp.pw --at 10kHz --json

exit codes: 0 done, 1 the analysis ran but a verdict failed (claims), 2 bad input.
The netlist language is described in grammar/README.md."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # usage errors are bad input: exit 2 with our prefix
        self.print_usage(sys.stderr)
        sys.stderr.write(f"portwise: error: {message}\n")
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="portwise",
                description="Small-signal analysis of amplifier stages: a netlist in, port quantities "
                            "(Rin, Rout, Avo, Av, Gv, Gvo, Ai) out.",
                epilog=EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--debug", action="store_true", help="show a traceback on internal errors")
    p.add_argument("--version", action="version", version="portwise " + __import__("solver").__version__)
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        try:
            mod = importlib.import_module(f"solver.cli.commands.{name}")
        except ModuleNotFoundError:
            continue
        sp = sub.add_parser(name, help=mod.HELP, description=mod.DESCRIPTION,
                            epilog=getattr(mod, "EPILOG", None),
                            formatter_class=argparse.RawDescriptionHelpFormatter)
        sp.add_argument("--debug", action="store_true", help="show a traceback on internal errors")
        mod.add_arguments(sp)
        sp.set_defaults(_run=mod.run)
    return p


def print_diagnostics(diags, stream=None) -> None:
    from solver.api import read_source
    stream = stream or sys.stderr
    sources: dict[str, str] = {}
    for d in diags:
        if d.loc and d.loc.file not in sources:
            try:
                sources[d.loc.file] = read_source(d.loc.file)
            except InputError:
                sources[d.loc.file] = ""
    order = sorted(diags, key=lambda d: (d.loc is not None, d.loc and (d.loc.file, d.loc.line, d.loc.col)))
    for d in order:
        print(d.format(sources), file=stream)


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 2
    try:
        return args._run(args)
    except InputError as e:
        print_diagnostics(e.diagnostics)
        return 2
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return 0
    except Exception as e:  # an internal error: say so plainly, traceback only on request
        if args.debug:
            raise
        print(f"portwise: internal error: {type(e).__name__}: {e} (run with --debug for a traceback)",
              file=sys.stderr)
        return 3


def entry() -> None:
    raise SystemExit(main())


if __name__ == "__main__":
    entry()
