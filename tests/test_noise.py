"""Noise analysis: generators, the adjoint method, en/in, noise figure, totals, the command.

Each check names its outside source. Physical constants come from scipy.constants (CODATA);
closed forms recalled from textbooks are marked "from memory"; numpy's dense solver is the
independent reference for the adjoint transfers.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.constants import e as Q_E, k as K_B

import solver
from solver import loads
from solver.analysis import noise as nm
from solver.diagnostics import InputError
from conftest import CIRCUITS

T = 300.0  # the default element temperature
T0 = 290.0


def _noise(text, freqs):
    c = loads(text)
    return c, nm.analyse(c, np.atleast_1d(np.asarray(freqs, float)))


# --- thermal noise of resistors -----------------------------------------------------------------
@pytest.mark.parametrize("r", [100.0, 10e3])
def test_kt_over_c_is_independent_of_r(r):
    # The integrated thermal noise of an RC low-pass over all frequencies is kT/C whatever R is
    # (Nyquist; e.g. Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog Integrated
    # Circuits, 5th ed., section 11.2, from memory). k: CODATA via scipy.constants.
    c_f = 10e-9
    fc = 1 / (2 * math.pi * r * c_f)
    ckt = loads(f"signal VS (a, gnd) 0 V, rs={r}\ncapacitor C1 (a, gnd) {c_f}\noutput (a, gnd)\n")
    f = np.logspace(math.log10(fc) - 6, math.log10(fc) + 6, 4001)
    nz = nm.analyse(ckt, f)
    total = nz.totals["output_rms"] ** 2
    # over a finite band the closed form is 4kTR fc (atan(f2/fc) - atan(f1/fc)) (integral of a
    # Lorentzian, from memory); over all frequencies it is 4kTR fc pi/2 = kT/C
    band = 4 * K_B * T * r * fc * (math.atan(f[-1] / fc) - math.atan(f[0] / fc))
    assert total == pytest.approx(band, rel=1e-5)
    assert total == pytest.approx(K_B * T / c_f, rel=2e-6)


def test_kt_over_c_finite_band_closed_form():
    # a band that cuts the Lorentzian: 4kTR fc (atan(f2/fc) - atan(f1/fc)) (from memory)
    r, c_f = 1e3, 1e-9
    fc = 1 / (2 * math.pi * r * c_f)
    ckt = loads(f"signal VS (a, gnd) 0 V, rs={r}\ncapacitor C1 (a, gnd) {c_f}\noutput (a, gnd)\n")
    res = solver.noise(ckt, fc / 7, fc * 3, points=2000)
    ref = 4 * K_B * T * r * fc * (math.atan(3) - math.atan(1 / 7))
    assert res.totals["output_rms"] ** 2 == pytest.approx(ref, rel=1e-6)


def test_divider_density():
    # a divider's output density is that of R1 || R2: sqrt(4kT R1R2/(R1+R2)) (Nyquist's theorem,
    # Johnson-Nyquist noise of the Thevenin resistance, from memory)
    r1, r2 = 10e3, 4.7e3
    _, nz = _noise(f"signal VS (in, gnd) 1 V\nresistor R1 (in, out) {r1}\nresistor R2 (out, gnd) {r2}\n"
                   "output (out, gnd)\n", [1.0, 1e3, 1e6])
    ref = 4 * K_B * T * r1 * r2 / (r1 + r2)
    assert np.allclose(nz.output_psd, ref, rtol=1e-12)


def test_temp_and_noise_off():
    # 4kTR at the element's own temperature (from memory); noise=off removes one element
    _, nz = _noise("signal VS (in, gnd) 1 V\nresistor R1 (in, out) 1k, temp=77 K\n"
                   "resistor R2 (out, gnd) 1k, noise=off\noutput (out, gnd)\n", [1e3])
    # R1's current 4kT/R1 at 77 K into R1 || R2 = 500 ohm
    assert nz.output_psd[0] == pytest.approx(4 * K_B * 77 / 1e3 * 500.0 ** 2, rel=1e-12)
    assert [s.element for s in nz.sources] == ["R1"]


def test_load_is_a_noise_source_unless_off():
    base = "signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k, noise=off\n"
    _, on = _noise(base + "load RL (in, gnd) 1k\n", [1e3])
    _, off = _noise(base + "load RL (in, gnd) 1k, noise=off\n", [1e3])
    z = 1 / (3 / 1e3)
    assert on.output_psd[0] == pytest.approx(2 * 4 * K_B * T / 1e3 * z * z, rel=1e-12)
    assert off.output_psd[0] == pytest.approx(4 * K_B * T / 1e3 * z * z, rel=1e-12)


# --- noise figure ------------------------------------------------------------------------------
def test_noiseless_amplifier_has_nf_zero():
    # F = 1 when the only generator is the source (IEEE definition; Friis, Proc. IRE 32, 1944,
    # from memory)
    _, nz = _noise("signal VS (in, gnd) 1 mV, rs=600\nresistor RIN (in, gnd) 10k, noise=off\n"
                   "vcvs E1 (out, gnd) (in, gnd) 40\nload RL (out, gnd) 10k, noise=off\n",
                   np.logspace(1, 5, 9))
    assert np.allclose(nz.nf_db, 0.0, atol=1e-12)
    assert nz.totals["nf_db"] == pytest.approx(0.0, abs=1e-12)


def _t_pad(db, r0=50.0):
    # matched T pad of voltage ratio K: series arms R0 (K-1)/(K+1), shunt 2 R0 K/(K^2-1)
    # (W. Reference Data for Engineers, attenuator design tables; from memory)
    k = 10 ** (db / 20)
    return r0 * (k - 1) / (k + 1), 2 * r0 * k / (k * k - 1), k * k


@pytest.mark.parametrize("db", [3.0, 10.0, 20.0])
def test_matched_attenuator_f_equals_loss(db):
    # A matched passive attenuator of loss L at T0 has F = L; at a physical temperature T,
    # F = 1 + (L - 1) T/T0 (Friis, "Noise figures of radio receivers", Proc. IRE 32, 1944;
    # D. M. Pozar, Microwave Engineering, 4th ed., section 10.2, from memory)
    ra, rb, loss = _t_pad(db)
    net = ("signal VS (in, gnd) 1 V, rs=50\n"
           "resistor RA (in, m) {ra}{t}\nresistor RB (m, gnd) {rb}{t}\nresistor RC (m, out) {ra}{t}\n"
           "load RL (out, gnd) 50, noise=off\n")
    _, at_t0 = _noise(net.format(ra=ra, rb=rb, t=", temp=290 K"), [1e3])
    assert 10 ** (at_t0.nf_db[0] / 10) == pytest.approx(loss, rel=1e-10)
    _, at_300 = _noise(net.format(ra=ra, rb=rb, t=""), [1e3])
    assert 10 ** (at_300.nf_db[0] / 10) == pytest.approx(1 + (loss - 1) * T / T0, rel=1e-10)


# --- transistors ---------------------------------------------------------------------------------
BJT = """signal VS (b, gnd) 1 mV, rs={rs}
npn Q1 (c, b, gnd) ic={ic}, beta={beta}, rx={rx}{extra}
resistor RC (c, gnd) 10k, noise=off
output (c, gnd)
"""


def test_bjt_en_in_and_optimum_source_resistance():
    # Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog Integrated Circuits, 5th ed.,
    # section 11.4 (equivalent input generators of a bipolar transistor), from memory:
    #   en^2 = 4kT (rx + 1/(2 gm)),  in^2 = 2q I_B (+ 2q I_C / beta^2 from the collector shot
    #   noise, negligible for large beta),  Rs_opt = sqrt(beta)/gm for rx = 0,
    #   F_min = 1 + 1/sqrt(beta) (same section; also Motchenbacher & Connelly, Low-Noise
    #   Electronic System Design, chapter 4), all at T = T0 here.
    ic, beta = 1e-3, 100.0
    _, nz = _noise(BJT.format(rs=1000, ic=ic, beta=beta, rx=0, extra=", temp=290 K"), [1e3])
    gm = ic / (K_B * T0 / Q_E)
    ib = ic / beta
    assert nz.en2[0] == pytest.approx(4 * K_B * T0 / (2 * gm), rel=1e-12)
    assert nz.in2[0] == pytest.approx(2 * Q_E * ib + 2 * Q_E * ic / beta ** 2, rel=1e-12)
    assert nz.in2[0] == pytest.approx(2 * Q_E * ib, rel=1.5 / beta)
    assert nz.rs_opt[0] == pytest.approx(math.sqrt(beta) / gm, rel=1 / beta)
    assert 10 ** (nz.nf_min_db[0] / 10) == pytest.approx(1 + 1 / math.sqrt(beta), rel=1 / beta)


def test_bjt_rx_adds_thermal_and_base_current_noise():
    # with rx, en^2 = 4kT rx + 2kT/gm + 2q I_B rx^2 (the base shot current through rx; Gray et
    # al., section 11.4, from memory)
    ic, beta, rx = 2e-3, 200.0, 150.0
    _, nz = _noise(BJT.format(rs=50, ic=ic, beta=beta, rx=rx, extra=""), [1e3])
    gm = ic / (K_B * T / Q_E)
    ref = 4 * K_B * T * (rx + 1 / (2 * gm)) + 2 * Q_E * ic / beta * rx ** 2
    assert nz.en2[0] == pytest.approx(ref, rel=1e-12)


def test_bjt_base_flicker_corner():
    # fc is where the base flicker density equals 2q I_B: in^2(f) = 2q I_B (1 + fc/f) + 2q I_C/beta^2
    ic, beta, fc = 1e-3, 100.0, 200.0
    f = np.array([fc / 10, fc, fc * 10])
    _, nz = _noise(BJT.format(rs=1000, ic=ic, beta=beta, rx=0, extra=f", fc={fc}"), f)
    ref = 2 * Q_E * ic / beta * (1 + fc / f) + 2 * Q_E * ic / beta ** 2
    assert np.allclose(nz.in2, ref, rtol=1e-12)


def test_bjt_hybrid_pi_and_t_model_give_the_same_noise():
    # consistency: the two drawings of one two-port, the generators at the same terminals
    f = np.logspace(1, 7, 13)
    extra = ", cpi=10p, cmu=2p, va=50"
    _, hp = _noise(BJT.format(rs=600, ic=1e-3, beta=120, rx=80, extra=extra), f)
    _, tm = _noise(BJT.format(rs=600, ic=1e-3, beta=120, rx=80, extra=extra + ", model=t"), f)
    for a in ("output_psd", "en2", "in2", "nf_db"):
        assert np.allclose(getattr(hp, a), getattr(tm, a), rtol=1e-9)


def test_mosfet_channel_noise():
    # input-referred channel noise en^2 = 4kT gamma/gm, flicker corner where it equals the
    # thermal part; a gate draws no current, so in = 0 without capacitances (Gray et al.,
    # section 11.4.3, from memory)
    gm, gamma, fc = 2e-3, 1.0, 5e3
    f = np.array([fc, 1e6])
    _, nz = _noise(f"signal VS (g, gnd) 1 mV, rs=1k\nnmos M1 (d, g, gnd) gm={gm}, gamma={gamma}, fc={fc}\n"
                   "resistor RD (d, gnd) 5k, noise=off\noutput (d, gnd)\n", f)
    assert np.allclose(nz.en2, 4 * K_B * T * gamma / gm * (1 + fc / f), rtol=1e-12)
    assert np.all(nz.in2 == 0)
    _, dflt = _noise(f"signal VS (g, gnd) 1 mV, rs=1k\nnmos M1 (d, g, gnd) gm={gm}\n"
                     "resistor RD (d, gnd) 5k, noise=off\noutput (d, gnd)\n", [1e3])
    assert dflt.en2[0] == pytest.approx(4 * K_B * T * (2 / 3) / gm, rel=1e-12)


def test_opamp_follower_noise():
    # a voltage follower driven through rs: output density en^2 + (in rs)^2 + 4kT rs (the en-in
    # model of an op-amp; Motchenbacher & Connelly, chapter 2, from memory); in- of the
    # inverting input sees the output (a source), so it adds nothing
    en, i_n, rs, fce = 4e-9, 1e-12, 10e3, 100.0
    f = np.array([10.0, 1e3])
    _, nz = _noise(f"signal VS (in, gnd) 1 mV, rs={rs}\n"
                   f"opamp U1 (out, in, out) en={en}, in={i_n}, fce={fce}\noutput (out, gnd)\n", f)
    ref = en ** 2 * (1 + fce / f) + (i_n * rs) ** 2 + 4 * K_B * T * rs
    assert np.allclose(nz.output_psd, ref, rtol=1e-12)


def test_opamp_noninverting_gain_noise():
    # non-inverting stage of gain G = 1 + R2/R1, rs = 0: output density
    # G^2 en^2 + (in R2)^2 + (4kT/R1 + 4kT/R2) R2^2: the currents into the inverting node
    # (its in, R1's and R2's thermal currents) all leave through R2 (from memory)
    r1, r2, en, i_n = 1e3, 9e3, 3e-9, 2e-12
    for form in ("", "gain=1e12, ", "gain=1e12, fp=1e6, "):
        _, nz = _noise(f"signal VS (in, gnd) 1 mV\nopamp U1 (out, in, m) {form}en={en}, in={i_n}\n"
                       f"resistor R1 (m, gnd) {r1}\nresistor R2 (out, m) {r2}\noutput (out, gnd)\n", [1.0])
        g = 1 + r2 / r1
        ref = g * g * en ** 2 + (i_n * r2) ** 2 + 4 * K_B * T * (1 / r1 + 1 / r2) * r2 ** 2
        assert nz.output_psd[0] == pytest.approx(ref, rel=1e-6), form


# --- the adjoint against direct solves, and the two-port model ----------------------------------
def _random_circuit(seed):
    rng = np.random.default_rng(seed)
    r = lambda: f"{rng.uniform(100, 20e3):.6g}"
    return (f"signal VS (in, gnd) 1 mV, rs={r()}\n"
            f"resistor RB (in, gnd) {r()}\n"
            f"npn Q1 (c1, in, e1) ic={rng.uniform(0.2, 2):.3g}mA, beta={rng.uniform(50, 300):.4g}, "
            f"rx={rng.uniform(0, 200):.4g}, cpi=8p, cmu=1p, va=60, fc=300\n"
            f"resistor RE (e1, gnd) {rng.uniform(10, 300):.4g}\n"
            f"capacitor CE (e1, gnd) 10u\nresistor RC1 (c1, gnd) {r()}\n"
            f"nmos M2 (out, c1, s2) gm={rng.uniform(1, 5):.3g}m, ro=50k, cgs=2p, fc=2k\n"
            f"resistor RS2 (s2, gnd) {r()}\nresistor RD2 (out, gnd) {r()}\n"
            f"opamp U3 (o3, out, o3) gain=1e5, fp=10, en=5n, in=1p\n"
            f"load RL (o3, gnd) {r()}\n")


@pytest.mark.parametrize("seed", [1, 2])
def test_adjoint_transfers_match_direct_solves(seed):
    # every generator's transfer from the adjoint solve equals a direct solve of the same
    # system with that generator as the only excitation (numpy.linalg.solve as the reference)
    c = loads(_random_circuit(seed))
    sys_, R, r0 = nm._system(c)
    srcs = nm.noise_sources(c, sys_.stamper)
    f = np.array([3.0, 1e3, 2e6])
    nz = nm.analyse(c, f)
    for k, fk in enumerate(f):
        A = sys_.dense("G") + 2j * np.pi * fk * sys_.dense("C")
        direct = 0.0
        for s in srcs:
            b = np.zeros(sys_.stamper.size, complex)
            for row, v in s.injection:
                b[row] += v
            h = R[:, 0] @ np.linalg.solve(A, b)
            direct += abs(h) ** 2 * s.psd(np.array([fk]))[0]
        assert nz.output_psd[k] == pytest.approx(direct, rel=1e-9)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_two_port_model_reproduces_the_noise_figure(seed):
    # consistency: F from the circuit with its own rs equals 1 + (en^2 + 2 rs Re C + rs^2 in^2)/
    # (4 k T0 rs) from the equivalent input generators; and Rs_opt minimises it (from memory:
    # Motchenbacher & Connelly, chapter 4)
    c = loads(_random_circuit(seed))
    f = np.logspace(0, 7, 15)
    nz = nm.analyse(c, f)
    rs = c.signal.rs
    own_load = c.load.name
    F = 1 + (nz.en2 + 2 * rs * nz.corr.real + rs * rs * nz.in2) / (4 * K_B * T0 * rs)
    assert np.allclose(10 ** (nz.nf_db / 10), F, rtol=1e-8), own_load
    for k in (3, 9):
        ropt = nz.rs_opt[k]
        fmin = 10 ** (nz.nf_min_db[k] / 10)
        for r in (0.5 * ropt, 0.9 * ropt, 1.1 * ropt, 2 * ropt):
            fr = 1 + (nz.en2[k] + 2 * r * nz.corr[k].real + r * r * nz.in2[k]) / (4 * K_B * T0 * r)
            assert fr >= fmin * (1 - 1e-12)


def test_contributions_add_up_to_the_total():
    c = loads(_random_circuit(4))
    res = solver.noise(c, 10, 1e6, points=120)
    rows = res.contributions
    assert sum(r["share"] for r in rows) == pytest.approx(1.0, rel=1e-12)
    assert sum(r["power"] for r in rows) == pytest.approx(res.totals["output_rms"] ** 2, rel=1e-12)
    assert [r["share"] for r in rows] == sorted((r["share"] for r in rows), reverse=True)
    spot = solver.noise(c, at=1e3)
    assert sum(r["power"] for r in spot.contributions) == pytest.approx(spot.noise.output_psd[0], rel=1e-12)
    kinds = {(r["element"], r["kind"]) for r in rows}
    assert {("Q1", "shot"), ("Q1", "flicker"), ("Q1", "thermal"), ("M2", "thermal"), ("M2", "flicker"),
            ("U3", "en"), ("U3", "in"), ("VS", "thermal"), ("RL", "thermal")} <= kinds


def test_band_totals_and_snr():
    # totals: integrated power, then square root; SNR = output signal rms / output noise rms
    net = ("signal VS (in, gnd) 10 mV, rs=1k\nresistor R1 (in, gnd) 1k\nvcvs E1 (out, gnd) (in, gnd) 10\n"
           "load RL (out, gnd) 10k, noise=off\n")
    res = solver.noise(loads(net), 100, 10e3, points=50)
    psd = 4 * K_B * T * 500.0 * 100  # (1k || 1k) thermal, times gain^2
    tot = res.totals
    assert tot["output_rms"] == pytest.approx(math.sqrt(psd * (10e3 - 100)), rel=1e-12)
    assert tot["input_rms"] == pytest.approx(math.sqrt(psd / 25 * (10e3 - 100)), rel=1e-12)  # |Gv| = 5
    assert tot["snr_db"] == pytest.approx(20 * math.log10(5 * 10e-3 / math.sqrt(2) / tot["output_rms"]), rel=1e-12)
    # R1 at 300 K against rs at 290 K: F = 1 + 300/290 at every frequency, so on average too
    assert tot["nf_db"] == pytest.approx(10 * math.log10(1 + T / T0), rel=1e-12)


def test_current_signal_refers_to_amperes():
    # a Norton source of rs into a resistor: input-referred current density = output / |Zt|,
    # here sqrt(4kT/rs + 4kT/R1) (from memory)
    res = solver.noise(loads("signal IS (a, gnd) 1 uA, rs=100k\nresistor R1 (a, gnd) 100k\n"
                             "output (a, gnd)\n"), at=1e3)
    d = res.to_dict()
    assert d["units"]["input_density"] == "A/√Hz"
    assert d["input_density"][0] == pytest.approx(math.sqrt(2 * 4 * K_B * T / 100e3), rel=1e-12)


# --- parameters, units, errors ----------------------------------------------------------------
@pytest.mark.parametrize("line, message", [
    ("resistor R1 (a, gnd) 1k, temp=77 V", "temp= expects K"),
    ("resistor R1 (a, gnd) 1k, temp=-4 K", "temp must be positive"),
    ("resistor R1 (a, gnd) 1k, noise=maybe", "noise= is on or off"),
    ("opamp U1 (o, a, o) en=4 pA/√Hz", "en= expects V/√Hz"),
    ("opamp U1 (o, a, o) in=-1 pA/rtHz", "in must not be negative"),
    ("npn Q1 (o, a, gnd) ic=1mA, fc=10 V", "fc= expects Hz"),
    ("nmos M1 (o, a, gnd) gm=1m, gamma=0", "gamma must be positive"),
    ("capacitor C1 (a, gnd) 1n, temp=300 K", "capacitor has no parameter 'temp'"),
])
def test_noise_parameter_errors(line, message):
    with pytest.raises(InputError) as e:
        loads(f"signal VS (a, gnd) 1 V, rs=1k\n{line}\noutput (a, gnd)\n")
    assert message in str(e.value)


def test_noise_units_on_both_parsers():
    from solver.language.parse import _parse
    text = ("opamp U1 (o, p, n) en=4 nV/√Hz, in=1.5 pA/rtHz, fce=10 Hz, fci=1kHz, noise=on\n"
            "resistor R1 (a, b) 4k7, temp=77 K, noise=off\nnpn Q1 (c, b, e) ic=1mA, fc=1kHz\n")
    assert _parse(text, "x", fast=True) == _parse(text, "x", fast=False)
    p = _parse(text, "x", fast=True).statements[0].params
    assert (p[0].value.value, p[1].value.value) == (4e-9, 1.5e-12)


def test_noise_is_for_positive_frequencies():
    with pytest.raises(InputError):
        solver.noise(loads("signal VS (a, gnd) 1 V, rs=1k\noutput (a, gnd)\n"), at=0.0)


# --- every bundled example ---------------------------------------------------------------------
EXAMPLES = sorted(p for p in CIRCUITS.glob("*.pw"))


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_example_has_a_noise_analysis(path):
    res = solver.noise(path, 10, 1e6, points=9)
    nz = res.noise
    assert np.all(np.isfinite(nz.output_psd)) and np.all(nz.output_psd > 0)
    # input density times |gain|^2 is the output density; F >= 1 (every generator adds power)
    assert np.allclose(nz.input_psd * np.abs(nz.gain) ** 2, nz.output_psd, rtol=1e-12)
    assert np.all(nz.nf_db >= -1e-12)
    assert sum(r["share"] for r in res.contributions) == pytest.approx(1.0, rel=1e-12)
    json.loads(res.to_json())


# --- the command ---------------------------------------------------------------------------------
def _run(cli, *args):
    r = cli(*args)
    return r.returncode, r.stdout, r.stderr


def test_cli_json_shape(cli, tmp_path):
    code, out, err = _run(cli, "noise", str(CIRCUITS / "mic_preamp.pw"), "--from", "10Hz", "--to", "100kHz",
                         "--points", "41", "--json")
    assert code == 0, err
    d = json.loads(out)
    for key in ("frequency_hz", "output_density", "input_density", "en", "in", "nf_db"):
        assert len(d[key]) == 41
    assert set(d["total"]) >= {"band_hz", "output_rms", "input_rms", "nf_db", "snr_db"}
    assert d["total"]["band_hz"] == [10.0, 100e3]
    assert set(d["optimum"]) >= {"rs_ohm", "nf_min_db", "at_hz"}
    assert {"element", "kind", "share"} <= set(d["contributions"][0])
    assert d["temperature_k"] == 300 and d["t0_k"] == 290
    code, out, _ = _run(cli, "noise", str(CIRCUITS / "mic_preamp.pw"), "--at", "1kHz", "--json")
    d = json.loads(out)
    assert code == 0 and all(len(d[k]) == 1 for k in ("frequency_hz", "output_density", "en", "in", "nf_db"))
    assert d["optimum"]["at_hz"] == 1000.0


def test_cli_text_files_and_refusals(cli, tmp_path):
    src = str(CIRCUITS / "hydrophone_ce_stage.pw")
    csv, svg = tmp_path / "n.csv", tmp_path / "n.svg"
    code, out, err = _run(cli, "noise", src, "--from", "10Hz", "--to", "1MHz", "--points", "30", "--csv", str(csv),
                         "--plot", str(svg))
    assert code == 0, err
    assert "contributions to the output noise power" in out and "uncorrelated" in out
    assert "no substitute for a measurement" in out
    rows = csv.read_text().splitlines()
    assert rows[0].startswith("f_hz,output_density_v_rthz") and len(rows) == 31
    assert "<svg" in svg.read_text()
    code, _, err = _run(cli, "noise", src, "--csv", str(csv))
    assert code == 2 and "--overwrite" in err
    code, _, err = _run(cli, "noise", src, "--csv", str(csv), "--overwrite")
    assert code == 0
    code, _, err = _run(cli, "noise", src, "--at", "1kHz", "--from", "1Hz", "--to", "1kHz")
    assert code == 2 and "--at" in err
    code, _, err = _run(cli, "noise", src, "--from", "1Hz")
    assert code == 2


def test_batches_give_the_same_result(monkeypatch):
    # the band integral runs across frequency batches and generator blocks: tiny ones change nothing
    c = loads(_random_circuit(5))
    f = np.logspace(0, 7, 57)
    whole = nm.analyse(c, f)
    monkeypatch.setattr(nm, "_BATCH_BYTES", 1)
    monkeypatch.setattr(nm, "_BLOCK_BYTES", 1)  # generators in blocks of 4 too
    pieces = nm.analyse(c, f)
    assert len(pieces.sources) > 8
    assert np.allclose(pieces.power, whole.power, rtol=1e-12)
    assert np.allclose(pieces.output_psd, whole.output_psd, rtol=1e-12)
    assert np.allclose(pieces.en2, whole.en2, rtol=1e-12) and np.allclose(pieces.corr, whole.corr, rtol=1e-10)


@pytest.mark.parametrize("path", EXAMPLES[:6] + ["random"], ids=lambda p: getattr(p, "name", p))
def test_qz_adjoint_matches_lu(path):
    # the generalized Schur route (many frequencies) against a plain LU per frequency
    # (numpy.linalg.solve, LAPACK gesv) on the same transposed matrices
    from solver.analysis import frequency as fq
    from solver.analysis.pipeline import prepare
    c = loads(_random_circuit(6)) if path == "random" else prepare(solver.load(path)).circuit
    sys_, R, _ = nm._system(c)
    s = 2j * np.pi * np.logspace(0, 8, 3 * fq.QZ_MIN_POINTS)
    qz = fq.solve_many_adjoint(sys_, s, R)
    ref = np.stack([np.linalg.solve((sys_.dense("G") + sk * sys_.dense("C")).T, R).T for sk in s])
    scale = np.abs(ref).max(axis=2, keepdims=True)
    assert np.all(np.abs(qz - ref) <= 1e-7 * scale)


def test_sparse_and_dense_paths_agree():
    # a ladder above the dense limit takes the sweep's banded LU, transposed; forced dense
    # (QZ) must give the same noise
    from solver.analysis import frequency as fq
    lines = ["signal VS (n0, gnd) 1 V, rs=50"]
    sections = fq.DENSE_LIMIT + 20
    for k in range(sections):
        lines += [f"resistor R{k} (n{k}, n{k + 1}) 10", f"capacitor C{k} (n{k + 1}, gnd) 10p"]
    lines.append(f"load RL (n{sections}, gnd) 1k")
    c = loads("\n".join(lines) + "\n")
    f = np.logspace(2, 9, 29)
    sparse, dense = nm.analyse(c, f), nm.analyse(c, f, dense=True)
    assert np.allclose(sparse.output_psd, dense.output_psd, rtol=1e-8)
    assert np.allclose(sparse.power, dense.power, rtol=1e-8)
    # en, in refer the output to the input: only meaningful where the ladder passes the signal
    # (far above its corner, |Gv| falls below round-off and so do both paths' en)
    ok = np.abs(sparse.gain) > 1e-6
    assert ok.sum() > 10
    assert np.allclose(sparse.en2[ok], dense.en2[ok], rtol=1e-6)


def test_noise_goes_through_the_pipeline(cli, netlist):
    # the same topology checks as every command (a floating pair: no path to the reference,
    # Chua & Lin, Computer-Aided Analysis of Electronic Circuits, 1975, from memory), and the
    # analysis writes nothing onto the circuit
    p = netlist("signal VS (in, gnd) 1 V, rs=50\nresistor R1 (in, out) 1k\nload RL (out, gnd) 1k\n"
                "resistor RA (x, y) 1k\nresistor RB (x, y) 2k\n")
    r = cli("noise", p, "--at", "1kHz")
    assert r.returncode == 2 and "'x', 'y' have no path to the reference" in r.stderr
    c = loads("supply VCC (vcc, gnd) 12 V\nsignal VS (in, gnd) 1 mV, rs=600\ncapacitor C1 (in, b) 10u\n"
              "resistor R1 (vcc, b) 47k\nresistor R2 (b, gnd) 10k\nresistor RC (vcc, c) 4k7\n"
              "resistor RE (e, gnd) 1k\nnpn Q1 (c, b, e) beta=150, fc=100\noutput (c, gnd)\n")
    before = (dict(c.values), [dict(d.ss) for d in c.devices], dict(c.noise))
    res = solver.noise(c, at=1e3)
    assert res.bias is not None and res.circuit is not c
    assert (dict(c.values), [dict(d.ss) for d in c.devices], dict(c.noise)) == before
    # the bias-solved transistor's shot noise uses its solved collector current
    ic = res.circuit.devices[0].ss["ic"]
    shot = next(s for s in res.noise.sources if s.where == "collector")
    assert shot.white == pytest.approx(2 * Q_E * ic, rel=1e-12)


def test_a_circuit_without_noise_sources():
    res = solver.noise(loads("signal VS (in, gnd) 1 V\nvcvs E1 (out, gnd) (in, gnd) 2\noutput (out, gnd)\n"),
                       10, 1e3, points=5)
    d = res.to_dict()
    assert d["output_density"] == [0.0] * 5 and d["contributions"] == []
    assert d["nf_db"] == ["inf"] * 5 and d["total"]["snr_db"] is None
    assert "contributions" in res.text()


def test_a_poor_schur_solution_falls_back_to_lu(monkeypatch):
    # the residual of every point is checked against G and C themselves: a wrong answer from
    # the Schur route is replaced by an LU solve of that point
    from solver.analysis import frequency as fq
    c = loads(_random_circuit(7))
    sys_, R, _ = nm._system(c)
    s = 2j * np.pi * np.logspace(1, 6, fq.QZ_MIN_POINTS + 2)
    good = fq.solve_many_adjoint(sys_, s, R)
    real_qz = fq._adjoint_qz

    def spoiled(*a):
        y = real_qz(*a)
        y[3] *= 1.001
        return y
    monkeypatch.setattr(fq, "_adjoint_qz", spoiled)
    assert np.allclose(fq.solve_many_adjoint(sys_, s, R), good, rtol=1e-9)
