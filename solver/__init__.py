"""portwise: small-signal analysis of transistor amplifier stages from a netlist.

The layers, in data-flow order: :mod:`solver.parse` (grammar -> statements),
:mod:`solver.elaborate` (statements -> :class:`solver.model.Circuit`),
:mod:`solver.devices` (transistors -> primitive elements),
:mod:`solver.elements` (MNA stamps), :mod:`solver.mna` (numeric solve),
:mod:`solver.ports` (port quantities), :mod:`solver.report` and
:mod:`solver.cli`. :func:`load`, :func:`loads` and :func:`solve` are the API.
"""
__version__ = "0.1.0"
__all__ = ["load", "loads", "solve", "Result", "InputError"]


def __getattr__(name):  # lazy: `portwise --help` need not import numpy and scipy
    if name in ("load", "loads", "solve", "Result"):
        from . import api
        return getattr(api, name)
    if name == "InputError":
        from .diagnostics import InputError
        return InputError
    raise AttributeError(name)
