"""The IEC 60063 preferred-number series E6 to E192 and the standard values beside a number.

The tables are written out from IEC 60063:2015, *Preferred number series for resistors and
capacitors* (tables 1 and 2), from memory. E6, E12 and E24 have two significant figures;
E48, E96 and E192 three. Several values of E24 and below (27, 30, 33, 36, 39, 43, 47, 82)
and one of E192 (920) differ from the rounded geometric series 10^(i/n), as the standard
has them; tests/test_spread.py checks each table against the geometric series with exactly
those exceptions, and that E96 and E48 are every second and every fourth value of E192.
"""
from __future__ import annotations

import math

E6 = (10, 15, 22, 33, 47, 68)
E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91)
E192 = (100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123,
        124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
        154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189,
        191, 193, 196, 198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
        237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291,
        294, 298, 301, 305, 309, 312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
        365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448,
        453, 459, 464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
        562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673, 681, 690,
        698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
        866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988)
E96 = E192[::2]
E48 = E192[::4]
SERIES = {"E6": E6, "E12": E12, "E24": E24, "E48": E48, "E96": E96, "E192": E192}


def _decade_values(series: str):
    table = SERIES[series]
    return [v / table[0] for v in table]  # mantissas in [1, 10)


def neighbours(x: float, series: str = "E24") -> tuple[float, float]:
    """The standard values of ``series`` just below and just above ``x`` (both ``x`` on a value).

    Examples
    --------
    >>> neighbours(4600.0, "E24")
    (4300.0, 4700.0)
    >>> neighbours(4700.0, "E12")
    (4700.0, 4700.0)
    >>> neighbours(9.6e-9, "E6")
    (6.8e-09, 1e-08)
    """
    if series not in SERIES:
        raise ValueError(f"series is one of {', '.join(SERIES)}")
    if not (x > 0) or not math.isfinite(x):
        raise ValueError("a standard value is positive")
    mant = _decade_values(series)
    exp = math.floor(math.log10(x))
    below = above = None
    for e in (exp - 1, exp, exp + 1):
        for m in mant:
            v = float(f"{m * 10.0 ** e:.6g}")  # exact decimal, no binary residue (4.7e3, not 4700.000000001)
            if v <= x * (1 + 1e-9) and (below is None or v > below):
                below = v
            if v >= x * (1 - 1e-9) and (above is None or v < above):
                above = v
    if abs(below - x) <= 1e-9 * x:  # on a standard value, to the accuracy of a solve
        above = below
    elif abs(above - x) <= 1e-9 * x:
        below = above
    return below, above
