"""Normalised sensitivities S = (x/Q)·dQ/dx of the port quantities to every parameter.

Small-signal element values (``RC``, ``C1``, ``Q1.gm``, ``Q1.rpi``, the load, ``VS.rs``) by
the adjoint method: a quantity is the ratio of two linear read-outs y = rᵀx of one
configuration A x = b (the scenario table), and for every parameter p at once

    dy/dp = -λᵀ (dA/dp · x - db/dp) + (the read-out's own dependence on p),   Aᵀ λ = r,

and since dQ = (dN - Q dD)/D the two read-outs of a quantity fold into one vector: each
quantity costs one extra (transposed) solve, whatever the number of parameters
(J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*, 2nd ed., chapter
on sensitivity analysis, the adjoint network, from memory). dA/dp and db/dp come from the
elements' own stamps evaluated with dual numbers (:class:`solver.engine.batch.DualStamper`),
so there is no second definition of any stamp. Complex at the analysis frequency.

For a circuit whose devices are biased from the supplies, a DC parameter (a bias resistor,
a supply, a device's β, V_A, I_S, k, V_th, λ...) also moves the operating point, and with it
gm, rπ and ro: its sensitivity is taken through the bias point exactly, by implicit
differentiation of the DC solution (one solve with the Newton Jacobian per parameter,
:mod:`solver.analysis.biassens`) chained with the adjoint gradients of the small-signal
values. Those rows say ``"via": "bias point"``. A parameter that method does not cover (a
MOSFET outside saturation under --force) is taken by a central difference of the whole
evaluation (:mod:`solver.analysis.variation`, relative step 1e-5, truncation error of order
1e-10 relative) and says ``"via": "bias point (central difference)"``. A device given by its
operating point (``ic=``, ``beta=``, ``va=``; ``id=``, ``vov=``, ``lambda=``) has those
parameters through the bias form's formulas differentiated in closed form (``"via": "device
parameter"``: ``Q1.ic`` moves gm, rπ and ro together); the rows
of the small-signal values at the fixed bias point (``Q1.gm`` as derive names it) and of
capacitors and inductors say ``"via": "adjoint"``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import pipeline
from solver.analysis import scenarios as sc
from solver.analysis.ports import _Solves
from solver.analysis.variation import Evaluator, Knob
from solver.circuit.devices import needs_bias
from solver.circuit.elements import Capacitor, Inductor
from solver.circuit.model import Circuit
from solver.diagnostics import Diagnostic, error
from solver.engine.batch import DualStamper
from solver.engine.mna import SOLVE_DENSE_LIMIT, SingularSystem

#: relative step of the central differences through the bias point
STEP = 1e-5
#: device parameters whose sensitivity is reported through the bias point, when present
BJT_DC = ("beta", "va", "is", "beta_r", "ro", "rx")
MOS_DC = ("k", "vth", "lambda")
DIODE_DC = ("is", "n")


@dataclass
class SensitivityResult:
    """Per quantity, rows ranked by |S|: parameter, value, normalized (complex), via."""

    circuit: Circuit
    frequency_hz: float
    values: dict[str, complex]
    quantities: dict[str, list[dict]]
    notes: list[str] = field(default_factory=list)
    warnings: list[Diagnostic] = field(default_factory=list)



def _solver(A):
    """(solve, solve_transposed) for one matrix: dense LU up to the dense limit, else sparse LU."""
    n = A.shape[0]
    if n <= SOLVE_DENSE_LIMIT:
        import scipy.linalg as la
        lu = la.lu_factor(A)
        return (lambda b: la.lu_solve(lu, b)), (lambda b: la.lu_solve(lu, b, trans=1))
    import scipy.sparse.linalg as spla
    f = spla.splu(A.tocsc())
    return (lambda b: f.solve(b)), (lambda b: f.solve(b, trans="T"))


def adjoint(c: Circuit, m: sc.Measurement, s: complex, params: dict[str, str]):
    """(Q, {parameter: dQ/dp}) of one measurement at complex frequency s, by the adjoint method."""
    els = list(m.config.elements)
    st = DualStamper(els, c.ground, params).stamp_all()
    n = st.size
    b = np.zeros(n, complex)
    for r, v in st._b.items():
        b[r] += v
    if n <= SOLVE_DENSE_LIMIT:
        A = np.zeros((n, n), complex)
        for r, col, v in st._g:
            A[r, col] += v
        for r, col, v in st._c:
            A[r, col] += s * v
    else:
        import scipy.sparse as sp
        rows = [t[0] for t in st._g] + [t[0] for t in st._c]
        cols = [t[1] for t in st._g] + [t[1] for t in st._c]
        vals = [t[2] for t in st._g] + [s * t[2] for t in st._c]
        A = sp.coo_matrix((np.array(vals, complex), (rows, cols)), shape=(n, n)).tocsc()
    try:
        solve, solve_t = _solver(A)
        x = solve(b)
    except (np.linalg.LinAlgError, RuntimeError, ValueError):
        raise SingularSystem("singular") from None
    if not np.all(np.isfinite(x)):
        raise SingularSystem("singular")
    value_of = {e.name: e.value for e in els}

    def readout(terms):
        r = np.zeros(n, complex)
        y = 0j
        direct: dict[str, complex] = {}
        for t in terms:
            if t.kind == "node":
                i = st.node(t.name)
                if i is None:
                    continue
                v, idx = x[i], i
            elif t.kind == "branch":
                idx = st.branches[t.name]
                v = x[idx]
            else:
                y += t.sign / (value_of[t.per.name] if t.per is not None else 1.0)
                continue
            w = t.sign / (value_of[t.per.name] if t.per is not None else 1.0)
            r[idx] += w
            y += w * v
            if t.per is not None and t.per.name in params:
                p = params[t.per.name]
                direct[p] = direct.get(p, 0j) - w * v / value_of[t.per.name]
        return y, r, direct

    # dQ/dp = (dN - Q dD)/D with N = r_N x and D = r_D x: both read-outs fold into one vector,
    # so a quantity costs ONE transposed solve, whatever the number of parameters
    num, r_num, d_num = readout(m.num)
    if m.den:
        den, r_den, d_den = readout(m.den)
    else:
        den, r_den, d_den = 1.0 + 0j, np.zeros(n, complex), {}
    if den == 0:  # Q = v/0 (a virtual ground): infinite, no derivative
        return complex(math.inf), {p: complex(math.nan) for p in set(st.dG) | set(st.dC) | set(st.db)}
    q = num / den
    lam = solve_t((r_num - q * r_den) / den)
    grads = {p: (d_num.get(p, 0j) - q * d_den.get(p, 0j)) / den for p in set(d_num) | set(d_den)}
    for p in set(st.dG) | set(st.dC) | set(st.db):
        acc = 0j
        for row, col, d in st.dG.get(p, ()):
            acc += lam[row] * d * x[col]
        for row, col, d in st.dC.get(p, ()):
            acc += lam[row] * s * d * x[col]
        for row, d in st.db.get(p, ()):
            acc -= lam[row] * d
        grads[p] = grads.get(p, 0j) - acc
    return q, grads


def dc_view(c: Circuit) -> list:
    """The DC view's linear elements with the floating-node ties, as the bias solve builds them."""
    from solver.analysis import bias as B
    from solver.circuit.views import dc_elements
    linear = dc_elements(c)
    ties, _ = B.floating_ties(c, linear)
    return linear + ties


