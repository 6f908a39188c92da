"""Numbers with SI prefixes, IEC 60062 RKM codes and unit symbols; physical dimensions.

A dimension is a vector of exponents over the base (V, A, s, K): ohm is V/A,
farad A*s/V, hertz 1/s. Values the user writes as bare numbers carry no unit
and are accepted wherever a value goes ("free" numbers, see :mod:`solver.language.expr`).

References
----------
IEC 60062:2016, Marking codes for resistors and capacitors (the RKM code).
BIPM, The International System of Units (SI), 9th ed., 2019, sections 3 and 5.
"""
from __future__ import annotations

import math
import re
from fractions import Fraction

Dim = tuple  # (V, A, s, K) exponents as Fractions

def dim(v=0, a=0, s=0, k=0) -> Dim:
    return (Fraction(v), Fraction(a), Fraction(s), Fraction(k))

ONE = dim()
OHM = dim(v=1, a=-1)
VOLT = dim(v=1)
AMP = dim(a=1)
FARAD = dim(v=-1, a=1, s=1)
HENRY = dim(v=1, a=-1, s=1)
SIEMENS = dim(v=-1, a=1)
HERTZ = dim(s=-1)
KELVIN = dim(k=1)
WATT = dim(v=1, a=1)
A_PER_V2 = dim(v=-2, a=1)
PER_VOLT = dim(v=-1)
#: noise densities (one-sided amplitude spectral densities): V/sqrt(Hz), A/sqrt(Hz)
V_PER_RTHZ = dim(v=1, s=Fraction(1, 2))
A_PER_RTHZ = dim(a=1, s=Fraction(1, 2))

PREFIXES = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6,
            "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12}
UNITS = {"Ω": OHM, "ohm": OHM, "V": VOLT, "A": AMP, "F": FARAD, "H": HENRY, "S": SIEMENS,
         "Hz": HERTZ, "K": KELVIN, "W": WATT, "A/V^2": A_PER_V2, "A/V": SIEMENS, "/V": PER_VOLT,
         "V/√Hz": V_PER_RTHZ, "A/√Hz": A_PER_RTHZ, "V/rtHz": V_PER_RTHZ, "A/rtHz": A_PER_RTHZ}
# the RKM letter stands for the decimal point and scales the value (IEC 60062, 4k7 = 4.7e3)
RKM_LETTERS = {"R": 1.0, "K": 1e3, "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
               "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3}

_DEC = r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_RKM = r"\d+[RKkMGTpnuµμm]\d+"
_QUANTITY = re.compile(rf"(?P<rkm>{_RKM})|(?P<dec>{_DEC})")
_RKM_NAME = re.compile(r"[RKkMGTpnuµμm]\d+")

NAMES = {OHM: "Ω", VOLT: "V", AMP: "A", FARAD: "F", HENRY: "H", SIEMENS: "S", HERTZ: "Hz",
         KELVIN: "K", WATT: "W", A_PER_V2: "A/V^2", PER_VOLT: "1/V", ONE: "1",
         V_PER_RTHZ: "V/√Hz", A_PER_RTHZ: "A/√Hz"}


class UnitError(ValueError):
    pass


def parse_quantity(text: str) -> tuple[float, Dim | None]:
    """Parse one QUANTITY token: ``4.7k``, ``4.7 kΩ``, ``4k7``, ``100 nF``, ``5%``.

    Returns
    -------
    (value, dimension)
        ``dimension`` is None for a bare number (prefix only counts as bare).

    Examples
    --------
    >>> parse_quantity("4k7")
    (4700.0, None)
    >>> parse_quantity("1.2mA")[0]
    0.0012
    """
    m = _QUANTITY.match(text)
    if not m:
        raise UnitError(f"not a number: {text!r}")
    if m.group("rkm"):
        value = _rkm_value(m.group("rkm"))
    else:
        value = float(m.group("dec"))
    suffix = text[m.end():].strip()
    if not suffix:
        return value, None
    if m.group("rkm") and suffix[0] in PREFIXES and suffix not in UNITS:
        # 4k7k: the RKM letter is already the prefix (IEC 60062); a second one is a slip, not 4.7 M
        code, unit = m.group("rkm"), suffix[1:]
        raise UnitError(f"the RKM code {code} already carries its multiplier ({eng(_rkm_value(code))}); "
                        f"a prefix after it is not allowed: write {code}{unit}")
    if suffix == "%":
        return value * 0.01, ONE
    if suffix in UNITS:
        return value, UNITS[suffix]
    if suffix[0] in PREFIXES and suffix[1:] in UNITS:
        return value * PREFIXES[suffix[0]], UNITS[suffix[1:]]
    if suffix in PREFIXES:
        return value * PREFIXES[suffix], None
    raise UnitError(f"unknown unit {suffix!r}")


def _rkm_value(code: str) -> float:
    for i, ch in enumerate(code):
        if ch in RKM_LETTERS:
            return float(f"{code[:i]}.{code[i + 1:]}") * RKM_LETTERS[ch]
    raise UnitError(code)


def looks_like_rkm(name: str) -> bool:
    """True for a name that an RKM code with its leading digit left out would spell (``R9``, ``k7``).

    Such a name is a name, never a number: an RKM value starts with a digit (``0R9``), so
    an undefined ``R9`` is an error, not 0.9 Ω.

    Examples
    --------
    >>> looks_like_rkm("R9"), looks_like_rkm("RC"), looks_like_rkm("k47")
    (True, False, True)
    """
    return _RKM_NAME.fullmatch(name) is not None


def rkm_example(name: str) -> str:
    """What ``0`` + name means as an RKM code, in words (``R9`` -> ``0.9 Ω``)."""
    v = _rkm_value("0" + name)
    return eng(v, "Ω" if name[0] in "RKkMGT" else "")


def dim_name(d: Dim | None) -> str:
    """A readable unit for a dimension (``Ω``, ``A/V``, ``V^-1*A*s``)."""
    if d is None:
        return "a bare number"
    if d in NAMES:
        return NAMES[d]
    parts = []
    for sym, e in zip(("V", "A", "s", "K"), d):
        if e == 1:
            parts.append(sym)
        elif e:
            parts.append(f"{sym}^{e}")
    return "*".join(parts) or "1"


_ENG = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}


def eng(x: float, unit: str = "", digits: int = 4) -> str:
    """Engineering notation: ``eng(4700, 'Ω') == '4.7 kΩ'``.

    Examples
    --------
    >>> eng(0.0386817, "S")
    '38.68 mS'
    >>> eng(float("inf"), "Ω")
    '∞ Ω'
    """
    sep = " " if unit else ""
    if math.isnan(x):
        return "nan" + sep + unit
    if math.isinf(x):
        return ("∞" if x > 0 else "-∞") + sep + unit
    if x == 0:
        return "0" + sep + unit
    e = int(math.floor(math.log10(abs(x)) / 3) * 3)
    e = max(-15, min(12, e))
    if (not unit or "/" in unit) and -3 <= e <= 3 or unit in ("V/V", "A/A"):
        e = 0  # ratios and plain numbers take no prefix
    m = x / 10 ** e
    text = f"{m:.{digits}g}"
    if "e" in text:
        return f"{x:.{digits}g}{sep}{unit}"
    return f"{text}{sep}{_ENG[e]}{unit}"
