"""The bias solve against textbook hand analysis and independent scipy solves of the same equations."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import elementary_charge, k as boltzmann
from scipy.optimize import brentq, fsolve

import solver
from solver.language import expr as ex
from solver.analysis.bias import BiasError, bias_circuit, solve_bias
from solver.analysis.bias import biased as biased_copy
from solver.diagnostics import InputError

VT = boltzmann * 300.0 / elementary_charge  # CODATA via scipy.constants
CIRCUITS = Path(__file__).resolve().parent.parent / "circuits"


def em(vbe, vbc, i_s=1e-15, bf=100.0, br=1.0, va=math.inf):
    """Ebers–Moll transport form with the Early factor, written out again for the references
    (Sedra & Smith, Microelectronic Circuits, 7th ed., 6.2 and 6.4, from memory)."""
    ebe, ebc = math.exp(vbe / VT), math.exp(vbc / VT)
    ic = i_s * (ebe - ebc) * (1 + (vbe - vbc) / va) - i_s / br * (ebc - 1)
    ib = i_s / bf * (ebe - 1) + i_s / br * (ebc - 1)
    return ic, ib


def biased(text):
    c = solver.loads(text)
    res = solve_bias(c)
    return biased_copy(c, res), res


FIXED = """
supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 10 mV, rs=1k
capacitor C1 (in, b) 10u
resistor RB (vcc, b) {rb}
resistor RC (vcc, c) {rc}
npn Q1 (c, b, gnd) beta=100{extra}
capacitor C2 (c, out) 10u
load RL (out, gnd) 10k
"""


def test_fixed_bias_matches_hand_analysis():
    # fixed bias with V_BE = 0.7 V: I_B = (V_CC - 0.7)/R_B, I_C = β I_B, V_CE = V_CC - I_C R_C
    # (Sedra & Smith, Microelectronic Circuits, 7th ed., section 6.3, from memory)
    c, r = biased(FIXED.format(rb="470k", rc="2k2", extra=""))
    ib = (12 - 0.7) / 470e3
    q = r.devices["Q1"]
    assert q["region"] == "active"
    assert q["ib"] == pytest.approx(ib, rel=0.02)
    assert q["ic"] == pytest.approx(100 * ib, rel=0.02)
    assert q["vce"] == pytest.approx(12 - 2.2e3 * 100 * ib, rel=0.02)
    assert r.iterations <= 30


def test_fixed_bias_matches_an_independent_scipy_solve():
    c, r = biased(FIXED.format(rb="330k", rc="3k3", extra=", is=4e-15, beta_r=2, va=75 V"))

    def kcl(x):
        vb, vc = x
        ic, ib = em(vb, vb - vc, 4e-15, 100.0, 2.0, 75.0)
        return [(12 - vb) / 330e3 - ib, (12 - vc) / 3.3e3 - ic]

    # scipy.optimize.fsolve (MINPACK hybrd) on the hand-written nodal equations
    vb, vc = fsolve(kcl, [0.7, 6.0], xtol=1e-14)
    assert r.nodes["b"] == pytest.approx(vb, rel=1e-9)
    assert r.nodes["c"] == pytest.approx(vc, rel=1e-9)
    assert r.devices["Q1"]["ic"] == pytest.approx((12 - vc) / 3.3e3, rel=1e-9)


FOUR = """
title "four-resistor bias"
supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 10 mV, rs=600
capacitor C1 (in, b) 10u
resistor R1 (vcc, b) 56k
resistor R2 (b, gnd) 12k
npn Q1 (c, b, e) beta=150{extra}
resistor RC (vcc, c) 3k3
resistor RE (e, gnd) 1k
capacitor CE (e, gnd) 220u
capacitor C2 (c, out) 10u
load RL (out, gnd) 10k
"""


def test_four_resistor_bias_matches_hand_analysis():
    # Thevenin base network: V_BB = V_CC R2/(R1+R2), R_BB = R1||R2,
    # I_E = (V_BB - 0.7)/(R_E + R_BB/(β+1)) (Sedra & Smith 7th ed., section 7.4.1, from memory)
    c, r = biased(FOUR.format(extra=""))
    vbb, rbb = 12 * 12 / 68, 56e3 * 12e3 / 68e3
    ie = (vbb - 0.7) / (1e3 + rbb / 151)
    ic = 150 / 151 * ie
    q = r.devices["Q1"]
    assert q["region"] == "active"
    assert q["ic"] == pytest.approx(ic, rel=0.03)
    assert r.nodes["e"] == pytest.approx(ie * 1e3, rel=0.03)
    assert r.nodes["c"] == pytest.approx(12 - 3.3e3 * ic, rel=0.03)


def test_four_resistor_bias_matches_an_independent_scipy_solve():
    c, r = biased(FOUR.format(extra=", va=90 V, beta_r=1.5, is=3e-15"))

    def kcl(x):
        vb, vc, ve = x
        ic, ib = em(vb - ve, vb - vc, 3e-15, 150.0, 1.5, 90.0)
        return [(12 - vb) / 56e3 - vb / 12e3 - ib,
                (12 - vc) / 3.3e3 - ic,
                ic + ib - ve / 1e3]

    vb, vc, ve = fsolve(kcl, [2.0, 7.0, 1.3], xtol=1e-14)
    for node, want in (("b", vb), ("c", vc), ("e", ve)):
        assert r.nodes[node] == pytest.approx(want, rel=1e-9)
    # the capacitor-coupled nodes carry no DC: the signal and load sides sit at 0 V
    assert r.nodes["in"] == 0.0 and r.nodes["out"] == 0.0


def test_saturation_is_detected():
    # I_B = 11.3 V/47 kΩ would need I_C = 24 mA, but R_C allows at most 2.6 mA: saturated
    # (Sedra & Smith 7th ed., section 6.1, from memory)
    c, r = biased(FIXED.format(rb="47k", rc="4k7", extra=""))
    q = r.devices["Q1"]
    assert q["region"] == "saturation"
    assert 0 < q["vce"] < 0.3
    assert q["ic"] / q["ib"] < 100  # forced beta below beta
    with pytest.raises(InputError) as e:
        bias_circuit(solver.loads(FIXED.format(rb="47k", rc="4k7", extra="")))
    assert "saturation" in e.value.diagnostics[0].message
    assert e.value.diagnostics[0].loc.line == 7  # the npn line


def test_cutoff_is_detected():
    # the base tied to ground through RB: V_BE = 0, no collector current, V_C = V_CC
    # (Sedra & Smith 7th ed., section 6.1, cutoff mode, from memory)
    text = FIXED.format(rb="470k", rc="2k2", extra="").replace("resistor RB (vcc, b)", "resistor RB (b, gnd)")
    c, r = biased(text)
    q = r.devices["Q1"]
    assert q["region"] == "cutoff"
    assert abs(q["ic"]) < 1e-12
    assert r.nodes["c"] == pytest.approx(12, abs=1e-6)


MOS = """
supply VDD (vdd, gnd) 12 V
signal VS (in, gnd) 10 mV, rs=10k
capacitor C1 (in, g) 100n
resistor RG1 (vdd, g) 3M3
resistor RG2 (g, gnd) 1M
nmos M1 (d, g, s) k=4 mA/V^2, vth=1 V{extra}
resistor RD (vdd, d) 4k7
resistor RS (s, gnd) 1k
capacitor CS (s, gnd) 100u
capacitor C2 (d, out) 1u
load RL (out, gnd) 47k
"""


def test_mosfet_divider_bias_matches_the_closed_form_quadratic():
    # I_D = (k/2)(V_G - I_D R_S - V_th)^2 solved for V_ov (Sedra & Smith 7th ed., section 5.4, from memory):
    # V_ov = (-1 + sqrt(1 + 2 k R_S (V_G - V_th))) / (k R_S)
    c, r = biased(MOS.format(extra=""))
    k, rs, vth = 4e-3, 1e3, 1.0
    vg = 12 * 1e6 / 4.3e6
    vov = (-1 + math.sqrt(1 + 2 * k * rs * (vg - vth))) / (k * rs)
    i_d = k / 2 * vov ** 2
    m = r.devices["M1"]
    assert m["region"] == "saturation"
    assert m["id"] == pytest.approx(i_d, rel=1e-9)
    assert m["vgs"] == pytest.approx(vov + vth, rel=1e-9)
    assert r.nodes["d"] == pytest.approx(12 - 4.7e3 * i_d, rel=1e-9)
    ss = c.devices[0].ss
    # gm = 2 I_D/V_ov = k V_ov in saturation (Sedra & Smith 7th ed., section 5.6, from memory)
    assert ss["gm"] == pytest.approx(k * vov, rel=1e-9)
    assert ss["ro"] == math.inf


def test_mosfet_with_channel_length_modulation_matches_scipy():
    c, r = biased(MOS.format(extra=", lambda=0.03"))
    k, lam = 4e-3, 0.03
    vg = 12 / 4.3

    def kcl(x):
        vd, vs = x
        i_d = k / 2 * (vg - vs - 1) ** 2 * (1 + lam * (vd - vs))
        return [(12 - vd) / 4.7e3 - i_d, i_d - vs / 1e3]

    vd, vs = fsolve(kcl, [7.0, 1.0], xtol=1e-14)
    assert r.nodes["d"] == pytest.approx(vd, rel=1e-9)
    assert r.nodes["s"] == pytest.approx(vs, rel=1e-9)
    i_d = vs / 1e3
    assert c.devices[0].ss["ro"] == pytest.approx(1 / (lam * i_d), rel=1e-9)  # ro = 1/(λ I_D)


def test_mosfet_triode_is_not_amplifying():
    # 47k drain resistor: V_DS < V_GS - V_th, the triode condition (Sedra & Smith 7th ed., 5.2, from memory)
    c, r = biased(MOS.format(extra="").replace("resistor RD (vdd, d) 4k7", "resistor RD (vdd, d) 47k"))
    assert r.devices["M1"]["region"] == "triode"
    assert r.devices["M1"]["vds"] < r.devices["M1"]["vgs"] - 1.0


PNP = """
supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 10 mV, rs=600
capacitor C1 (in, b) 10u
resistor R1 (vcc, b) 12k
resistor R2 (b, gnd) 56k
pnp Q1 (c, b, e) beta=120
resistor RE (vcc, e) 1k
resistor RC (c, gnd) 3k3
capacitor C2 (c, out) 10u
load RL (out, gnd) 10k
"""


def test_pnp_polarity_and_hand_analysis():
    # the npn analysis mirrored: I_E = (V_CC - V_BB - 0.7)/(R_E + R_BB/(β+1)) flowing into the emitter
    # (Sedra & Smith 7th ed., section 6.3, from memory)
    c, r = biased(PNP)
    q = r.devices["Q1"]
    vbb, rbb = 12 * 56 / 68, 12e3 * 56e3 / 68e3
    ie = (12 - vbb - 0.7) / (1e3 + rbb / 121)
    assert q["region"] == "active"
    assert q["ic"] < 0 and q["ib"] < 0 and q["vbe"] < 0 and q["vce"] < 0 and q["power"] > 0
    assert -q["ic"] == pytest.approx(120 / 121 * ie, rel=0.03)
    assert c.devices[0].ss["gm"] == pytest.approx(-q["ic"] / VT, rel=1e-12)


def test_pnp_circuit_is_the_mirror_of_the_npn_circuit():
    # complementary symmetry: every voltage and current changes sign (Sedra & Smith 7th ed., 6.2,
    # the pnp as the mirrored npn, from memory)
    npn = PNP.replace("pnp", "npn").replace("12 V", "-12 V")
    _, a = biased(PNP)
    _, b = biased(npn)
    assert set(a.nodes) == set(b.nodes) == {"b", "c", "e", "in", "out", "vcc"}
    for n, v in a.nodes.items():
        assert b.nodes[n] == pytest.approx(-v, rel=1e-10, abs=1e-12)
    assert b.devices["Q1"]["ic"] == pytest.approx(-a.devices["Q1"]["ic"], rel=1e-10)


def test_pmos_polarity_and_mirror():
    # the PMOS circuit is the NMOS one with every sign flipped (Sedra & Smith 7th ed., 5.1-5.2, from memory)
    pmos = (MOS.replace("nmos", "pmos").replace("12 V", "-12 V").replace("vth=1 V", "vth=-1 V"))
    _, a = biased(MOS.format(extra=""))
    _, b = biased(pmos.format(extra=""))
    m = b.devices["M1"]
    assert m["region"] == "saturation"
    assert m["id"] < 0 and m["vgs"] < 0 and m["vds"] < 0 and m["power"] > 0
    assert m["id"] == pytest.approx(-a.devices["M1"]["id"], rel=1e-10)
    # the threshold magnitude is accepted as well as the signed textbook value
    _, c = biased(pmos.replace("vth=-1 V", "vth=1 V").format(extra=""))
    assert c.devices["M1"]["id"] == pytest.approx(m["id"], rel=1e-12)


def test_diode_string_matches_a_scalar_root():
    text = """
