"""Large-signal DC models of the nonlinear devices: currents and their Jacobians.

Each model is a pure function of the terminal voltages that returns the
terminal currents and their partial derivatives, which is everything the
Newton–Raphson bias solve (:mod:`solver.analysis.bias`) needs. The p-type devices are
the n-type ones mirrored: with every voltage and current negated,
``I_pnp(v) = -I_npn(-v)``, so their Jacobians are the n-type Jacobians taken
at the mirrored voltages.

Models (textbook forms):

* BJT, Ebers–Moll transport form with the Early effect::

      I_C = I_S (e^{V_BE/V_T} - e^{V_BC/V_T}) (1 + V_CE/V_A) - (I_S/β_R)(e^{V_BC/V_T} - 1)
      I_B = (I_S/β_F)(e^{V_BE/V_T} - 1) + (I_S/β_R)(e^{V_BC/V_T} - 1)

* diode: ``I = I_S (e^{V/(n V_T)} - 1)``;
* MOSFET square law (with V_ov = V_GS - V_th)::

      saturation (V_DS >= V_ov):  I_D = (k/2) V_ov^2 (1 + λ V_DS)
      triode     (V_DS <  V_ov):  I_D = k (V_ov V_DS - V_DS^2/2)(1 + λ V_DS)
      cutoff     (V_ov <= 0):     I_D = 0

  with source and drain exchanged when V_DS < 0 (the device is symmetric).

References
----------
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., sections 4.2 (diode),
5.2 (MOSFET square law), 6.1-6.2 and 6.4 (BJT, Early effect) (from memory).
J. J. Ebers, J. L. Moll, "Large-signal behavior of junction transistors",
Proc. IRE 42(12), 1954.
J. Vlach, K. Singhal, *Computer Methods for Circuit Analysis and Design*, 2nd ed.,
chapter on nonlinear networks (Newton–Raphson, junction-voltage limiting) (from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

#: beyond this exponent the exponential continues as its tangent line, so that
#: a wild Newton step cannot overflow (the limiting keeps real steps far below)
EXP_MAX = 80.0


def exp_lin(x: float) -> tuple[float, float]:
    """e^x and its derivative, continued linearly above ``EXP_MAX``.

    Examples
    --------
    >>> exp_lin(0.0)
    (1.0, 1.0)
    """
    if x <= EXP_MAX:
        e = math.exp(x)
        return e, e
    e = math.exp(EXP_MAX)
    return e * (1.0 + x - EXP_MAX), e


# --- BJT ------------------------------------------------------------------------
@dataclass(frozen=True)
class BJTModel:
    """Ebers–Moll parameters: saturation current, forward/reverse β, Early voltage, V_T."""

    i_s: float = 1e-15
    beta_f: float = 100.0
    beta_r: float = 1.0
    va: float = math.inf
    vt: float = 0.025852
    polarity: int = 1  # +1 npn, -1 pnp


@dataclass(frozen=True)
class BJTPoint:
    """Currents into C and B (signed) and their partial derivatives in (V_BE, V_BC)."""

    ic: float
    ib: float
    dic_dvbe: float
    dic_dvbc: float
    dib_dvbe: float
    dib_dvbc: float


def _npn(vbe: float, vbc: float, m: BJTModel) -> BJTPoint:
    ebe, dbe = exp_lin(vbe / m.vt)
    ebc, dbc = exp_lin(vbc / m.vt)
    dbe /= m.vt
    dbc /= m.vt
    early = 1.0 + (vbe - vbc) / m.va  # V_CE = V_BE - V_BC; va = inf gives 1
    transport = m.i_s * (ebe - ebc)
    inv_va = 0.0 if math.isinf(m.va) else 1.0 / m.va
    ic = transport * early - m.i_s / m.beta_r * (ebc - 1.0)
    ib = m.i_s / m.beta_f * (ebe - 1.0) + m.i_s / m.beta_r * (ebc - 1.0)
    return BJTPoint(
        ic, ib,
        m.i_s * dbe * early + transport * inv_va,
        -m.i_s * dbc * early - transport * inv_va - m.i_s / m.beta_r * dbc,
        m.i_s / m.beta_f * dbe,
        m.i_s / m.beta_r * dbc,
    )


def bjt(vbe: float, vbc: float, m: BJTModel) -> BJTPoint:
    """Terminal currents of a BJT at (V_BE, V_BC), signed as for the device's polarity.

    Parameters
    ----------
    vbe, vbc : float
        Base-emitter and base-collector voltages (volts, as measured: negative
        for a forward-biased pnp).
    m : BJTModel

    Returns
    -------
    BJTPoint
        ``ic``, ``ib``: currents flowing into the collector and base terminals.

    Examples
    --------
    >>> p = bjt(0.7, -5.0, BJTModel(i_s=1e-15, beta_f=100.0))
    >>> round(p.ic / p.ib, 6)
    100.0
    >>> q = bjt(-0.7, 5.0, BJTModel(i_s=1e-15, beta_f=100.0, polarity=-1))
    >>> q.ic == -p.ic
    True
    """
    if m.polarity > 0:
        return _npn(vbe, vbc, m)
    p = _npn(-vbe, -vbc, m)
    # I(v) = -I_n(-v): the two sign changes cancel in the derivatives
    return BJTPoint(-p.ic, -p.ib, p.dic_dvbe, p.dic_dvbc, p.dib_dvbe, p.dib_dvbc)


# Region boundaries of Sedra & Smith (7th ed., section 6.1, from memory): the emitter
# junction conducts from about 0.5 V; the transistor stays active while the collector
# junction is forward biased by less than about 0.4 V. Those figures are for a small-signal
# silicon part; taken as I_S = 1e-15 A at 300 K, they are moved with I_S and V_T so that they
# stay at the same junction currents (common practice, no source).
V_BE_ON = 0.5
V_BC_SAT = 0.4
_I_S_REF, _VT_REF = 1e-15, 0.025852


def _threshold(v_ref: float, i_s: float, vt: float) -> float:
    """The junction voltage carrying the current that ``v_ref`` carries for the reference part."""
    return v_ref * vt / _VT_REF + vt * math.log(_I_S_REF / i_s)


def vce_sat(ic: float, m: BJTModel) -> float:
    """V_CE at the edge of saturation for a BJT carrying collector current ``ic`` (n-type magnitudes).

    The collector junction is then forward biased by the region boundary V_BC,sat of
    :func:`bjt_region` (0.4 V for the reference part, moved with I_S and V_T), and the
    Ebers–Moll transport equation at that V_BC gives the V_BE that carries ``ic``:
    e^{V_BE/V_T} = I_C/I_S + e^{V_BC/V_T} + (e^{V_BC/V_T} - 1)/β_R (the Early factor, within a
    few tenths of a volt of V_CE = 0, is left out). V_CE,sat = V_BE - V_BC.

    References
    ----------
    J. J. Ebers, J. L. Moll, "Large-signal behavior of junction transistors", Proc. IRE 42(12),
    1954; A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., section 6.1 (the
    saturation boundary), from memory.

    Examples
    --------
    >>> round(vce_sat(1e-3, BJTModel(i_s=1e-15, beta_f=100.0)), 3)
    0.314
    """
    vbc = _threshold(V_BC_SAT, m.i_s, m.vt)
    ebc = math.exp(vbc / m.vt)
    ebe = abs(ic) / m.i_s + ebc + (ebc - 1.0) / m.beta_r
    return m.vt * math.log(ebe) - vbc


def bjt_region(vbe: float, vbc: float, polarity: int = 1, i_s: float = _I_S_REF, vt: float = _VT_REF) -> str:
    """'active', 'saturation', 'cutoff' or 'reverse' from the junction biases.

    Examples
    --------
    >>> bjt_region(0.7, -5.0), bjt_region(0.75, 0.6), bjt_region(0.2, -5.0), bjt_region(-3.0, 0.7)
    ('active', 'saturation', 'cutoff', 'reverse')
    >>> bjt_region(-0.7, 5.0, polarity=-1)
    'active'
    >>> bjt_region(0.45, -5.0), bjt_region(0.45, -5.0, i_s=1e-12)  # a larger junction conducts sooner
    ('cutoff', 'active')
    """
    fe, fc = polarity * vbe, polarity * vbc
    emitter_on = fe >= _threshold(V_BE_ON, i_s, vt)
    collector_on = fc > _threshold(V_BC_SAT, i_s, vt)
    if emitter_on and not collector_on:
        return "active"
    if emitter_on and collector_on:
        return "saturation"
    if collector_on:
        return "reverse"
    return "cutoff"


# --- diode ------------------------------------------------------------------------
@dataclass(frozen=True)
class DiodeModel:
    i_s: float = 1e-14
    n: float = 1.0
    vt: float = 0.025852


def diode(v: float, m: DiodeModel) -> tuple[float, float]:
    """Diode current from anode to cathode and its conductance dI/dV at voltage ``v``.

    Examples
    --------
    >>> i, g = diode(0.0, DiodeModel())
    >>> i, round(g * 0.025852 / 1e-14, 9)  # g = I_S/V_T at zero bias
    (0.0, 1.0)
    """
    nvt = m.n * m.vt
    e, de = exp_lin(v / nvt)
    return m.i_s * (e - 1.0), m.i_s * de / nvt


# --- MOSFET -----------------------------------------------------------------------
@dataclass(frozen=True)
class MOSModel:
    """Square-law parameters: k = k'W/L (A/V²), threshold magnitude, λ."""

    k: float
    vth: float
    lam: float = 0.0
    polarity: int = 1  # +1 nmos, -1 pmos


