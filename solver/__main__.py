from solver.cli import entry

entry()
