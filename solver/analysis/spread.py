"""Monte Carlo over the ``spread`` lines, yields against the ``spec`` lines, and the worst case.

Each sample draws every spread value (uniform over its range, or normal with the range as
+-3 sigma), re-solves the bias point when devices are biased from supplies, and solves the
port quantities (all samples at once: :mod:`solver.analysis.variation`). Statistics are of
the magnitudes. Samples whose bias point leaves a transistor outside its amplifying region
(or whose bias solve fails) are counted and left out of the statistics and the yields.

The yield's interval is the Wilson score interval at 95 % confidence:

    (p + z²/2n ± z sqrt(p(1-p)/n + z²/4n²)) / (1 + z²/n),   z = 1.959963984540054

(E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
J. Amer. Statist. Assoc. 22 (1927) 209-212; A. Agresti, B. A. Coull, "Approximate is better
than 'exact' for interval estimation of binomial proportions", Amer. Statist. 52 (1998)
119-126, for why it is preferred to the normal-approximation interval near 0 and 1.)

The worst case takes, for each quantity, the corners given by the signs of its
sensitivities (each spread at the end that raises, or lowers, the magnitude); with k <= 12
spreads every one of the 2^k corners is evaluated too, and the extreme found there is
reported (with whether the sign corner was it).
"""
from __future__ import annotations

import itertools
import math
import secrets
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import pipeline
from solver.analysis import scenarios as sc
from solver.analysis.variation import Evaluator, spread_knob
from solver.circuit.model import Circuit
from solver.diagnostics import Diagnostic, Loc, error

#: the two-sided 95 % normal quantile (scipy.stats.norm.ppf(0.975); the tests check it)
Z95 = 1.959963984540054
#: every corner is evaluated up to this many spreads (2^12 = 4096 corners)
MAX_EXHAUSTIVE = 12
DEFAULT_SAMPLES = 1000


def wilson(successes: int, n: int, z: float = Z95) -> tuple[float, float]:
    """The Wilson score interval of a binomial proportion (see the module docstring).

    Examples
    --------
    >>> lo, hi = wilson(50, 100)
    >>> round(lo, 4), round(hi, 4)
    (0.4038, 0.5962)
    """
    if n == 0:
        return 0.0, 1.0
    p = successes / n
    z2 = z * z
    centre = (p + z2 / (2 * n)) / (1 + z2 / n)
    half = z * math.sqrt(p * (1 - p) / n + z2 / (4 * n * n)) / (1 + z2 / n)
    return max(0.0, centre - half), min(1.0, centre + half)


def draw(spreads, n: int, rng) -> dict:
    """Per-sample values of each spread: uniform over [lo, hi], or normal with hi - lo = 6 sigma."""
    out = {}
    for s in spreads:
        if s.dist == "normal":
            v = rng.normal((s.lo + s.hi) / 2, (s.hi - s.lo) / 6, n)
        else:
            v = rng.uniform(s.lo, s.hi, n)
        out[spread_knob(s)] = v
    return out


def stats(mag: np.ndarray) -> dict[str, float]:
    """mean, std (n - 1), min, max, p1, p50, p99 of the magnitudes (linear percentiles)."""
    if mag.size == 0:
        nan = math.nan
        return {"mean": nan, "std": nan, "min": nan, "max": nan, "p1": nan, "p50": nan, "p99": nan}
    if not np.all(np.isfinite(mag)):  # an infinite quantity (Av of a virtual-ground input)
        with np.errstate(all="ignore"):
            p1, p50, p99 = np.percentile(mag, [1, 50, 99], method="lower")
        return {"mean": math.inf, "std": math.nan, "min": float(mag.min()), "max": float(mag.max()),
                "p1": float(p1), "p50": float(p50), "p99": float(p99)}
    p1, p50, p99 = np.percentile(mag, [1, 50, 99])
    return {"mean": float(mag.mean()), "std": float(mag.std(ddof=1)) if mag.size > 1 else 0.0,
            "min": float(mag.min()), "max": float(mag.max()), "p1": float(p1), "p50": float(p50),
            "p99": float(p99)}


@dataclass
class SpreadResult:
    """What ``portwise spread`` reports (magnitudes of the port quantities)."""

    circuit: Circuit
    frequency_hz: float
    samples: int
    seed: int
    spreads: list
    quantities: dict[str, dict[str, float]]
    yields: list[dict]
    out_of_region: int
    failed: int
    worst: dict | None = None
    magnitudes: dict[str, np.ndarray] = field(default_factory=dict, repr=False)
    specs: list = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    warnings: list[Diagnostic] = field(default_factory=list)



