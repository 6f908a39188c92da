"""Symbolic small-signal analysis: the scenario table read by the exact polynomial engine.

Modules, each with one job:

* :mod:`.ports`    -- symbolic port quantities from the shared scenario table;
* :mod:`.forms`    -- every printed result: design-oriented forms from bilinear splits, where lines;
* :mod:`.printing` -- symbol dimensions, LaTeX names, printers for sympy expressions;
* :mod:`.claims`   -- claim verdicts, ``exact_when`` search, dominant-term pruning;
* :mod:`.derive`   -- one derived quantity ready to print (limits, dominant terms);
* :mod:`.quick`    -- the guarded formulas of ``portwise solve --symbolic``.

The engine itself (rings, the symbolic stamper, Laplace determinants) is
:mod:`solver.engine.symbolic`. sympy is imported only inside the functions that need it.
"""
