"""The two-port parameters (:class:`solver.analysis.twoport.TwoPort`) as the ``portwise twoport --json`` object."""
from __future__ import annotations


def _matrix_json(m):
    if m is None:
        return None
    return [[{"re": float(m[i, j].real), "im": float(m[i, j].imag)} for j in range(2)] for i in range(2)]


def twoport_json(tp) -> dict:
    """z, y, h, g, ABCD, S as 2x2 lists of {re, im} (null for a set that does not exist, with its reason)."""
    from solver.analysis.twoport import NAMES
    out = {"frequency_hz": tp.frequency_hz, "z0": tp.z0,
           "ports": {"1": list(tp.ports[0]), "2": list(tp.ports[1])}}
    for name in NAMES:
        out[name] = _matrix_json(tp.matrices.get(name))
    out["reasons"] = dict(tp.reasons)
    return out
