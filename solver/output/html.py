"""HTML building blocks shared by the design report and the notebook displays.

Everything here writes plain strings: no template engine, no script, no external
resource. A number cell keeps the exact value in ``data-value`` (the same float the
JSON of the command carries, written with ``repr``) and shows it in engineering
notation split at the decimal point, so that a column lines up on the point:
the integer part sits in a right-aligned box as wide as the column's widest one
(``ch`` units with tabular figures), the fraction and unit follow it.

Examples
--------
>>> t = Table(["node", "voltage"])
>>> t.add("b", Num(1.7, "V"))
>>> t.add("c", Num(12.25, "V"))
>>> html = t.html()
>>> 'data-value="12.25"' in html and html.count('<tr>') == 3
True
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from html import escape

from solver.language.units import eng

#: the look of the report: plain, dense, readable in print, with a dark preference.
#: Everything is scoped under .pw so that a notebook page keeps its own style.
CSS = """\
.pw{--fg:#1d1d1b;--muted:#5d5d58;--bg:#fdfdfb;--rule:#c9c9c2;--band:#f1f1ec;--trace:#1f3b57;
--trace2:#7a4f9a;--accent:#b5542d;--grid:#e2e2dc;--ok:#2f6b2f;--bad:#a32020;--mark:#fff3c4;
font:14px/1.35 system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans","DejaVu Sans",sans-serif;
color:var(--fg);background:var(--bg);font-variant-numeric:tabular-nums}
@media (prefers-color-scheme:dark){.pw{--fg:#e4e4de;--muted:#a4a49c;--bg:#161615;--rule:#4a4a45;
--band:#22221f;--trace:#8ab4de;--trace2:#c9a3e6;--accent:#e59a6f;--grid:#33332f;--ok:#8fd18f;
--bad:#ff8f8f;--mark:#3d3512}}
body.pw{max-width:62rem;margin:0 auto;padding:1rem 1.25rem 3rem}
.pw h1{font-size:1.35rem;margin:.2rem 0 .3rem}
.pw h2{font-size:1.05rem;margin:1.4rem 0 .4rem;padding-bottom:.15rem;border-bottom:1px solid var(--rule)}
.pw h3{font-size:.95rem;margin:.9rem 0 .3rem}
.pw p{margin:.3rem 0}
.pw .meta,.pw .note{color:var(--muted)}
.pw table{border-collapse:collapse;margin:.3rem 0 .6rem}
.pw th,.pw td{padding:.12rem .6rem .12rem 0;vertical-align:baseline;text-align:left}
.pw th{font-weight:600;border-bottom:1px solid var(--rule)}
.pw tbody tr:nth-child(even){background:var(--band)}
.pw td.n{white-space:nowrap}
.pw td.n .i{display:inline-block;text-align:right}
.pw .ok{color:var(--ok);font-weight:600}
.pw .bad{color:var(--bad);font-weight:600}
.pw .caution{border-left:3px solid var(--accent);padding:.25rem .6rem;margin:.4rem 0;background:var(--band)}
.pw .warn{border-left:3px solid var(--bad);padding:.25rem .6rem;margin:.3rem 0;background:var(--band);
white-space:pre-wrap;font-family:ui-monospace,"DejaVu Sans Mono",Menlo,Consolas,monospace;font-size:.85rem}
.pw pre.listing{font:12.5px/1.3 ui-monospace,"DejaVu Sans Mono",Menlo,Consolas,monospace;
border:1px solid var(--rule);padding:.4rem 0;overflow-x:auto;margin:.3rem 0}
.pw pre.listing span.l{display:block;padding:0 .6rem}
.pw pre.listing span.l::before{content:attr(data-line);display:inline-block;width:3.5em;margin-right:.8em;
text-align:right;color:var(--muted)}
.pw pre.listing span.hl{background:var(--mark)}
.pw svg{max-width:100%;height:auto;display:block;margin:.3rem 0}
.pw svg text{fill:var(--fg);font-size:11px;font-family:inherit}
.pw svg .ax{stroke:var(--fg);stroke-width:1;fill:none}
.pw svg .gr{stroke:var(--grid);stroke-width:1;fill:none}
.pw svg .tr{stroke:var(--trace);stroke-width:1.6;fill:none}
.pw svg .tr2{stroke:var(--trace2);stroke-width:1.3;fill:none;stroke-dasharray:5 3}
.pw svg .mk{stroke:var(--accent);stroke-width:1;fill:none;stroke-dasharray:4 3}
.pw svg .bar{fill:var(--trace);opacity:.8}
.pw svg text.mk{fill:var(--accent);stroke:none}
.pw math{font-size:1.05em}
.pw .formula{margin:.2rem 0 .5rem 1rem;overflow-x:auto}
.pw nav ol{margin:.2rem 0;padding-left:1.4rem;columns:2}
@media print{body.pw{max-width:none;padding:0}.pw h2{break-after:avoid}.pw table,.pw svg{break-inside:avoid}
.pw{--bg:#fff;--band:#f3f3f3}}
"""


@dataclass(frozen=True)
class Num:
    """A numeric table cell: the exact value (``data-value``) shown in engineering notation."""

    value: float
    unit: str = ""
    digits: int = 4
    text: str | None = None  # overrides the shown text (e.g. "12.30 dB")

    def shown(self) -> str:
        return self.text if self.text is not None else eng(self.value, self.unit, self.digits)


def data_value(x) -> str:
    """The exact value for ``data-value``: ``repr`` of the float, or inf / -inf / nan as in the JSON."""
    x = float(x)
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if math.isnan(x):
        return "nan"
    return repr(x)


def split_point(text: str) -> tuple[str, str]:
    """Split a shown number at its decimal point: ``'4.7 kΩ'`` -> ``('4', '.7 kΩ')``.

    Without a point, the integer part ends where the digits end (``'12 V'`` -> ``('12', ' V')``).
    """
    dot = text.find(".")
    if dot >= 0:
        return text[:dot], text[dot:]
    i = 0
    while i < len(text) and (text[i].isdigit() or (i == 0 and text[i] in "-−+∞") or text[i] == "∞"):
        i += 1
    return text[:i], text[i:]


class Table:
    """A table whose numeric columns line up on the decimal point."""

    def __init__(self, header: list[str], caption: str | None = None, cls: str = ""):
        self.header = header
        self.rows: list[tuple] = []
        self.caption = caption
        self.cls = cls

    def add(self, *cells, attrs: dict | None = None) -> None:
        self.rows.append((cells, attrs or {}))

    def html(self) -> str:
        ncol = len(self.header)
        width = [0] * ncol
        for row, _ in self.rows:
            for k, c in enumerate(row):
                if isinstance(c, Num):
                    width[k] = max(width[k], len(split_point(c.shown())[0]))
        out = [f'<table{f" class={_q(self.cls)}" if self.cls else ""}>']
        if self.caption:
            out.append(f"<caption>{escape(self.caption)}</caption>")
        out.append("<thead><tr>" + "".join(f"<th>{escape(h)}</th>" for h in self.header) + "</tr></thead><tbody>")
        for row, attrs in self.rows:
            cells = "".join(_cell(c, width[k]) for k, c in enumerate(row))
            extra = "".join(f" {a}={_q(v)}" for a, v in attrs.items())
            out.append(f"<tr{extra}>{cells}</tr>")
        out.append("</tbody></table>")
        return "".join(out)


def _q(s: str) -> str:
    return '"' + escape(s, quote=True) + '"'


def _cell(c, width: int) -> str:
    if isinstance(c, Num):
        a, b = split_point(c.shown())
        return (f'<td class="n" data-value="{data_value(c.value)}"><span class="i" style="min-width:{width}ch">'
                f"{escape(a)}</span>{escape(b)}</td>")
    if isinstance(c, Raw):
        return f"<td>{c.html}</td>"
    if c is None:
        return "<td></td>"
    return f"<td>{escape(str(c))}</td>"


@dataclass(frozen=True)
class Raw:
    """A cell of trusted markup we wrote ourselves (MathML, a verdict span)."""

    html: str


def section(ident: str, title: str, body: str) -> str:
    return f'<section id={_q(ident)}><h2>{escape(title)}</h2>{body}</section>'


def para(text: str, cls: str = "") -> str:
    return f'<p{f" class={_q(cls)}" if cls else ""}>{escape(text)}</p>'


def page(title: str, body: str) -> str:
    """A complete, self-contained HTML document (no network access: one inline style, no script).

    The Content-Security-Policy forbids every fetch, so even a stray reference could not load.
    """
    csp = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f'<meta http-equiv="Content-Security-Policy" content="{csp}">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            '<meta name="color-scheme" content="light dark">'
            f"<title>{escape(title)}</title><style>{CSS}</style></head>"
            f'<body class="pw">{body}</body></html>\n')


def fragment(body: str) -> str:
    """Markup for a notebook cell: the same style, scoped under .pw."""
    return f'<div class="pw"><style>{CSS}</style>{body}</div>'
