"""portwise loop: return ratio, asymptotic gain model, Blackman's formula, margins, double injection.

Every check has an outside reference: a textbook closed form written out here, numpy.roots,
or an identity of the theory (Rosenstark's, Blackman's) between quantities the code computes
independently of each other and of solve.
"""
from __future__ import annotations

import cmath
import json
import math

import numpy as np
import pytest

import solver
from conftest import CIRCUITS
from solver.analysis import loop as L
from solver.analysis import scenarios as sc
from solver.analysis.pipeline import analysis_frequency, prepare

NONINV = """
signal VS (p, gnd) 1 V, rs={rs}
opamp U1 (out, p, fb) gain={A}
resistor R1 (fb, gnd) {R1}
resistor R2 (out, fb) {R2}
load RL (out, gnd) 2k
"""


def _close(a, b, rel=1e-9):
    return abs(complex(a) - complex(b)) <= rel * max(abs(complex(a)), abs(complex(b)), 1e-300)


def _loop(text, netlist, *args, **kw):
    return solver.loop(solver.load(netlist(text)), *args, **kw)


# --- 1. non-inverting op-amp stage ---------------------------------------------------------------
@pytest.mark.parametrize("A, R1, R2, rs", [(1e5, 1e3, 99e3, 350.0), (200.0, 2.2e3, 4.7e3, 0.0), (31.0, 10e3, 10e3, 1e3)])
def test_noninverting_return_ratio_and_ideal_gain(netlist, A, R1, R2, rs):
    # Textbook non-inverting amplifier with a finite open-loop gain A and an ideal output:
    # loop gain T = A*beta with beta = R1/(R1 + R2), ideal gain G_inf = 1 + R2/R1 = 1/beta,
    # no feedthrough (G0 = 0) and Gv = A/(1 + A*beta). (A. S. Sedra, K. C. Smith,
    # Microelectronic Circuits, 7th ed., sections 2.3 and 11.1, from memory.)
    r = _loop(NONINV.format(A=A, R1=R1, R2=R2, rs=rs), netlist, around="U1").to_dict()
    beta = R1 / (R1 + R2)
    assert _close(r["T"]["re"], A * beta) and abs(r["T"]["im"]) < 1e-12
    assert _close(r["G_inf"]["re"], 1 + R2 / R1)
    assert abs(r["G_0"]["re"]) < 1e-15
    assert _close(r["G"]["re"], A / (1 + A * beta))
    assert r["quantity"] == "Gv" and r["around"] == "U1"
    # the Av loop (input driven by an ideal source): the same T, since the op-amp input draws nothing
    assert _close(r["gains"]["Av"]["T"]["re"], A * beta)
    # Rout of an ideal-output op-amp is 0 at any gain: Blackman's dead impedance is 0 too
    assert r["blackman"]["Rout"]["dead"]["re"] == 0 and r["blackman"]["Rout"]["T_short"] is None


def test_noninverting_output_resistance_blackman(netlist):
    # An op-amp with output resistance ro (a VCVS behind ro) in the non-inverting connection
    # without a load: Rout = ro / (1 + A*beta') with beta' = R1/(R1 + R2) when R1 + R2 >> ro
    # is the textbook approximation; exactly, Z_dead = ro || (R1 + R2), T_short = 0 (the output
    # shorted returns nothing) and T_open = A * ro-divider * beta. (Sedra & Smith, 7th ed.,
    # section 11.5, series-shunt feedback, from memory.) Checked: Blackman's three terms
    # against these hand forms, and the formula against solve's Rout.
    A, ro, R1, R2 = 5e3, 75.0, 1e3, 9e3
    text = f"""
signal VS (p, gnd) 1 V
vcvs E1 (x, gnd) (p, fb) {A}
resistor RO (x, out) {ro}
resistor R1 (fb, gnd) {R1}
resistor R2 (out, fb) {R2}
output (out, gnd)
"""
    r = _loop(text, netlist, around="E1").to_dict()
    b = r["blackman"]["Rout"]
    assert _close(b["dead"]["re"], ro * (R1 + R2) / (ro + R1 + R2))
    assert abs(b["T_short"]["re"]) < 1e-12
    assert _close(b["T_open"]["re"], A * (R1 + R2) / (ro + R1 + R2) * R1 / (R1 + R2))
    rout = solver.solve(solver.load(netlist(text))).quantities["Rout"]
    assert _close(b["Z"]["re"], rout.real, 1e-12)


