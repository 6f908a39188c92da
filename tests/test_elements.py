"""Controlled sources, inductors and the stamps shared by all engines, against hand node analysis.

The hand results are one-node KCL/Ohm's-law solutions written beside each check (the
controlled-source sign conventions as in Sedra & Smith, *Microelectronic Circuits*, 7th ed.,
section 1.5 and appendix on two-ports, from memory; MNA as in C.-W. Ho, A. E. Ruehli,
P. A. Brennan, IEEE Trans. CAS 22(6), 1975, from memory).
"""
import math

import numpy as np
import pytest
from scipy.signal import freqs

from solver import loads, solve


def gv(text, f=None):
    return solve(loads(text), f).quantities


def test_vccs_direction():
    # current gm*v(cp,cn) flows from P through the source to N: into R it gives v_o = -gm*R*v_i
    # = -2 mS * 5k = -10 (KCL at o by hand, from memory)
    q = gv("signal VS (i, gnd) 1 V\nvccs G1 (o, gnd) (i, gnd) 2 mS\nresistor R (o, gnd) 5k\noutput (o, gnd)\n")
    assert q["Avo"].real == pytest.approx(-10.0)


def test_vcvs_and_ccvs_and_cccs():
    # VCVS: v_o = mu v_i = 3.5 whatever the load, and an ideal voltage source has Rout = 0
    # (definition of the ideal VCVS, Sedra & Smith 7th ed., section 1.5, from memory)
    q = gv("signal VS (i, gnd) 1 V\nvcvs E1 (o, gnd) (i, gnd) 3.5\nload RL (o, gnd) 1k\n")
    assert q["Av"].real == pytest.approx(3.5) and abs(q["Rout"]) < 1e-12
    # CCVS: v_o = r * i(R1), i(R1) = v_i/R1 flowing from i to gnd
    q = gv("signal VS (i, gnd) 1 V\nresistor R1 (i, gnd) 2k\nccvs H1 (o, gnd) R1 500\noutput (o, gnd)\n")
    assert q["Avo"].real == pytest.approx(500 / 2e3)
    # CCCS: beta * i(R1) flows from o through the source to gnd, so it pulls current out of node o
    q = gv("signal VS (i, gnd) 1 V\nresistor R1 (i, gnd) 1k\ncccs F1 (o, gnd) R1 10\n"
           "resistor R2 (o, gnd) 100\noutput (o, gnd)\n")
    assert q["Avo"].real == pytest.approx(-10 * 1e-3 * 100)


def test_cccs_senses_a_voltage_defined_branch():
    # sensing a voltage supply's current (a branch unknown): i(VX) flows from its + node through it
    q = gv("signal VS (i, gnd) 1 V\nresistor R1 (i, x) 1k\nsupply VX (x, gnd) 0 V\n"
           "cccs F1 (gnd, o) VX 5\nresistor R2 (o, gnd) 200\noutput (o, gnd)\n")
    assert q["Avo"].real == pytest.approx(5 * 1e-3 * 200)


def test_inductor_high_pass_against_freqs():
    # H(s) = sL/(R + sL) (series R, shunt L: a voltage divider of impedances, from memory);
    # reference: scipy.signal.freqs
    R, L = 1e3, 10e-3
    c = loads(f"signal VS (i, gnd) 1 V\nresistor R (i, o) {R}\ninductor L1 (o, gnd) {L}\noutput (o, gnd)\n")
    for f in (100.0, R / (2 * math.pi * L), 1e6):
        _, h = freqs([L, 0], [L, R], worN=[2 * np.pi * f])
        assert solve(c, f).quantities["Gv"] == pytest.approx(complex(h[0]), rel=1e-9)


def test_pnp_has_the_npn_small_signal_model():
    # Sedra & Smith, Microelectronic Circuits, 7th ed., 7.2: the same hybrid-pi for both polarities
    base = "signal VS (b, gnd) 1 V, rs=1k\n{k} Q1 (c, b, gnd) ic={ic}, beta=80, va=40\nload RL (c, gnd) 3k\n"
    a = gv(base.format(k="npn", ic="2 mA"))
    b = gv(base.format(k="pnp", ic="-2 mA"))
    assert set(a) == set(b) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for key in a:
        assert a[key] == pytest.approx(b[key], rel=1e-12)


def test_ground_alias():
    # an equal divider: 1k/(1k + 1k) = 0.5 (Ohm's law; common practice, no source)
    q = gv("ground vss\nsignal VS (i, vss) 1 V\nresistor R1 (i, o) 1k\nresistor R2 (o, vss) 1k\noutput (o, vss)\n")
    assert q["Avo"].real == pytest.approx(0.5)


def test_supplies_in_the_small_signal_view():
    # a voltage supply is a short, a current supply an open (superposition; Sedra & Smith 7th ed.,
    # section 7.2, from memory): what is left is the equal divider, 0.5
    q = gv("signal VS (i, gnd) 1 V\nresistor R1 (i, o) 1k\nresistor R2 (o, vcc) 1k\nsupply VCC (vcc, gnd) 12 V\n"
           "supply IB (o, gnd) 1 mA\noutput (o, gnd)\n")
    assert q["Avo"].real == pytest.approx(0.5)
