"""portwise: small-signal analysis of transistor amplifier stages from a netlist.

The layers, in data-flow order: :mod:`solver.language.parse` (grammar -> statements),
:mod:`solver.circuit.elaborate` (statements -> :class:`solver.circuit.model.Circuit`),
:mod:`solver.circuit.devices` (transistors -> primitive elements),
:mod:`solver.circuit.elements` (MNA stamps), :mod:`solver.engine.mna` (numeric solve),
:mod:`solver.analysis.ports` (port quantities), :mod:`solver.output.report` and
:mod:`solver.cli`. :func:`load`, :func:`loads`, :func:`solve`, :func:`bias`, :func:`derive`,
:func:`check`, :func:`sweep` and :func:`twoport` are the API (one function per command, each
returning a result with ``.to_dict()``, ``.to_json()`` and ``.warnings``).
"""
__version__ = "0.1.0"
__all__ = ["load", "loads", "solve", "bias", "derive", "check", "sweep", "twoport", "Result", "InputError"]
_API = ("load", "loads", "solve", "Result", "bias", "derive", "check", "sweep", "twoport", "midband_circuit",
        "BiasReport", "Derivation", "CheckResult", "Sweep", "TwoPortResult")
__all__ += ["loop"]  # feedback: return ratio, asymptotic gain, Blackman, margins
__all__ += ["report"]  # the HTML design report
__all__ += ["sensitivity", "spread", "tune"]  # tolerances, Monte Carlo, part values
__all__ += ["noise", "NoiseResult"]  # noise: densities, en/in, noise figure, contributions
__all__ += ["headroom"]  # headroom and output swing from the bias point


def __getattr__(name):  # lazy: `portwise --help` need not import numpy and scipy
    if name in _API or name in ("sensitivity", "spread", "tune", "noise", "NoiseResult", "headroom", "loop"):
        from solver import api
        return getattr(api, name)
    if name == "InputError":
        from solver.diagnostics import InputError
        return InputError
    if name == "loop":
        from solver import api
        return api.loop
    if name == "report":
        from solver import api
        return getattr(api, name)
    raise AttributeError(name)