# --- 2. the identities on every bundled feedback circuit ------------------------------------------
def _sources(c):
    """Every controlled source a loop can be taken around: transistors, finite-gain op-amps and
    the netlist's own controlled sources."""
    from solver.circuit.views import small_signal_elements
    names = [d.name for d in c.transistors]
    for e in small_signal_elements(c):
        if isinstance(e, L.CONTROLLED) and (not e.origin or c.device(e.origin) is None) and \
                not e.name.endswith(".gp"):
            names.append(e.name)
    return names


def _bundled():
    out = []
    for path in sorted(CIRCUITS.glob("*.pw")):
        c = prepare(solver.load(path)).circuit
        out += [(path.name, n) for n in _sources(c)]
    return out


BUNDLED = _bundled()


def _same(model, direct, rel=1e-9):
    """Equal to rounding; an infinite or round-off-infinite impedance (|Z| > 1e15 ohm) on both sides."""
    if cmath.isinf(model) or abs(model) > 1e15:
        return cmath.isinf(direct) or abs(direct) > 1e15
    if model == 0:  # an ideal voltage output: solve's round-off zero (1e-18 .. 1e-11 ohm)
        return abs(direct) < 1e-9
    return _close(model, direct, rel)


def test_bundled_feedback_circuits_are_covered():
    names = {f for f, _ in BUNDLED}
    assert {"strain_bridge_amp.pw", "mic_preamp.pw", "pin_tia_front_end.pw", "line_driver.pw",
            "geophone_diffpair.pw", "hydrophone_preamp.pw"} <= names
    assert len(BUNDLED) >= 15


@pytest.mark.parametrize("fname, name", BUNDLED, ids=[f"{f}:{n}" for f, n in BUNDLED])
def test_asymptotic_identity_and_blackman_equal_solve(fname, name):
    # Rosenstark's identity G = G_inf T/(1+T) + G0/(1+T) and Blackman's
    # Z = Z_dead (1 + T_short)/(1 + T_open) are exact for a linear circuit (E. S. Rosenstark,
    # IEEE Trans. Education 17(4), 1974; R. B. Blackman, Bell Syst. Tech. J. 22, 1943): with
    # T, G_inf, G0 and the three Blackman terms each computed on its own network, they must
    # give solve's Gv (Zt), Av, Rin and Rout to rounding, at the analysis frequency and across
    # the band.
    c = prepare(solver.load(CIRCUITS / fname)).circuit
    f0, _ = analysis_frequency(c)
    freqs = [f0, 10.0, 1e5, 3e7] if f0 > 0 or any(e.reactive for e in c.elements) else [f0]
    a = L.analyse_loop(c, name, freqs, sweep=False)
    pq = [solver.api.port_quantities(c, f).quantities for f in freqs]
    for q, g in a.gains.items():
        for k, f in enumerate(freqs):
            assert _close(g.G[k], pq[k][q], 1e-12), (q, f)          # the loop's G is solve's G
            if g.T[k] == 0:  # no loop around this source here (a grounded-emitter stage): no model
                assert cmath.isinf(g.G_inf[k]) and cmath.isnan(g.model[k])
                continue
            assert _same(g.model[k], pq[k][q]), (q, f, g.model[k], pq[k][q], g.T[k])
    for q, b in a.blackman.items():
        for k, f in enumerate(freqs):
            assert _same(b.formula[k], pq[k][q], 1e-8), (q, f, b.dead[k], b.T_short[k], b.T_open[k], pq[k][q])


def test_t_model_and_hybrid_pi_give_the_same_closed_loop(netlist):
    # The hybrid-pi and T models are one two-port (the same G), but a return ratio depends on
    # the dead network the source leaves: with alpha = 0 the T model keeps re from base to
    # emitter. Both satisfy the identity; G agrees between them (consistency check).
    base = """signal VS (b, gnd) 1 V, rs=1k
npn Q1 (c, b, e) ic=1m, beta=100, va=50 V{m}
resistor RE (e, gnd) 470
resistor RC (c, gnd) 4k7
load RL (c, gnd) 10k
"""
    rh = _loop(base.format(m=""), netlist, around="Q1").to_dict()
    rt = _loop(base.format(m=", model=t"), netlist, around="Q1").to_dict()
    assert _close(rh["G"]["re"], rt["G"]["re"], 1e-9)
    assert _close(rt["G_model"]["re"], rt["G"]["re"], 1e-9)
    assert "T model" in " ".join(rt["notes"])


