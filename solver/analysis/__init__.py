"""Analyses: the scenario table (what each port quantity measures), the pipeline every
command runs (load, checks, bias), port quantities, frequency response, time-constant
estimates, the bias solve, two-ports and the symbolic analyses. They return values and
never write onto the circuit model.

Layer 4: imports only :mod:`solver.engine`, :mod:`solver.circuit` and below.
"""
