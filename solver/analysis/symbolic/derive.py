"""One derived quantity, ready to print: exact result -> limits -> dominant terms -> || text.

Shared by ``portwise derive`` and the symbolic lines of ``portwise solve``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from solver.circuit.model import Circuit


@dataclass
class Derived:
    quantity: str
    expr: object  # sympy, with || nodes
    plain: str
    latex: str
    sympy: str
    symbols: dict
    pruned: object = None  # claims.Pruned when --dominant was given


def tidy_numbers(e, digits: int = 6):
    """Show long exact fractions (from numeric symbols) as decimals of ``digits`` digits.

    Examples
    --------
    >>> import sympy
    >>> tidy_numbers(sympy.Rational(1, 3) * sympy.Symbol("x"))
    x/3
    >>> tidy_numbers(sympy.Rational(10**20 + 1, 3 * 10**19))
    3.33333
    """
    import sympy
    big = {r: sympy.Float(r, digits) for r in e.atoms(sympy.Rational)
           if not r.is_Integer and (r.q > 10**4 or abs(r.p) > 10**9) or r.is_Integer and abs(r) > 10**9}
    return e.xreplace(big) if big else e


def bias_substitutions(c: Circuit) -> dict:
    """{small-signal symbol: expression in bias quantities} for bias-form devices.

    BJT given ic=: gm = ic/V_T, rpi = beta*V_T/ic, ro = va/ic (when va= is given);
    MOSFET given id=, vov=: gm = 2*id/vov, ro = 1/(lambda*id) (when lambda= is given).
    (Sedra & Smith, *Microelectronic Circuits*, 7th ed., sections 7.2.1-7.2.4, from memory.)
    The thermal voltage is the one symbol ``V_T``.
    """
    from solver.engine.symbolic.determinants import symbol
    out = {}
    vt = symbol("V_T")
    for d in c.devices:
        p, n = d.params, d.name
        sym = lambda q: symbol(f"{n}.{q}")  # noqa: E731
        if d.is_bjt and "ic" in p:
            ic = sym("ic")
            out[sym("gm")] = ic / vt
            if "beta" in p or "rpi" not in p:
                out[sym("rpi")] = sym("beta") * vt / ic
            if "va" in p:
                out[sym("ro")] = sym("va") / ic
        elif d.is_mos and "id" in p and "vov" in p:
            i_d = sym("id")
            out[sym("gm")] = 2 * i_d / sym("vov")
            if "lambda" in p:
                out[sym("ro")] = 1 / (sym("lambda") * i_d)
    return out


def _in_decibels(q: str, ratio, pruned, P) -> Derived:
    """A dB quantity (CMRR = 20*log10(abs(Avo/Acm))) around its derived ratio."""
    import sympy
    if ratio == sympy.oo:  # the rejected gain is identically 0
        return Derived(q, ratio, P.plain(ratio), P.latex(ratio), P.sympy_text(ratio), {}, pruned)
    symbols = P.sympy_names(P.expand_par(ratio) if ratio.has(P.Par()) else ratio)
    return Derived(q, ratio, f"20*log10(abs({P.plain(ratio)}))",
                   f"20\\log_{{10}}\\left|{P.latex(ratio)}\\right|",
                   f"20*log(Abs({P.sympy_text(ratio)}), 10)", symbols, pruned)


def derive(c: Circuit, quantities, keep=None, numeric=(), limits=(), dominant: float | None = None,
           frequency_hz: float = 0.0, expand_bias: bool = False, around: str | None = None) -> list[Derived]:
    """Derive ``quantities`` symbolically and format them.

    Parameters
    ----------
    c : Circuit
    quantities : list of str
    keep, numeric : symbol names (see :func:`solver.analysis.symbolic.ports.symbolic_port_quantities`)
    limits : list of (name, "oo" | "0")
    dominant : float or None
        Relative tolerance for dropping terms (0.05 for 5 %).
    frequency_hz : float
        Where the dominant-term error is reported.
    expand_bias : bool
        Rewrite bias-form devices' symbols in ic, beta, va, V_T (see :func:`bias_substitutions`).
    around : str, optional
        The controlled source of the feedback quantities T, Ginf, G0 (:mod:`solver.analysis.symbolic.loop`).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n")
    >>> derive(c, ["Gv"])[0].plain
    'RL/(R1 + RL)'
    """
    import sympy
    from solver.analysis.symbolic import printing as P
    from solver.analysis.symbolic.claims import prune, rational_limit
    from solver.engine.symbolic.determinants import symbol, to_sympy
    from solver.analysis.symbolic.ports import scenario_elements, symbol_values, symbolic_port_quantities
    dims = P.symbol_dims(scenario_elements(c))
    values = symbol_values(c)
    from solver.analysis.symbolic.loop import LOOP_QUANTITIES, symbolic_loop_quantities
    loop_qs = [q for q in quantities if q in LOOP_QUANTITIES]
    res = symbolic_port_quantities(c, keep, numeric, which=[q for q in quantities if q not in loop_qs])
    if loop_qs:  # feedback around one source: T, Ginf, G0
        res.update(symbolic_loop_quantities(c, around, keep, numeric, loop_qs))
    out = []
    for q in quantities:
        if q not in res:  # Acm, CMRR when the common-mode drive makes the circuit singular
            continue
        sq = res[q]
        in_db = hasattr(sq, "ratio_expr")  # CMRR: the ratio (Avo/Acm) is derived, then shown in dB
        pruned = None
        if dominant is not None and sq.num and sq.den:  # 0 and unbounded quantities have no terms to drop
            pruned = prune(sq.num, sq.den, sq.gens, values, dominant, 2j * math.pi * frequency_hz)
            e = to_sympy(pruned.num, pruned.den, sq.gens)
        else:
            e = sq.ratio_expr() if in_db else sq.expr()
        for name, to in limits:
            e = rational_limit(e, symbol(name), to)
        e = sympy.factor_terms(e) if e.is_Add else e
        shown = P.recognize_parallel(e, dims) if not e.has(sympy.oo, sympy.zoo, sympy.nan) else e
        shown = tidy_numbers(shown)
        if expand_bias:
            shown = shown.xreplace(bias_substitutions(c))
        if in_db:
            out.append(_in_decibels(q, shown, pruned, P))
            continue
        out.append(Derived(q, shown, P.plain(shown), P.latex(shown), P.sympy_text(shown),
                           P.sympy_names(P.expand_par(shown) if shown.has(P.Par()) else shown), pruned))
    return out
