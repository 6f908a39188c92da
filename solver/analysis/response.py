"""The frequency-response summary that ``portwise sweep`` prints.

:func:`analyse` runs the sweep, finds the band, the poles and zeros and the
hand estimates and returns a :class:`Summary`; :mod:`solver.output.sweep`
renders it as text, JSON and CSV.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from solver.analysis import frequency as fr
from solver.circuit.model import Circuit
from solver.analysis.scenarios import GAINS, RATIOS
from solver.analysis.timeconstants import Estimates, estimate


@dataclass
class Summary:
    circuit: Circuit
    quantity: str
    freqs: np.ndarray
    h: np.ndarray
    band: fr.Band | None
    poles: np.ndarray | None
    zeros: np.ndarray | None
    estimates: Estimates | None
    notes: list[str] = field(default_factory=list)
    #: ``sweep --supply NAME``: the supply swept (h is then its gain to v_out) and PSRR (dB) per point
    supply: str | None = None
    psrr_db: np.ndarray | None = None

    @property
    def gbw_hz(self) -> float | None:
        b = self.band
        if b is None or b.bandwidth_hz is None or self.quantity not in RATIOS:
            return None
        return abs(b.midband) * b.bandwidth_hz

    def errors(self) -> dict[str, float | None]:
        """Relative error of each estimate against the exact corner (estimate/exact - 1)."""
        b, e = self.band, self.estimates
        out: dict[str, float | None] = {}
        if e is None or b is None:
            return out
        pairs = (("octc_f_high_hz", e.octc_f_high_hz, b.f_high_hz),
                 ("sctc_f_low_hz", e.sctc_f_low_hz, b.f_low_hz),
                 ("miller_f_high_hz", e.miller_f_high_hz, b.f_high_hz))
        for key, est, exact in pairs:
            out[key] = None if est is None or exact is None else est / exact - 1.0
        return out


def analyse(c: Circuit, quantity: str, freqs: np.ndarray, supply: str | None = None) -> Summary:
    """Sweep, band, poles and zeros, estimates (gains only) for one quantity.

    With ``supply``, the swept quantity is the gain from that supply to v_out (signal
    zeroed, load in place) and the summary carries PSRR = 20 log10 |Av / A_supply| per point.

    Raises
    ------
    frequency.ResponseError
        For a quantity the circuit does not define.
    """
    psrr = None
    if supply is not None:
        sc = fr.supply_scenario(c, supply)
        quantity = sc.quantity
        h = fr.response(sc, freqs)
        av = fr.response(fr.scenario(c, "Av"), freqs)
        psrr = np.array([_db_ratio(a, g) for a, g in zip(av, h)])
    else:
        sc = fr.scenario(c, quantity)
        h = fr.response(sc, freqs)
    notes = []
    if not np.all(np.isfinite(h)):
        notes.append(f"{int((~np.isfinite(h)).sum())} sweep point(s) are singular or infinite")
    b = fr.band(sc, freqs, h)
    try:
        poles, zeros = fr.poles_zeros(sc)
    except fr.ResponseError as e:
        poles = zeros = None
        notes.append(str(e))
    est = None
    if quantity in GAINS and b is not None:
        est = estimate(c, quantity, b.midband_hz)
    elif quantity not in GAINS and supply is None:
        notes.append("time-constant estimates are given for gains only")
    return Summary(c, quantity, freqs, h, b, poles, zeros, est, notes, supply, psrr)


def _db_ratio(a: complex, b: complex) -> float:
    from solver.analysis.scenarios import decibels
    if not (np.isfinite(a) and np.isfinite(b)):
        return math.nan
    return decibels(complex(a), complex(b))
