"""Differential pairs and supplies (issue 18): Acm, CMRR, supply rejection, headroom and swing.

Outside references, each beside its check:
* the long-tailed pair's half-circuit closed forms (A. S. Sedra, K. C. Smith, *Microelectronic
  Circuits*, 7th ed., sections 9.2-9.3 (BJT differential pair: Ad = gm RC/2 single-ended,
  Acm = -beta RC / (rpi + (beta+1) 2 RT)) and 9.5 (the active-loaded pair: Ad = gm (ro2 || ro4),
  Acm ~ -1/(2 gm3 RSS), CMRR ~ gm (ro2 || ro4) 2 gm3 RSS), from memory);
* a resistor network solved by superposition and Millman's theorem, written out here;
* a nodal matrix written by hand in the test and solved with numpy;
* a common-emitter load line worked by hand (Sedra & Smith, section 7.1 (maximum signal swing:
  down to VCE,sat, up to IC (RC || RL)), from memory), with the bias point iterated by hand
  from the Ebers-Moll law.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

import solver
from solver.analysis import scenarios
from solver.circuit.devices import thermal_voltage

VT = thermal_voltage(300.0)


def q(text: str, at=None) -> dict:
    return solver.solve(solver.loads(text), at).quantities


# --- the long-tailed pair -------------------------------------------------------------------
LTP = """
signal VD (b1, b2) 1 mV{rs}
npn QA (ca, b1, tail) ic={ic}, beta={beta}{model}
npn QB (cb, b2, tail) ic={ic}, beta={beta}{model}
resistor RT (tail, gnd) {rt}
resistor RCA (ca, gnd) {rca}
resistor RCB (cb, gnd) {rcb}
output {out}
"""


@pytest.mark.parametrize("model", ["", ", model=t"])
@pytest.mark.parametrize("rs", [0.0, 2e3])
def test_long_tailed_pair_single_ended_matches_the_half_circuit(model, rs):
    # Sedra & Smith 7th ed., 9.2-9.3 (from memory): single-ended output at QB's collector,
    # Ad = gm RC/2 and, from the common-mode half circuit (each half sees 2 RT in its emitter),
    # Acm = -beta RC / (rpi + (beta+1) 2 RT); the source's rs, split rs/2 per side, is in
    # series with rpi in the common-mode half circuit
    ic, beta, rc, rt = 0.5e-3, 100.0, 10e3, 20e3
    r = q(LTP.format(rs=f", rs={rs}" if rs else "", ic=ic, beta=beta, model=model, rt=rt, rca=rc, rcb=rc,
                     out="(cb, gnd)"))
    gm = ic / VT
    rpi = beta / gm
    acm = -beta * rc / (rs / 2 + rpi + (beta + 1) * 2 * rt)
    assert r["Avo"].real == pytest.approx(gm * rc / 2, rel=1e-9)
    assert r["Acm"].real == pytest.approx(acm, rel=1e-9)
    assert r["CMRR"].real == pytest.approx(20 * math.log10(abs(gm * rc / 2 / acm)), rel=1e-9)
    assert r["CMRR"].imag == 0


def test_matched_pair_with_differential_output_has_infinite_cmrr(cli, netlist):
    # a perfectly matched pair read differentially cancels any common-mode signal exactly
    text = LTP.format(rs=", rs=600", ic=1e-3, beta=150, model=", va=80 V", rt=15e3, rca=6.8e3, rcb=6.8e3,
                      out="(ca, cb)")
    r = q(text)
    assert r["Acm"] == 0 and math.isinf(r["CMRR"].real)
    out = cli("solve", netlist(text), "--json")
    assert out.returncode == 0, out.stderr
    obj = json.loads(out.stdout)["quantities"]
    assert obj["Acm"] == {"re": 0.0, "im": 0.0, "unit": "V/V"}
    assert obj["CMRR"] == {"re": "inf", "im": 0.0, "unit": "dB"}


def test_collector_mismatch_gives_the_half_circuit_common_mode_gain():
    # differential output, RCA != RCB: both halves carry the same common-mode collector current
    # beta v / (rpi + (beta+1) 2 RT) (ro infinite), so Acm = -beta (RCA - RCB) / (rpi + (beta+1) 2 RT)
    # (Sedra & Smith 7th ed., 9.3, from memory)
    ic, beta, rt, rca, rcb = 1e-3, 120.0, 10e3, 10.1e3, 9.9e3
    r = q(LTP.format(rs="", ic=ic, beta=beta, model="", rt=rt, rca=rca, rcb=rcb, out="(ca, cb)"))
    rpi = beta * VT / ic
    acm = -beta * (rca - rcb) / (rpi + (beta + 1) * 2 * rt)
    assert r["Acm"].real == pytest.approx(acm, rel=1e-9)
    ad = abs(r["Avo"])
    assert r["CMRR"].real == pytest.approx(20 * math.log10(ad / abs(acm)), rel=1e-9)


def test_single_ended_signal_has_no_common_mode_quantities():
    c = solver.loads("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) ic=1 mA\nresistor RC (c, gnd) 1k\n"
                     "output (c, gnd)\n")
    assert "Acm" not in scenarios.quantities(c) and "CMRR" not in scenarios.quantities(c)
    assert "differential signal" in scenarios.why_undefined(c, "Acm")
    assert "Acm" not in solver.solve(c).quantities


def test_derive_gives_acm_and_cmrr_symbolically():
    # the symbolic engine reads the same row: with the halves' symbols set equal, its Acm is the
    # half-circuit closed form identically (Sedra & Smith 7th ed., 9.3, from memory)
    import sympy
    from solver.analysis.symbolic.derive import derive
    from solver.analysis.symbolic.ports import symbol_values, symbolic_port_quantities
    c = solver.loads(LTP.format(rs=", rs=1k", ic=0.5e-3, beta=100, model="", rt=20e3, rca=10e3, rcb=10e3,
                                out="(cb, gnd)"))
    sq = symbolic_port_quantities(c, which=["Acm", "CMRR", "Avo"])
    gm, rpi, rc, rt, rs = sympy.symbols("gm rpi RC RT rs", positive=True)
    from solver.engine.symbolic.determinants import symbol
    same = {symbol(n): v for n, v in (("QA.gm", gm), ("QB.gm", gm), ("QA.rpi", rpi), ("QB.rpi", rpi),
                                            ("RCB", rc), ("RT", rt), ("VD.rs", rs))}
    acm = sq["Acm"].expr().xreplace(same)
    beta = gm * rpi
    assert sympy.simplify(acm - (-beta * rc / (rs / 2 + rpi + (beta + 1) * 2 * rt))) == 0
    values = symbol_values(c)
    num = solver.solve(c).quantities
    assert sq["CMRR"].value(values).real == pytest.approx(num["CMRR"].real, rel=1e-9)
    d = {x.quantity: x for x in derive(c, ["Acm", "CMRR"])}
    assert d["CMRR"].plain.startswith("20*log10(abs(")
    assert "RT" in d["Acm"].plain and "VD.rs" in d["Acm"].plain


def test_claims_on_acm_and_cmrr_are_checked():
    from solver.analysis.symbolic.claims import check_claims
    text = LTP.format(rs="", ic=0.5e-3, beta=100, model="", rt=20e3, rca=10e3, rcb=10e3, out="(cb, gnd)")
    # Sedra & Smith 7th ed., 9.3 (from memory): CMRR ~ gm RT for a single-ended output and RT >> re
    text += ("claim Acm ~ -QB.beta*RCB/(QB.rpi + (QB.beta+1)*2*RT) within 0.1%\n"
             "claim CMRR ~ 20*log10(QA.gm*RT) within 2%\n")
    verdicts = check_claims(solver.loads(text), 0.0)
    assert [v.holds for v in verdicts] == [True, True]
    assert verdicts[1].value.real == pytest.approx(q(text)["CMRR"].real)


# --- the current-mirror-loaded pair ---------------------------------------------------------
MIRROR = """
signal VS (g1, g2) 1 mV
resistor RG1 (g1, gnd) 1M
resistor RG2 (g2, gnd) 1M
supply VDD (vdd, gnd) 1.8 V
nmos M1 (d1, g1, tail) id=100 uA, vov=0.2 V, lambda=0.1 /V
nmos M2 (out, g2, tail) id=100 uA, vov=0.2 V, lambda=0.1 /V
pmos M3 (d1, d1, vdd) id=100 uA, vov=0.25 V, lambda=0.1 /V
pmos M4 (out, d1, vdd) id=100 uA, vov=0.25 V, lambda=0.1 /V
resistor RSS (tail, gnd) 200k
output (out, gnd)
"""


def _mirror_pair_by_hand(vg1, vg2, vdd):
    """v_out of the mirror-loaded pair: KCL at d1, out and tail written out, solved with numpy.

    Small-signal square law: gm = 2 ID / Vov, ro = 1 / (lambda ID) (Sedra & Smith 7th ed., 5.4,
    from memory). Each transistor's current from drain to source is gm (vg - vs) + (vd - vs)/ro.
    """
    gm, gm3, ro, rss = 2 * 100e-6 / 0.2, 2 * 100e-6 / 0.25, 1 / (0.1 * 100e-6), 200e3
    g = 1 / ro
    A = np.array([[g + gm3 + g, 0.0, -gm - g],
                  [gm3, g + g, -gm - g],
                  [g, g, -2 * gm - 2 * g - 1 / rss]])
    b = np.array([-gm * vg1 + (gm3 + g) * vdd, -gm * vg2 + (gm3 + g) * vdd, -gm * vg1 - gm * vg2])
    vd1, vout, vt = np.linalg.solve(A, b)
    return vout


def test_current_mirror_loaded_pair_against_a_hand_nodal_solve_and_the_textbook():
    r = q(MIRROR)
    # equal gate resistors centre the floating differential source: g1 = +1/2, g2 = -1/2
    ad = _mirror_pair_by_hand(0.5, -0.5, 0.0)
    acm = _mirror_pair_by_hand(1.0, 1.0, 0.0)
    a_vdd = _mirror_pair_by_hand(0.0, 0.0, 1.0)
    assert r["Avo"].real == pytest.approx(ad, rel=1e-9)
    assert r["Acm"].real == pytest.approx(acm, rel=1e-9)
    assert r["CMRR"].real == pytest.approx(20 * math.log10(abs(ad / acm)), rel=1e-9)
    res = solver.solve(solver.loads(MIRROR))
    rej = res.supply_rejection["VDD"]
    assert rej["gain"].real == pytest.approx(a_vdd, rel=1e-9)
    assert rej["psrr_db"] == pytest.approx(20 * math.log10(abs(ad / a_vdd)), rel=1e-9)
    # the textbook approximations (Sedra & Smith 7th ed., 9.5, from memory), good to a few percent
    gm, gm3, ro, rss = 1e-3, 0.8e-3, 1e5, 200e3
    assert r["Avo"].real == pytest.approx(gm * ro / 2, rel=0.02)
    assert r["Acm"].real == pytest.approx(-1 / (2 * gm3 * rss), rel=0.04)
    assert r["CMRR"].real == pytest.approx(20 * math.log10(gm * ro / 2 * 2 * gm3 * rss), abs=0.3)


# --- supply rejection -----------------------------------------------------------------------
DIVIDER = """
supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 1 V, rs={rs}
resistor R3 (in, out) {r3}
resistor R1 (vcc, out) {r1}
resistor R2 (out, gnd) {r2}
capacitor C2 (out, gnd) {c2}
load RL (out, gnd) {rl}
"""


def _divider_by_hand(f, rs, r1, r2, r3, c2, rl):
    """(Av, A_supply) of the divider by Millman's theorem at node out (the superposition of the
    sources through their admittances; P. Horowitz, W. Hill, *The Art of Electronics*, 3rd ed.,
    section 1.2 (Thevenin's theorem), from memory)."""
    y2 = 1 / r2 + 2j * math.pi * f * c2 + 1 / rl
    y1, y3 = 1 / r1, 1 / (rs + r3)
    total = y1 + y2 + y3
    v_out_sig = y3 / total                       # signal at 1 V, supply zeroed
    v_in = 1 - rs * (1 - v_out_sig) / (rs + r3)  # the signal port's voltage, after rs
    return v_out_sig / v_in, y1 / total


@pytest.mark.parametrize("rs", [0.0, 1e3])
def test_divider_supply_rejection_matches_the_closed_form(rs):
    vals = dict(rs=rs, r1=47e3, r2=10e3, r3=4.7e3, c2=100e-9, rl=22e3)
    res = solver.solve(solver.loads(DIVIDER.format(**vals)), 1e3)
    av, a_sup = _divider_by_hand(1e3, **vals)
    assert res.quantities["Av"] == pytest.approx(av, rel=1e-9)
    rej = res.supply_rejection["VCC"]
    assert rej["gain"] == pytest.approx(a_sup, rel=1e-9)
    assert rej["psrr_db"] == pytest.approx(20 * math.log10(abs(av / a_sup)), rel=1e-9)
    if rs == 0:  # without rs the ratio is the two resistors' own: PSRR = 20 log10 (R1/R3)
        assert rej["psrr_db"] == pytest.approx(20 * math.log10(vals["r1"] / vals["r3"]), rel=1e-9)


def test_sweep_supply_gives_psrr_over_frequency(cli, netlist, tmp_path):
    vals = dict(rs=1e3, r1=47e3, r2=10e3, r3=4.7e3, c2=100e-9, rl=22e3)
    p = netlist(DIVIDER.format(**vals))
    out = cli("sweep", p, "--from", "10Hz", "--to", "100kHz", "--per-decade", "3", "--supply", "VCC", "--json",
              "--csv", str(tmp_path / "psrr.csv"))
    assert out.returncode == 0, out.stderr
    obj = json.loads(out.stdout)
    assert obj["supply"] == "VCC"
    for pt in obj["points"]:
        av, a_sup = _divider_by_hand(pt["f"], **vals)
        assert complex(pt["re"], pt["im"]) == pytest.approx(a_sup, rel=1e-9)
        assert pt["psrr_db"] == pytest.approx(20 * math.log10(abs(av / a_sup)), rel=1e-9)
    rows = (tmp_path / "psrr.csv").read_text().splitlines()
    assert rows[0].endswith(",psrr_db") and len(rows) == len(obj["points"]) + 1
    assert float(rows[1].split(",")[-1]) == pytest.approx(obj["points"][0]["psrr_db"], rel=1e-9)
    assert obj["summary"]["psrr_min_db"] == min(pt["psrr_db"] for pt in obj["points"])
    text = cli("sweep", p, "--from", "10Hz", "--to", "100kHz", "--supply", "VCC")
    assert "PSRR" in text.stdout
    bad = cli("sweep", p, "--from", "10Hz", "--to", "100kHz", "--supply", "VEE")
    assert bad.returncode == 2 and "no supply 'VEE'" in bad.stderr


def test_solve_json_has_supply_rejection_for_every_supply(cli, netlist):
    out = cli("solve", netlist(DIVIDER.format(rs=0, r1=47e3, r2=10e3, r3=4.7e3, c2=1e-9, rl=22e3)
                               + "supply IX (vcc, out) 1 uA\n"), "--json", "--at", "1kHz")
    assert out.returncode == 0, out.stderr
    sr = json.loads(out.stdout)["supply_rejection"]
    assert set(sr) == {"VCC", "IX"}
    assert set(sr["VCC"]) == {"gain", "psrr_db"} and sr["VCC"]["gain"]["unit"] == "V/V"
    assert sr["IX"]["gain"]["unit"] == "ohm" and sr["IX"]["psrr_db"] is None


# --- headroom and swing ---------------------------------------------------------------------
CE = """
title "CE stage, divider bias, bypassed emitter"
supply VCC (vcc, gnd) 12 V
signal VS (sig, gnd) {amp}, rs=50
capacitor CIN (sig, b) 100u
resistor R1 (vcc, b) 68k
resistor R2 (b, gnd) 12k
npn Q1 (c, b, e) beta=100
resistor RC (vcc, c) 4.7k
resistor RE (e, gnd) 1k
capacitor CE (e, gnd) 10m
capacitor CO (c, out) 100u
load RL (out, gnd) 10k
"""


def _ce_by_hand():
    """The CE bias point iterated by hand: Thevenin base, Ebers-Moll junction, KVL round the base.

    I_C = I_S e^{VBE/VT} (forward active, I_S = 1e-15 A), I_B = I_C/beta, and
    VBB = I_B RB + VBE + (I_C + I_B) RE (Sedra & Smith 7th ed., 6.4 and 7.1, from memory).
    """
    vbb, rb = 12 * 12 / 80, 68e3 * 12e3 / 80e3
    beta, i_s, re, rc = 100.0, 1e-15, 1e3, 4.7e3
    ic = 1e-3
    for _ in range(200):
        vbe = VT * math.log(ic / i_s)
        ic = (vbb - vbe) / (rb / beta + re * (1 + 1 / beta))
    vce = 12 - ic * rc - ic * (1 + 1 / beta) * re
    # the edge of saturation (V_BC = 0.4 V for this I_S at 300 K): e^{VBE/VT} = IC/IS + e^{VBC/VT}(1 + 1/beta_R)
    # - 1/beta_R with beta_R = 1 (Ebers-Moll transport form)
    vbc = 0.4 * VT / 0.025852
    vce_sat = VT * math.log(ic / i_s + 2 * math.exp(vbc / VT) - 1) - vbc
    return ic, vce, vce_sat


def test_common_emitter_swing_matches_the_hand_load_line(cli, netlist):
    ic, vce, vce_sat = _ce_by_hand()
    r_ac = 4.7e3 * 10e3 / 14.7e3          # RC || RL: RE bypassed, coupling capacitors shorts
    out = cli("bias", netlist(CE.format(amp="1 mV")), "--json")
    assert out.returncode == 0, out.stderr
    obj = json.loads(out.stdout)
    h = obj["headroom"]["Q1"]
    assert h["vsat_source"] == "ebers-moll"
    assert h["vce_sat_v"] == pytest.approx(vce_sat, rel=1e-6)
    assert h["saturation_v"] == pytest.approx(vce - vce_sat, rel=1e-5)
    assert h["cutoff_v"] == pytest.approx(ic * r_ac, rel=1e-3)  # the capacitors are not quite shorts
    sw = obj["swing"]
    assert sw["node"] == "out"
    assert sw["up_v"] == pytest.approx(ic * r_ac, rel=1e-3)     # up: the collector current reaches 0
    assert sw["down_v"] == pytest.approx(vce - vce_sat, rel=1e-3)  # down: the collector reaches VCE,sat
    assert "clips" not in out.stderr


def test_swing_warning_when_the_signal_asks_for_more(cli, netlist):
    p = netlist(CE.format(amp="100 mV"))
    out = cli("bias", p)
    assert out.returncode == 0, out.stderr
    assert "warning:" in out.stderr and "the stage clips" in out.stderr
    assert "output swing at out" in out.stdout and "it clips" in out.stdout
    g = abs(solver.solve(solver.load(p)).quantities["Gv"])
    sw = solver.headroom(p).swing
    assert sw.needed_v == pytest.approx(0.1 * g, rel=1e-6) and sw.symmetric_v < sw.needed_v


def test_given_device_uses_the_textbook_saturation_voltage():
    # a BJT given by its operating point has no junction model: VCE,sat = 0.2 V (Sedra & Smith 7th ed.,
    # 6.1, from memory); the bias solve still gives its VCE
    c = solver.loads("supply VCC (vcc, gnd) 10 V\nsupply IB (vcc, b) 10 uA\n"
                     "npn Q1 (c, b, gnd) ic=1 mA, beta=100\nresistor RC (vcc, c) 4k\n")
    h = solver.headroom(c)
    d = h.devices["Q1"]
    assert d.vsat_source.startswith("given") and d.vsat_v == 0.2
    assert d.cutoff_v == pytest.approx(1e-3 * 4e3, rel=1e-9)  # the given ic times RC
    assert json.loads(h.to_json())["swing"] is None  # no signal, no output port


def test_pnp_and_mosfet_margins_are_magnitudes():
    # mirrored devices read like their n-type twins (the DC models are mirrored: I_p(v) = -I_n(-v))
    n = solver.headroom(solver.loads("supply VCC (vcc, gnd) 10 V\nsupply IB (vcc, b) 10 uA\n"
                                     "npn Q1 (c, b, gnd) beta=100\nresistor RC (vcc, c) 4k\n"))
    p = solver.headroom(solver.loads("supply VEE (vee, gnd) -10 V\nsupply IB (b, vee) 10 uA\n"
                                     "pnp Q1 (c, b, gnd) beta=100\nresistor RC (vee, c) 4k\n"))
    for k in ("saturation_v", "cutoff_v", "vsat_v"):
        assert getattr(p.devices["Q1"], k) == pytest.approx(getattr(n.devices["Q1"], k), rel=1e-9)
    m = solver.headroom(solver.loads("supply VDD (vdd, gnd) 10 V\nsupply VG (g, gnd) 2 V\n"
                                     "nmos M1 (d, g, gnd) k=2 mA/V^2, vth=1 V\nresistor RD (vdd, d) 5k\n"))
    # square law: ID = k/2 (VGS - Vth)^2 = 1 mA, VDS = 10 - 5 = 5 V, Vov = 1 V (Sedra & Smith 5.2, from memory)
    d = m.devices["M1"]
    assert d.saturation_v == pytest.approx(5 - 1, rel=1e-9) and d.cutoff_v == pytest.approx(5.0, rel=1e-9)


# --- where the quantities are not defined -------------------------------------------------------
def test_acm_is_refused_where_undefined(cli, netlist):
    single = netlist("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) ic=1 mA\nresistor RC (c, gnd) 1k\n"
                     "output (c, gnd)\n", "single.pw")
    r = cli("derive", single, "Acm")
    assert r.returncode == 2 and "differential signal" in r.stderr
    r = cli("sweep", single, "--from", "1Hz", "--to", "1kHz", "--quantity", "CMRR")
    assert r.returncode == 2
    # a signal node held by a supply: the common-mode drive fights the supply's short, so Acm and
    # CMRR are left out of solve (with a note) and refused by derive and by a claim
    held = netlist("supply VCC (vcc, gnd) 9 V\nsignal VS (a, vcc) 1 mV\nresistor R1 (a, gnd) 1k\n"
                   "resistor R2 (a, b) 1k\nresistor R3 (b, gnd) 1k\noutput (b, gnd)\n", "held.pw")
    res = solver.solve(solver.load(held))
    assert "Acm" not in res.quantities and any("common-mode is singular" in n for n in res.notes)
    assert res.quantities["Av"].real == pytest.approx(0.5)  # R3/(R2 + R3)
    r = cli("derive", held, "Acm")
    assert r.returncode == 2 and "common-mode is singular" in r.stderr
    held.write_text(held.read_text() + "claim Acm ~ 0 within 1%\n")
    r = cli("check", held)
    assert r.returncode == 2 and "held.pw:7:7: error: claim on Acm" in r.stderr


def test_solve_report_shows_cmrr_psrr_and_headroom(cli):
    demo = str(Path(__file__).resolve().parents[1] / "circuits" / "loadcell_diffpair.pw")
    r = cli("solve", demo)
    assert r.returncode == 0, r.stderr
    for text in ("Acm ", "CMRR ", "supply rejection", "PSRR", "headroom", "output swing at cb"):
        assert text in r.stdout
    obj = json.loads(cli("solve", demo, "--json").stdout)
    assert set(obj["bias"]["swing"]) >= {"node", "up_v", "down_v"}
    assert obj["bias"]["headroom"]["QA"]["vsat_source"] == "ebers-moll"


def test_symbolic_supply_gain_is_the_millman_form(cli, netlist):
    # the symbolic engine reads the supply's configuration of the table: the divider's supply gain
    # is Y1/(Y1 + Y2 + Y3) identically (Millman's theorem, Horowitz & Hill 3rd ed., 1.2, from memory)
    import sympy
    from solver.analysis.symbolic.ports import symbolic_port_quantities
    from solver.engine.symbolic.determinants import symbol
    text = DIVIDER.format(rs=1e3, r1=47e3, r2=10e3, r3=4.7e3, c2=100e-9, rl=22e3)
    sq = symbolic_port_quantities(solver.loads(text), which=["supply:VCC"])["supply:VCC"]
    r1, r2, r3, c2, rl, rs, s = (symbol(n) for n in ("R1", "R2", "R3", "C2", "RL", "VS.rs", "s"))
    y1 = 1 / r1
    millman = y1 / (y1 + 1 / r2 + s * c2 + 1 / rl + 1 / (rs + r3))
    assert sympy.simplify(sq.expr() - millman) == 0
    out = cli("derive", netlist(text), "--supply", "VCC", "--json")
    assert out.returncode == 0, out.stderr
    obj = json.loads(out.stdout)
    assert obj["supply"] == "VCC" and obj["quantity"] == "supply:VCC"


def test_monte_carlo_cmrr_equals_solve_sample_by_sample():
    # the batched evaluation of spread/tune forms CMRR from its Avo and Acm rows like solve does:
    # each sample against the ordinary pipeline on a netlist carrying that sample's values
    # (mismatched collector resistors and source resistance: the rs || rs halves follow VB.rs)
    from solver.analysis.pipeline import prepare
    from solver.analysis.variation import Evaluator, knob
    text = (Path(__file__).resolve().parents[1] / "circuits" / "loadcell_diffpair.pw").read_text()
    c = solver.loads(text)
    ev = Evaluator(c, prepare(c), 0.0, ["CMRR", "Acm", "Avo"])
    vals = {"RCA": np.array([21.5e3, 22e3, 22.6e3]), "RCB": np.array([22.4e3, 22e3, 21.7e3]),
            "VB.rs": np.array([500.0, 1e3, 2e3])}
    got = ev.run({knob(c, k): v for k, v in vals.items()}, 3)
    assert got.valid.all()
    for i in range(3):
        t = text.replace("RCA (vcc, ca) 22k", f"RCA (vcc, ca) {vals['RCA'][i]}") \
                .replace("RCB (vcc, cb) 22k", f"RCB (vcc, cb) {vals['RCB'][i]}") \
                .replace("rs=1k", f"rs={vals['VB.rs'][i]}")
        ref = solver.solve(solver.loads(t), 0.0).quantities
        for q in ("Acm", "Avo", "CMRR"):
            assert abs(got.quantities[q][i] - ref[q]) <= 1e-9 * abs(ref[q])
