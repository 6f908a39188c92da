"""The netlist language: units and values, expression trees, statements, the parser.

Layer 1 of the data flow (below it only :mod:`solver.diagnostics` and :mod:`solver.bulk`).
"""
