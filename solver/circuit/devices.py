"""Transistor small-signal parameters and their expansion into primitive elements.

Bias form (textbook relations, e.g. A. S. Sedra, K. C. Smith, *Microelectronic
Circuits*, 7th ed., sections 7.2 and 7.5 (BJT), 7.2.2 (MOSFET), from memory):

    V_T = k*T/q            (k, q: the exact SI values, equal to scipy.constants' CODATA k, e)
    gm = I_C/V_T,  rpi = beta/gm,  re = alpha/gm,  alpha = beta/(beta+1),  ro = V_A/I_C
    MOSFET: gm = 2*I_D/V_ov,  ro = 1/(lambda*I_D)
    cpi = gm/(2*pi*f_T) - cmu

The hybrid-pi and T models are two drawings of the same two-port: the tests
check that they give the same port quantities.
"""
from __future__ import annotations

import math

from solver.circuit.elements import CCCS, VCCS, Capacitor, Element, Resistor
from solver.circuit.model import Device

BJT_QUANTITIES = ("gm", "rpi", "ro", "re", "beta", "alpha", "rx", "cpi", "cmu", "ic", "vt", "ft")
MOS_QUANTITIES = ("gm", "ro", "gmb", "cgs", "cgd", "id", "vov", "lambda")
DIODE_QUANTITIES = ("rd", "id", "cj")


class DeviceError(ValueError):
    """A parameter set that does not define a device; ``key`` names the culprit parameter."""

    def __init__(self, message: str, key: str | None = None):
        super().__init__(message)
        self.key = key


#: Boltzmann constant k in J/K and elementary charge e in C. Both are exact by definition
#: since the 2019 revision of the SI (BIPM, The International System of Units, 9th ed.,
#: 2019, section 2.2), so CODATA 2018 and later list these very numbers. They are written
#: here rather than imported because importing scipy.constants pulls in scipy's array-API
#: layer (about 0.1 s at every start of the command line); tests/test_numbers.py checks
#: that they equal scipy.constants.k and scipy.constants.e exactly.
BOLTZMANN = 1.380649e-23
ELEMENTARY_CHARGE = 1.602176634e-19


def thermal_voltage(temp: float = 300.0) -> float:
    """V_T = k*T/q in volts (the exact SI k and e, equal to scipy.constants' CODATA values).

    Examples
    --------
    >>> round(thermal_voltage(300.0), 6)
    0.025852
    """
    return BOLTZMANN * temp / ELEMENTARY_CHARGE


def needs_bias(dev: Device) -> bool:
    """True when the device gives no operating point (no ic/gm, id/gm): the bias solve sets it."""
    p = dev.params
    if dev.is_bjt:
        return "ic" not in p and "gm" not in p
    if dev.is_mos:
        return "id" not in p and "gm" not in p
    return "id" not in p and "rd" not in p


def small_signal(dev: Device, op: dict | None = None) -> dict[str, float]:
    """Derive the small-signal parameters of a device from its evaluated parameters.

    Parameters
    ----------
    dev : Device
        ``dev.params`` holds the values the netlist gave (SI units).
    op : dict, optional
        For a device whose bias was solved, its operating point (ic, id, vov).

    Returns
    -------
    dict
        BJT: gm, rpi, ro, re, beta, alpha, rx, cpi, cmu (+ ic, vt);
        MOSFET: gm, ro, gmb, cgs, cgd (+ id, vov, lambda); inf marks an absent ro.

    Examples
    --------
    >>> d = Device("npn", "Q1", {"C": "c", "B": "b", "E": "e"}, {"ic": 1e-3, "beta": 100.0})
    >>> round(small_signal(d)["gm"], 5)
    0.03868
    """
    p = dict(dev.params)
    for key, val in (op or {}).items():
        if key in ("ic", "id", "vov") and isinstance(val, (int, float)):
            p.setdefault(key, abs(val))
    if dev.is_bjt:
        return _bjt(p)
    if dev.is_mos:
        return _mos(p, has_body=dev.nodes.get("B") not in (None, dev.nodes.get("S")))
    return _diode(p)


def _positive(p, key, allow_inf=False):
    v = p[key]
    if not (v > 0) or (not allow_inf and math.isinf(v)):
        raise DeviceError(f"{key} must be positive, got {v:g}", key)
    return v


def _bjt(p: dict) -> dict[str, float]:
    temp = p.get("temp", 300.0)
    if temp <= 0:
        raise DeviceError("temp must be positive (kelvin)", "temp")
    vt = thermal_voltage(temp)
    if "ic" in p and "gm" in p:
        raise DeviceError("give ic= (bias form) or gm= (direct form), not both", "gm")
    if "rpi" in p and "beta" in p:
        raise DeviceError("give rpi= or beta=, not both", "rpi")
    if "ic" in p:
        ic = abs(p["ic"])
        if ic == 0:
            raise DeviceError("ic must not be zero", "ic")
        gm = ic / vt
        if "rpi" in p:
            raise DeviceError("the bias form takes beta=, not rpi=", "rpi")
    elif "gm" in p:
        gm = _positive(p, "gm")
        ic = gm * vt
    else:
        raise DeviceError("needs an operating point: ic= (bias form) or gm= (direct form)")
    if "rpi" in p:
        rpi = _positive(p, "rpi")
        beta = gm * rpi
    else:
        beta = p.get("beta", 100.0)
        if not beta > 0:
            raise DeviceError("beta must be positive", "beta")
        rpi = beta / gm
    if "ro" in p and "va" in p:
        raise DeviceError("give ro= or va=, not both", "ro")
    if "ro" in p:
        ro = _positive(p, "ro", allow_inf=True)
    elif "va" in p:
        ro = _positive(p, "va", allow_inf=True) / ic
    else:
        ro = math.inf
    cmu = p.get("cmu", 0.0)
    if "ft" in p:
        if "cpi" in p:
            raise DeviceError("give cpi= or ft=, not both", "ft")
        cpi = gm / (2 * math.pi * _positive(p, "ft")) - cmu
        if cpi < 0:
            raise DeviceError(f"ft too high for this gm and cmu (cpi = {cpi:.3g} F)", "ft")
    else:
        cpi = p.get("cpi", 0.0)
    alpha = beta / (beta + 1)
    out = {"gm": gm, "rpi": rpi, "ro": ro, "re": alpha / gm, "beta": beta, "alpha": alpha,
           "rx": p.get("rx", 0.0), "cpi": cpi, "cmu": cmu, "ic": ic, "vt": vt}
    if cpi + cmu > 0:
        out["ft"] = gm / (2 * math.pi * (cpi + cmu))
    for key in ("rx", "cpi", "cmu"):
        if out[key] < 0:
            raise DeviceError(f"{key} must not be negative", key)
    return out


