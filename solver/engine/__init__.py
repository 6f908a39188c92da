"""The engines that solve a stamped system: numeric MNA over numpy/scipy.sparse
(:mod:`solver.engine.mna`) and the exact polynomial engine (:mod:`solver.engine.symbolic`).

Layer 3: imports only :mod:`solver.circuit` and the layers below it.
"""
