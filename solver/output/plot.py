"""Two-panel Bode plot (magnitude in dB, phase in degrees) as PNG or SVG bytes.

matplotlib is imported here only, with the non-interactive Agg backend, so
the command line stays quick when no plot is asked for.
"""
from __future__ import annotations

import io
import math

import numpy as np

#: a plain style of our own: dark grey trace, light grid, one accent for the corners
TRACE = "#1f3b57"
ACCENT = "#b5542d"
GRID = "#d9d9d9"


def bode(freqs, h, fmt: str = "png", title: str = "", quantity: str = "Gv",
         corners: dict[str, float | None] | None = None, reference_db: float | None = None) -> bytes:
    """Render |H| in dB and its phase against log frequency.

    Parameters
    ----------
    freqs : array of float
        Frequencies in Hz (positive, increasing).
    h : array of complex
        The response at those frequencies.
    fmt : {"png", "svg"}
    title : str
    quantity : str
        Names the magnitude axis (``|Gv| (dB)``).
    corners : dict, optional
        ``{"f_low": Hz or None, "f_high": Hz or None}``: marked with a dashed
        line on both panels and a dot at reference_db - 3 dB.
    reference_db : float, optional
        The midband level the corners are measured from.

    Returns
    -------
    bytes
        The encoded image.

    Examples
    --------
    >>> import numpy as np
    >>> f = np.logspace(0, 4, 50)
    >>> png = bode(f, 1 / (1 + 1j * f / 100), corners={"f_high": 100.0}, reference_db=0.0)
    >>> png[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
    True
    """
    import matplotlib
    matplotlib.use("Agg", force=True)
    return encoded(figure(freqs, h, title, quantity, corners, reference_db), fmt)


def finish(fig, title: str = "") -> None:
    """The figure's title (if any) and a tight layout, as every plot of ours has them."""
    if title:
        fig.suptitle(title, fontsize=11)
    fig.tight_layout()


def encoded(fig, fmt: str) -> bytes:
    """The figure as PNG or SVG bytes; SVG text stays text (searchable, editable)."""
    import matplotlib
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(buf, format=fmt)
    return buf.getvalue()


#: quantities that are impedances: plotted in Ω on a log axis, never as "dB" of ohms
IMPEDANCES = ("Rin", "Rout", "Zt", "Zto")


def unwrapped_phase(h) -> np.ndarray:
    """The phase of ``h`` in degrees, unwrapped and shifted by whole turns so that it starts in
    (-180°, 180°]; nan where ``h`` is not finite. Every plot of ours draws phase this way.

    Examples
    --------
    >>> unwrapped_phase(np.array([1j, -1, -1j, 1])).tolist()
    [90.0, 180.0, 270.0, 360.0]
    """
    h = np.asarray(h, complex)
    phase = np.degrees(np.unwrap(np.angle(np.where(np.isfinite(h), h, 1.0))))
    phase = np.where(np.isfinite(h), phase, np.nan)
    finite = phase[np.isfinite(phase)]
    if finite.size:
        phase = phase - 360.0 * math.ceil((finite[0] - 180.0) / 360.0)
    return phase


def style_axes(*axes) -> None:
    """Our plot style on each axis: a light grid on both scales, no top and right frame."""
    for ax in axes:
        ax.grid(True, which="both", color=GRID, linewidth=0.6)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)


def figure(freqs, h, title: str = "", quantity: str = "Gv",
           corners: dict[str, float | None] | None = None, reference_db: float | None = None):
    """The Bode figure itself (a :class:`matplotlib.figure.Figure`), as :func:`bode` renders it.

    A gain's magnitude is in dB; an impedance's (Rin, Rout, Zt, Zto) in Ω on a log axis.
    The corner labels sit above the magnitude panel, outside the plotting area, so they
    never cover the curve; the dashed lines mark the corners on both panels.
    """
    from matplotlib.figure import Figure

    from solver.output.report import eng

    freqs = np.asarray(freqs, float)
    h = np.asarray(h, complex)
    ohms = quantity in IMPEDANCES
    with np.errstate(all="ignore"):
        mag = np.abs(h) if ohms else 20 * np.log10(np.abs(h))
    phase = unwrapped_phase(h)
    fig = Figure(figsize=(7.5, 6.0), dpi=100)
    ax_m, ax_p = fig.subplots(2, 1, sharex=True)
    (ax_m.loglog if ohms else ax_m.semilogx)(freqs, mag, color=TRACE, linewidth=1.6)
    ax_p.semilogx(freqs, phase, color=TRACE, linewidth=1.6)
    ax_m.set_ylabel(f"|{quantity}| (Ω)" if ohms else f"|{quantity}| (dB)")
    ax_p.set_ylabel("phase (°)")
    ax_p.set_xlabel("frequency (Hz)")
    style_axes(ax_m, ax_p)
    labels = []
    for key, label in (("f_low", "f_L"), ("f_high", "f_H")):
        f = (corners or {}).get(key)
        if f is None or not math.isfinite(f):
            continue
        for ax in (ax_m, ax_p):
            ax.axvline(f, color=ACCENT, linestyle="--", linewidth=1.0)
        if reference_db is not None:
            level = 10 ** (reference_db / 20) / math.sqrt(2) if ohms else reference_db - 20 * math.log10(math.sqrt(2))
            ax_m.plot([f], [level], "o", color=ACCENT, markersize=5)
        labels.append(f"{label} = {eng(f, 'Hz', 3)}")
    if labels:  # above the panel: the plotting area is the curve's alone
        ax_m.set_title("   ".join(labels), loc="left", color=ACCENT, fontsize=9)
    finish(fig, title)
    return fig