def _mos(p: dict, has_body: bool) -> dict[str, float]:
    if "id" in p and "gm" in p:
        raise DeviceError("give id= and vov= (bias form) or gm= (direct form), not both", "gm")
    if "id" in p:
        i_d = abs(p["id"])
        if i_d == 0:
            raise DeviceError("id must not be zero", "id")
        if "vov" not in p:
            raise DeviceError("the bias form needs vov= (overdrive voltage) beside id=", "id")
        vov = _positive(p, "vov")
        gm = 2 * i_d / vov
    elif "gm" in p:
        gm = _positive(p, "gm")
        i_d = p.get("id")
        vov = p.get("vov")
    else:
        raise DeviceError("needs an operating point: id= and vov= (bias form) or gm= (direct form)")
    if "ro" in p and "lambda" in p:
        raise DeviceError("give ro= or lambda=, not both", "ro")
    if "ro" in p:
        ro = _positive(p, "ro", allow_inf=True)
    elif "lambda" in p:
        lam = p["lambda"]
        if lam < 0:
            raise DeviceError("lambda must not be negative", "lambda")
        if i_d is None:
            raise DeviceError("lambda= needs id= to give ro; give ro= instead", "lambda")
        ro = math.inf if lam == 0 else 1 / (lam * i_d)
    else:
        ro = math.inf
    gmb = p.get("gmb", 0.0)
    if gmb and not has_body:
        raise DeviceError("gmb= needs the body terminal: (D, G, S, B)", "gmb")
    out = {"gm": gm, "ro": ro, "gmb": gmb, "cgs": p.get("cgs", 0.0), "cgd": p.get("cgd", 0.0)}
    if i_d is not None:
        out["id"] = i_d
    if vov is not None:
        out["vov"] = vov
    if "lambda" in p:
        out["lambda"] = p["lambda"]
    return out


def _diode(p: dict) -> dict[str, float]:
    """rd = n*V_T/I_D (Sedra & Smith, section 4.3, from memory), or rd= given directly."""
    if "rd" in p:
        return {"rd": _positive(p, "rd"), "cj": p.get("cj", 0.0)}
    if "id" not in p:
        raise DeviceError("needs an operating point: id= or rd=")
    i_d = abs(p["id"])
    if i_d == 0:
        raise DeviceError("id must not be zero", "id")
    vt = thermal_voltage(p.get("temp", 300.0))
    return {"rd": p.get("n", 1.0) * vt / i_d, "id": i_d, "cj": p.get("cj", 0.0)}


def expand(dev: Device) -> list[Element]:
    """The device's small-signal model as primitive elements.

    Node names of internal nodes are ``NAME:b`` (behind rx); symbol names are
    ``NAME.param`` so that the symbolic engine prints ``Q1.gm``.
    """
    ss = dev.ss or small_signal(dev)
    n = dev.name
    out: list[Element] = []

    def add(cls, key, nodes, **kw):
        v = ss.get(key, 0.0)
        if key in ("ro", "rpi", "re", "rd") and math.isinf(v):
            return None
        if key not in ("ro", "rpi", "re", "rd") and v == 0:
            return None
        e = cls(f"{n}.{key}", tuple(nodes), v, f"{n}.{key}", n, dev.loc, **kw)
        out.append(e)
        return e

    if dev.is_bjt:
        c, b, e = dev.nodes["C"], dev.nodes["B"], dev.nodes["E"]
        bi = f"{n}:b" if ss.get("rx", 0) > 0 else b
        add(Resistor, "rx", (b, bi))
        if dev.model == "t":
            re_ = add(Resistor, "re", (bi, e))
            ic = CCCS(f"{n}.alpha", (c, bi), ss["alpha"], f"{n}.alpha", n, dev.loc, sense=re_)
            out.append(ic)
        else:
            add(Resistor, "rpi", (bi, e))
            add(VCCS, "gm", (c, e), ctrl=(bi, e))
        add(Resistor, "ro", (c, e))
        add(Capacitor, "cpi", (bi, e))
        add(Capacitor, "cmu", (bi, c))
    elif dev.is_mos:
        d, g, s = dev.nodes["D"], dev.nodes["G"], dev.nodes["S"]
        add(VCCS, "gm", (d, s), ctrl=(g, s))
        if "B" in dev.nodes:
            add(VCCS, "gmb", (d, s), ctrl=(dev.nodes["B"], s))
        add(Resistor, "ro", (d, s))
        add(Capacitor, "cgs", (g, s))
        add(Capacitor, "cgd", (g, d))
    else:
        a, k = dev.nodes["A"], dev.nodes["K"]
        add(Resistor, "rd", (a, k))
        add(Capacitor, "cj", (a, k))
    return out