def spread(circuit: Circuit, samples: int = DEFAULT_SAMPLES, seed: int | None = None, at: float | None = None,
           worst: bool = False, force: bool = False) -> SpreadResult:
    """Monte Carlo over the circuit's ``spread`` lines.

    Parameters
    ----------
    circuit : Circuit
        As elaborated, with at least one ``spread`` line.
    samples : int
    seed : int, optional
        The random generator's seed (numpy's default PCG64); None draws one, and the result
        says which, so that the run can be repeated.
    at : float, optional
        Analysis frequency (default: as ``portwise solve``).
    worst : bool
        Add the worst case (corners).
    force : bool
        Analyse even when the nominal bias point is outside the amplifying region.

    Returns
    -------
    SpreadResult

    Examples
    --------
    >>> from solver import loads
    >>> c = loads('''signal VS (a, gnd) 1 V
    ... resistor R1 (a, b) 1k
    ... resistor R2 (b, gnd) 1k
    ... output (b, gnd)
    ... spread R1 1%
    ... spec Gv 0.49 .. 0.51''')
    >>> r = spread(c, samples=200, seed=1)
    >>> r.yields[0]["fraction"], round(r.quantities["Gv"]["p50"], 3)
    (1.0, 0.5)
    """
    c = circuit
    if not c.spreads:
        raise error(Loc(c.file, 1, 1), "the netlist has no 'spread' lines (e.g. 'spread RC 5%' or "
                    "'spread Q1.beta 100 .. 300')")
    if samples < 2:
        raise error(None, "--samples: at least 2")
    p = pipeline.prepare(c, "ports", "dc" if at is not None and float(at) == 0 else "ac", force)
    f, why = pipeline.analysis_frequency(p.circuit, at)
    qs = sc.quantities(p.circuit)
    bad = [Diagnostic("error", s.loc, f"spec {s.quantity}: {sc.why_undefined(p.circuit, s.quantity)}")
           for s in c.specs if s.quantity not in qs]
    if bad:
        raise p.fail(bad)
    if seed is None:
        seed = secrets.randbits(32)
    rng = np.random.default_rng(seed)
    settings = draw(c.spreads, samples, rng)
    ev = Evaluator(c, p, f, qs)
    got = ev.run(settings, samples)
    mags = {q: np.abs(v[got.valid]) for q, v in got.quantities.items()}
    n_valid = int(got.valid.sum())
    yields = []
    for s in c.specs:
        m = mags[s.quantity]
        k = int(np.count_nonzero((m >= s.lo) & (m <= s.hi)))
        lo, hi = wilson(k, n_valid)
        yields.append({"line": s.line, "spec": s.text.split(None, 1)[1] if s.text.startswith("spec") else s.text,
                       "fraction": k / n_valid if n_valid else math.nan, "low": lo, "high": hi,
                       "passed": k, "counted": n_valid})
    oor, failed = int(got.out_of_region.sum()), int(got.failed.sum())
    notes = list(p.notes) + why
    if oor:
        notes.append(f"{oor} of {samples} samples put a transistor outside its amplifying region; they are "
                     "left out of the statistics and the yields (count them as failures for a conservative "
                     "yield)")
    if failed:
        notes.append(f"{failed} of {samples} samples had no bias point (the solve did not converge); "
                     "left out")
    result = SpreadResult(c, f, samples, int(seed), list(c.spreads), {q: stats(m) for q, m in mags.items()},
                          yields, oor, failed, None, mags, list(c.specs), notes, list(p.warnings))
    if worst:
        result.worst = worst_case(ev, c.spreads, qs)
    return result


def _corner_dict(spreads, ends) -> dict[str, float]:
    return {s.name: float(s.hi if e else s.lo) for s, e in zip(spreads, ends)}


def worst_case(ev: Evaluator, spreads, qs) -> dict:
    """Per quantity: min and max of the magnitude over the corners of the spread ranges."""
    k = len(spreads)
    knobs = [spread_knob(s) for s in spreads]
    mid = {kn: np.full(2 * k, (s.lo + s.hi) / 2) for kn, s in zip(knobs, spreads)}
    for j, (kn, s) in enumerate(zip(knobs, spreads)):
        h = (s.hi - s.lo) * 1e-4 or abs(s.nominal) * 1e-6 or 1e-12
        mid[kn][2 * j] -= h
        mid[kn][2 * j + 1] += h
    diff = ev.run(mid, 2 * k)
    out = {}
    exhaustive = None
    if k <= MAX_EXHAUSTIVE:
        ends = np.array(list(itertools.product((0, 1), repeat=k)), dtype=bool)
        corners = {kn: np.where(ends[:, j], s.hi, s.lo) for j, (kn, s) in enumerate(zip(knobs, spreads))}
        exhaustive = (ends, ev.run(corners, len(ends)))
    for q in qs:
        m = np.abs(diff.quantities[q])
        up = [bool(m[2 * j + 1] >= m[2 * j]) for j in range(k)]
        sign_max, sign_min = up, [not u for u in up]
        pair = {kn: np.array([s.hi if a else s.lo, s.hi if b else s.lo]) for kn, s, a, b
                in zip(knobs, spreads, sign_min, sign_max)}
        got = ev.run(pair, 2)
        vals = np.abs(got.quantities[q])
        w = {"min": float(vals[0]) if got.valid[0] else math.nan,
             "max": float(vals[1]) if got.valid[1] else math.nan,
             "corner_min": _corner_dict(spreads, sign_min), "corner_max": _corner_dict(spreads, sign_max),
             "method": "sensitivity signs"}
        if exhaustive is not None:
            ends, res = exhaustive
            mq = np.where(res.valid, np.abs(res.quantities[q]), np.nan)
            if np.any(res.valid):
                i_min, i_max = int(np.nanargmin(mq)), int(np.nanargmax(mq))
                w["confirmed"] = bool(list(ends[i_min]) == sign_min and list(ends[i_max]) == sign_max)
                w.update({"min": float(mq[i_min]), "max": float(mq[i_max]),
                          "corner_min": _corner_dict(spreads, ends[i_min]),
                          "corner_max": _corner_dict(spreads, ends[i_max]),
                          "method": f"all {len(ends)} corners"})
            w["corners_out_of_region"] = int(np.count_nonzero(~res.valid))
        out[q] = w
    return out
