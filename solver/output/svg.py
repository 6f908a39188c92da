"""Plots as inline SVG, written directly (no plotting library, so a report is quick to make).

The report and the notebook displays embed these in HTML; colours come from the page's
CSS classes (``tr`` trace, ``gr`` grid, ``ax`` axes, ``mk`` markers), so the plots follow
the light and dark styles of :mod:`solver.output.html`. A stand-alone file
(``portwise sweep --plot x.svg``) still uses matplotlib (:mod:`solver.output.plot`).

Examples
--------
>>> import numpy as np
>>> f = np.logspace(0, 4, 41)
>>> s = bode_svg(f, 1 / (1 + 1j * f / 100), "Gv", {"f_high": 100.0}, 0.0)
>>> s.startswith("<svg") and s.count("<path") >= 2
True
"""
from __future__ import annotations

import math
from html import escape

import numpy as np

from solver.language.units import eng

W = 720          # drawing width (px, scaled down by CSS when the page is narrower)
LEFT = 62        # room for the y labels
RIGHT = 30
PANEL = 170      # height of one panel
GAP = 34


def _fmt(x: float) -> str:
    return f"{x:.1f}".rstrip("0").rstrip(".")


def nice_step(span: float, target: int = 6) -> float:
    """A 1-2-5 step that cuts ``span`` into about ``target`` parts.

    Examples
    --------
    >>> nice_step(47.0), nice_step(0.9), nice_step(360.0)
    (10.0, 0.2, 100.0)
    """
    if not (span > 0) or not math.isfinite(span):
        return 1.0
    raw = span / target
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if raw <= m * mag * 1.0000001:
            return float(m * mag)
    return float(10 * mag)


def _linear_ticks(lo: float, hi: float) -> tuple[float, float, list[float]]:
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = -1.0, 1.0
    if hi - lo < 1e-9 * max(1.0, abs(hi)):
        lo, hi = lo - 1.0, hi + 1.0
    step = nice_step(hi - lo)
    a = math.floor(lo / step) * step
    b = math.ceil(hi / step) * step
    n = int(round((b - a) / step))
    return a, b, [a + k * step for k in range(n + 1)]


class _Axes:
    """One panel: log x, linear y, mapping data to pixels."""

    def __init__(self, top: float, x0: float, x1: float, y0: float, y1: float, logx: bool = True):
        self.top, self.logx = top, logx
        self.x0, self.x1 = (math.log10(x0), math.log10(x1)) if logx else (x0, x1)
        self.y0, self.y1 = y0, y1

    def px(self, x):
        u = np.log10(x) if self.logx else np.asarray(x, float)
        return LEFT + (u - self.x0) / (self.x1 - self.x0) * (W - LEFT - RIGHT)

    def py(self, y):
        return self.top + PANEL - (np.asarray(y, float) - self.y0) / (self.y1 - self.y0) * PANEL


