"""The JSON of ``portwise derive`` and ``solver.derive``: one writer for both.

Each quantity gives its readable form (``expression``, with the ``where`` lines of a
compact form and its ``size``), the exact expanded ratio in circuit symbols (``sympy``,
left out with a word above a size limit unless ``expanded``), the symbols, LaTeX only on
request, and the dominant-term report when terms were dropped.
"""
from __future__ import annotations

from solver.output.jsonout import number


def derive_json(results, tolerance=None, frequency_hz=0.0, *, expanded=False, latex=False,
                midband=None, notes=()) -> dict:
    """The JSON object of derived quantities (one quantity, or ``{"quantities": [...]}``).

    Parameters
    ----------
    results : list of solver.analysis.symbolic.derive.Derived
    tolerance, frequency_hz : the dominant-term tolerance and frequency, when pruned
    expanded : bool
        The exact ratio is written however large it is.
    latex : bool
        Add each form's LaTeX.
    midband : solver.analysis.midband.Midband, optional
        The capacitors' classification (``--midband``).
    notes : list of str
    """
    from solver.analysis.symbolic.forms import SYMPY_MAX_TERMS
    items = []
    for d in results:
        item = {"quantity": d.quantity, "expression": d.plain, "where": d.form.where_dicts(),
                "size": d.size, "form": d.form.kind}
        sym_text = d.form.sympy_text(None if expanded else SYMPY_MAX_TERMS)
        item["sympy"] = sym_text
        if sym_text is None:
            n = (len(d.form.num) + len(d.form.den)) if d.form.num is not None else d.form.expanded_terms
            item["sympy_omitted"] = f"the expanded ratio has {'up to ' if d.form.num is None else ''}{n} " \
                                    "terms; --expanded writes it"
        item["symbols"] = d.symbols
        if latex:
            item["latex"] = d.latex
        if d.pruned is not None:
            item["dominant"] = {"tolerance": tolerance, "frequency_hz": frequency_hz,
                                "terms_dropped": d.pruned.dropped, "terms_kept": d.pruned.kept,
                                "coefficient_error": d.pruned.coefficient_error,
                                "error_at_frequency": d.pruned.error_at_f,
                                "error_bound_at_frequency": number(d.pruned.bound_at_f)}
        items.append(item)
    out = items[0] if len(items) == 1 else {"quantities": items}
    if midband is not None:
        out = dict(out, midband=midband.to_dict())
    if notes:
        out = dict(out, notes=list(notes))
    return out
