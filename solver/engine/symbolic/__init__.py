"""The exact symbolic engine: polynomial rings (python-flint or sympy), the symbolic stamper
(the same element stamps, polynomial entries) and memoised Laplace determinants."""
