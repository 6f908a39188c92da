"""Every stage family against an outside reference: a closed form written out here, with its
source beside it, or numpy/scipy applied to a nodal matrix written by hand in the test.

Closed forms: A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 7th ed., chapter 7
(sections 7.3-7.6: CE, CE with RE, CB, CC; CS, CS with RS, CG, CD; differential pair
chapter 9.2-9.3 half-circuit; op-amp stages chapter 2.2-2.3), from memory; B. Razavi,
*Design of Analog CMOS Integrated Circuits*, 2nd ed., chapter 3 (body effect, common gate,
cascode), from memory. The hybrid-pi versus T-model test at the end is a consistency check
between two drawings of the same stamps, not an outside reference.
"""
import math
import random

import numpy as np
import pytest

from solver import loads, solve
from solver.circuit.devices import thermal_voltage

VT = thermal_voltage(300.0)
REL = 1e-9


def q(text: str, at=None):
    return {k: v.real if abs(v.imag) < 1e-12 * max(1, abs(v)) else v
            for k, v in solve(loads(text), at).quantities.items()}


def par(*rs):
    return 1 / sum(1 / r for r in rs)


CE = """
signal VS (b, gnd) 1 V, rs={rs}
npn Q1 (c, b, e) ic={ic}, beta={beta}{ro}
resistor RC (c, gnd) {rc}
{re}
load RL (c, gnd) {rl}
"""


@pytest.mark.parametrize("va", [None, 50.0])
def test_common_emitter(va):
    # CE with and without ro: Rin = rpi, Rout = RC || ro, Avo = -gm (RC || ro), Av = -gm (RC || ro || RL),
    # Gv = Rin/(Rin + rs) Av, with gm = IC/V_T, rpi = beta/gm, ro = VA/IC (Sedra & Smith 7th ed.,
    # sections 7.2.1-7.2.4 and 7.3.3, from memory)
    ic, beta, rc, rl, rs = 1e-3, 120.0, 4.7e3, 10e3, 1e3
    text = CE.format(rs=rs, ic=ic, beta=beta, rc=rc, rl=rl, ro=f", va={va}" if va else "",
                     re="").replace("(c, b, e)", "(c, b, gnd)")
    r = q(text)
    gm = ic / VT
    rpi = beta / gm
    ro = va / ic if va else math.inf
    rout = par(rc, ro) if va else rc
    assert r["Rin"] == pytest.approx(rpi, rel=REL)
    assert r["Rout"] == pytest.approx(rout, rel=REL)
    assert r["Avo"] == pytest.approx(-gm * rout, rel=REL)
    assert r["Av"] == pytest.approx(-gm * par(rout, rl), rel=REL)
    assert r["Gv"] == pytest.approx(rpi / (rpi + rs) * -gm * par(rout, rl), rel=REL)
    assert r["Gvo"] == pytest.approx(rpi / (rpi + rs) * -gm * rout, rel=REL)
    # Ai = i_load / i_in = (v_out/RL)/(v_in/Rin)
    assert r["Ai"] == pytest.approx(r["Av"] * rpi / rl, rel=REL)


def test_common_emitter_degenerated():
    # CE with emitter degeneration (T model): Rin = (beta+1)(re+RE), Avo = -alpha RC/(re+RE)
    # (Sedra & Smith 7th ed., section 7.3.4, from memory)
    ic, beta, rc, rl, rs, re_ = 1e-3, 100.0, 5e3, 5e3, 500.0, 200.0
    text = CE.format(rs=rs, ic=ic, beta=beta, rc=rc, rl=rl, ro="", re=f"resistor RE (e, gnd) {re_}")
    r = q(text)
    gm = ic / VT
    alpha = beta / (beta + 1)
    re = alpha / gm
    rin = (beta + 1) * (re + re_)  # Sedra & Smith 7.5.2: Rin = (beta+1)(re+RE)
    assert r["Rin"] == pytest.approx(rin, rel=REL)
    assert r["Rout"] == pytest.approx(rc, rel=REL)
    assert r["Avo"] == pytest.approx(-alpha * rc / (re + re_), rel=REL)
    assert r["Av"] == pytest.approx(-alpha * par(rc, rl) / (re + re_), rel=REL)
    assert r["Gv"] == pytest.approx(rin / (rin + rs) * r["Av"], rel=REL)


