"""Two-port parameters and Touchstone files, against textbook closed forms and conversion tables."""
from __future__ import annotations

import json

import numpy as np
import pytest

from solver import loads
from solver.api import load
from solver.output.touchstone import read_touchstone, touchstone
from solver.analysis.twoport import (abcd_to_s, g_to_abcd, h_to_g, s_sweep, s_to_z,
                            two_port, y_to_h, z_to_s, z_to_y)
from conftest import CIRCUITS

R1, R2, R3 = 10.0, 20.0, 30.0
TEE = ("signal VS (a, gnd) 1 V, rs=75\nresistor R1 (a, m) 10\nresistor R2 (m, b) 20\n"
       "resistor R3 (m, gnd) 30\nload RL (b, gnd) 1k\n")


@pytest.fixture
def tee():
    return two_port(loads(TEE), 1e3, 50.0)


def test_tee_z_y_abcd_against_closed_forms(tee):
    # tee network: z11 = R1 + R3, z12 = z21 = R3, z22 = R2 + R3; ABCD = [[1 + R1/R3, R1 + R2 + R1 R2/R3],
    # [1/R3, 1 + R2/R3]] (Pozar, Microwave Engineering, 4th ed., section 4.4, Table 4.1, from memory)
    m = tee.matrices
    assert np.allclose(m["z"], [[R1 + R3, R3], [R3, R2 + R3]], rtol=1e-12)
    assert np.allclose(m["y"], np.linalg.inv([[R1 + R3, R3], [R3, R2 + R3]]), rtol=1e-12)
    assert np.allclose(m["abcd"], [[1 + R1 / R3, R1 + R2 + R1 * R2 / R3], [1 / R3, 1 + R2 / R3]], rtol=1e-12)
    # ABCD of a reciprocal network has AD - BC = 1 (Pozar, section 4.4, from memory)
    a = m["abcd"]
    assert a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0] == pytest.approx(1.0)


def test_tee_h_and_g_against_closed_forms(tee):
    # h11 = R1 + R2||R3, h12 = R3/(R2 + R3), h21 = -R3/(R2 + R3), h22 = 1/(R2 + R3)
    # (Sedra & Smith, Microelectronic Circuits, appendix C, from memory)
    h = [[R1 + R2 * R3 / (R2 + R3), R3 / (R2 + R3)], [-R3 / (R2 + R3), 1 / (R2 + R3)]]
    assert np.allclose(tee.matrices["h"], h, rtol=1e-12)
    assert np.allclose(tee.matrices["g"], np.linalg.inv(h), rtol=1e-12)


def test_tee_s_against_pozar(tee):
    # S = (Z - z0 I)(Z + z0 I)^-1 (Pozar, section 4.3, from memory), measured here with terminations
    z = np.array([[R1 + R3, R3], [R3, R2 + R3]], complex)
    eye = np.eye(2)
    assert np.allclose(tee.matrices["s"], (z - 50 * eye) @ np.linalg.inv(z + 50 * eye), rtol=1e-12)
    # and from the ABCD column of Table 4.2
    assert np.allclose(tee.matrices["s"], abcd_to_s(tee.matrices["abcd"], 50.0), rtol=1e-12)


def test_round_trip_z_y_h_g_abcd_s_z():
    # conversion table (Pozar, section 4.4, Table 4.2, from memory): a chain of conversions returns
    # to the start, for the tee and for random non-reciprocal complex matrices
    rng = np.random.default_rng(5)
    cases = [np.array([[R1 + R3, R3], [R3, R2 + R3]], complex)]
    cases += [rng.normal(size=(2, 2)) * 100 + 1j * rng.normal(size=(2, 2)) * 100 + np.eye(2) * 300
              for _ in range(20)]
    for z in cases:
        back = s_to_z(abcd_to_s(g_to_abcd(h_to_g(y_to_h(z_to_y(z)))), 75.0), 75.0)
        assert np.allclose(back, z, rtol=1e-9, atol=1e-9)
        assert np.allclose(s_to_z(z_to_s(z, 75.0), 75.0), z, rtol=1e-9)


def test_measured_sets_are_consistent_on_an_amplifier():
    # each set is measured with its own drive; the table conversions must link them
    # (Pozar, Table 4.2; Sedra & Smith, appendix C; from memory)
    tp = two_port(load(CIRCUITS / "hydrophone_ce_stage.pw"), 1e4, 50.0)
    m = tp.matrices
    assert np.allclose(z_to_y(m["z"]), m["y"], rtol=1e-7)
    assert np.allclose(y_to_h(m["y"]), m["h"], rtol=1e-7)
    assert np.allclose(h_to_g(m["h"]), m["g"], rtol=1e-7)
    assert np.allclose(z_to_s(m["z"], 50.0), m["s"], rtol=1e-7, atol=1e-12)
    # not reciprocal: the transistor makes z21 far larger than z12
    assert abs(m["z"][1, 0]) > 1e4 * abs(m["z"][0, 1])


def test_reciprocal_rc_network_has_symmetric_z():
    # a network of R, L, C is reciprocal: z12 = z21 (Pozar, section 4.2, from memory)
    tp = two_port(loads("signal VS (a, gnd) 1 V\nresistor R1 (a, m) 1k\ncapacitor C1 (m, gnd) 10n\n"
                        "inductor L1 (m, b) 1m\nresistor R2 (b, gnd) 470\nload RL (b, gnd) 1k\n"), 30e3)
    z = tp.matrices["z"]
    assert z[0, 1] == pytest.approx(z[1, 0], rel=1e-10)


