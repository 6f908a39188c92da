"""Symbolic feedback quantities around one controlled source: T, G_inf and G0.

The numeric analysis (:mod:`solver.analysis.loop`) finds the return ratio by injection;
here it comes from Bode's return difference: the MNA matrix is affine and of rank one in
the source's value k, so by the matrix determinant lemma

    1 + T = det A / det A(k = 0),   T = (det A - det A0) / det A0,

two determinants of the memoised Laplace expansion, no division until the end. G0 is the
main gain (Gv, or Zt for a current signal) read with k = 0, G_inf the same read with the
source replaced by a nullor (k -> oo), both from the scenario table's measurement.

References
----------
H. W. Bode, *Network Analysis and Feedback Amplifier Design*, 1945, ch. IV (the return
difference as a ratio of determinants), from memory.
E. S. Rosenstark, IEEE Trans. Education 17(4), 1974 (G_inf and G0), from memory.
"""
from __future__ import annotations

from solver.analysis import scenarios as table
from solver.analysis.loop import LoopError, find_source, nulled, swapped, zeroed
from solver.analysis.symbolic.ports import SymbolicQuantity, _Config, choose_symbols, scenario_elements
from solver.circuit.model import Circuit
from solver.circuit.views import small_signal_elements
from solver.diagnostics import error
from solver.engine.symbolic.determinants import RationalFunction
from solver.engine.symbolic.ring import Ring
from solver.engine.symbolic.stamper import variable_names

#: the quantities ``portwise derive`` takes with ``--around NAME``
LOOP_QUANTITIES = ("T", "Ginf", "G0")


def symbolic_loop_quantities(c: Circuit, around: str | None, keep=None, numeric=(), which=LOOP_QUANTITIES):
    """T, Ginf and G0 (of the main gain) around the controlled source ``around``, exactly.

    Returns
    -------
    dict
        name -> :class:`~solver.analysis.symbolic.ports.SymbolicQuantity`.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (p, gnd) 1 V\\nopamp U1 (out, p, fb) gain=1000\\n"
    ...           "resistor R1 (fb, gnd) 1k\\nresistor R2 (out, fb) 9k\\noutput (out, gnd)\\n")
    >>> r = symbolic_loop_quantities(c, "U1")
    >>> str(r["T"].expr()), str(r["Ginf"].expr()), str(r["G0"].expr())
    ('R1*U1.gain/(R1 + R2)', '(R1 + R2)/R1', '0')
    """
    if not around:
        raise error(None, f"{', '.join(which)} need --around NAME (the controlled source of the loop)")
    kept = choose_symbols(c, keep, numeric)
    base = small_signal_elements(c)
    try:
        src = find_source(c, around, base).element
    except LoopError as e:
        raise error(None, str(e)) from None
    ring = Ring(variable_names(kept, [scenario_elements(c)]))
    q = table.main_gain(c)

    def config(b):
        m = table.measurement(c, q, base=b)
        return m, _Config(c, list(m.config.elements), ring, set(kept))

    def gain(m, cfg):
        num = cfg.read(m.num)
        den = cfg.read(m.den) if m.den is not None else cfg.det
        return num, den

    out = {}
    m0, zero = config(swapped(base, src, zeroed(src)))
    if "T" in which:
        _, full = config(base)
        d, d0 = full.det, zero.det
        if d0 == 0:
            raise error(None, f"T around {around}: the circuit with {src.name} = 0 is singular")
        out["T"] = SymbolicQuantity("T", RationalFunction(d - d0, d0, ring).cancel(), kept)
    if "G0" in which:
        num, den = gain(m0, zero)
        if den == 0:
            raise error(None, f"G0 around {around}: the circuit with {src.name} = 0 is singular")
        out["G0"] = SymbolicQuantity("G0", RationalFunction(num, den, ring).cancel(), kept)
    if "Ginf" in which:
        mi, null = config(swapped(base, src, nulled(src)))
        num, den = gain(mi, null)
        if den == 0:
            raise error(None, f"Ginf around {around}: no loop returns to {src.name} (T = 0), so the gain "
                              "has no finite limit as the source grows")
        out["Ginf"] = SymbolicQuantity("Ginf", RationalFunction(num, den, ring).cancel(), kept)
    return out