# --- 3. a two-pole and a three-pole loop against closed forms ---------------------------------------
TWO_POLE = """
signal VS (p, gnd) 1 V
opamp U1 (out, p, fb) gain={A0}, fp={f1}
resistor RF (out, fb) {R}
capacitor CF (fb, gnd) {C}
output (out, gnd)
"""


@pytest.mark.parametrize("A0, f1, f2", [(1e3, 100.0, 2e4), (50.0, 1e3, 1e4), (1e4, 10.0, 1e6)])
def test_two_pole_phase_margin_and_poles(netlist, A0, f1, f2):
    # T(s) = A0 / ((1 + s/w1)(1 + s/w2)): the crossover solves
    # (1 + (w/w1)^2)(1 + (w/w2)^2) = A0^2, a quadratic in w^2, and the phase margin is
    # 180 - atan(wc/w1) - atan(wc/w2); the phase never reaches -180, so no gain margin. The
    # closed-loop poles are the roots of s^2 + (w1 + w2) s + w1 w2 (1 + A0), damping
    # (w1 + w2)/(2 sqrt(w1 w2 (1 + A0))). (P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer,
    # Analysis and Design of Analog Integrated Circuits, 5th ed., section 9.3, from memory.)
    R = 10e3
    C = 1 / (2 * math.pi * f2 * R)
    r = _loop(TWO_POLE.format(A0=A0, f1=f1, R=R, C=C), netlist, around="U1", f_from=0.1, f_to=1e9,
              points=400).to_dict()
    w1, w2 = 2 * math.pi * f1, 2 * math.pi * f2
    a, b, c0 = 1 / (w1 * w2) ** 2, 1 / w1 ** 2 + 1 / w2 ** 2, 1 - A0 ** 2
    wc = math.sqrt((-b + math.sqrt(b * b - 4 * a * c0)) / (2 * a))
    pm = 180 - math.degrees(math.atan(wc / w1) + math.atan(wc / w2))
    m = r["margins"]
    assert m["crossover_hz"] == pytest.approx(wc / (2 * math.pi), rel=1e-9)
    assert m["phase_margin_deg"] == pytest.approx(pm, abs=1e-7)
    assert m["gain_margin_db"] is None
    want = np.roots([1, w1 + w2, w1 * w2 * (1 + A0)])
    got = [complex(p["re"], p["im"]) for p in r["poles"]]
    assert len(got) == 2 and all(any(_close(g, w, 1e-8) for g in got) for w in want)
    zeta = (w1 + w2) / (2 * math.sqrt(w1 * w2 * (1 + A0)))
    if zeta < 1:
        assert all(p["zeta"] == pytest.approx(zeta, rel=1e-8) for p in r["poles"])
    warned = any("phase margin" in w for w in r["warnings"])
    assert warned == (pm < 45)


def test_three_pole_gain_margin(netlist):
    # Three equal poles: the phase reaches -180 where atan(w/wp) = 60 deg, w = sqrt(3) wp,
    # and |T| there is A0/8, so the gain margin is -20 log10(A0/8) dB (Gray, Hurst, Lewis,
    # Meyer, 5th ed., section 9.3, from memory). Buffered RC sections keep the poles apart.
    A0, fp, R = 4.0, 1e3, 10e3
    C = 1 / (2 * math.pi * fp * R)
    text = f"""
signal VS (p, gnd) 1 V
opamp U1 (out, p, fb) gain={A0}, fp={fp}
resistor R1 (out, a) {R}
capacitor C1 (a, gnd) {C}
vcvs E1 (b, gnd) (a, gnd) 1
resistor R2 (b, fb) {R}
capacitor C2 (fb, gnd) {C}
output (out, gnd)
"""
    r = _loop(text, netlist, around="U1", f_from=1.0, f_to=1e6, points=300).to_dict()
    m = r["margins"]
    assert m["phase_crossover_hz"] == pytest.approx(math.sqrt(3) * fp, rel=1e-9)
    assert m["gain_margin_db"] == pytest.approx(-20 * math.log10(A0 / 8), abs=1e-8)


