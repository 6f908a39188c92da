"""Frequency response: sweeps, band edges, poles and zeros, time-constant estimates.

Each check names its outside source. Closed forms recalled from textbooks are
marked "from memory"; scipy.signal.freqs, numpy.roots and sympy are used as
independent reference implementations.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.signal

from solver import loads
from solver.api import load, solve
from solver.analysis.frequency import (band, frequencies, midband_frequency, poles_zeros, q_factor, response,
                              scenario, solve_many)
from solver.analysis.ports import port_quantities
from solver.analysis.response import analyse
from conftest import CIRCUITS

TWO_PI = 2 * math.pi


# --- first and second order vs scipy.signal.freqs ------------------------------------------------
def test_first_order_rc_matches_freqs():
    # H(s) = 1/(1 + sRC) for a single-time-constant low-pass (Sedra & Smith, Microelectronic
    # Circuits, 7th ed., section 1.6 and appendix E, from memory); reference: scipy.signal.freqs
    r, c = 1e3, 100e-9
    ckt = loads(f"signal VS (in, gnd) 1 V, rs={r}\ncapacitor C1 (in, gnd) {c}\noutput (in, gnd)\n")
    f = frequencies(1, 1e6, points=301)
    h = response(scenario(ckt, "Gv"), f)
    _, ref = scipy.signal.freqs([1.0], [r * c, 1.0], worN=TWO_PI * f)
    assert np.allclose(h, ref, rtol=1e-10, atol=1e-14)


def test_first_order_band_edge_is_1_over_2pi_rc():
    # f_3dB = 1/(2 pi R C) (Sedra & Smith, section 1.6, from memory); located between sweep points
    r, c = 4.7e3, 22e-9
    ckt = loads(f"signal VS (in, gnd) 1 V, rs={r}\ncapacitor C1 (in, gnd) {c}\noutput (in, gnd)\n")
    sc = scenario(ckt, "Gv")
    f = frequencies(1, 1e7, per_decade=7)  # coarse on purpose: the root finder does the work
    b = band(sc, f, response(sc, f))
    assert b.f_low_hz is None
    assert b.f_high_hz == pytest.approx(1 / (TWO_PI * r * c), rel=1e-9)
    # high-pass: series C, shunt R
    hp = loads(f"signal VS (in, gnd) 1 V\ncapacitor C1 (in, out) {c}\nresistor R1 (out, gnd) {r}\n"
               "output (out, gnd)\n")
    sc = scenario(hp, "Gv")
    b = band(sc, f, response(sc, f))
    assert b.f_high_hz is None
    # flat top taken at the top of the range, where |H| = 1 - (f_c/f)^2/2: a 1e-8 effect here
    assert b.f_low_hz == pytest.approx(1 / (TWO_PI * r * c), rel=1e-7)


def test_series_rlc_band_pass_matches_freqs_and_roots():
    # output across R of a series RLC: H = sRC / (s^2 LC + sRC + 1); poles are the roots of the
    # denominator, Q = sqrt(L/C)/R (Nilsson & Riedel, Electric Circuits, chapter 14, from memory);
    # references: scipy.signal.freqs, numpy.roots
    r, l, c = 50.0, 10e-3, 1e-6
    ckt = loads(f"signal VS (a, gnd) 1 V\ninductor L1 (a, m) {l}\ncapacitor C1 (m, b) {c}\n"
                f"resistor R1 (b, gnd) {r}\noutput (b, gnd)\n")
    sc = scenario(ckt, "Gv")
    f = frequencies(10, 1e6, points=400)
    _, ref = scipy.signal.freqs([r * c, 0.0], [l * c, r * c, 1.0], worN=TWO_PI * f)
    assert np.allclose(response(sc, f), ref, rtol=1e-9, atol=1e-13)
    poles, zeros = poles_zeros(sc)
    want = np.sort_complex(np.roots([l * c, r * c, 1.0]))
    assert np.allclose(np.sort_complex(poles), want, rtol=1e-9)
    assert len(zeros) == 1 and abs(zeros[0]) < 1e-6
    assert q_factor(poles[0]) == pytest.approx(math.sqrt(l / c) / r, rel=1e-9)
    # band edges of a second-order band-pass: f0 (sqrt(1 + 1/(4Q^2)) -+ 1/(2Q)) (same source)
    b = band(sc, f, response(sc, f))
    q, f0 = math.sqrt(l / c) / r, 1 / (TWO_PI * math.sqrt(l * c))
    assert b.f_low_hz == pytest.approx(f0 * (math.sqrt(1 + 1 / (4 * q * q)) - 1 / (2 * q)), rel=1e-8)
    assert b.f_high_hz == pytest.approx(f0 * (math.sqrt(1 + 1 / (4 * q * q)) + 1 / (2 * q)), rel=1e-8)


def test_rlc_low_pass_complex_poles():
    # across C of a series RLC: H = 1/(s^2 LC + sRC + 1) (Nilsson & Riedel, chapter 14, from memory)
    r, l, c = 10.0, 1e-3, 1e-6
    ckt = loads(f"signal VS (a, gnd) 1 V, rs={r}\ninductor L1 (a, b) {l}\ncapacitor C1 (b, gnd) {c}\n"
                "output (b, gnd)\n")
    sc = scenario(ckt, "Gv")
    f = frequencies(100, 1e6, points=250)
    _, ref = scipy.signal.freqs([1.0], [l * c, r * c, 1.0], worN=TWO_PI * f)
    assert np.allclose(response(sc, f), ref, rtol=1e-9)
    poles, zeros = poles_zeros(sc)
    assert np.allclose(np.sort_complex(poles), np.sort_complex(np.roots([l * c, r * c, 1.0])), rtol=1e-9)
    assert len(zeros) == 0


def test_lead_network_zero_and_pole():
    # R1 || C in series, R2 shunt: H = R2 (1 + s R1 C) / (R1 + R2 + s R1 R2 C): zero -1/(R1 C),
    # pole -(R1 + R2)/(R1 R2 C) (Ogata, Modern Control Engineering, lead compensator, from memory)
    r1, r2, c = 10e3, 1e3, 10e-9
    ckt = loads(f"signal VS (a, gnd) 1 V\nresistor R1 (a, b) {r1}\ncapacitor C1 (a, b) {c}\n"
                f"resistor R2 (b, gnd) {r2}\noutput (b, gnd)\n")
    poles, zeros = poles_zeros(scenario(ckt, "Gv"))
    assert zeros == pytest.approx([-1 / (r1 * c)], rel=1e-9)
    assert poles == pytest.approx([-(r1 + r2) / (r1 * r2 * c)], rel=1e-9)


def test_poles_agree_with_symbolic_determinant():
    # natural frequencies are the roots of det(G + sC) (Ho, Ruehli, Brennan, "The modified nodal
    # approach to network analysis", 1975); the determinant here is expanded by sympy from the
    # stamped numbers and its polynomial solved by numpy.roots
    import sympy
    ckt = loads("signal VS (a, gnd) 1 V, rs=1k\nresistor R1 (a, b) 2k\ncapacitor C1 (a, gnd) 1n\n"
                "capacitor C2 (b, gnd) 4.7n\nresistor R2 (b, c) 3k3\ncapacitor C3 (c, gnd) 330p\n"
                "capacitor C4 (a, c) 100p\noutput (c, gnd)\n")
    sc = scenario(ckt, "Gv")
    s = sympy.Symbol("s")
    G, C = sc.system.G.toarray().real, sc.system.C.toarray().real
    # exact rationals of the stamped floats (sympy.Rational of a float is exact), never user text
    M = sympy.Matrix(G.shape[0], G.shape[1], lambda i, j: sympy.Rational(G[i, j]) + s * sympy.Rational(C[i, j]))
    coeffs = [float(k) for k in sympy.Poly(M.det(method="berkowitz"), s).all_coeffs()]
    poles, zeros = poles_zeros(sc)
    assert np.allclose(np.sort_complex(poles), np.sort_complex(np.roots(coeffs)), rtol=1e-7)
    # zeros of v(c): numerator by Cramer's rule, det with the b column in place of v(c)'s column
    k = sc.system.stamper.node("c")
    N = M.copy()
    b = sc.system.b.real
    for i in range(N.shape[0]):
        N[i, k] = sympy.Rational(b[i])
    num = [float(x) for x in sympy.Poly(N.det(method="berkowitz"), s).all_coeffs()]
    assert np.allclose(np.sort_complex(zeros), np.sort_complex(np.roots(num)), rtol=1e-7)


def test_dense_and_sparse_paths_are_consistent():
    # consistency check: two routes to the same linear algebra (numpy.linalg.solve vs SuperLU) on
    # the same stamps; the ladder test below has the outside reference (a closed-form ABCD chain)
    c = load(CIRCUITS / "hydrophone_ce_stage.pw")
    sc = scenario(c, "Gv")
    s = 2j * np.pi * frequencies(1, 1e8, points=60)
    ref = solve_many(sc.system, s, dense=True)
    assert np.allclose(ref, solve_many(sc.system, s, dense=False, banded=True), rtol=1e-9, atol=1e-15)
    assert np.allclose(ref, solve_many(sc.system, s, dense=False, banded=False), rtol=1e-9, atol=1e-15)


def test_ladder_sparse_paths_match_the_line_closed_form():
    # a uniform RC ladder of N sections driven from a source and open at the end: the output is
    # 1/T_N with T the ABCD chain of N identical sections (Pozar, section 4.4, cascade of ABCD
    # matrices, from memory); the circuit is large enough for the sparse and banded paths
    n, r, c = 300, 10.0, 1e-9
    lines = ["signal VS (n0, gnd) 1 V"]
    for k in range(n):
        lines += [f"resistor R{k} (n{k}, n{k + 1}) {r}", f"capacitor C{k} (n{k + 1}, gnd) {c}"]
    lines.append(f"output (n{n}, gnd)")
    sc = scenario(loads("\n".join(lines) + "\n"), "Gv")
    assert sc.size > 300
    f = frequencies(1e3, 1e7, points=7)
    want = []
    for x in f:
        y = 2j * np.pi * x * c  # series R, then shunt C: [[1, R], [0, 1]] @ [[1, 0], [Y, 1]]
        sec = np.array([[1 + r * y, r], [y, 1]])
        want.append(1 / np.linalg.matrix_power(sec, n)[0, 0])
    for banded in (True, False):
        x = solve_many(sc.system, 2j * np.pi * f, dense=False, banded=banded)
        assert np.allclose(sc.num(x), want, rtol=1e-8), banded


# --- the CE stage: exact corners vs estimates ----------------------------------------------------
@pytest.fixture(scope="module")
def ce():
    c = load(CIRCUITS / "hydrophone_ce_stage.pw")
    return c, analyse(c, "Gv", frequencies(0.1, 1e9, per_decade=10))


def test_ce_exact_corners_consistent_with_the_port_solve(ce):
    # the corners are where |Gv| = |Gv(mid)|/sqrt(2) (definition of the -3 dB frequency); checked
    # with solver.analysis.ports.port_quantities: a consistency check (same stamps, another solve
    # path); the outside reference is the midband closed form at the end
    c, sm = ce
    b = sm.band
    mid = abs(port_quantities(c, b.midband_hz).quantities["Gv"])
    assert abs(b.midband) == pytest.approx(mid, rel=1e-9)
    for f in (b.f_low_hz, b.f_high_hz):
        assert abs(port_quantities(c, f).quantities["Gv"]) == pytest.approx(mid / math.sqrt(2), rel=1e-7)
    assert 50 < b.f_low_hz < 500 and 1e5 < b.f_high_hz < 1e7
    # midband gain of a bypassed CE stage: -gm (ro || RC || RL) * Rin/(Rin + rs) * rpi/(rx + rpi)
    # with Rin = RB || (rx + rpi) (Sedra & Smith, section 7.3 (CE amplifier), from memory)
    q = c.devices[0].ss
    rb = 47e3 * 10e3 / 57e3
    rin = 1 / (1 / rb + 1 / (q["rx"] + q["rpi"]))
    rl = 1 / (1 / q["ro"] + 1 / 4.7e3 + 1 / 10e3)
    gv = q["gm"] * rl * rin / (rin + 1e3) * q["rpi"] / (q["rx"] + q["rpi"])
    assert abs(b.midband) == pytest.approx(gv, rel=2e-3)  # coupling and device caps are not ideal at 10 kHz


def test_ce_time_constant_resistances_match_textbook():
    # OCTC: R_pi0 = rpi || (rx + rs || RB); R_mu0 = R_pi0 + RL' + gm R_pi0 RL'.
    # SCTC: R_CC1 = rs + RB || (rx + rpi); R_CE = RE || (rx + rpi + rs || RB)/(beta + 1);
    # R_CC2 = RC || ro + RL (Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog Integrated
    # Circuits, 5th ed., section 7.3; Sedra & Smith, chapter 10, from memory)
    # the textbook forms neglect ro: check them on the same stage without the Early effect
    text = (CIRCUITS / "hydrophone_ce_stage.pw").read_text().replace("va=60 V, ", "")
    assert text != (CIRCUITS / "hydrophone_ce_stage.pw").read_text()
    c = loads(text)
    sm = analyse(c, "Gv", frequencies(0.1, 1e9, per_decade=10))
    q = c.devices[0].ss
    par = lambda *r: 1 / sum(1 / x for x in r)  # noqa: E731
    rb, rs = par(47e3, 10e3), 1e3
    rpi0 = par(q["rpi"], q["rx"] + par(rs, rb))
    rlp = par(q["ro"], 4.7e3, 10e3)
    want = {"Q1.cpi": rpi0, "Q1.cmu": rpi0 + rlp + q["gm"] * rpi0 * rlp,
            "CC1": rs + par(rb, q["rx"] + q["rpi"]),
            "CE": par(1e3, (q["rx"] + q["rpi"] + par(rs, rb)) / (q["beta"] + 1)),
            "CC2": par(4.7e3, q["ro"]) + 10e3}
    got = {t.name: t.resistance for t in sm.estimates.terms}
    for name, r in want.items():
        assert got[name] == pytest.approx(r, rel=1e-9), name
    groups = {t.name: t.group for t in sm.estimates.terms}
    assert groups == {"Q1.cpi": "high", "Q1.cmu": "high", "CC1": "low", "CE": "low", "CC2": "low"}


def test_ce_estimates_are_reported_with_their_error(ce):
    # OCTC gives f_H = 1/(2 pi sum R C); SCTC gives f_L = sum 1/(R C) / (2 pi) (Gray et al.,
    # section 7.3, from memory): the tool reports both beside the exact corners with the error
    c, sm = ce
    e, b = sm.estimates, sm.band
    taus_hi = sum(t.tau for t in e.terms if t.group == "high")
    rates_lo = sum(1 / t.tau for t in e.terms if t.group == "low")
    assert e.octc_f_high_hz == pytest.approx(1 / (TWO_PI * taus_hi), rel=1e-12)
    assert e.sctc_f_low_hz == pytest.approx(rates_lo / TWO_PI, rel=1e-12)
    err = sm.errors()
    assert err["octc_f_high_hz"] == pytest.approx(e.octc_f_high_hz / b.f_high_hz - 1, rel=1e-12)
    assert err["sctc_f_low_hz"] == pytest.approx(e.sctc_f_low_hz / b.f_low_hz - 1, rel=1e-12)
    # SCTC overestimates f_L when the pole frequencies are not widely spread (same source)
    assert e.sctc_f_low_hz > b.f_low_hz
    assert abs(err["octc_f_high_hz"]) < 0.2 and abs(err["sctc_f_low_hz"]) < 0.5


def test_ce_miller_pole(ce):
    # Miller: C_in = cpi + cmu (1 + gm RL'), f_M = 1/(2 pi R_pi0 C_in) (Sedra & Smith, section 10.3,
    # from memory); the gain across cmu at midband with cmu open is -gm RL'
    c, sm = ce
    q = c.devices[0].ss
    par = lambda *r: 1 / sum(1 / x for x in r)  # noqa: E731
    rlp = par(q["ro"], 4.7e3, 10e3)
    rpi0 = par(q["rpi"], q["rx"] + par(1e3, par(47e3, 10e3)))
    cin = q["cpi"] + q["cmu"] * (1 + q["gm"] * rlp)
    assert sm.estimates.miller["gain"] == pytest.approx(-q["gm"] * rlp, rel=1e-9)
    assert sm.estimates.miller_f_high_hz == pytest.approx(1 / (TWO_PI * rpi0 * cin), rel=1e-9)


def test_ce_rhp_zero_of_cmu(ce):
    # the feed-forward zero through cmu sits at +gm/cmu (Gray et al., section 7.2.4, from memory)
    c, sm = ce
    q = c.devices[0].ss
    rhp = [z for z in sm.zeros if z.real > 0]
    assert len(rhp) == 1 and rhp[0].real == pytest.approx(q["gm"] / q["cmu"], rel=1e-6)


# --- op-amp gain-bandwidth ---------------------------------------------------------------------
def test_single_pole_opamp_closed_loop_bandwidth():
    # single-pole op-amp A(s) = A0/(1 + s/wb): with feedback factor beta the closed-loop pole is
    # wb (1 + A0 beta), and the unity-gain frequency is A0 fb (Sedra & Smith, section 2.8, from memory)
    a0, gbw, r1, r2 = 200e3, 1e6, 1e3, 99e3
    ckt = loads(f"signal VS (in, gnd) 10 mV\nresistor R1 (in, m) {r1}\nresistor R2 (m, out) {r2}\n"
                f"opamp U1 (out, gnd, m) gain={a0}, gbw={gbw}\nload RL (out, gnd) 10k\n")
    beta = r1 / (r1 + r2)
    f_exact = gbw / a0 * (1 + a0 * beta)
    sm = analyse(ckt, "Gv", frequencies(1, 1e8, per_decade=10))
    assert sm.band.f_high_hz == pytest.approx(f_exact, rel=1e-9)
    assert sm.poles == pytest.approx([-TWO_PI * f_exact], rel=1e-9)
    # closed-loop gain x bandwidth = GBW x (R2/R1)/(1 + R2/R1) for the inverting stage with A0 -> inf
    assert sm.gbw_hz == pytest.approx(gbw * (r2 / r1) / (1 + r2 / r1), rel=1e-3)


def test_opamp_pole_options_are_checked(netlist, cli):
    # bad input ends with exit 2 and a FILE:LINE:COL diagnostic (GNU Coding Standards, "Formatting
    # Error Messages"; the project's rule)
    p = netlist("signal VS (in, gnd) 1 V\nopamp U1 (out, in, out) gain=1e5, fp=10, gbw=1MHz\n"
                "load RL (out, gnd) 1k\n")
    r = cli("solve", p)
    assert r.returncode == 2 and ":3:" not in r.stderr and "not both" in r.stderr
    p = netlist("signal VS (in, gnd) 1 V\nopamp U1 (out, in, out) fp=10\nload RL (out, gnd) 1k\n", "b.pw")
    r = cli("solve", p)
    assert r.returncode == 2 and "needs gain=" in r.stderr and "b.pw:2:" in r.stderr


# --- midband for `solve` -----------------------------------------------------------------------
def test_solve_without_at_uses_midband_and_says_so(cli, ce):
    c, sm = ce
    r = cli("solve", CIRCUITS / "hydrophone_ce_stage.pw")
    assert r.returncode == 0, r.stderr
    assert "midband" in r.stdout
    res = solve(c)
    assert 10 * sm.band.f_low_hz < res.frequency_hz < sm.band.f_high_hz / 10
    assert any("midband" in n for n in res.notes)
    # a purely resistive circuit stays at DC
    assert midband_frequency(loads("signal VS (a, gnd) 1 V\nresistor R (a, gnd) 1k\noutput (a, gnd)\n")) is None


# --- the command line --------------------------------------------------------------------------
def test_sweep_json_shape(cli):
    # the JSON shape is the one the issue specifies (RFC 8259 JSON); poles in rad/s
    r = cli("sweep", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1Hz", "--to", "100MHz", "--points", "81",
            "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["quantity"] == "Gv" and len(d["points"]) == 81
    assert set(d["points"][0]) == {"f", "re", "im"}
    s = d["summary"]
    for key in ("midband_db", "midband_phase_deg", "f_low_hz", "f_high_hz", "poles", "zeros", "estimates"):
        assert key in s
    assert {"re", "im"} == set(s["poles"][0])
    assert s["estimates"]["octc_f_high_hz"] > 0 and s["estimates"]["sctc_f_low_hz"] > 0
    # the JSON poles (rad/s) are the engine's
    c = load(CIRCUITS / "hydrophone_ce_stage.pw")
    p, _ = poles_zeros(scenario(c, "Gv"))
    assert [complex(x["re"], x["im"]) for x in s["poles"]] == pytest.approx(list(p))


def test_sweep_text_report_has_estimates_and_errors(cli):
    r = cli("sweep", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1Hz", "--to", "100MHz")
    assert r.returncode == 0, r.stderr
    out = r.stdout
    for text in ("midband", "f_low", "f_high", "gain-bandwidth", "poles", "zeros",
                 "open-circuit time consts", "short-circuit time consts", "Miller", "%"):
        assert text in out


def test_sweep_csv_and_overwrite_refusal(cli, tmp_path):
    # CSV as in RFC 4180 (header row, comma-separated); dB = 20 log10 |H| (IEC 60027-3, from memory);
    # nothing the user wrote is overwritten without --overwrite (the project's rule)
    out = tmp_path / "r.csv"
    args = ("sweep", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "10Hz", "--to", "1MHz", "--points", "11",
            "--csv", out)
    assert cli(*args).returncode == 0
    rows = out.read_text().splitlines()
    assert rows[0] == "f_hz,magnitude_db,phase_deg,re,im" and len(rows) == 12
    f, db, ph, re_, im = map(float, rows[6].split(","))
    z = complex(re_, im)
    assert db == pytest.approx(20 * math.log10(abs(z))) and ph == pytest.approx(math.degrees(np.angle(z)))
    before = out.read_text()
    r = cli(*args)
    assert r.returncode == 2 and "--overwrite" in r.stderr and out.read_text() == before
    assert cli(*args, "--force").returncode == 2 and out.read_text() == before  # --force is the analysis'
    assert cli(*args, "--overwrite").returncode == 0


def test_plot_png_is_valid(cli, tmp_path):
    # PNG signature and IHDR chunk (ISO/IEC 15948, sections 5.2 and 11.2.2)
    out = tmp_path / "bode.png"
    r = cli("sweep", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1Hz", "--to", "100MHz", "--plot", out)
    assert r.returncode == 0, r.stderr
    data = out.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    w, h = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert (w, h) == (750, 600)
    import matplotlib.image
    img = matplotlib.image.imread(out)
    assert img.shape[:2] == (600, 750)


def test_plot_svg_has_the_expected_axes(cli, tmp_path):
    # SVG 1.1 (W3C): an XML document whose root is <svg>; labels are kept as text elements
    import xml.etree.ElementTree as ET
    out = tmp_path / "bode.svg"
    r = cli("sweep", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1Hz", "--to", "100MHz", "--plot", out)
    assert r.returncode == 0, r.stderr
    root = ET.parse(out).getroot()
    assert root.tag.endswith("svg")
    text = " ".join(t.text or "" for t in root.iter() if t.tag.endswith("text"))
    for label in ("|Gv| (dB)", "phase (°)", "frequency (Hz)", "f_L", "f_H"):
        assert label in text


@pytest.mark.parametrize("args, message", [
    (("--from", "0", "--to", "1MHz"), "above 0 Hz"),
    (("--from", "1MHz", "--to", "1kHz"), "above --from"),
    (("--from", "1Hz", "--to", "1MHz", "--points", "1"), "--points"),
    (("--from", "1Hz", "--to", "1MHz", "--plot", "x.pdf"), ".png or .svg"),
    (("--from", "1Hz", "--to", "1MHz", "--quantity", "Zt"), "current signal"),
    (("--from", "1 V", "--to", "1MHz"), "Hz"),
])
def test_sweep_bad_input_exits_2(cli, args, message):
    # user errors: exit 2 with a diagnostic, never a traceback (the project's rule)
    r = cli("sweep", CIRCUITS / "hydrophone_ce_stage.pw", *args)
    assert r.returncode == 2 and message in r.stderr and "Traceback" not in r.stderr


def test_other_quantities_are_consistent_with_port_quantities():
    # consistency check: every swept quantity equals the single-frequency port solve
    # (solver.analysis.ports; same stamps, another assembly and solve path)
    c = load(CIRCUITS / "hydrophone_ce_stage.pw")
    f = np.array([20.0, 1e4, 3e6])
    for q in ("Gv", "Gvo", "Av", "Avo", "Rin", "Rout", "Ai"):
        h = response(scenario(c, q), f)
        ref = [port_quantities(c, x).quantities[q] for x in f]
        assert np.allclose(h, ref, rtol=1e-9), q


def test_integrator_has_no_flat_top(cli, netlist):
    # an ideal inverting integrator, H = -1/(sRC), falls 20 dB/decade everywhere (Sedra & Smith,
    # section 2.5, from memory): there is no midband, hence no corners; its one pole is at s = 0
    p = netlist("signal VS (in, gnd) 1 V\nresistor R1 (in, m) 10k\ncapacitor C1 (m, out) 100n\n"
                "opamp U1 (out, gnd, m)\nload RL (out, gnd) 10k\n")
    r = cli("sweep", p, "--from", "1Hz", "--to", "1MHz", "--json")
    assert r.returncode == 0, r.stderr
    s = json.loads(r.stdout)["summary"]
    assert s["midband_db"] is None and s["f_high_hz"] is None
    assert s["poles"] == [{"re": 0.0, "im": 0.0}]
    r = cli("solve", p)
    assert r.returncode == 0 and "no flat top" in r.stdout


def test_cs_stage_octc_and_miller_against_textbook():
    # CS stage, source grounded: R_gs = Rsig, R_gd = Rsig (1 + gm RL') + RL', OCTC
    # f_H = 1/(2 pi (Cgs R_gs + Cgd R_gd)); Miller f_H = 1/(2 pi Rsig (Cgs + Cgd (1 + gm RL')))
    # (Sedra & Smith, Microelectronic Circuits, 7th ed., sections 10.3 and 10.4, from memory)
    rsig, gm, ro, rd, rl, cgs, cgd = 20e3, 2e-3, 50e3, 10e3, 20e3, 1e-12, 0.2e-12
    ckt = loads(f"signal VS (g, gnd) 1 V, rs={rsig}\nnmos M1 (d, g, gnd) gm={gm}, ro={ro}, cgs={cgs}, cgd={cgd}\n"
                f"resistor RD (d, gnd) {rd}\nload RL (d, gnd) {rl}\n")
    rlp = 1 / (1 / ro + 1 / rd + 1 / rl)
    sm = analyse(ckt, "Gv", frequencies(1e3, 1e10, per_decade=10))
    e = sm.estimates
    r_gd = rsig * (1 + gm * rlp) + rlp
    assert {t.name: t.resistance for t in e.terms} == pytest.approx({"M1.cgs": rsig, "M1.cgd": r_gd}, rel=1e-9)
    assert e.octc_f_high_hz == pytest.approx(1 / (TWO_PI * (cgs * rsig + cgd * r_gd)), rel=1e-9)
    assert e.miller_f_high_hz == pytest.approx(1 / (TWO_PI * rsig * (cgs + cgd * (1 + gm * rlp))), rel=1e-9)
    # exact transfer function (same source, section 10.4): denominator 1 + b1 s + b2 s^2 with
    # b1 = Cgs Rsig + Cgd R_gd (the OCTC sum is exactly b1) and b2 = Rsig RL' Cgs Cgd; zero at +gm/Cgd
    b1, b2 = cgs * rsig + cgd * r_gd, rsig * rlp * cgs * cgd
    assert np.allclose(np.sort_complex(sm.poles), np.sort_complex(np.roots([b2, b1, 1.0])), rtol=1e-9)
    assert sm.zeros == pytest.approx([gm / cgd], rel=1e-9)
    # |Gv| at the exact f_H is midband - 3 dB (consistency with solver.analysis.ports, same stamps;
    # the midband value itself is the closed form gm RL')
    mid = abs(sm.band.midband)
    assert mid == pytest.approx(gm * rlp, rel=1e-6)
    assert abs(port_quantities(ckt, sm.band.f_high_hz).quantities["Gv"]) == pytest.approx(mid / math.sqrt(2),
                                                                                          rel=1e-7)
    # OCTC is close here (one dominant pole): error below 10 %
    assert abs(sm.errors()["octc_f_high_hz"]) < 0.1


def test_block_instances_elaborate_and_sweep_like_the_flat_netlist():
    # regression for the elaboration fix (instances were queued before the queue existed): a ladder
    # written with a block equals the same ladder written flat (common practice, no source), and
    # both equal the ABCD cascade 1/A of two RC sections (Pozar, section 4.4, from memory)
    blocks = loads("signal VS (a, gnd) 1 V\nblock SEC (p, q)\n  resistor R (p, q) 1k\n"
                   "  capacitor C (q, gnd) 10n\nend\nuse SEC X1 (a, m)\nuse SEC X2 (m, b)\noutput (b, gnd)\n")
    flat = loads("signal VS (a, gnd) 1 V\nresistor R1 (a, m) 1k\ncapacitor C1 (m, gnd) 10n\n"
                 "resistor R2 (m, b) 1k\ncapacitor C2 (b, gnd) 10n\noutput (b, gnd)\n")
    f = frequencies(100, 1e6, points=9)
    h = response(scenario(blocks, "Gv"), f)
    assert np.allclose(h, response(scenario(flat, "Gv"), f), rtol=1e-12)
    y = 2j * np.pi * f * 10e-9
    a = (1 + 1e3 * y) ** 2 + 1e3 * y  # A of [[1 + RY, R], [Y, 1]] squared
    assert np.allclose(h, 1 / a, rtol=1e-10)


def test_sweep_report_carries_the_supply_caution(cli, netlist):
    # supplies above the extra-low-voltage band get a caution (IEC 61140, 120 V ripple-free d.c.,
    # from memory; the project's safety rule)
    p = netlist("signal VS (in, gnd) 1 V, rs=1k\nsupply VHV (top, gnd) 300 V\nresistor R1 (in, top) 10k\n"
                "capacitor C1 (in, gnd) 1n\noutput (in, gnd)\n")
    r = cli("sweep", p, "--from", "1Hz", "--to", "10MHz")
    assert r.returncode == 0, r.stderr
    assert "caution" in r.stdout and "300 V" in r.stdout and "not a safety assessment" in r.stdout


def test_golden_minimum_against_scipy_bounded_minimiser():
    # the golden-section search that finds a resonant flat top agrees with scipy's bounded
    # minimiser (Brent's method, scipy.optimize.minimize_scalar) on a unimodal function:
    # |H| of a second-order band-pass with Q = 5 around its centre, on log f
    # (Kiefer 1953; Press et al., Numerical Recipes 3rd ed., 10.2, from memory)
    import numpy as np
    from scipy.optimize import minimize_scalar
    from solver.analysis.frequency import golden_minimum
    w0, q = 2 * np.pi * 1e4, 5.0

    def neg(logf):
        s = 2j * np.pi * 10.0 ** logf
        return -abs((w0 / q) * s / (s * s + (w0 / q) * s + w0 * w0))

    x, fx = golden_minimum(neg, 3.5, 4.6, 1e-10)
    ref = minimize_scalar(neg, bounds=(3.5, 4.6), method="bounded", options={"xatol": 1e-10})
    assert x == pytest.approx(ref.x, abs=1e-7) and x == pytest.approx(4.0, abs=1e-7)
    assert fx == pytest.approx(ref.fun, rel=1e-12) and fx == pytest.approx(-1.0, rel=1e-12)