def dc_knobs(c: Circuit) -> list[Knob]:
    """The parameters that move the bias point (for a circuit biased from its supplies)."""
    from solver.analysis.variation import knob
    names = []
    for e in c.elements:
        if e.origin == e.name and e.name in c.values and not isinstance(e, (Capacitor, Inductor)):
            names.append(e.name)
    names += [s.name for s in c.supplies]
    if c.load is not None:
        names.append(c.load.name)
    if c.signal is not None and c.signal.kind == "V" and c.signal.rs not in (0.0, math.inf):
        names.append(f"{c.signal.name}.rs")
    for d in c.devices:
        keys = BJT_DC if d.is_bjt else MOS_DC if d.is_mos else DIODE_DC
        for k in keys:
            if k in d.params or (needs_bias(d) and k in ("beta", "is") and not d.is_mos):
                names.append(f"{d.name}.{k}")
    out = []
    for n in names:
        try:
            out.append(knob(c, n, "sensitivity"))
        except Exception:  # noqa: BLE001 - a name inside a block that the knob syntax cannot reach
            continue
    return out


#: parameters of a device given by its operating point that set its small-signal model
OP_GIVEN = ("ic", "beta", "va", "id", "vov", "lambda")


def device_knobs(c: Circuit) -> list[Knob]:
    """The operating-point parameters of devices that give them (``Q1.ic``, ``Q1.beta``, ``M1.id``)."""
    from solver.analysis.variation import knob
    out = []
    for d in c.devices:
        if needs_bias(d):
            continue
        for k in OP_GIVEN:
            if k in d.params:
                try:
                    out.append(knob(c, f"{d.name}.{k}", "sensitivity"))
                except Exception:  # noqa: BLE001 - a name the knob syntax cannot reach
                    continue
    return out


