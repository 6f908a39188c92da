"""One derived quantity, ready to print: exact result -> limits -> dominant terms -> || text.

Shared by ``portwise derive`` and the symbolic lines of ``portwise solve``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from solver.circuit.model import Circuit


from solver.analysis.scenarios import DECIBELS as _DECIBELS  # noqa: E402  (CMRR: a ratio shown in dB)

#: results whose expansion has at most this many terms (a bound from the shared minors) are expanded
EXACT_TERMS = 6000


@dataclass
class Derived:
    quantity: str
    form: object  # forms.Form
    pruned: object = None  # claims.Pruned when --dominant was given

    @property
    def plain(self) -> str:
        return self.form.text

    @property
    def where(self) -> list:
        return self.form.where

    @property
    def size(self) -> int:
        return self.form.size

    @property
    def latex(self) -> str:
        return self.form.latex()

    @property
    def sympy(self) -> str | None:
        """The exact expanded ratio in sympy syntax, None when it is too long to write."""
        return self.form.sympy_text()

    @property
    def symbols(self) -> dict:
        return self.form.symbols


class DecibelForm:
    """A dB quantity (CMRR = 20*log10(abs(Avo/Acm))) written around its ratio's form."""

    def __init__(self, ratio):
        self.ratio = ratio  # forms.Form of the exact ratio, or None: the ratio is unbounded

    def __getattr__(self, attr):  # where, size, kind, num, den, gens ... are the ratio's
        if attr.startswith("__") or self.__dict__.get("ratio") is None:
            raise AttributeError(attr)
        return getattr(self.ratio, attr)

    @property
    def text(self) -> str:
        return "oo" if self.ratio is None else f"20*log10(abs({self.ratio.text}))"

    @property
    def where(self) -> list:
        return [] if self.ratio is None else self.ratio.where

    @property
    def size(self) -> int:
        return 0 if self.ratio is None else self.ratio.size

    @property
    def symbols(self) -> dict:
        return {} if self.ratio is None else self.ratio.symbols

    def latex(self) -> str:
        if self.ratio is None:
            return r"\infty"
        head, _, rest = self.ratio.latex().partition("\n")
        return f"20\\log_{{10}}\\left|{head}\\right|" + ("\n" + rest if rest else "")

    def sympy_text(self, *args, **kw) -> str | None:
        if self.ratio is None:
            return "oo"
        t = self.ratio.sympy_text(*args, **kw)
        return None if t is None else f"20*log(Abs({t}), 10)"


def bias_substitutions(c: Circuit) -> dict:
    """{small-signal symbol: (coefficient, {bias symbol: exponent})} for bias-form devices.

    BJT given ic=: gm = ic/V_T, rpi = beta*V_T/ic, ro = va/ic (when va= is given);
    MOSFET given id=, vov=: gm = 2*id/vov, ro = 1/(lambda*id) (when lambda= is given).
    (Sedra & Smith, *Microelectronic Circuits*, 7th ed., sections 7.2.1-7.2.4, from memory.)
    The thermal voltage is the one symbol ``V_T``.
    """
    out = {}
    for d in c.devices:
        p, n = d.params, d.name
        if d.is_bjt and "ic" in p:
            out[f"{n}.gm"] = (1, {f"{n}.ic": 1, "V_T": -1})
            if "beta" in p or "rpi" not in p:
                out[f"{n}.rpi"] = (1, {f"{n}.beta": 1, "V_T": 1, f"{n}.ic": -1})
            if "va" in p:
                out[f"{n}.ro"] = (1, {f"{n}.va": 1, f"{n}.ic": -1})
        elif d.is_mos and "id" in p and "vov" in p:
            out[f"{n}.gm"] = (2, {f"{n}.id": 1, f"{n}.vov": -1})
            if "lambda" in p:
                out[f"{n}.ro"] = (1, {f"{n}.lambda": -1, f"{n}.id": -1})
    return out


def substitute_monomials(num: dict, den: dict, gens: list[str], subs: dict):
    """num/den with symbols replaced by monomials ``{name: (coefficient, {new name: exponent})}``.

    Returns (num, den, gens) with the new names appended and negative exponents cleared
    by multiplying numerator and denominator by the same monomial.
    """
    from fractions import Fraction
    new = list(gens)
    for _, (_, m) in subs.items():
        for name in m:
            if name not in new:
                new.append(name)
    idx = {g: i for i, g in enumerate(new)}
    rules = {gens.index(k): (Fraction(c), m) for k, (c, m) in subs.items() if k in gens}

    def conv(d):
        out: dict = {}
        for m, c in d.items():
            e = list(m) + [0] * (len(new) - len(gens))
            for i, (k, mono) in rules.items():
                if m[i]:
                    c = c * k ** m[i]
                    for name, x in mono.items():
                        e[idx[name]] += x * m[i]
                    e[i] = 0
            key = tuple(e)
            out[key] = out.get(key, 0) + c
        return {k: v for k, v in out.items() if v}

    n, d = conv(num), conv(den)
    ms = list(n) + list(d)
    if ms:
        low = [min(0, min(m[i] for m in ms)) for i in range(len(new))]
        if any(low):
            shift = lambda dd: {tuple(a - b for a, b in zip(m, low)): c for m, c in dd.items()}  # noqa: E731
            n, d = shift(n), shift(d)
    return n, d, new