@dataclass(frozen=True)
class MOSPoint:
    """Drain current (into D, signed), dI_D/dV_GS, dI_D/dV_DS, region and overdrive."""

    id: float
    gm: float
    gds: float
    region: str
    vov: float


def _nmos_forward(vgs: float, vds: float, m: MOSModel) -> tuple[float, float, float, str]:
    vov = vgs - m.vth
    if vov <= 0:
        return 0.0, 0.0, 0.0, "cutoff"
    clm = 1.0 + m.lam * vds
    if vds >= vov:
        core = 0.5 * m.k * vov * vov
        return core * clm, m.k * vov * clm, core * m.lam, "saturation"
    core = m.k * (vov * vds - 0.5 * vds * vds)
    return core * clm, m.k * vds * clm, m.k * (vov - vds) * clm + core * m.lam, "triode"


def _nmos(vgs: float, vds: float, m: MOSModel) -> MOSPoint:
    if vds >= 0:
        i, g1, g2, region = _nmos_forward(vgs, vds, m)
        return MOSPoint(i, g1, g2, region, vgs - m.vth)
    # drain and source exchange roles: I(vgs, vds) = -f(vgs - vds, -vds)
    i, g1, g2, region = _nmos_forward(vgs - vds, -vds, m)
    return MOSPoint(-i, -g1, g1 + g2, region, vgs - vds - m.vth)