def test_unstable_loop_warns_of_a_right_half_plane_pole(netlist):
    # The three-pole loop above with A0 = 10 > 8 is unstable (Routh: (1 + s/wp)^3 + A0 has
    # right-half-plane roots for A0 > 8; Gray, Hurst, Lewis, Meyer, section 9.3, from memory).
    A0, fp, R = 10.0, 1e3, 10e3
    C = 1 / (2 * math.pi * fp * R)
    text = f"""
signal VS (p, gnd) 1 V
opamp U1 (out, p, fb) gain={A0}, fp={fp}
resistor R1 (out, a) {R}
capacitor C1 (a, gnd) {C}
vcvs E1 (b, gnd) (a, gnd) 1
resistor R2 (b, fb) {R}
capacitor C2 (fb, gnd) {C}
output (out, gnd)
"""
    r = _loop(text, netlist, around="U1", f_from=1.0, f_to=1e6)
    d = r.to_dict()
    wp = 2 * math.pi * fp
    want = [wp * (-1 + z) for z in np.roots([1, 0, 0, A0])]  # (1 + s/wp)^3 = -A0
    got = [complex(p["re"], p["im"]) for p in d["poles"]]
    assert all(any(_close(g, w, 1e-8) for g in got) for w in want)
    assert any(p["rhp"] for p in d["poles"])
    assert any("right half-plane" in w.message for w in r.warnings)
    assert d["margins"]["gain_margin_db"] < 0


# --- 4. emitter degeneration by hand ---------------------------------------------------------------
@pytest.mark.parametrize("RE, RS", [(100.0, 600.0), (1e3, 50.0), (47.0, 10e3)])
def test_emitter_degeneration_return_ratio(netlist, RE, RS):
    # Around gm of a CE stage with an emitter resistor (ro left out): the unit current source
    # in gm's place drives RE || (rpi + Rs), and v_be is the part of that across rpi, so
    # T = gm RE rpi/(rpi + Rs + RE) (the "gm RE" of the degenerated stage, reduced by the base
    # loading). Worked by hand from the hybrid-pi model (Gray, Hurst, Lewis, Meyer, 5th ed.,
    # section 8.2, from memory for the setting). G_inf = -RC/RE || RL... with RL: -(RC||RL)/RE
    # times rpi's share: the k -> oo limit forces v_be = 0, so the emitter follows the base and
    # the collector current is v_sig/RE: G_inf = -(RC || RL)/RE.
    gm, beta, RC, RL = 0.04, 120.0, 4.7e3, 10e3
    rpi = beta / gm
    text = f"""
signal VS (b, gnd) 1 V, rs={RS}
npn Q1 (c, b, e) gm={gm}, beta={beta}
resistor RE (e, gnd) {RE}
resistor RC (c, gnd) {RC}
load RL (c, gnd) {RL}
"""
    r = _loop(text, netlist, around="Q1").to_dict()
    assert _close(r["T"]["re"], gm * RE * rpi / (rpi + RS + RE))
    assert _close(r["G_inf"]["re"], -(RC * RL / (RC + RL)) / RE)
    # G0 (gm = 0): only rpi's path, base to emitter to RE, and nothing reaches the collector
    assert abs(r["G_0"]["re"]) < 1e-15


# --- 5. double injection ------------------------------------------------------------------------
DRIVER = """
signal VS (p, gnd) 1 V, rs=1k
vcvs E1 (x, gnd) (p, fb) {A}
resistor RO (x, out) 220
resistor R2 (out, fb) 47k
capacitor C2 (out, fb) 10p
resistor R1 (fb, gnd) 4k7
capacitor C1 (fb, gnd) 33p
load RL (out, gnd) 2k
"""


def test_middlebrook_equals_return_ratio_without_reverse_path(netlist):
    # One controlled source (E1) and no reverse path through the break at `out`: the passive
    # network only loads the driver, so Middlebrook's T = (Tv Ti - 1)/(Tv + Ti + 2) equals
    # Bode's return ratio exactly (R. D. Middlebrook, Int. J. Electronics 38(4), 1975,
    # from memory), at every frequency; and T_v, T_i each differ from T (the loading terms).
    path = netlist(DRIVER.format(A=2e3))
    f = dict(f_from=10.0, f_to=1e9, points=60)
    ra = solver.loop(path, around="E1", **f).to_dict()
    rb = solver.loop(path, break_node="out", toward=["R2", "C2", "RL"], **f).to_dict()
    for a, b in zip(ra["T"], rb["T"]):
        assert _close(complex(a["re"], a["im"]), complex(b["re"], b["im"]), 1e-9)
    tv = complex(rb["T_v"][0]["re"], rb["T_v"][0]["im"])
    t = complex(rb["T"][0]["re"], rb["T"][0]["im"])
    assert abs(tv - t) > 1e-3 * abs(t)
    assert rb["margins"]["phase_margin_deg"] == pytest.approx(ra["margins"]["phase_margin_deg"], abs=1e-6)
    # the load RL may sit on either side of the break: no reverse path either way
    rc = solver.loop(path, break_node="out", toward=["R2", "C2"], **f).to_dict()
    assert _close(complex(rc["T"][5]["re"], rc["T"][5]["im"]), complex(ra["T"][5]["re"], ra["T"][5]["im"]), 1e-9)
    assert "reverse path" in " ".join(rb["notes"])


