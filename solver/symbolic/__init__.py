"""Symbolic small-signal analysis: the same element stamps, a polynomial scalar domain.

Modules, each with one job:

* :mod:`.ring`     -- multivariate polynomials over the rationals (python-flint when
  installed, sympy's sparse polynomials otherwise), one interface for both;
* :mod:`.stamper`  -- a :class:`solver.mna.Stamper` whose scalars are ring elements;
* :mod:`.engine`   -- determinants by memoised sparse Laplace expansion, Cramer's rule;
* :mod:`.ports`    -- symbolic port quantities from the numeric engine's scenario builders;
* :mod:`.printing` -- plain text with ``||``, LaTeX with ``\\parallel``, sympy strings;
* :mod:`.claims`   -- claim verdicts, ``exact_when`` search, dominant-term pruning.

sympy is imported only inside the functions that need it.
"""