supply V1 (a, gnd) 5 V
signal IS (k3, gnd) 1 uA
resistor R1 (a, k0) 1k
diode D1 (k0, k1) is=2e-9, n=1.9
diode D2 (k1, k2) is=2e-9, n=1.9
diode D3 (k2, gnd) is=2e-9, n=1.9
resistor RX (k3, gnd) 1M
output (k3, gnd)
"""
    c, r = biased(text)
    nvt = 1.9 * VT
    # 5 V = I R + 3 n V_T ln(1 + I/I_S) (Shockley equation, Sedra & Smith 7th ed., 4.2, from memory),
    # solved by scipy.optimize.brentq
    i = brentq(lambda i: i * 1e3 + 3 * nvt * math.log1p(i / 2e-9) - 5.0, 1e-9, 5e-3, xtol=1e-18, rtol=1e-15)
    assert r.devices["D1"]["id"] == pytest.approx(i, rel=1e-9)
    assert r.nodes["k0"] == pytest.approx(5 - i * 1e3, rel=1e-9)
    assert all(r.devices[d]["region"] == "forward" for d in ("D1", "D2", "D3"))
    # rd = n V_T / I_D (Sedra & Smith 7th ed., 4.3, from memory)
    assert c.devices[0].ss["rd"] == pytest.approx(nvt / i, rel=1e-9)


def test_convergence_on_a_supply_ramp():
    # 30 Newton iterations is the project's budget (common practice, no source); I_C rises with V_CC
    # through the Thevenin base network (Sedra & Smith 7th ed., section 7.4.1, from memory)
    ics = []
    for vcc in np.linspace(0.0, 30.0, 31):
        c = solver.loads(FOUR.format(extra=", va=90 V").replace("12 V", f"{float(vcc)!r} V"))
        r = solve_bias(c)
        assert r.iterations <= 30, vcc
        ics.append(r.devices["Q1"]["ic"])
        if vcc == 0:
            assert r.devices["Q1"]["region"] == "cutoff"
        if vcc == 12:
            assert r.devices["Q1"]["region"] == "active"
    assert all(b >= a - 1e-15 for a, b in zip(ics, ics[1:]))  # I_C grows with V_CC


@pytest.mark.parametrize("strategy", ["gmin", "source"])
def test_fallback_strategies_reach_the_same_point(strategy):
    # consistency check: three strategies for the same equations must meet at one operating point
    # (gmin and source stepping as in Vlach & Singhal, Computer Methods for Circuit Analysis and
    # Design, 2nd ed., chapter on nonlinear DC, from memory)
    c = solver.loads(FOUR.format(extra=", va=90 V"))
    plain = solve_bias(c, "newton")
    other = solve_bias(c, strategy)
    assert other.method == {"gmin": "gmin stepping", "source": "source stepping"}[strategy]
    assert set(other.nodes) == set(plain.nodes) == {"b", "c", "e", "in", "out", "vcc"}
    for n, v in plain.nodes.items():
        assert other.nodes[n] == pytest.approx(v, rel=1e-9, abs=1e-12)


def test_failure_names_the_node_and_device_furthest_from_settling():
    c = solver.loads(FOUR.format(extra=""))
    with pytest.raises(BiasError) as e:  # two iterations cannot settle an exponential junction
        solve_bias(c, "newton", max_iter=2)
    msg = str(e.value)
    assert "did not converge" in msg and "node '" in msg and "Q1 is furthest from settling" in msg
    assert e.value.loc.line == 8


def test_bias_derived_values_feed_solve_like_the_core_bias_form():
    # consistency check: the solved I_C fed back as ic= gives the same port quantities (both routes
    # use gm = I_C/V_T, ro = V_A/I_C, Sedra & Smith 7th ed., 7.2, from memory)
    text = FOUR.format(extra=", va=80 V")
    biased_result = solver.solve(solver.loads(text))
    ic = biased_result.bias.devices["Q1"]["ic"]
    given = solver.solve(solver.loads(text.replace("beta=150, va=80 V", f"ic={ic!r} A, beta=150, va=80 V")))
    assert given.bias is None
    assert set(given.quantities) == set(biased_result.quantities) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for q, z in biased_result.quantities.items():
        assert given.quantities[q] == pytest.approx(z, rel=1e-12), q


def test_bias_derived_gain_matches_the_midband_formula():
    # midband CE gain with the emitter bypassed: A_v = -gm (R_C || R_L || ro), R_in = R1 || R2 || rπ
    # (Sedra & Smith 7th ed., section 7.5.3, from memory); at 200 kHz the capacitors are near shorts
    res = solver.solve(solver.loads(FOUR.format(extra=", va=80 V")), at=200e3)
    ss = res.circuit.devices[0].ss
    par = lambda *r: 1 / sum(1 / x for x in r)  # noqa: E731
    assert res.quantities["Av"].real == pytest.approx(-ss["gm"] * par(3.3e3, 10e3, ss["ro"]), rel=0.01)
    assert res.quantities["Rin"].real == pytest.approx(par(56e3, 12e3, ss["rpi"]), rel=0.01)


def test_claims_may_name_bias_derived_values():
    text = FOUR.format(extra="") + "claim Av ~ -(RC || RL)*Q1.gm within 5%\nlet gain = -Q1.gm*RC\n"
    c = solver.loads(text)  # elaboration accepts names whose values need the bias
    b = solver.solve(c).circuit  # the biased copy resolves them
    res = b.resolver
    v = ex.evaluate(b.claims[0].expr, res.lookup(res.top))
    gm = b.devices[0].ss["gm"]
    assert c.devices[0].ss == {} and "Q1.gm" not in c.values  # the netlist's own circuit is unchanged
    assert v.x == pytest.approx(-(3.3e3 * 10e3 / 13.3e3) * gm, rel=1e-12)


def test_capacitor_only_node_is_tied_with_a_warning():
    # a capacitor is an open in the DC view (Sedra & Smith 7th ed., 7.4, from memory): node x floats
    text = MOS.format(extra="").replace("resistor RG2 (g, gnd) 1M", "resistor RG2 (g, gnd) 1M\n"
                                        "capacitor CX (g, x) 1n\ncapacitor CY (x, gnd) 1n")
    c, r = biased(text)
    assert any("x has no DC path" in w.message for w in r.warnings)
    assert r.nodes["x"] == 0.0


def test_force_keeps_going_and_warns():
    c = solver.loads(FIXED.format(rb="47k", rc="4k7", extra=""))
    _, res = bias_circuit(c, force=True)
    assert any("WARNING: Q1 is in saturation" in n for n in res.notes)


def test_mosfet_without_dc_parameters_is_an_input_error():
    c = solver.loads(MOS.format(extra="").replace("k=4 mA/V^2, vth=1 V", "lambda=0.01"))
    with pytest.raises(InputError) as e:
        solve_bias(c)
    assert "needs k=" in e.value.diagnostics[0].message and e.value.diagnostics[0].loc.line == 7


def test_some_bundled_examples_need_the_bias_solve():
    # the convergence test below skips examples that give their bias in the netlist; it must
    # not skip them all
    need = [p.name for p in sorted(CIRCUITS.glob("*.pw"))
            if any(solver.circuit.devices.needs_bias(d) for d in solver.load(p).devices)]
    assert len(need) >= 2, need


@pytest.mark.parametrize("path", sorted(CIRCUITS.glob("*.pw")), ids=lambda p: p.name)
def test_every_bundled_example_converges_within_30_iterations(path):
    # 30 iterations is the project's budget (common practice, no source)
    c = solver.load(path)
    if not c.devices or not any(solver.circuit.devices.needs_bias(d) for d in c.devices):
        pytest.skip("bias given in the netlist")
    r = solve_bias(c)
    assert r.iterations <= 30
    assert r.method == "newton"


def test_undetermined_node_keeps_a_small_gmin_and_says_so():
    # every gate at 0 V: all of the pair's transistors are cut off and the load mirror's
    # nodes are fixed by nothing but leakage; the solve keeps 1 pS and says so
    text = """