def test_emitter_follower():
    # CC: Rin = (beta+1)(re+RL), Avo = 1, Av = RL/(RL+re), Rout = re + rs/(beta+1)
    # (Sedra & Smith 7th ed., section 7.3.6, from memory)
    ic, beta, rl, rs = 2e-3, 150.0, 1e3, 10e3
    r = q(f"""
signal VS (b, gnd) 1 V, rs={rs}
npn Q1 (vcc, b, e) ic={ic}, beta={beta}
supply VCC (vcc, gnd) 12 V
load RL (e, gnd) {rl}
""")
    gm = ic / VT
    re = beta / (beta + 1) / gm
    assert r["Rin"] == pytest.approx((beta + 1) * (re + rl), rel=REL)
    assert r["Avo"] == pytest.approx(1.0, rel=REL)
    assert r["Av"] == pytest.approx(rl / (rl + re), rel=REL)
    assert r["Rout"] == pytest.approx(re + rs / (beta + 1), rel=REL)
    assert r["Gv"] == pytest.approx(rl / (rl + re + rs / (beta + 1)), rel=REL)


def test_common_base():
    # CB: Rin = re, Rout = RC, Avo = gm RC, Gv = alpha (RC || RL)/(re + rs), Ai = alpha RC/(RC+RL)
    # (Sedra & Smith 7th ed., section 7.3.5, from memory)
    ic, beta, rc, rl, rs = 1e-3, 100.0, 10e3, 10e3, 50.0
    r = q(f"""
signal VS (e, gnd) 1 V, rs={rs}
npn Q1 (c, gnd, e) ic={ic}, beta={beta}
resistor RC (c, gnd) {rc}
load RL (c, gnd) {rl}
""")
    gm = ic / VT
    alpha = beta / (beta + 1)
    re = alpha / gm
    assert r["Rin"] == pytest.approx(re, rel=REL)
    assert r["Rout"] == pytest.approx(rc, rel=REL)
    assert r["Avo"] == pytest.approx(gm * rc, rel=REL)
    assert r["Av"] == pytest.approx(gm * par(rc, rl), rel=REL)
    assert r["Gv"] == pytest.approx(alpha * par(rc, rl) / (re + rs), rel=REL)
    # the emitter current alpha-scaled to the collector divides between RC and RL
    assert r["Ai"] == pytest.approx(alpha * rc / (rc + rl), rel=REL)


@pytest.mark.parametrize("lam", [None, 0.05])
def test_common_source(lam):
    # CS with and without ro: gm = 2 ID/Vov, ro = 1/(lambda ID), Avo = -gm (RD || ro), Rin = RG
    # (Sedra & Smith 7th ed., sections 5.6 and 7.3.3, from memory)
    i_d, vov, rd, rl, rg, rs = 0.5e-3, 0.25, 10e3, 20e3, 1e6, 1e3
    r = q(f"""
signal VS (g, gnd) 1 V, rs={rs}
resistor RG (g, gnd) {rg}
nmos M1 (d, g, gnd) id={i_d}, vov={vov}{f', lambda={lam}' if lam else ''}
resistor RD (d, gnd) {rd}
load RL (d, gnd) {rl}
""")
    gm = 2 * i_d / vov
    ro = 1 / (lam * i_d) if lam else math.inf
    rout = par(rd, ro)
    assert r["Rin"] == pytest.approx(rg, rel=REL)
    assert r["Rout"] == pytest.approx(rout, rel=REL)
    assert r["Avo"] == pytest.approx(-gm * rout, rel=REL)
    assert r["Av"] == pytest.approx(-gm * par(rout, rl), rel=REL)
    assert r["Gv"] == pytest.approx(rg / (rg + rs) * r["Av"], rel=REL)


