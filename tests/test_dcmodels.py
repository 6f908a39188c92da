"""The DC device models: currents against the textbook equations, Jacobians against finite differences."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import elementary_charge, k as boltzmann

from solver.circuit import dcmodels as dm

VT = boltzmann * 300.0 / elementary_charge  # CODATA via scipy.constants


def _fd(f, x, h=1e-7):
    """Central finite difference (the definition of the derivative; numpy only)."""
    x = np.asarray(x, float)
    cols = []
    for i in range(x.size):
        e = np.zeros_like(x)
        e[i] = h
        cols.append((np.asarray(f(x + e)) - np.asarray(f(x - e))) / (2 * h))
    return np.array(cols).T


def test_ebers_moll_currents_match_the_transport_form():
    # Ebers & Moll (Proc. IRE 1954) transport form with the Early factor, as in
    # Sedra & Smith, Microelectronic Circuits, 7th ed., section 6.2 and 6.4 (from memory)
    m = dm.BJTModel(i_s=2e-15, beta_f=120.0, beta_r=3.0, va=60.0, vt=VT)
    vbe, vbc = 0.68, -4.2
    p = dm.bjt(vbe, vbc, m)
    ebe, ebc = math.exp(vbe / VT), math.exp(vbc / VT)
    ic = 2e-15 * (ebe - ebc) * (1 + (vbe - vbc) / 60.0) - 2e-15 / 3.0 * (ebc - 1)
    ib = 2e-15 / 120.0 * (ebe - 1) + 2e-15 / 3.0 * (ebc - 1)
    assert p.ic == pytest.approx(ic, rel=1e-13)
    assert p.ib == pytest.approx(ib, rel=1e-13)


@pytest.mark.parametrize("pol,v", [(1, (0.65, -3.0)), (1, (0.72, 0.55)), (1, (-2.0, 0.6)),
                                   (-1, (-0.7, 4.0)), (-1, (-0.74, -0.6))])
def test_bjt_jacobian_matches_finite_differences(pol, v):
    m = dm.BJTModel(i_s=1e-15, beta_f=100.0, beta_r=2.0, va=50.0, vt=VT, polarity=pol)

    def f(x):
        p = dm.bjt(x[0], x[1], m)
        return [p.ic, p.ib]

    p = dm.bjt(*v, m)
    jac = np.array([[p.dic_dvbe, p.dic_dvbc], [p.dib_dvbe, p.dib_dvbc]])
    np.testing.assert_allclose(jac, _fd(f, v), rtol=1e-5, atol=1e-12)


def test_pnp_is_the_mirrored_npn():
    n = dm.BJTModel(i_s=1e-15, beta_f=80.0, va=40.0, vt=VT)
    p = dm.BJTModel(i_s=1e-15, beta_f=80.0, va=40.0, vt=VT, polarity=-1)
    a, b = dm.bjt(0.7, -3.0, n), dm.bjt(-0.7, 3.0, p)
    assert (b.ic, b.ib) == (-a.ic, -a.ib)


def test_diode_equation_and_conductance():
    # Shockley diode equation, Sedra & Smith 7th ed., section 4.2 (from memory)
    m = dm.DiodeModel(i_s=3e-14, n=1.6, vt=VT)
    i, g = dm.diode(0.62, m)
    assert i == pytest.approx(3e-14 * (math.exp(0.62 / (1.6 * VT)) - 1), rel=1e-13)
    assert g == pytest.approx(_fd(lambda x: [dm.diode(x[0], m)[0]], [0.62])[0, 0], rel=1e-6)


@pytest.mark.parametrize("pol,vgs,vds,region", [
    (1, 2.5, 6.0, "saturation"), (1, 2.5, 0.4, "triode"), (1, 0.5, 3.0, "cutoff"),
    (1, 2.5, -0.4, "triode"), (-1, -2.5, -6.0, "saturation"), (-1, -2.5, -0.4, "triode")])
def test_mos_square_law_and_jacobian(pol, vgs, vds, region):
    # square law, Sedra & Smith 7th ed., section 5.2 (from memory)
    m = dm.MOSModel(k=3e-3, vth=1.0, lam=0.02, polarity=pol)
    p = dm.mos(vgs, vds, m)
    assert p.region == region
    n_vgs, n_vds = pol * vgs, pol * vds
    if region == "saturation":
        assert pol * p.id == pytest.approx(1.5e-3 * (n_vgs - 1) ** 2 * (1 + 0.02 * n_vds), rel=1e-13)
    elif region == "triode" and n_vds > 0:
        assert pol * p.id == pytest.approx(3e-3 * ((n_vgs - 1) * n_vds - n_vds ** 2 / 2) * (1 + 0.02 * n_vds),
                                           rel=1e-13)
    elif region == "cutoff":
        assert p.id == 0.0
    jac = _fd(lambda x: [dm.mos(x[0], x[1], m).id], [vgs, vds])[0]
    np.testing.assert_allclose([p.gm, p.gds], jac, rtol=1e-5, atol=1e-12)


def test_mos_current_is_continuous_at_the_saturation_edge():
    # the triode and saturation expressions meet at V_DS = V_ov (Sedra & Smith 7th ed., 5.2, from memory)
    m = dm.MOSModel(k=2e-3, vth=0.8, lam=0.05)
    a, b = dm.mos(2.0, 1.2 - 1e-12, m), dm.mos(2.0, 1.2, m)
    assert a.region == "triode" and b.region == "saturation"
    assert a.id == pytest.approx(b.id, rel=1e-9)


def test_mos_is_symmetric_in_drain_and_source():
    # a symmetric device: exchanging D and S negates the current (Sedra & Smith 7th ed., 5.2, from memory)
    m = dm.MOSModel(k=2e-3, vth=0.8, lam=0.0)
    vg, vd, vs = 3.0, 0.2, 0.5
    assert dm.mos(vg - vs, vd - vs, m).id == pytest.approx(-dm.mos(vg - vd, vs - vd, m).id, rel=1e-13)


def test_bjt_regions_follow_the_junction_biases():
    # active: EBJ forward, CBJ reverse (or forward by < 0.4 V); Sedra & Smith 7th ed., 6.1 (from memory)
    assert dm.bjt_region(0.7, -5.0) == "active"
    assert dm.bjt_region(0.7, 0.3) == "active"
    assert dm.bjt_region(0.75, 0.6) == "saturation"
    assert dm.bjt_region(0.0, -5.0) == "cutoff"
    assert dm.bjt_region(-5.0, 0.7) == "reverse"
    assert dm.bjt_region(-0.7, 5.0, polarity=-1) == "active"
    assert dm.bjt_region(-0.75, -0.6, polarity=-1) == "saturation"


def test_junction_limiting_keeps_steps_on_the_exponential():
    # logarithmic limiting: the limited voltage carries the current the linear model predicted
    # (Vlach & Singhal, Computer Methods for Circuit Analysis and Design, ch. on nonlinear DC, from memory)
    vt, vold = VT, 0.65
    vcrit = dm.critical_voltage(1e-15, vt)
    vnew = 3.0
    lim = dm.limit_junction(vnew, vold, vt, vcrit)
    i_old = 1e-15 * math.exp(vold / vt)
    predicted = i_old + i_old / vt * (vnew - vold)  # the tangent line's current at vnew
    assert 1e-15 * math.exp(lim / vt) == pytest.approx(predicted, rel=1e-9)
    assert dm.limit_junction(0.66, vold, vt, vcrit) == 0.66  # small steps pass unchanged
    assert dm.limit_junction(-5.0, vold, vt, vcrit) == -5.0  # reverse steps pass unchanged


def test_exponential_continues_linearly_without_overflow():
    e, d = dm.exp_lin(1000.0)
    assert math.isfinite(e) and d == math.exp(dm.EXP_MAX)


# the Examples sections of dcmodels, bias and biasreport run in tests/test_doc_examples.py
