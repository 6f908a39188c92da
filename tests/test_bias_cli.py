"""`portwise bias` and the bias step of `portwise solve` from the command line."""
from __future__ import annotations

import json

import pytest

from tests.test_bias import FIXED, FOUR, MOS, PNP, VT


def test_bias_json_has_the_documented_shape(cli, netlist):
    p = netlist(FOUR.format(extra=", va=90 V") + "nmos M9 (vcc, vcc, m9) k=1 mA/V^2, vth=1 V\n"
                "resistor RM (m9, gnd) 10k\n" + "diode D1 (vcc, dk)\nresistor RD (dk, gnd) 10k\n")
    r = cli("bias", p, "--json")
    assert r.returncode == 0, r.stderr
    obj = json.loads(r.stdout)
    assert set(obj) == {"nodes", "devices", "iterations", "supplies", "conventions",
                        "headroom", "swing", "headroom_frequency_hz"}  # headroom: issue 18
    assert "negative for a pnp" in obj["conventions"]["currents"]
    assert obj["iterations"] <= 30
    q = obj["devices"]["Q1"]
    assert set(q) == {"region", "ic", "ib", "vbe", "vce", "power", "gm", "rpi", "ro"}
    assert q["region"] == "active"
    # the core's bias form with the solved collector current (Sedra & Smith 7th ed., 7.2, from memory)
    assert q["gm"] == pytest.approx(q["ic"] / VT, rel=1e-12)
    assert q["rpi"] == pytest.approx(150 / q["gm"], rel=1e-12)
    assert q["ro"] == pytest.approx(90 / q["ic"], rel=1e-12)
    m = obj["devices"]["M9"]
    assert set(m) == {"region", "id", "vgs", "vds", "power", "gm", "ro"}
    assert m["region"] == "saturation" and m["ro"] == "inf"
    assert obj["devices"]["D1"]["region"] == "forward"
    assert obj["nodes"]["vcc"] == 12.0


def test_bias_json_keeps_pnp_signs(cli, netlist):
    obj = json.loads(cli("bias", netlist(PNP), "--json").stdout)
    q = obj["devices"]["Q1"]
    assert q["ic"] < 0 and q["ib"] < 0 and q["vbe"] < 0 and q["vce"] < 0 and q["gm"] > 0


def test_bias_text_report(cli, netlist):
    r = cli("bias", netlist(FOUR.format(extra="")))
    assert r.returncode == 0, r.stderr
    assert "DC operating point (Newton–Raphson" in r.stdout
    assert "Q1  npn   active" in r.stdout
    assert "small-signal from the bias point: gm" in r.stdout
    assert "not a safety assessment" not in r.stdout  # 12 V: no caution after the report (issue 17)


def test_solve_shows_the_bias_table_and_refuses_a_saturated_stage(cli, netlist):
    ok = cli("solve", netlist(FOUR.format(extra="")))
    assert ok.returncode == 0, ok.stderr
    assert "DC operating point" in ok.stdout and "port quantities" in ok.stdout
    p = netlist(FIXED.format(rb="47k", rc="4k7", extra=""), "sat.pw")
    bad = cli("solve", p)
    assert bad.returncode == 2
    assert f"{p}:7:1: error: Q1 is in saturation" in bad.stderr
    assert "Traceback" not in bad.stderr
    forced = cli("solve", p, "--force")
    assert forced.returncode == 0
    assert "WARNING: Q1 is in saturation" in forced.stdout
    assert "port quantities" in forced.stdout


def test_solve_json_carries_the_bias(cli, netlist):
    obj = json.loads(cli("solve", netlist(MOS.format(extra="")), "--json").stdout)
    assert obj["bias"]["devices"]["M1"]["region"] == "saturation"
    assert "Av" in obj["quantities"]


def test_cautions_for_high_supply_and_device_power(cli, netlist):
    # IEC 61140 extra-low-voltage band, 120 V ripple-free d.c. (from memory)
    text = (FIXED.format(rb="4M7", rc="47k", extra=", pmax=1 mW").replace("12 V", "150 V"))
    r = cli("bias", netlist(text))
    assert r.returncode == 0, r.stderr
    assert "caution: supply VCC is 150 V, above the 120 V d.c. extra-low-voltage limit" in r.stdout
    assert r.stdout.count("extra-low-voltage") == 1  # said once, not again for the node
    assert "caution: Q1 dissipates" in r.stdout and "above its pmax=0.001 W" in r.stdout


def test_caution_for_stacked_supplies_beyond_the_dc_band(cli, netlist):
    # two 80 V supplies in series put a node at 160 V, beyond the IEC 61140 120 V d.c. band (from memory)
    text = FIXED.format(rb="4M7", rc="47k", extra="").replace(
        "supply VCC (vcc, gnd) 12 V", "supply VA (mid, gnd) 80 V\nsupply VB (vcc, mid) 80 V")
    r = cli("bias", netlist(text))
    assert r.returncode == 0, r.stderr
    assert "caution: node vcc sits at 160 V, above the 120 V d.c. extra-low-voltage limit" in r.stdout


def test_caution_for_a_signal_beyond_the_ac_band(cli, netlist):
    # 100 V peak is 70.7 V rms, beyond the IEC 61140 50 V a.c. band (from memory)
    r = cli("bias", netlist(FOUR.format(extra="").replace("10 mV, rs=600", "100 V, rs=600")))
    assert "caution: signal VS is 100 V peak (70.71 V rms)" in r.stdout


def test_missing_mosfet_parameters_are_a_diagnostic(cli, netlist):
    p = netlist(MOS.format(extra="").replace("k=4 mA/V^2, vth=1 V", "lambda=0.01"))
    for cmd in ("bias", "solve"):
        r = cli(cmd, p)
        assert r.returncode == 2
        assert f"{p}:7:1: error: M1: the bias solve needs k=" in r.stderr


def test_a_loop_of_voltage_sources_is_named_before_newton(cli, netlist):
    # no loop of voltage sources (Chua & Lin, Computer-Aided Analysis of Electronic
    # Circuits, 1975, topological conditions, from memory): named, not left to Newton
    p = netlist(FOUR.format(extra="") + "supply V2 (vcc, gnd) 9 V\n")
    r = cli("bias", p)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert f"{p}:14:1: error: a loop of voltage-defined branches" in r.stderr
    assert "VCC (line 3)" in r.stderr and "V2 (line 14)" in r.stderr


def test_help_lists_the_bias_command(cli):
    r = cli("bias", "--help")
    assert r.returncode == 0 and "--json" in r.stdout
