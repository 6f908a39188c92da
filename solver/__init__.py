"""portwise: small-signal analysis of transistor amplifier stages from a netlist.

The layers, in data-flow order: :mod:`solver.parse` (grammar -> statements),
:mod:`solver.elaborate` (statements -> :class:`solver.model.Circuit`),
:mod:`solver.devices` (transistors -> primitive elements),
:mod:`solver.elements` (MNA stamps), :mod:`solver.mna` (numeric solve),
:mod:`solver.ports` (port quantities), :mod:`solver.report` and
:mod:`solver.cli`. :func:`load`, :func:`loads` and :func:`solve` are the API.
"""
from .api import Result, load, loads, solve
from .diagnostics import InputError

__all__ = ["load", "loads", "solve", "Result", "InputError"]
__version__ = "0.1.0"