def test_source_follower_and_body_effect():
    gm, gmb, ro, rl = 2e-3, 0.3e-3, 50e3, 2e3
    r = q(f"""
signal VS (g, gnd) 1 V
nmos M1 (vdd, g, s, gnd) gm={gm}, gmb={gmb}, ro={ro}
supply VDD (vdd, gnd) 3.3 V
load RL (s, gnd) {rl}
""")
    # Razavi, Design of Analog CMOS Integrated Circuits, section 3.4: Rout = 1/gm || 1/gmb || ro
    rout = par(1 / gm, 1 / gmb, ro)
    assert r["Rout"] == pytest.approx(rout, rel=REL)
    assert r["Avo"] == pytest.approx(gm * rout, rel=REL)
    assert r["Av"] == pytest.approx(gm * par(rout, rl), rel=REL)
    assert r["Rin"] == math.inf


def test_common_gate():
    # CG without ro or body effect: Rin = 1/gm, Avo = gm RD, Gv = gm RD/(1 + gm rs)
    # (Sedra & Smith 7th ed., section 7.3.5 (MOS form), from memory)
    gm, rd, rs = 4e-3, 5e3, 100.0
    r = q(f"""
signal VS (s, gnd) 1 V, rs={rs}
nmos M1 (d, gnd, s) gm={gm}
resistor RD (d, gnd) {rd}
output (d, gnd)
""")
    assert r["Rin"] == pytest.approx(1 / gm, rel=REL)
    assert r["Rout"] == pytest.approx(rd, rel=REL)
    assert r["Avo"] == pytest.approx(gm * rd, rel=REL)
    assert r["Gv"] == pytest.approx(gm * rd / (1 + gm * rs), rel=REL)
    assert "Ai" not in r


def test_differential_pair_half_circuit():
    ic, beta, va, rc, ree = 0.5e-3, 200.0, 100.0, 20e3, 50e3
    r = q(f"""
signal VD (b1, b2) 1 mV
npn Q1 (c1, b1, t) ic={ic}, beta={beta}, va={va}
npn Q2 (c2, b2, t) ic={ic}, beta={beta}, va={va}
resistor REE (t, gnd) {ree}
resistor RC1 (c1, gnd) {rc}
resistor RC2 (c2, gnd) {rc}
output (c1, c2)
""")
    gm = ic / VT
    rpi = beta / gm
    ro = va / ic
    # Sedra & Smith 7th ed., sections 9.2-9.3 (from memory); half circuit: Ad = -gm (RC || ro), Rid = 2 rpi, Rod = 2 (RC || ro); the tail node is a
    # virtual ground for a purely differential drive of a matched pair
    assert r["Avo"] == pytest.approx(-gm * par(rc, ro), rel=REL)
    assert r["Rin"] == pytest.approx(2 * rpi, rel=REL)
    assert r["Rout"] == pytest.approx(2 * par(rc, ro), rel=REL)


def test_ideal_opamp_stages():
    # inverting: Avo = -R2/R1, Rin = R1, Rout = 0; non-inverting: Avo = 1 + R2/R1, Rin infinite
    # (Sedra & Smith 7th ed., sections 2.2.1 and 2.3.1, from memory)
    r1, r2, rs = 10e3, 47e3, 1e3
    inv = q(f"""
signal VS (i, gnd) 1 V, rs={rs}
resistor R1 (i, m) {r1}
resistor R2 (m, o) {r2}
opamp U1 (o, gnd, m)
load RL (o, gnd) 2k
""")
    assert inv["Avo"] == pytest.approx(-r2 / r1, rel=REL)
    assert inv["Rin"] == pytest.approx(r1, rel=REL)
    assert abs(inv["Rout"]) < 1e-9
    assert inv["Gv"] == pytest.approx(-r2 / (r1 + rs), rel=REL)
    non = q(f"""
signal VS (i, gnd) 1 V, rs={rs}
opamp U1 (o, i, m)
resistor R1 (m, gnd) {r1}
resistor R2 (m, o) {r2}
load RL (o, gnd) 2k
""")
    assert non["Avo"] == pytest.approx(1 + r2 / r1, rel=REL)
    assert non["Gv"] == pytest.approx(1 + r2 / r1, rel=REL)
    assert non["Rin"] == math.inf