supply VDD (vdd, gnd) 5 V
signal VS (g1, gnd) 1 mV, rs=50
resistor RG (g1, gnd) 1M
supply IB (vdd, nb) 100 uA
nmos M3 (nb, nb, gnd) k=1 mA/V^2, vth=0.5 V
nmos M4 (t, nb, gnd) k=2 mA/V^2, vth=0.5 V
nmos M1 (d1, g1, t) k=2 mA/V^2, vth=0.5 V
nmos M2 (d2, g1, t) k=2 mA/V^2, vth=0.5 V
pmos M5 (d1, d1, vdd) k=1 mA/V^2, vth=-0.6 V
pmos M6 (d2, d1, vdd) k=1 mA/V^2, vth=-0.6 V
output (d2, gnd)
"""
    c, r = biased(text)
    assert r.method == "gmin stepping"
    assert any("1 pS from every node" in n for n in r.notes)
    # the mirror's reference current, set by the supply alone: I = (k/2)(V_GS - V_th)^2
    # (Sedra & Smith 7th ed., section 8.2, from memory)
    vgs = 0.5 + math.sqrt(2 * 100e-6 / 1e-3)
    assert r.nodes["nb"] == pytest.approx(vgs, rel=1e-6)
    assert r.devices["M1"]["region"] == "cutoff"


def test_bias_form_versus_exact_derivatives_of_the_model():
    # the core's bias form (gm = I_C/V_T, ro = V_A/I_C) against the exact Jacobian of the
    # Ebers–Moll model with the Early factor: gm agrees to the reverse-injection term, the
    # exact output resistance is (V_A + V_CE)/I_C (Sedra & Smith 7th ed., 6.4, from memory)
    from solver.circuit import dcmodels as dm
    c, r = biased(FOUR.format(extra=", va=90 V"))
    q, ss = r.devices["Q1"], c.devices[0].ss
    m = dm.BJTModel(i_s=1e-15, beta_f=150.0, va=90.0, vt=VT)
    p = dm.bjt(q["vbe"], q["vbe"] - q["vce"], m)
    exact_gm = p.dic_dvbe + p.dic_dvbc  # at constant V_CE
    exact_ro = 1 / -p.dic_dvbc  # at constant V_BE
    assert ss["gm"] == pytest.approx(exact_gm, rel=1e-6)
    assert exact_ro == pytest.approx((90 + q["vce"]) / q["ic"], rel=1e-6)
    assert ss["ro"] == pytest.approx(90 / q["ic"], rel=1e-12)


def test_inductor_is_a_short_in_the_dc_view():
    # an RF choke as collector load: at DC it is a short, so V_C = V_CC and the four-resistor
    # analysis of the emitter loop is unchanged (Sedra & Smith 7th ed., section 7.4, from memory)
    text = FOUR.format(extra="").replace("resistor RC (vcc, c) 3k3", "inductor LC (vcc, c) 10 mH")
    c, r = biased(text)
    assert r.nodes["c"] == pytest.approx(12.0, abs=1e-12)
    ref = biased(FOUR.format(extra=""))[1]
    assert r.nodes["e"] == pytest.approx(ref.nodes["e"], rel=1e-6)  # V_CE enters only through V_BC


def test_repeated_solves_reuse_the_bias_point():
    c = solver.loads(FIXED.format(rb="47k", rc="4k7", extra=""))
    a = solver.solve(c, force=True)
    b = solver.solve(c, at=10e3, force=True)
    assert b.bias.nodes == a.bias.nodes
    assert sum("WARNING" in n for n in b.notes) == 1  # the region warning is not repeated
    with pytest.raises(InputError):
        solver.solve(c)  # without --force the region check still applies


def test_reverse_active_is_detected():
    # collector and emitter exchanged: the collector junction is forward, the emitter junction
    # reverse (Sedra & Smith 7th ed., section 6.1, from memory)
    text = FOUR.format(extra="").replace("npn Q1 (c, b, e)", "npn Q1 (e, b, c)")
    c, r = biased(text)
    assert r.devices["Q1"]["region"] == "reverse"
    with pytest.raises(InputError):
        bias_circuit(solver.loads(text))


def test_mosfet_supply_ramp_converges_from_cutoff_into_saturation():
    # V_G = V_DD/4.3 passes V_th = 1 V near V_DD = 4.3 V: cutoff below, saturation above
    # (Sedra & Smith 7th ed., 5.2, from memory); 30 iterations is the project's budget (no source)
    regions = set()
    for vdd in np.linspace(0.0, 20.0, 21):
        c = solver.loads(MOS.format(extra=", lambda=0.02").replace("12 V", f"{float(vdd)!r} V"))
        r = solve_bias(c)
        assert r.iterations <= 30, vdd
        regions.add(r.devices["M1"]["region"])
    assert "cutoff" in regions and "saturation" in regions


def test_forced_triode_mosfet_takes_the_exact_square_law_derivatives():
    # in triode dI_D/dV_GS = k V_DS and dI_D/dV_DS = k (V_ov - V_DS) for λ = 0
    # (Sedra & Smith 7th ed., section 5.2, from memory)
    text = MOS.format(extra="").replace("resistor RD (vdd, d) 4k7", "resistor RD (vdd, d) 47k")
    c, res = bias_circuit(solver.loads(text), force=True)
    m = res.devices["M1"]
    assert m["region"] == "triode"
    ss = c.devices[0].ss
    vov = m["vgs"] - 1.0
    assert ss["gm"] == pytest.approx(4e-3 * m["vds"], rel=1e-12)
    assert ss["ro"] == pytest.approx(1 / (4e-3 * (vov - m["vds"])), rel=1e-12)


def test_region_thresholds_follow_the_saturation_current():
    # a large-area part (I_S = 1e-12 A) carries 100 µA at about 0.48 V: still active, not cut off;
    # the 0.5 V / 0.4 V figures (Sedra & Smith 7th ed., 6.1, from memory) are for I_S near 1e-15 A
    text = FIXED.format(rb="10M", rc="10k", extra=", is=1e-12")
    c, r = biased(text)
    q = r.devices["Q1"]
    assert q["vbe"] < 0.5
    assert q["region"] == "active"
