"""The circuit model: statements elaborated into plain dataclasses, primitive elements with
their one MNA stamp each, transistor models and their expansion, the element views that
every analysis starts from (small-signal, DC), and the graph checks of a view.

Layer 2: imports only :mod:`solver.language` and the foundation below it.
"""