def test_two_cascaded_stages_with_loading():
    # CS stage driving a CE stage: stage 1 is loaded by rpi2 (Sedra & Smith 7.7, from memory)
    gm1, rd, ic2, beta2, rc2, rl = 2e-3, 10e3, 1e-3, 100.0, 4.7e3, 4.7e3
    r = q(f"""
signal VS (g, gnd) 1 V
nmos M1 (d1, g, gnd) gm={gm1}
resistor RD (d1, gnd) {rd}
npn Q2 (c2, d1, gnd) ic={ic2}, beta={beta2}
resistor RC2 (c2, gnd) {rc2}
load RL (c2, gnd) {rl}
""")
    gm2 = ic2 / VT
    rpi2 = beta2 / gm2
    a1 = -gm1 * par(rd, rpi2)
    a2 = -gm2 * par(rc2, rl)
    assert r["Av"] == pytest.approx(a1 * a2, rel=REL)
    assert r["Rout"] == pytest.approx(rc2, rel=REL)


def test_current_signal_transimpedance():
    # a photodiode (current source) into a resistor: Zt = v_out/i_sig = rs || R (Norton source into
    # a shunt resistor, Ohm's law; common practice, no source)
    r = q("""
signal IP (a, gnd) 1 uA, rs=1M
resistor RF (a, gnd) 100k
output (a, gnd)
""")
    assert r["Zt"] == pytest.approx(par(1e6, 1e5), rel=REL)
    assert r["Rin"] == pytest.approx(1e5, rel=REL)
    assert "Gv" not in r


def test_hybrid_pi_and_t_model_are_consistent():
    # consistency check, not an outside reference: both drawings are the same two-port (Sedra &
    # Smith 7.2.5, from memory), stamped by the same engine; the outside references for the stage
    # families are the closed forms above. Checked on random parameters.
    rng = random.Random(7)
    for _ in range(6):
        ic = rng.uniform(0.1e-3, 5e-3)
        beta = rng.uniform(50, 400)
        va = rng.uniform(20, 200)
        rx = rng.uniform(0, 300)
        cpi, cmu = rng.uniform(1e-12, 20e-12), rng.uniform(0.1e-12, 3e-12)
        f = 10 ** rng.uniform(3, 8)
        base = f"""
signal VS (in, gnd) 1 V, rs=600
npn Q1 (c, in, e) ic={ic}, beta={beta}, va={va}, rx={rx}, cpi={cpi}, cmu={cmu}, model=MODEL
resistor RE (e, gnd) 150
resistor RC (c, gnd) 3k3
load RL (c, gnd) 10k
"""
        a = solve(loads(base.replace("MODEL", "hybrid-pi")), f).quantities
        b = solve(loads(base.replace("MODEL", "t")), f).quantities
        assert set(a) == set(b) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
        for k in a:
            assert abs(a[k] - b[k]) <= 1e-9 * abs(a[k]), k


def test_rc_low_pass_first_order_against_scipy_freqs():
    # single-pole RC low-pass: H(s) = 1/(1 + s R C) (Sedra & Smith 7th ed., section 1.6, from memory),
    # evaluated by scipy.signal.freqs; the -3 dB corner is at 1/(2 pi R C)
    from scipy.signal import freqs
    r, c = 4.7e3, 10e-9
    ckt = loads(f"signal VS (i, gnd) 1 V, rs={r}\ncapacitor C1 (i, gnd) {c}\noutput (i, gnd)\n")
    for f in (10.0, 1 / (2 * math.pi * r * c), 1e6):
        _, h = freqs([1.0], [r * c, 1.0], worN=[2 * np.pi * f])
        assert solve(ckt, f).quantities["Gv"] == pytest.approx(complex(h[0]), rel=1e-9)
    corner = solve(ckt, 1 / (2 * math.pi * r * c)).quantities["Gv"]
    assert abs(corner) == pytest.approx(1 / math.sqrt(2), rel=1e-9)