def test_middlebrook_differs_with_a_reverse_path(netlist):
    # The caveat, shown: a resistor from the driver's internal node straight to the feedback
    # node carries signal around the break both ways (reverse transmission), and the
    # double-injection loop gain no longer equals the return ratio around E1 (Middlebrook,
    # 1975, from memory: the result is a property of the break point).
    path = netlist(DRIVER.format(A=2e3) + "resistor RX (x, fb) 1k\n")
    ra = solver.loop(path, around="E1", at=1e3).to_dict()
    rb = solver.loop(path, break_node="out", toward=["R2", "C2", "RL"], at=1e3).to_dict()
    ta, tb = (complex(r["T"]["re"], r["T"]["im"]) for r in (ra, rb))
    assert abs(ta - tb) > 1e-3 * abs(ta)


def test_middlebrook_ideal_driver_and_default_side(netlist):
    # An ideal voltage driver (no RO): T_i is infinite and T = T_v (Middlebrook, 1975, from
    # memory); without --toward the one driver at the node (E1) fixes the sides.
    text = DRIVER.format(A=500).replace("vcvs E1 (x, gnd)", "vcvs E1 (out, gnd)").replace(
        "resistor RO (x, out) 220\n", "")
    path = netlist(text)
    rb = solver.loop(path, break_node="out", at=1e5).to_dict()
    ra = solver.loop(path, around="E1", at=1e5).to_dict()
    assert rb["T_i"]["re"] == "inf"
    assert _close(complex(rb["T"]["re"], rb["T"]["im"]), complex(ra["T"]["re"], ra["T"]["im"]))
    assert sorted(rb["toward"]) == ["C2", "R2", "RL"]