def test_ideal_transconductor_has_no_z(cli, netlist):
    # an ideal VCCS with no output resistance: the output is a current source, so no open-circuit
    # impedance matrix exists while y = [[1/Rin, 0], [gm, 0]] does (current gm v1 drawn out of node b,
    # i.e. into the network at port 2) (Sedra & Smith, appendix C, from memory)
    text = ("signal VS (a, gnd) 1 V\nresistor RIN (a, gnd) 2k\nvccs G1 (b, gnd) (a, gnd) 5 mS\n"
            "load RL (b, gnd) 1k\n")
    tp = two_port(loads(text), 1e3)
    assert tp.matrices["z"] is None and "ideal transconductor" in tp.reasons["z"]
    assert np.allclose(tp.matrices["y"], [[1 / 2e3, 0], [5e-3, 0]], atol=1e-15)
    r = cli("twoport", netlist(text), "--at", "1kHz", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["z"] is None and "ideal transconductor" in d["reasons"]["z"]
    assert d["y"][1][0]["re"] == pytest.approx(5e-3)
    for key in ("z", "y", "h", "g", "abcd", "s"):
        assert key in d


def test_cli_json_matches_closed_forms(cli, netlist):
    r = cli("twoport", netlist(TEE), "--at", "1kHz", "--z0", "75", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["z0"] == 75
    z = [[c["re"] + 1j * c["im"] for c in row] for row in d["z"]]
    assert np.allclose(z, [[R1 + R3, R3], [R3, R2 + R3]])  # Pozar, section 4.4, from memory
    r = cli("twoport", netlist(TEE, "b.pw"), "--at", "1kHz")
    assert r.returncode == 0 and "ABCD" in r.stdout and "not a safety assessment" not in r.stdout  # low voltage: no caution (issue 17)


def test_touchstone_rereads_to_the_same_numbers(cli, tmp_path):
    out = tmp_path / "ce.s2p"
    r = cli("twoport", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1kHz", "--to", "10MHz", "--points", "9",
            "--touchstone", out)
    assert r.returncode == 0, r.stderr
    text = out.read_text()
    # Touchstone 1.1 option line: # <frequency unit> <parameter> <format> R <reference>
    assert "# HZ S RI R 50" in text.splitlines()
    freqs, s, z0 = read_touchstone(text)
    c = load(CIRCUITS / "hydrophone_ce_stage.pw")
    assert z0 == 50 and len(freqs) == 9
    # consistency checks (same engine): the file rereads to the sweep, and the sweep to the
    # single-frequency measurement; the closed-form references are the tee tests above
    assert np.allclose(s, s_sweep(c, freqs), rtol=1e-10, atol=1e-15)
    assert np.allclose(s[4], two_port(c, freqs[4]).matrices["s"], rtol=1e-9, atol=1e-15)
    # the 2-port data order is N11 N21 N12 N22 (Touchstone 1.1 specification): column 3 is S21
    first = [ln for ln in text.splitlines() if ln and ln[0] not in "!#"][0].split()
    s21 = complex(float(first[3]), float(first[4]))
    assert s21 == pytest.approx(s_sweep(c, freqs[:1])[0][1, 0], rel=1e-10)
    assert abs(s21) > 1  # forward gain, not the tiny reverse transmission
    before = out.read_bytes()
    r = cli("twoport", CIRCUITS / "hydrophone_ce_stage.pw", "--from", "1kHz", "--to", "10MHz",
            "--touchstone", out)
    assert r.returncode == 2 and out.read_bytes() == before


def test_reader_handles_other_formats():
    # MA and DB formats and a GHZ unit (Touchstone 1.1 specification)
    s = np.array([[[0.5j, 2.0], [0.01, -0.25]]])
    ri = read_touchstone(touchstone([2e9], s))
    assert np.allclose(ri[1], s)
    ma = "# GHZ S MA R 50\n2 0.5 90 2 0 0.01 0 0.25 180\n"
    f, s_ma, _ = read_touchstone(ma)
    assert f[0] == 2e9 and np.allclose(s_ma, [[[0.5j, 0.01], [2.0, -0.25]]], atol=1e-12)
    db = "# MHZ S DB R 75\n1 0 0 6.0206 0 -20 0 0 0\n"
    f, s_db, z0 = read_touchstone(db)
    assert f[0] == 1e6 and z0 == 75 and s_db[0, 1, 0] == pytest.approx(2.0, rel=1e-4)


@pytest.mark.parametrize("args, message", [
    (("--z0", "-5", "--at", "1kHz"), "--z0"),
    ((), "--at"),
    (("--touchstone", "x.s2p"), "--from"),
    (("--at", "1 V"), "Hz"),
])
def test_twoport_bad_input_exits_2(cli, args, message):
    # user errors: exit 2 with a diagnostic, never a traceback (the project's rule)
    r = cli("twoport", CIRCUITS / "hydrophone_ce_stage.pw", *args)
    assert r.returncode == 2 and message in r.stderr and "Traceback" not in r.stderr


def test_a_fault_inside_the_network_is_named_before_measuring(cli, netlist):
    # a floating pair inside the tee (Chua & Lin 1975, topological conditions, from memory):
    # one diagnostic at its line, not six matrices that "do not exist"
    p = netlist(TEE + "resistor R4 (x, y) 1k\n")
    r = cli("twoport", p, "--at", "1kHz")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert (f"{p}:6:1: error: nodes 'x', 'y' have no path to the reference node with both ports "
            "terminated (joined by R4 (line 6))") in r.stderr
    # a port that is a short at DC (an inductor across port 1) is not a fault of the network:
    # the checks pass, z22 = R2 + R1 || R3 (closed form of the tee), and y does not exist
    r = cli("twoport", netlist(TEE + "inductor L1 (a, gnd) 1 mH\n", "l.pw"), "--at", "0", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["y"] is None
    assert d["z"][1][1]["re"] == pytest.approx(R2 + R1 * R3 / (R1 + R3), rel=1e-12)