def test_rc_network_against_scipy_freqs():
    # second-order RC ladder: H(s) = 1 / (s^2 R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1)
    # (node analysis by hand, from memory; scipy.signal.freqs evaluates the polynomial ratio)
    from scipy.signal import freqs
    R1, C1, R2, C2 = 1e3, 100e-9, 10e3, 10e-9
    c = loads(f"""
signal VS (i, gnd) 1 V
resistor R1 (i, a) {R1}
capacitor C1 (a, gnd) {C1}
resistor R2 (a, o) {R2}
capacitor C2 (o, gnd) {C2}
output (o, gnd)
""")
    den = [R1 * C1 * R2 * C2, R1 * C1 + R2 * C2 + R1 * C2, 1.0]
    for f in (10.0, 1e3, 3e3, 1e5):
        _, h = freqs([1.0], den, worN=[2 * np.pi * f])
        assert solve(c, f).quantities["Gv"] == pytest.approx(complex(h[0]), rel=1e-9)


def test_block_used_twice():
    # two CE stages from one block: Av = gm1 (RC1 || rpi2) gm2 (RC2 || RL) (Sedra & Smith 7th ed.,
    # section 7.3.3 applied per stage, from memory)
    text = """
block CE (in, out, vcc) ic=1 mA
    npn Q (out, in, gnd) ic=ic, beta=100
    resistor RC (out, vcc) 2k
end
signal VS (a, gnd) 1 V
supply VCC (vcc, gnd) 9 V
use CE S1 (a, m, vcc)
use CE S2 (m, o, vcc) ic=2 mA
load RL (o, gnd) 2k
claim Av ~ S1.Q.gm*(S1.RC || S2.Q.rpi) * S2.Q.gm*(S2.RC || RL) within 1%
"""
    c = loads(text)
    gm1, gm2 = 1e-3 / VT, 2e-3 / VT
    rpi2 = 100 / gm2
    a = solve(c).quantities["Av"].real
    assert a == pytest.approx(gm1 * par(2e3, rpi2) * gm2 * par(2e3, 2e3), rel=REL)
    names = {e.name for e in c.elements}
    assert {"S1.RC", "S2.RC"} <= names


# --- body effect, common gate with ro, cascode, finite-gain op-amp ---------------------------------
def test_common_source_degenerated_with_body_effect():
    # CS with source resistor and body effect (ro infinite): Gm = gm/(1 + (gm + gmb) RS),
    # Avo = -gm RD/(1 + (gm + gmb) RS), Rin infinite (Razavi, Design of Analog CMOS ICs, 2nd ed.,
    # section 3.3.3, from memory)
    gm, gmb, rd, rs_ = 2e-3, 0.4e-3, 10e3, 500.0
    r = q(f"""
signal VS (g, gnd) 1 V
nmos M1 (d, g, s, gnd) gm={gm}, gmb={gmb}
resistor RS (s, gnd) {rs_}
resistor RD (d, gnd) {rd}
output (d, gnd)
""")
    assert r["Avo"] == pytest.approx(-gm * rd / (1 + (gm + gmb) * rs_), rel=REL)
    assert r["Rout"] == pytest.approx(rd, rel=REL)
    assert r["Rin"] == math.inf