def sensitivity(circuit: Circuit, quantities=None, at: float | None = None, force: bool = False) -> SensitivityResult:
    """Normalised sensitivities of port quantities to every parameter, ranked by magnitude.

    Parameters
    ----------
    circuit : Circuit
    quantities : list of str, optional
        Default: every port quantity the circuit defines.
    at : float, optional
        Analysis frequency (default as ``portwise solve``).
    force : bool

    Returns
    -------
    SensitivityResult

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nresistor R2 (b, gnd) 3k\\n"
    ...           "output (b, gnd)\\n")
    >>> rows = {r["parameter"]: r["normalized"] for r in sensitivity(c, ["Gv"]).quantities["Gv"]}
    >>> round(rows["R1"].real, 6), round(rows["R2"].real, 6)   # -R1/(R1+R2), R1/(R1+R2)
    (-0.25, 0.25)
    """
    c = circuit
    p = pipeline.prepare(c, "ports", "dc" if at is not None and float(at) == 0 else "ac", force)
    f, why = pipeline.analysis_frequency(p.circuit, at)
    bc = p.circuit
    defined = [q for q in sc.quantities(bc) if q not in sc.DECIBELS]  # CMRR: a ratio of two rows in dB
    qs = list(quantities) if quantities else defined
    for q in qs:
        why_not = sc.why_undefined(bc, q)
        if why_not:
            raise error(None, f"sensitivity: {why_not}")
        if q in sc.DECIBELS:
            raise error(None, f"sensitivity: {q} is the ratio of {' and '.join(sc.DECIBELS[q])} in dB; "
                        "ask for those two (its normalised sensitivity is theirs' difference)")
    s = 2j * math.pi * f
    solves = _Solves(bc, s)

    singular = solves.singular
    biased = pipeline.needs_bias_solve(c)
    through = dc_knobs(c) if biased else []
    through += [k for k in device_knobs(c) if k.name not in {t.name for t in through}]
    through_names = {k.name for k in through}
    values, out, all_grads = {}, {}, {}
    for q in qs:
        m = sc.chosen(bc, q, singular, solves.base)
        params = {e.name: e.symbol for e in m.config.elements if e.symbol}
        try:
            val, grads = adjoint(bc, m, s, params)
        except SingularSystem:
            raise p.fail([Diagnostic("error", None, f"the circuit {m.config.description} is singular")]) from None
        values[q], all_grads[q] = val, grads
        xs = {e.symbol: e.value for e in m.config.elements if e.symbol}
        finite = val != 0 and np.isfinite(abs(val))
        out[q] = [{"parameter": name, "value": float(np.real(xs[name])),
                   "normalized": complex(xs[name] * g / val) if finite else complex(math.nan), "via": "adjoint"}
                  for name, g in grads.items() if name not in through_names]
    from solver.analysis.biassens import op_chains
    chains = op_chains(c, through)
    if biased and through:
        from solver.analysis.biassens import bias_chains
        linear = dc_view(c)
        try:
            chains.update(bias_chains(c, [k for k in through if k.name not in chains], linear, p.bias.nodes))
        except Exception:  # noqa: BLE001 - any surprise: the central differences below take the rest
            pass
    from solver.analysis.biassens import combine
    rest = [k for k in through if k.name not in chains]
    for q in qs:
        v = values[q]
        finite = v != 0 and np.isfinite(abs(v))
        for k in through:
            if k.name in chains:
                dq = combine(chains[k.name], all_grads[q])
                sn = complex(k.nominal * dq / v) if finite else complex(math.nan)
                out[q].append({"parameter": k.name, "value": float(k.nominal), "normalized": sn,
                               "via": "bias point" if biased else "device parameter"})
    if rest:
        ev = Evaluator(c, p, f, qs)
        n = 2 * len(rest)
        settings = {}
        for j, k in enumerate(rest):
            h = STEP * abs(k.nominal) or STEP
            arr = np.full(n, k.nominal)
            arr[2 * j] -= h
            arr[2 * j + 1] += h
            settings[k] = arr
        got = ev.run(settings, n)
        for q in qs:
            vals = got.quantities[q]
            v = values[q]
            for j, k in enumerate(rest):
                h = STEP * abs(k.nominal) or STEP
                ok = got.valid[2 * j] and got.valid[2 * j + 1]
                dq = (vals[2 * j + 1] - vals[2 * j]) / (2 * h) if ok else complex(math.nan)
                sn = complex(k.nominal * dq / v) if v != 0 and np.isfinite(abs(v)) else complex(math.nan)
                via = "bias point (central difference)" if biased else "device parameter (central difference)"
                out[q].append({"parameter": k.name, "value": float(k.nominal), "normalized": sn, "via": via})
    for q in qs:
        out[q].sort(key=lambda r: (-abs(r["normalized"]) if np.isfinite(abs(r["normalized"])) else 1.0,
                                   r["parameter"]))
    notes = list(p.notes) + why
    for q, v in values.items():
        if v == 0 or not np.isfinite(abs(v)):
            notes.append(f"{q} is {'0' if v == 0 else 'infinite'} here: its normalised sensitivities "
                         "(x/Q)·dQ/dx are not defined (nan)")
    if through and biased:
        notes.append("rows 'via bias point' move the operating point (gm, rπ, ro follow); rows 'via adjoint' "
                     "are at the fixed bias point")
    return SensitivityResult(bc, f, values, out, notes, list(p.warnings))