def limit_dicts(num: dict, den: dict, gens: list[str], name: str, to: str):
    """The limit of num/den as symbol ``name`` goes to "oo" or "0", read off its extreme powers.

    An unbounded result has an empty denominator (printed ``oo``).
    """
    if name not in gens:
        from solver.diagnostics import error
        raise error(None, f"--limit: '{name}' is not kept symbolic here (see --keep, --numeric)")
    i = gens.index(name)
    if not num:
        return num, den
    pick = max if to == "oo" else min
    en = pick(m[i] for m in num)
    ed = pick(m[i] for m in den) if den else 0
    if not den:
        return num, den
    strip = lambda d, e: {m[:i] + (0,) + m[i + 1:]: c for m, c in d.items() if m[i] == e}  # noqa: E731
    n, d = strip(num, en), strip(den, ed)
    grows = en > ed if to == "oo" else en < ed
    if en == ed:
        return n, d
    if grows:
        return n, {}
    return {}, d


def derive(c: Circuit, quantities, keep=None, numeric=(), limits=(), dominant: float | None = None,
           frequency_hz: float = 0.0, expand_bias: bool = False, expanded: bool = False,
           around: str | None = None) -> list[Derived]:
    """Derive ``quantities`` symbolically and write them (see :mod:`solver.analysis.symbolic.forms`).

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
    expanded : bool
        The flat sum-of-products ratio instead of the design-oriented form.
    around : str, optional
        The controlled source of the feedback quantities T, Ginf, G0 (:mod:`solver.analysis.symbolic.loop`).

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nload RL (b, gnd) 2k\\n")
    >>> derive(c, ["Gv"])[0].plain
    'RL/(R1 + RL)'
    """
    from solver.analysis.symbolic import forms as F
    from solver.analysis.symbolic.ports import choose_symbols, scenario_elements, symbol_values, \
        symbolic_port_quantities
    from solver.analysis.symbolic.printing import symbol_dims
    dims = symbol_dims(scenario_elements(c))
    from solver.analysis.symbolic.loop import LOOP_QUANTITIES, symbolic_loop_quantities
    loop_qs = [q for q in quantities if q in LOOP_QUANTITIES]  # feedback around one source: exact only
    ports = [q for q in quantities if q not in loop_qs]
    exact_only = expanded or dominant is not None or bool(limits) or expand_bias
    nodes = {} if exact_only or not ports else symbolic_port_quantities(c, keep, numeric, which=ports,
                                                                          compact="nodes")
    bounds = {q: F.expanded_terms_bound(n) + F.expanded_terms_bound(d) for q, (n, d) in nodes.items()}
    # (Acm, CMRR are absent from both when the common-mode drive is singular)
    want = [q for q in ports if exact_only or bounds.get(q, 0) <= EXACT_TERMS]
    res = symbolic_port_quantities(c, keep, numeric, which=want) if want else {}
    if loop_qs:
        res.update(symbolic_loop_quantities(c, around, keep, numeric, loop_qs))
    values = symbol_values(c) if dominant is not None else {}
    subs = bias_substitutions(c) if expand_bias else {}
    gens0 = ["s"] + choose_symbols(c, keep, numeric)
    out = []
    for q in quantities:
        if q not in res and q not in nodes:  # Acm, CMRR when the common-mode drive makes the circuit singular
            continue
        if getattr(res.get(q), "infinite", False):  # CMRR with Acm identically 0
            out.append(Derived(q, DecibelForm(None)))
            continue
        if q not in res:  # too big to expand: the shared-minor form alone
            f = F.compact_form(*nodes[q], gens0)
            f.expanded_terms = bounds[q]
            out.append(Derived(q, DecibelForm(f) if q in _DECIBELS else f))
            continue
        sq = res[q]
        num, den, gens = sq.num, sq.den, sq.gens
        pruned = None
        if dominant is not None and num and den:  # 0 and unbounded quantities have no terms to drop
            from solver.analysis.symbolic.claims import prune
            pruned = prune(num, den, gens, values, dominant, 2j * math.pi * frequency_hz)
            num, den = pruned.num, pruned.den
        for name, to in limits:
            num, den = limit_dicts(num, den, gens, name, to)
        if subs:
            num, den, gens = substitute_monomials(num, den, gens, subs)
        compact = F.compact_form(*nodes[q], gens, num, den) if not expanded and q in nodes else None
        if compact is not None and len(num) + len(den) > F.DESIGN_TERMS:
            f = compact
        else:
            f = F.write_form(num, den, gens, expanded=expanded, dims=dims)
            if compact is not None and f.size > max(40, 1.5 * compact.size):  # the shared minors read shorter
                f = compact
        out.append(Derived(q, DecibelForm(f) if q in _DECIBELS else f, pruned))
    return out
