"""The claim verdicts of ``portwise check`` as JSON (one number rule: solver.output.jsonout)."""
from __future__ import annotations

import math

from solver.output.jsonout import number


def verdict_json(v) -> dict:
    """One :class:`solver.analysis.symbolic.claims.Verdict` as the ``check --json`` entry."""
    def z(x):
        return {"re": number(x.real), "im": number(x.imag)}
    return {"line": v.line, "quantity": v.quantity, "kind": v.kind, "claim": v.text,
            "holds": v.holds, "exact": v.exact, "value": z(v.value), "claimed": z(v.claimed),
            "rel_error": v.rel_error if math.isfinite(v.rel_error) else "inf",
            "tolerance": v.tolerance, "exact_when": v.exact_when,
            "exact_expression": v.exact_expression,
            "exact_when_text": v.exact_when_words,
            "exact_when_search": {"complete": v.search_complete, "tried": v.searched[0], "of": v.searched[1],
                                  "note": v.search_note}}
