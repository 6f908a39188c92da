"""Two-panel noise plot (input-referred density, log-log; noise figure in dB) as PNG or SVG bytes.

Styled like the Bode plot of :mod:`solver.output.plot` (its colours, grid and layout);
matplotlib is imported here only, with the Agg backend.
"""
from __future__ import annotations

import math

import numpy as np

from solver.output.plot import ACCENT, TRACE, encoded, finish, style_axes


def noise_plot(freqs, input_density, nf_db, fmt: str = "png", title: str = "", unit: str = "V/√Hz",
               nf_min_db=None, mark_hz: float | None = None) -> bytes:
    """Render the input-referred noise density and the spot noise figure against log frequency.

    Parameters
    ----------
    freqs : array of float
        Frequencies in Hz (positive, increasing).
    input_density : array of float
        Input-referred density (V/√Hz, or A/√Hz for a current signal).
    nf_db : array of float
        Spot noise figure for the signal's rs (dB; inf where undefined, left out).
    fmt : {"png", "svg"}
    title : str
    unit : str
        The density's unit, for the axis label.
    nf_min_db : array of float, optional
        The minimum noise figure (at the optimum source resistance), drawn dashed.
    mark_hz : float, optional
        A frequency marked on both panels (where the optimum is reported).

    Returns
    -------
    bytes

    Examples
    --------
    >>> f = np.logspace(1, 5, 40)
    >>> png = noise_plot(f, 1e-9 * np.sqrt(1 + 100 / f), 3 + 0 * f, mark_hz=1e3)
    >>> png[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
    True
    """
    import matplotlib
    matplotlib.use("Agg", force=True)
    from matplotlib.figure import Figure

    from solver.output.report import eng

    freqs = np.asarray(freqs, float)
    dens = np.asarray(input_density, float)
    nf = np.asarray(nf_db, float)
    fig = Figure(figsize=(7.5, 6.0), dpi=100)
    ax_d, ax_n = fig.subplots(2, 1, sharex=True)
    ok = np.isfinite(dens) & (dens > 0)
    ax_d.loglog(freqs[ok], dens[ok], color=TRACE, linewidth=1.6)
    ax_d.set_ylabel(f"input noise ({unit})")
    shown = np.isfinite(nf)
    if shown.any():
        ax_n.semilogx(freqs[shown], nf[shown], color=TRACE, linewidth=1.6, label="NF")
    if nf_min_db is not None:
        nmin = np.asarray(nf_min_db, float)
        m = np.isfinite(nmin)
        if m.any():
            ax_n.semilogx(freqs[m], nmin[m], color=TRACE, linewidth=1.0, linestyle="--", alpha=0.7,
                          label="NF_min (Rs_opt)")
        ax_n.legend(frameon=False, fontsize=9)
    ax_n.set_xscale("log")
    ax_n.set_ylabel("noise figure (dB)")
    ax_n.set_xlabel("frequency (Hz)")
    style_axes(ax_d, ax_n)
    if mark_hz is not None and math.isfinite(mark_hz) and mark_hz > 0:
        for ax in (ax_d, ax_n):
            ax.axvline(mark_hz, color=ACCENT, linestyle="--", linewidth=1.0)
        ax_d.annotate(f"{eng(mark_hz, 'Hz', 3)}", xy=(mark_hz, 1.0), xycoords=("data", "axes fraction"),
                      xytext=(4, -12), textcoords="offset points", color=ACCENT, fontsize=9)
    finish(fig, title)
    return encoded(fig, fmt)