def test_common_gate_with_ro_and_body_effect():
    # CG with ro and the body at ground, driven from rs (Razavi, 2nd ed., section 3.5, from memory):
    # Rin = (ro + RD)/(1 + (gm + gmb) ro)
    # Gv = (1 + (gm + gmb) ro) RD / (ro + RD + rs (1 + (gm + gmb) ro))
    # Rout = RD || (ro + (1 + (gm + gmb) ro) rs)
    gm, gmb, ro, rd, rs = 3e-3, 0.5e-3, 40e3, 8e3, 200.0
    r = q(f"""
signal VS (s, gnd) 1 V, rs={rs}
nmos M1 (d, gnd, s, gnd) gm={gm}, gmb={gmb}, ro={ro}
resistor RD (d, gnd) {rd}
output (d, gnd)
""")
    k = 1 + (gm + gmb) * ro
    assert r["Rin"] == pytest.approx((ro + rd) / k, rel=REL)
    assert r["Gv"] == pytest.approx(k * rd / (ro + rd + rs * k), rel=REL)
    assert r["Rout"] == pytest.approx(par(rd, ro + k * rs), rel=REL)


def cascode_matrix(gm1, ro1, gm2, gmb2, ro2, rd):
    """Nodal matrix of the MOS cascode written by hand (unknowns v(x), v(out); drive v(g) = 1):
    KCL at x: (1/ro1 + gm2 + gmb2 + 1/ro2) v(x) - v(out)/ro2 = -gm1
    KCL at out: -(gm2 + gmb2 + 1/ro2) v(x) + (1/RD + 1/ro2) v(out) = 0"""
    a = np.array([[1 / ro1 + gm2 + gmb2 + 1 / ro2, -1 / ro2], [-(gm2 + gmb2 + 1 / ro2), 1 / rd + 1 / ro2]])
    return a, np.array([-gm1, 0.0])


def test_mos_cascode():
    # CS M1 under a CG M2 (body at ground): the resistance into M2's drain is
    # Rc = ro1 + ro2 + (gm2 + gmb2) ro1 ro2 (Razavi, 2nd ed., section 3.6.1, from memory);
    # Avo = -Gm (RD || Rc) with the exact Gm = gm1 g2 ro1/(1 + g2 ro1), g2 = gm2 + gmb2 + 1/ro2
    # (short-circuit transconductance, derived by hand from the two KCL equations below);
    # numpy.linalg.solve of the hand-written nodal matrix is the second reference
    gm1, ro1, gm2, gmb2, ro2, rd = 2e-3, 30e3, 2.5e-3, 0.4e-3, 25e3, 200e3
    r = q(f"""
signal VS (g, gnd) 1 V
nmos M1 (x, g, gnd) gm={gm1}, ro={ro1}
nmos M2 (out, gnd, x, gnd) gm={gm2}, gmb={gmb2}, ro={ro2}
resistor RD (out, gnd) {rd}
output (out, gnd)
""")
    rc = ro1 + ro2 + (gm2 + gmb2) * ro1 * ro2
    g2 = gm2 + gmb2 + 1 / ro2
    gmx = gm1 * g2 * ro1 / (1 + g2 * ro1)
    assert r["Rout"] == pytest.approx(par(rd, rc), rel=REL)
    assert r["Avo"] == pytest.approx(-gmx * par(rd, rc), rel=REL)
    a, b = cascode_matrix(gm1, ro1, gm2, gmb2, ro2, rd)
    vx, vout = np.linalg.solve(a, b)
    assert r["Avo"] == pytest.approx(vout, rel=REL)
    assert r["Rin"] == math.inf


def test_inverting_amplifier_with_finite_gain():
    # finite open-loop gain A: Avo = -(R2/R1)/(1 + (1 + R2/R1)/A) (Sedra & Smith 7th ed., section
    # 2.2.2, from memory); Rin = R1 + R2/(1 + A), R2 seen at the inverting input reduced by the
    # Miller factor (Miller's theorem, same book, section 10.3.4, from memory)
    r1, r2, a = 10e3, 100e3, 2e3
    r = q(f"""
signal VS (i, gnd) 1 V
resistor R1 (i, m) {r1}
resistor R2 (m, o) {r2}
opamp U1 (o, gnd, m) gain={a}
output (o, gnd)
""")
    assert r["Avo"] == pytest.approx(-(r2 / r1) / (1 + (1 + r2 / r1) / a), rel=REL)
    assert r["Rin"] == pytest.approx(r1 + r2 / (1 + a), rel=REL)
