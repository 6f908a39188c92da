"""Histograms of Monte Carlo magnitudes with the spec limits drawn, as PNG or SVG bytes.

matplotlib is imported here only (Agg backend), so the command line stays quick without --plot.
"""
from __future__ import annotations

import io
import math

import numpy as np

from solver.output.plot import ACCENT, GRID, TRACE


def histograms(mags: dict, specs, fmt: str = "png", title: str = "", units: dict | None = None) -> bytes:
    """One panel per quantity: the histogram of its magnitude, each spec's limits as dashed lines.

    Examples
    --------
    >>> import numpy as np
    >>> png = histograms({"Av": np.random.default_rng(1).normal(30, 1, 500)}, [])
    >>> png[:4] == b"\\x89PNG"
    True
    """
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    names = list(mags)
    cols = 2 if len(names) > 1 else 1
    rows = math.ceil(len(names) / cols)
    fig, axes = plt.subplots(rows, cols, figsize=(5.2 * cols, 2.6 * rows), squeeze=False)
    for ax in axes.flat[len(names):]:
        ax.set_visible(False)
    for ax, q in zip(axes.flat, names):
        m = np.asarray(mags[q])
        m = m[np.isfinite(m)]
        if m.size:
            ax.hist(m, bins=min(60, max(10, int(math.sqrt(m.size)))), color=TRACE, alpha=0.85)
        for s in specs:
            if s.quantity != q:
                continue
            for v in (s.lo, s.hi):
                if math.isfinite(v) and v > 0:
                    ax.axvline(v, color=ACCENT, linestyle="--", linewidth=1.2)
        unit = (units or {}).get(q, "")
        ax.set_xlabel(f"|{q}|" + (f" ({unit})" if unit else ""))
        ax.set_ylabel("samples")
        ax.grid(True, color=GRID, linewidth=0.6)
    if title:
        fig.suptitle(title)
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt)
    plt.close(fig)
    return buf.getvalue()