def mos(vgs: float, vds: float, m: MOSModel) -> MOSPoint:
    """Drain current of a square-law MOSFET at (V_GS, V_DS), signed for its polarity.

    Examples
    --------
    >>> p = mos(2.0, 5.0, MOSModel(k=2e-3, vth=1.0))
    >>> p.id, p.region
    (0.001, 'saturation')
    >>> mos(-2.0, -5.0, MOSModel(k=2e-3, vth=1.0, polarity=-1)).id
    -0.001
    """
    if m.polarity > 0:
        return _nmos(vgs, vds, m)
    p = _nmos(-vgs, -vds, m)
    return MOSPoint(-p.id, p.gm, p.gds, p.region, p.vov)


# --- junction-voltage limiting ------------------------------------------------------
def critical_voltage(i_s: float, nvt: float) -> float:
    """The junction voltage above which Newton steps are damped: n V_T ln(n V_T / (√2 I_S))."""
    return nvt * math.log(nvt / (math.sqrt(2.0) * i_s))


def limit_junction(v_new: float, v_old: float, nvt: float, v_crit: float) -> float:
    """Damp a Newton step of a forward junction voltage (logarithmic limiting).

    Above the critical voltage a step larger than 2 n V_T is replaced by the
    voltage at which the exponential's current changes as the linear model
    predicted, which keeps the iteration from overshooting the exponential.
    (Vlach & Singhal, *Computer Methods for Circuit Analysis and Design*, chapter on
    nonlinear networks, from memory.)

    Examples
    --------
    >>> round(limit_junction(5.0, 0.6, 0.025852, 0.7), 4)
    0.733
    >>> limit_junction(0.61, 0.6, 0.025852, 0.7)
    0.61
    """
    if v_new > v_crit and abs(v_new - v_old) > 2.0 * nvt:
        if v_old > 0:
            arg = 1.0 + (v_new - v_old) / nvt
            return v_old + nvt * math.log(arg) if arg > 0 else v_crit
        return nvt * math.log(v_new / nvt)
    return v_new


def limit_mos(v_new: float, v_old: float, step: float = 2.0) -> float:
    """Bound a Newton step of a MOSFET's V_GS or V_DS to ``step`` volts (common practice, no source)."""
    if v_new > v_old + step:
        return v_old + step
    if v_new < v_old - step:
        return v_old - step
    return v_new
