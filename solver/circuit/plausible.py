"""Values that parse and have the right unit but are implausible for their role: warnings.

A netlist value is read exactly as written (``10m`` on a resistor is 10 mΩ), so a slip
of the prefix letter gives a legal but absurd circuit. These bounds flag the values no
small-signal stage uses and say what was probably meant; they never change a value.
The bounds are common practice, no source: a discrete or integrated amplifier stage
uses resistors from about 1 Ω to 1 GΩ, capacitors below 1 F, bias currents below
10 A and supplies below 10 kV.

Examples
--------
>>> implausible("resistor", 0.01, "10m")
'10 mΩ is implausible for a resistor (below 1 Ω); for megaohms write 10M'
>>> implausible("resistor", 4700.0, "4k7") is None
True
"""
from __future__ import annotations

import math
import re

from solver.language.units import eng

#: role -> (unit, lowest plausible magnitude, highest, what the role is called)
BOUNDS = {
    "resistor": ("Ω", 1.0, 1e9, "a resistor"),
    "load": ("Ω", 1.0, 1e9, "a load"),
    "rs": ("Ω", 0.0, 1e9, "a source resistance"),
    "capacitor": ("F", 0.0, 1.0, "a capacitor"),
    "inductor": ("H", 0.0, 1e3, "an inductor"),
    "supply_V": ("V", 0.0, 1e4, "a supply"),
    "supply_A": ("A", 0.0, 10.0, "a current supply"),
    "ic": ("A", 0.0, 10.0, "a transistor's bias current"),
    "id": ("A", 0.0, 10.0, "a bias current"),
}

_LITERAL = re.compile(r"[-+]?(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE](?P<exp>[+-]?\d+))?)[ \t]*(?P<prefix>[fpnuµμmkMGT]?)")


def implausible(role: str, value: float, text: str | None = None) -> str | None:
    """A warning message when ``value`` is implausible for ``role`` (a key of :data:`BOUNDS`), else None.

    ``text`` is the literal as written (``"10m"``, ``"1e6 A"``), when the value is one: it
    lets the message say what was probably meant.
    """
    if role not in BOUNDS or value == 0 or not math.isfinite(value):
        return None
    unit, low, high, what = BOUNDS[role]
    mag = abs(value)
    if low <= mag <= high:
        return None
    side = f"below {eng(low, unit)}" if mag < low else f"above {eng(high, unit)}"
    msg = f"{eng(value, unit)} is implausible for {what} ({side})"
    hint = _intent(role, mag, text, unit)
    return msg + (f"; {hint}" if hint else "")


def _intent(role: str, mag: float, text: str | None, unit: str) -> str:
    m = _LITERAL.match(text.strip()) if text else None
    if m is None:
        return ""
    num, exp, prefix = m.group("num"), m.group("exp"), m.group("prefix")
    base = num.split("e")[0].split("E")[0]
    if prefix == "m" and unit == "Ω":
        return f"for megaohms write {base}M"
    if exp and int(exp) > 0 and mag > 1 and unit == "A":
        return f"for {eng(float(base) * 10 ** -int(exp), unit)} write {base}e-{exp.lstrip('+')} A"
    if mag > 1 and unit == "Ω":
        return "an open circuit is written by leaving the element out"
    if not prefix and not exp and unit == "F" and mag > 1:
        return f"a capacitor value needs its prefix: {base}u is {eng(float(base) * 1e-6, 'F')}, {base}n is " \
               f"{eng(float(base) * 1e-9, 'F')}"
    if not prefix and not exp and unit == "A" and mag > 1:
        return f"a bias current needs its prefix: {base}m is {eng(float(base) * 1e-3, 'A')}"
    if not prefix and not exp and unit == "H" and mag > 1:
        return f"an inductor value needs its prefix: {base}m is {eng(float(base) * 1e-3, 'H')}, {base}u is " \
               f"{eng(float(base) * 1e-6, 'H')}"
    if prefix in ("m", "u", "µ", "μ", "n", "p", "f") and unit == "Ω":
        return f"for kiloohms write {base}k"
    return ""