# --- 6. the command line --------------------------------------------------------------------------
def test_cli_json_shape(cli):
    r = cli("loop", CIRCUITS / "mic_preamp.pw", "--around", "Q1", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    for key in ("around", "frequency_hz", "T", "G_inf", "G_0", "G", "quantity", "blackman"):
        assert key in d
    assert set(d["blackman"]) == {"Rin", "Rout"}
    assert set(d["blackman"]["Rin"]) >= {"dead", "T_short", "T_open"}
    assert set(d["T"]) == {"re", "im"}


def test_cli_sweep_margins_plot_and_warning(cli, tmp_path):
    png = tmp_path / "loop.png"
    r = cli("loop", CIRCUITS / "pin_tia_front_end.pw", "--around", "U1", "--from", "1kHz", "--to", "100MHz",
            "--points", "61", "--json", "--plot", png)
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert len(d["T"]) == len(d["frequency_hz"]) == 61 and len(d["G"]) == 61
    assert set(d["margins"]) >= {"crossover_hz", "phase_margin_deg", "gain_margin_db"}
    assert d["margins"]["phase_margin_deg"] < 45 and d["margins"]["gain_margin_db"] is None
    assert "warning: phase margin" in r.stderr
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    again = cli("loop", CIRCUITS / "pin_tia_front_end.pw", "--around", "U1", "--from", "1kHz", "--to",
                "100MHz", "--plot", png)
    assert again.returncode == 2 and "--overwrite" in again.stderr
    text = cli("loop", CIRCUITS / "pin_tia_front_end.pw", "--around", "U1", "--from", "1kHz", "--to", "100MHz")
    assert "phase margin" in text.stdout and "ζ" in text.stdout


def test_the_example_fix_works(netlist):
    # The example's comment: CF = 2.7 pF gives a phase margin near 69 degrees, 1.8 pF near 54.
    for cf, lo, hi in (("2.7p", 66, 72), ("1.8p", 50, 58)):
        text = (CIRCUITS / "pin_tia_front_end.pw").read_text().replace("(inv, out) 0.2p", f"(inv, out) {cf}")
        r = solver.loop(netlist(text), around="U1", f_from=1e3, f_to=1e8).to_dict()
        assert lo < r["margins"]["phase_margin_deg"] < hi
        assert not r["warnings"]


@pytest.mark.parametrize("args, message", [
    (["--around", "Q11"], "did you mean 'Q1'"),
    (["--around", "RC"], "not a transistor, op-amp or controlled source"),
    (["--break", "in"], "--toward"),
    (["--break", "nowhere"], "not a node"),
    (["--around", "Q1", "--points", "5"], "--points goes with"),
    (["--around", "Q1", "--from", "10Hz"], "both --from and --to"),
])
def test_cli_errors(cli, args, message):
    r = cli("loop", CIRCUITS / "mic_preamp.pw", *args)
    assert r.returncode == 2 and message in r.stderr and "Traceback" not in r.stderr


def test_ideal_opamp_is_refused(cli):
    r = cli("loop", CIRCUITS / "photodiode_tia.pw", "--around", "U1")
    assert r.returncode == 2 and "ideal" in r.stderr


def test_api_result(netlist):
    r = _loop(NONINV.format(A=1e3, R1=1e3, R2=9e3, rs=0), netlist, around="U1")
    assert json.loads(r.to_json()) == r.to_dict()
    assert r.warnings == [] and "return ratio" in r.text()


# --- 7. symbolic: derive T, Ginf, G0 --------------------------------------------------------------
def _sym(name):
    from solver.engine.symbolic.determinants import symbol
    return symbol(name)


def test_symbolic_noninverting_closed_forms(netlist):
    # T = A R1/(R1 + R2), G_inf = 1 + R2/R1, G0 = 0 (Sedra & Smith, 7th ed., section 11.1,
    # from memory), identically in the symbols (sympy.simplify of the difference is 0).
    import sympy
    from solver.analysis.symbolic.loop import symbolic_loop_quantities
    c = solver.load(netlist(NONINV.format(A=1e4, R1=1e3, R2=47e3, rs=600)))
    r = symbolic_loop_quantities(c, "U1")
    A, R1, R2 = _sym("U1.gain"), _sym("R1"), _sym("R2")
    assert sympy.simplify(r["T"].expr() - A * R1 / (R1 + R2)) == 0
    assert sympy.simplify(r["Ginf"].expr() - (1 + R2 / R1)) == 0
    assert r["G0"].expr() == 0


def test_symbolic_degeneration_by_hand(netlist):
    # The hand formula of test_emitter_degeneration_return_ratio, now as an identity in the
    # symbols: T = gm RE rpi/(rpi + Rs + RE) and G_inf = -(RC || RL)/RE.
    import sympy
    from solver.analysis.symbolic.loop import symbolic_loop_quantities
    c = solver.load(netlist("""
signal VS (b, gnd) 1 V, rs=600
npn Q1 (c, b, e) gm=40m, beta=120
resistor RE (e, gnd) 220
resistor RC (c, gnd) 4k7
load RL (c, gnd) 10k
"""))
    r = symbolic_loop_quantities(c, "Q1")
    gm, rpi, RE, RS, RC, RL = (_sym(n) for n in ("Q1.gm", "Q1.rpi", "RE", "VS.rs", "RC", "RL"))
    assert sympy.simplify(r["T"].expr() - gm * RE * rpi / (rpi + RS + RE)) == 0
    assert sympy.simplify(r["Ginf"].expr() + RC * RL / (RC + RL) / RE) == 0


@pytest.mark.parametrize("fname, name", [("mic_preamp.pw", "Q1"), ("pin_tia_front_end.pw", "U1"),
                                         ("hydrophone_cs.pw", "M2"), ("line_driver.pw", "A2.Q"),
                                         ("geophone_diffpair.pw", "QA"), ("hydrophone_ce_stage.pw", "Q1")])
def test_symbolic_equals_numeric(fname, name):
    # Consistency check: the determinant ratio (symbolic) and the injection (numeric) are two
    # computations of Bode's return ratio; G0 and G_inf likewise, at a complex frequency.
    from solver.analysis.symbolic.loop import symbolic_loop_quantities
    from solver.analysis.symbolic.ports import symbol_values
    c = prepare(solver.load(CIRCUITS / fname)).circuit
    f = 2e5
    a = L.analyse_loop(c, name, [f], sweep=False)
    g = a.gains[sc.main_gain(c)]
    r = symbolic_loop_quantities(c, name)
    vals = symbol_values(c)
    s = 2j * math.pi * f
    assert _close(r["T"].value(vals, s), g.T[0], 1e-9)
    assert _close(r["G0"].value(vals, s), g.G_0[0], 1e-9) or abs(g.G_0[0]) < 1e-12
    assert _close(r["Ginf"].value(vals, s), g.G_inf[0], 1e-9)


def test_derive_cli_loop_quantities(cli):
    r = cli("derive", CIRCUITS / "strain_bridge_amp.pw", "T", "--around", "U1")
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "T = R1*U1.gain/(R1 + R2)"
    r = cli("derive", CIRCUITS / "strain_bridge_amp.pw", "Ginf", "--around", "U1", "--json")
    assert json.loads(r.stdout)["expression"] == "(R1 + R2)/R1"
    r = cli("derive", CIRCUITS / "strain_bridge_amp.pw", "T")
    assert r.returncode == 2 and "--around" in r.stderr
    r = cli("derive", CIRCUITS / "photodiode_tia.pw", "T", "--around", "U1")
    assert r.returncode == 2 and "ideal" in r.stderr
    r = cli("derive", CIRCUITS / "hydrophone_preamp.pw", "Ginf", "--around", "Q1")
    assert r.returncode == 2 and "T = 0" in r.stderr
    r = cli("derive", CIRCUITS / "strain_bridge_amp.pw", "Gv", "--around", "U1")
    assert r.returncode == 2 and "--around goes with" in r.stderr


# --- 8. every kind of controlled source ---------------------------------------------------------
KINDS = {
    "vccs": """signal VS (in, gnd) 1 V, rs=1k
resistor R1 (in, gnd) 10k
vccs G1 (out, gnd) (in, gnd) 50m
resistor RC (out, gnd) 2k
resistor RF (in, out) 20k
capacitor CF (in, out) 5p
load RL (out, gnd) 5k
""",
    "cccs": """signal VS (in, gnd) 1 V, rs=500
resistor RA (in, m) 1k
cccs F1 (out, gnd) RA 50
resistor RO (out, gnd) 1k
resistor RF (out, m) 10k
resistor RM (m, gnd) 2k
capacitor CM (m, gnd) 1n
load RL (out, gnd) 3k
""",
    "ccvs": """signal IS (in, gnd) 1 uA, rs=100k
resistor RS1 (in, a) 100
resistor RA (a, gnd) 1k
ccvs H1 (x, gnd) RS1 -20k
resistor RO (x, out) 50
resistor RF (out, in) 10k
capacitor C1 (out, gnd) 1n
load RL (out, gnd) 1k
""",
    "vcvs": DRIVER.format(A=300),
}


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_every_source_kind(netlist, kind):
    # The identities (Rosenstark 1974, Blackman 1943) for a loop around each kind of netlist
    # controlled source, at two frequencies, and the symbolic determinant ratio against the
    # numeric injection (consistency).
    from solver.analysis.symbolic.loop import symbolic_loop_quantities
    from solver.analysis.symbolic.ports import symbol_values
    c = prepare(solver.load(netlist(KINDS[kind]))).circuit
    name = {"vccs": "G1", "cccs": "F1", "ccvs": "H1", "vcvs": "E1"}[kind]
    freqs = [1e3, 2e6]
    a = L.analyse_loop(c, name, freqs, sweep=False)
    assert all(abs(t) > 1e-3 for t in a.T)  # a real loop
    for k, f in enumerate(freqs):
        pq = solver.api.port_quantities(c, f).quantities
        for q, g in a.gains.items():
            if g.T[k] == 0:  # Av of a source whose control the ideal input drive fixes: no loop
                assert cmath.isnan(g.model[k]) and kind in ("vccs", "ccvs")
                continue
            assert _same(g.model[k], pq[q]), (q, f)
        for q, b in a.blackman.items():
            assert _same(b.formula[k], pq[q], 1e-8), (q, f)
    r = symbolic_loop_quantities(c, name)
    vals = symbol_values(c)
    for k, f in enumerate(freqs):
        assert _close(r["T"].value(vals, 2j * math.pi * f), a.T[k], 1e-9)
