"""JSON-safe numbers: every command writes infinities and NaN the same way.

JSON has no infinity, so the contract is the strings "inf", "-inf" and "nan".
"""
from __future__ import annotations

import math


def number(x: float):
    """A float, or "inf" / "-inf" / "nan" where JSON has no number.

    Examples
    --------
    >>> number(2.5), number(float("inf"))
    (2.5, 'inf')
    """
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if math.isnan(x):
        return "nan"
    return float(x)
