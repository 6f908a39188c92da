"""One module per ``portwise`` subcommand (see solver.cli)."""
