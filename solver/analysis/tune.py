"""The value of one element or parameter that makes a port quantity reach a target.

Every network function of a linear circuit is bilinear in any one element value x
(the determinant and each cofactor are affine in x):

    Q(x) = (A·x + B) / (C·x + D).

Three exact solves at three values of x fix A, B, C, D up to a common factor (the null
vector of a 3 x 4 system), and a fourth solve checks the fit. Then the value is exact:
Q(x) = t gives x = (B - t·D)/(t·C - A); a magnitude target at a frequency,
|A x + B|² = t² |C x + D|², is a quadratic in x with real coefficients, whose real roots in
the allowed range are the answers (a negative target also asks for the sign of Re Q).
(Bilinear theorem: J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*,
2nd ed., chapter on sensitivity and symbolic analysis, from memory.)

When x also moves the bias point (a bias resistor, a supply, β), Q(x) is no longer
bilinear: the roots are bracketed on a logarithmic grid over two decades either side of
the present value (all grid points in one batched evaluation through the bias solve) and
refined by Brent's method (scipy.optimize.brentq).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import pipeline
from solver.analysis import scenarios as sc
from solver.analysis.eseries import SERIES, neighbours
from solver.analysis.variation import Evaluator, knob
from solver.circuit.elements import Capacitor, Inductor
from solver.circuit.model import Circuit
from solver.diagnostics import Diagnostic, error

#: the bracketing grid for a root through the bias point: this many decades either side
DECADES = 2.0
GRID = 161
#: the bilinear fit must predict a fourth solve to this relative accuracy
FIT_TOL = 1e-7


class NoSolution(Exception):
    """No value in the allowed range reaches the target (the CLI exits 1 with the message)."""


@dataclass
class TuneResult:
    circuit: Circuit
    frequency_hz: float
    parameter: str
    value: float
    quantity: str
    target: float
    magnitude: bool
    roots: list[float]
    method: str
    series: str | None = None
    below: dict | None = None
    above: dict | None = None
    nominal: float = math.nan
    notes: list[str] = field(default_factory=list)
    warnings: list[Diagnostic] = field(default_factory=list)



def bilinear_fit(xs, qs):
    """(A, B, C, D) with Q(x) = (A x + B)/(C x + D) through three points (x, Q).

    Examples
    --------
    >>> a, b, c, d = bilinear_fit([1.0, 2.0, 3.0], [2.0 / 2, 3.0 / 3, 4.0 / 4])  # Q = (x+1)/(x+1)
    >>> round(float(abs((a * 5 + b) / (c * 5 + d))), 12)
    1.0
    """
    M = np.array([[x, 1.0, -q * x, -q] for x, q in zip(xs, qs)], complex)
    _, _, vh = np.linalg.svd(M)
    a, b, c, d = vh[-1].conj()
    return a, b, c, d


def _magnitude_roots(a, b, c, d, t):
    """Real x with |a x + b| = t |c x + d|."""
    qa = abs(a) ** 2 - t * t * abs(c) ** 2
    qb = 2 * ((a * np.conj(b)).real - t * t * (c * np.conj(d)).real)
    qc = abs(b) ** 2 - t * t * abs(d) ** 2
    scale = max(abs(qa), abs(qb), abs(qc)) or 1.0
    if abs(qa) <= 1e-14 * scale:
        return [-qc / qb] if abs(qb) > 1e-14 * scale else []
    disc = qb * qb - 4 * qa * qc
    if disc < -1e-12 * qb * qb:
        return []
    r = math.sqrt(max(disc, 0.0))
    # the numerically stable pair of quadratic roots
    qq = -0.5 * (qb + math.copysign(r, qb))
    roots = [qq / qa] + ([qc / qq] if qq != 0 else [])
    return sorted(set(roots))


def tune(circuit: Circuit, quantity: str, target: float, vary: str, series: str | None = None,
         at: float | None = None, force: bool = False) -> TuneResult:
    """The value of ``vary`` that makes ``quantity`` reach ``target``.

    Parameters
    ----------
    circuit : Circuit
    quantity : str
        A port quantity the circuit defines.
    target : float
        The wanted value: a magnitude (a negative number also asks for that sign).
    vary : str
        An element, supply, ``VS.rs``, device parameter or let name.
    series : {"E6", "E12", "E24", "E48", "E96", "E192"}, optional
        Report the neighbouring standard values (default E24 for a resistor, capacitor or
        inductor; none for other parameters).
    at : float, optional
    force : bool

    Returns
    -------
    TuneResult

    Raises
    ------
    NoSolution
        No value in the allowed range reaches the target.

    Examples
    --------
    >>> from solver import loads
    >>> c = loads("signal VS (a, gnd) 1 V\\nresistor R1 (a, b) 1k\\nresistor R2 (b, gnd) 1k\\n"
    ...           "output (b, gnd)\\n")
    >>> r = tune(c, "Gv", 0.25, "R2")
    >>> round(r.value, 6), r.below, r.above["value"]
    (333.333333, {'value': 330.0, 'result': 0.2481203007518797}, 360.0)
    """
    c = circuit
    p = pipeline.prepare(c, "ports", "dc" if at is not None and float(at) == 0 else "ac", force)
    f, why = pipeline.analysis_frequency(p.circuit, at)
    why_not = sc.why_undefined(p.circuit, quantity)
    if why_not:
        raise error(None, f"--set: {why_not}")
    if not math.isfinite(target):
        raise error(None, "--set: the target is a finite number")
    k = knob(c, vary)
    el = next((e for e in c.elements if e.name == k.target), None)
    passive = k.kind in ("load", "rs") or (k.kind == "element" and el is not None and el.origin == el.name
                                           and type(el).__name__ in ("Resistor", "Capacitor", "Inductor"))
    if series is not None and series not in SERIES:
        raise error(None, f"--series: one of {', '.join(SERIES)}")
    if series is None and passive:
        series = "E24"
    ev = Evaluator(c, p, f, [quantity])
    x0 = k.nominal
    sign = 1.0 if x0 >= 0 else -1.0
    if x0 == 0:
        raise error(None, f"--vary: {vary} is 0 in the netlist; give it a nonzero starting value")

    def q_at(xs):
        xs = np.asarray(xs, float)
        got = ev.run({k: xs}, len(xs))
        return got.quantities[quantity], got.valid

    t = abs(target)
    through_bias = ev.biased and not isinstance(el, (Capacitor, Inductor))
    roots, method = [], ""
    if not through_bias:
        xs = x0 * np.array([0.5, 1.0, 2.0, 3.0])
        qv, ok = q_at(xs)
        if np.all(ok):
            a, b, cc, d = bilinear_fit(xs[:3], qv[:3])
            pred = (a * xs[3] + b) / (cc * xs[3] + d)
            if abs(pred - qv[3]) <= FIT_TOL * max(abs(qv[3]), 1e-300):
                roots = [r for r in _magnitude_roots(a, b, cc, d, t) if r * sign > 0]
                method = "exact (bilinear in one value)"
                through_bias = False
            else:
                through_bias = True
        else:
            through_bias = True
    if through_bias:
        grid = x0 * np.logspace(-DECADES, DECADES, GRID)
        qv, ok = q_at(grid)
        g = np.abs(qv) - t
        roots = []
        from scipy.optimize import brentq

        def h(x):
            qq, okk = q_at([x])
            return float(abs(qq[0]) - t) if okk[0] else math.nan
        for i in range(GRID - 1):
            if ok[i] and ok[i + 1] and np.sign(g[i]) != np.sign(g[i + 1]):
                try:
                    roots.append(brentq(h, grid[i], grid[i + 1], xtol=1e-12 * abs(grid[i]), rtol=1e-12))
                except ValueError:
                    continue
            elif ok[i] and g[i] == 0:
                roots.append(float(grid[i]))
        method = ("root finding through the bias solve (log grid over "
                  f"{DECADES:g} decades either side, Brent's method)") if ev.biased else "root finding"
    if target < 0 and roots:
        qr, okr = q_at(roots)
        roots = [r for r, q, o in zip(roots, qr, okr) if o and q.real < 0]
    elif roots:
        qr, okr = q_at(roots)
        roots = [r for r, o in zip(roots, okr) if o]
    if not roots:
        span = "" if not through_bias else f" between {grid[0]:.4g} and {grid[-1]:.4g}"
        raise NoSolution(f"no value of {vary}{span} gives {quantity} = {target:g}"
                         f" (now {abs(ev.run({k: np.array([x0])}, 1).quantities[quantity][0]):.5g} at {x0:.5g})")
    best = min(roots, key=lambda r: abs(math.log(abs(r / x0))))
    res = TuneResult(p.circuit, f, k.name, float(best), quantity, float(target), True,
                     [float(r) for r in roots], method, series, nominal=float(x0),
                     notes=list(p.notes) + why, warnings=list(p.warnings))
    if series is not None and best > 0:
        lo, hi = neighbours(best, series)
        qv, ok = q_at([lo, hi])
        res.below = {"value": lo, "result": float(abs(qv[0])) if ok[0] else math.nan}
        res.above = {"value": hi, "result": float(abs(qv[1])) if ok[1] else math.nan}
    return res
