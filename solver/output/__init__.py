"""Output: text reports, JSON numbers, sweep summaries (text, JSON, CSV), Bode plots,
Touchstone files.

Layer 5: imports only :mod:`solver.analysis` and below.
"""