def _path(ax: _Axes, x, y, cls: str) -> str:
    """A polyline broken where the data are not finite."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    ok = np.isfinite(x) & np.isfinite(y) & (x > 0 if ax.logx else True)
    parts, pen = [], False
    X, Y = ax.px(np.where(ok, x, 1.0)), ax.py(np.where(ok, y, 0.0))
    for k in range(len(x)):
        if not ok[k]:
            pen = False
            continue
        parts.append(f"{'L' if pen else 'M'}{X[k]:.1f},{Y[k]:.1f}")
        pen = True
    return f'<path class="{cls}" d="{" ".join(parts)}"/>' if parts else ""


def _frame(ax: _Axes, yticks: list[float], ylabel: str, xticks, xlabels: bool, xlabel: str) -> list[str]:
    out = []
    xl, xr = LEFT, W - RIGHT
    for t in yticks:
        y = float(ax.py(t))
        out.append(f'<path class="gr" d="M{xl},{y:.1f}H{xr}"/>')
        out.append(f'<text x="{xl - 5}" y="{y + 4:.1f}" text-anchor="end">{_fmt(t)}</text>')
    for t, major, label in xticks:
        x = float(ax.px(t))
        if major:
            out.append(f'<path class="gr" d="M{x:.1f},{ax.top}V{ax.top + PANEL}"/>')
            if xlabels:
                out.append(f'<text x="{x:.1f}" y="{ax.top + PANEL + 14}" text-anchor="middle">{escape(label)}</text>')
        else:
            out.append(f'<path class="gr" d="M{x:.1f},{ax.top + PANEL - 4}V{ax.top + PANEL}"/>')
    out.append(f'<path class="ax" d="M{xl},{ax.top}V{ax.top + PANEL}H{xr}"/>')
    out.append(f'<text x="14" y="{ax.top + PANEL / 2:.1f}" text-anchor="middle" '
               f'transform="rotate(-90 14 {ax.top + PANEL / 2:.1f})">{escape(ylabel)}</text>')
    if xlabels and xlabel:
        out.append(f'<text x="{(xl + xr) / 2:.1f}" y="{ax.top + PANEL + 29}" text-anchor="middle">'
                   f"{escape(xlabel)}</text>")
    return out


def decade_ticks(f0: float, f1: float, unit: str = "Hz"):
    """(value, major, label) for a log axis: decades labelled, 2..9 as minor ticks."""
    out = []
    lo, hi = math.floor(math.log10(f0)), math.ceil(math.log10(f1))
    labelled = max(1, (hi - lo + 7) // 8)  # at most about eight labels
    for d in range(lo, hi + 1):
        base = 10.0 ** d
        if f0 * 0.999 <= base <= f1 * 1.001:
            out.append((base, True, eng(base, unit, 3) if (d - lo) % labelled == 0 else ""))
        for m in range(2, 10):
            v = m * base
            if f0 < v < f1 and hi - lo <= 12:
                out.append((v, False, ""))
    return out


def _svg(height: float, body: list[str], label: str) -> str:
    return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {W} {height:.0f}" width="{W}" '
            f'height="{height:.0f}" role="img" aria-label="{escape(label, quote=True)}">'
            + "".join(body) + "</svg>")


def bode_svg(freqs, h, quantity: str = "Gv", corners: dict | None = None,
             reference_db: float | None = None, label: str = "") -> str:
    """Magnitude (dB) and phase (degrees) of ``h`` against log frequency, as an SVG element.

    ``corners`` ``{"f_low": Hz, "f_high": Hz}`` are drawn as dashed lines (as in
    :func:`solver.output.plot.bode`); ``reference_db`` marks the level 3 dB below it.
    """
    freqs = np.asarray(freqs, float)
    h = np.asarray(h, complex)
    fin = np.isfinite(h) & (h != 0)
    with np.errstate(all="ignore"):
        mag = np.where(fin, 20 * np.log10(np.abs(np.where(fin, h, 1))), np.nan)
    ph = np.degrees(np.unwrap(np.angle(np.where(fin, h, 1.0))))
    ph = np.where(fin, ph, np.nan)
    f0, f1 = float(freqs[0]), float(freqs[-1])
    xt = decade_ticks(f0, f1)
    body = []
    panels = ((mag, f"|{quantity}| (dB)"), (ph, "phase (°)"))
    for k, (y, ylabel) in enumerate(panels):
        top = 10 + k * (PANEL + GAP)
        good = y[np.isfinite(y)]
        lo, hi = (float(good.min()), float(good.max())) if good.size else (-1.0, 1.0)
        a, b, ticks = _linear_ticks(lo, hi)
        ax = _Axes(top, f0, f1, a, b)
        body += _frame(ax, ticks, ylabel, xt, k == 1, "frequency")
        for key, name in (("f_low", "f_L"), ("f_high", "f_H")):
            fc = (corners or {}).get(key)
            if fc is None or not (f0 <= fc <= f1):
                continue
            x = float(ax.px(fc))
            body.append(f'<path class="mk" d="M{x:.1f},{top}V{top + PANEL}"/>')
            if k == 0:
                body.append(f'<text class="mk" x="{x + 4:.1f}" y="{top + 12}">{name} = {escape(eng(fc, "Hz", 3))}</text>')
        body.append(_path(ax, freqs, y, "tr"))
        if k == 0 and reference_db is not None and math.isfinite(reference_db) and a <= reference_db - 3 <= b:
            yy = float(ax.py(reference_db - 10 * math.log10(2)))
            body.append(f'<path class="mk" d="M{LEFT},{yy:.1f}H{W - RIGHT}"/>')
    return _svg(10 + 2 * PANEL + GAP + 36, body, label or f"Bode plot of {quantity}")


def line_svg(x, series: list[tuple[str, object]], ylabel: str, xlabel: str = "frequency",
             unit: str = "Hz", logy: bool = False, label: str = "") -> str:
    """One panel, log x: each series (name, y) a trace (the first solid, the others dashed).

    With ``logy`` the y axis shows log10 of the data with decade labels in engineering notation
    (for a noise density, say).
    """
    x = np.asarray(x, float)
    ys = []
    for _, y in series:
        y = np.asarray(y, float)
        if logy:
            with np.errstate(all="ignore"):
                y = np.where(y > 0, np.log10(np.where(y > 0, y, 1)), np.nan)
        ys.append(y)
    good = np.concatenate([y[np.isfinite(y)] for y in ys]) if ys else np.array([])
    lo, hi = (float(good.min()), float(good.max())) if good.size else (-1.0, 1.0)
    if logy:
        a, b = math.floor(lo), math.ceil(hi) if math.ceil(hi) > math.floor(lo) else math.floor(lo) + 1
        ticks = list(range(a, b + 1))
    else:
        a, b, ticks = _linear_ticks(lo, hi)
    ax = _Axes(10, float(x[0]), float(x[-1]), a, b)
    body = _frame(ax, [], ylabel, decade_ticks(float(x[0]), float(x[-1]), unit), True, xlabel)
    for t in ticks:
        y = float(ax.py(t))
        body.append(f'<path class="gr" d="M{LEFT},{y:.1f}H{W - RIGHT}"/>')
        text = eng(10.0 ** t, "", 3) if logy else _fmt(t)
        body.append(f'<text x="{LEFT - 5}" y="{y + 4:.1f}" text-anchor="end">{escape(text)}</text>')
    for k, y in enumerate(ys):
        body.append(_path(ax, x, y, "tr" if k == 0 else "tr2"))
    if len(series) > 1:
        for k, (name, _) in enumerate(series):
            body.append(f'<text x="{W - RIGHT - 4}" y="{24 + 14 * k}" text-anchor="end">'
                        f'{"—" if k == 0 else "- -"} {escape(name)}</text>')
    return _svg(10 + PANEL + 36, body, label or ylabel)


def histogram_svg(values, bins: int = 30, xlabel: str = "", limits: tuple | None = None,
                  label: str = "") -> str:
    """A histogram of ``values`` (linear x); ``limits`` (low, high), either None, drawn dashed."""
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return ""
    lo, hi = float(v.min()), float(v.max())
    if hi <= lo:
        lo, hi = lo - 0.5 * (abs(lo) or 1), hi + 0.5 * (abs(hi) or 1)
    counts, edges = np.histogram(v, bins=bins, range=(lo, hi))
    a, b, ticks = _linear_ticks(lo, hi)
    _, top, yt = _linear_ticks(0.0, float(counts.max()))
    ax = _Axes(10, a, b, 0.0, top, logx=False)
    body = []
    for t in yt:
        y = float(ax.py(t))
        body.append(f'<path class="gr" d="M{LEFT},{y:.1f}H{W - RIGHT}"/>')
        body.append(f'<text x="{LEFT - 5}" y="{y + 4:.1f}" text-anchor="end">{_fmt(t)}</text>')
    for t in ticks:
        x = float(ax.px(t))
        label = eng(t, "_", 3)[:-1].rstrip()  # an SI prefix, the unit is on the axis label
        body.append(f'<text x="{x:.1f}" y="{10 + PANEL + 14}" text-anchor="middle">{escape(label)}</text>')
    for n, e0, e1 in zip(counts, edges[:-1], edges[1:]):
        if n:
            x0, x1 = float(ax.px(e0)), float(ax.px(e1))
            y = float(ax.py(n))
            body.append(f'<rect class="bar" x="{x0:.1f}" y="{y:.1f}" width="{max(x1 - x0 - 1, 0.5):.1f}" '
                        f'height="{10 + PANEL - y:.1f}"/>')
    for lim in (limits or ()):
        if lim is not None and a <= lim <= b:
            x = float(ax.px(lim))
            body.append(f'<path class="mk" d="M{x:.1f},10V{10 + PANEL}"/>')
    body.append(f'<path class="ax" d="M{LEFT},10V{10 + PANEL}H{W - RIGHT}"/>')
    body.append(f'<text x="{(LEFT + W - RIGHT) / 2:.1f}" y="{10 + PANEL + 29}" text-anchor="middle">'
                f"{escape(xlabel)}</text>")
    return _svg(10 + PANEL + 36, body, label or f"histogram of {xlabel}")
