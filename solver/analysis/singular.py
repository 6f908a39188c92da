"""A system that the graph checks passed but that cannot be solved, explained in netlist terms.

:func:`explain_singular` names the unknowns no equation determines and the dependent
equations (structural rank by bipartite matching, then the null space, from
:func:`solver.engine.mna.diagnose`) for the first signal-driven configuration of the
scenario table that is singular; :func:`conditioning` warns about an ill-conditioned one.
Both return diagnostics; nothing is written onto the circuit.
"""
from __future__ import annotations

import math

from solver.analysis.scenarios import signal_configurations
from solver.circuit.elements import Nullor
from solver.circuit.model import Circuit
from solver.circuit.topology import describe_node as _show, is_internal as _internal, list_names as _names
from solver.diagnostics import Diagnostic, Loc
from solver.engine.mna import COND_WARN, SingularSystem, assemble, condition_estimate, diagnose


def _drive_systems(c: Circuit):
    """(description, System) of the signal-driven configurations of the scenario table, loaded first."""
    for cfg in signal_configurations(c):
        yield cfg.description, assemble(list(cfg.elements), c.ground)


def _unknown(name: str, c: Circuit, kinds: dict | None = None) -> str:
    """``v(a)`` -> node 'a'; ``i(U1)`` -> the output current of op-amp U1; ``i(V1)`` -> the current of V1."""
    inner = name[2:-1]
    if name.startswith("v("):  # a node the expansion made is named by its element, never shown itself
        return f"a voltage inside {_show(inner, c)}" if _internal(inner) else f"node {_show(inner, c)}"
    if (kinds or {}).get(inner) is Nullor:
        return f"the output current of op-amp {inner}"
    return f"the current of {inner}"


def _equation(name: str, c: Circuit, kinds: dict | None = None) -> str:
    """The row of an unknown: KCL at a node, or the branch law of a voltage-defined element."""
    inner = name[2:-1]
    if name.startswith("v("):
        return f"KCL inside {_show(inner, c)}" if _internal(inner) else f"KCL at {_show(inner, c)}"
    if (kinds or {}).get(inner) is Nullor:
        return f"the input condition of op-amp {inner} (v+ = v-)"
    return f"the voltage law of {inner}"


def explain_singular(c: Circuit, frequency_hz: float, what: str) -> list[Diagnostic]:
    """Diagnostics for a system that the checks passed but that cannot be solved (+ the circuit's warnings).

    Names the unknowns no equation determines and the dependent equations, from
    :func:`solver.engine.mna.diagnose` (structural rank by bipartite matching, then the
    null space), for the first configuration that is singular.

    Parameters
    ----------
    c : Circuit
    frequency_hz : float
        The analysis frequency the solve failed at.
    what : str
        The port analysis' own message, used when no drive configuration is singular.

    Returns
    -------
    list of Diagnostic
        One error, located at the first element on an undetermined node, then the warnings.
    """
    s = 2j * math.pi * frequency_hz
    where = c.signal.loc if c.signal and c.signal.loc else Loc(c.file, 1, 1)
    for desc, system in _drive_systems(c):
        try:
            system.solve(s)
            continue
        except SingularSystem:
            pass
        info = diagnose(system, s)
        kind = "structurally singular (the pattern of connections alone)" if info.structural else \
            "numerically singular (the element values cancel)"
        msg = (f"the circuit {desc} is {kind} at {frequency_hz:g} Hz: rank {'at most ' if info.estimated else ''}"
               f"{info.rank} of {info.size}")
        kinds = {e.name: type(e) for e in system.stamper.elements if e.needs_branch}
        if info.undetermined:
            msg += f"; undetermined: {_names(info.undetermined, lambda u: _unknown(u, c, kinds))}"
        if info.redundant:
            msg += f"; dependent equations: {_names(info.redundant, lambda u: _equation(u, c, kinds))}"
        if not info.undetermined and not info.redundant:
            msg += " (too large for the dense analysis that names the nodes)"
        nodes = {u[2:-1] for u in info.undetermined if u.startswith("v(")}
        near = [e.loc for e in system.stamper.elements if e.loc and nodes & set(e.nodes)]
        return [Diagnostic("error", min(near, key=lambda l: (l.line, l.col)) if near else where, msg)]
    return [Diagnostic("error", where, f"{what} (the system is singular at the output port test)")]


def conditioning(c: Circuit, frequency_hz: float) -> list[Diagnostic]:
    """A warning when the main (loaded) system is ill-conditioned; [] otherwise.

    Parameters
    ----------
    c : Circuit
    frequency_hz : float

    Notes
    -----
    The threshold is :data:`solver.engine.mna.COND_WARN` on the row- and
    column-equilibrated matrix, so that mixing siemens, farads and unit
    entries alone does not trigger it.
    """
    s = 2j * math.pi * frequency_hz
    desc, system = next(iter(_drive_systems(c)))
    cond = condition_estimate(system, s)
    if cond > COND_WARN:
        where = c.signal.loc if c.signal and c.signal.loc else Loc(c.file, 1, 1)
        d = Diagnostic("warning", where, f"the system {desc} is ill-conditioned at {frequency_hz:g} Hz "
                       f"(condition estimate {cond:.2g} > {COND_WARN:.0g}): results may have few correct "
                       "digits; look for element values many decades apart or nearly cancelling")
        return [d]
    return []
