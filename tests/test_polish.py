"""What a new user trips over (issue 17): values, messages, options, API and output polish.

Messages are checked against the fast path and lark alone (``_parse(..., fast=False)``) where
the parser is involved; numbers against closed forms written here.
"""
from __future__ import annotations

import json
import os
import unicodedata

import pytest

import solver
from solver.diagnostics import InputError
from solver.language.parse import _parse

CE = """\
signal VS (in, gnd) 10 mV, rs=600
resistor RB (in, gnd) 47k
npn Q1 (c, in, gnd) ic=1mA, beta=100
resistor RC (c, gnd) 4k7
load RL (c, gnd) 10k
"""


def _messages(text, fast=True):
    try:
        _parse(text, "t.pw", fast)
    except InputError as e:
        return [(d.loc.line, d.loc.col, d.message) for d in e.diagnostics]
    return []


def _warnings(text):
    return [(d.loc.line, d.message) for d in solver.loads(text, "t.pw").warnings]


# --- values accepted silently ---------------------------------------------------------------
@pytest.mark.parametrize("fast", [True, False])
def test_rkm_code_followed_by_a_prefix_is_an_error(fast):
    # IEC 60062:2016 (the RKM code): the letter is the multiplier and the decimal point, so
    # 4k7 = 4.7e3 and a second multiplier has no meaning
    got = _messages("resistor RC (c, gnd) 4k7k\n", fast)
    assert got == [(1, 22, "the RKM code 4k7 already carries its multiplier (4700); a prefix after it "
                           "is not allowed: write 4k7")]
    assert _messages("resistor RC (c, gnd) 4k7 kΩ\n", fast)[0][2].endswith("write 4k7Ω")
    assert _messages("resistor RC (c, gnd) 4k7 Ω\n", fast) == []


def test_implausible_values_warn_with_the_likely_intent():
    # bounds: common practice, no source (a resistor from 1 Ω to 1 GΩ, ic below 10 A, supply below 10 kV)
    text = CE.replace("4k7", "10m") + "supply VCC (vcc, gnd) 20 kV\nresistor RX (vcc, gnd) 1e308\n"
    text = text.replace("ic=1mA", "ic=1e6 A")
    w = dict(_warnings(text))
    assert w[4] == "10 mΩ is implausible for a resistor (below 1 Ω); for megaohms write 10M"
    assert w[3].startswith("1 MA is implausible for a transistor's bias current (above 10 A)")
    assert "1e-6 A" in w[3]
    assert w[6] == "20 kV is implausible for a supply (above 10 kV)"
    assert w[7].startswith("1e+308 Ω is implausible for a resistor (above 1 GΩ)")
    assert _warnings(CE) == []  # ordinary values say nothing


def test_element_on_one_node_warns_at_its_line_and_takes_the_blame():
    w = _warnings(CE + "resistor R2 (in, in) 1k\n")
    assert w == [(6, "R2 has both ends on node 'in': it carries no current and does nothing "
                     "(a typo for another node?)")]
    # RC on (c, c): the cut set at c would name Q1.gm; the error points at RC's line instead
    with pytest.raises(InputError) as e:
        solver.solve(solver.loads(CE.replace("RC (c, gnd)", "RC (c, c)"), "t.pw"))
    err = [d for d in e.value.diagnostics if d.severity == "error"][0]
    assert err.loc.line == 4 and err.message.startswith("RC (line 4) has both ends on 'c'")


@pytest.mark.parametrize("fast", [True, False])
def test_unicode_compatibility_forms_of_unit_symbols(fast):
    # Unicode Standard Annex #15 (NFKC): the ohm sign U+2126 is Ω U+03A9, the micro sign U+00B5
    # is μ U+03BC, full-width digits are ASCII digits (checked with unicodedata itself)
    assert unicodedata.normalize("NFKC", "\u2126") == "\u03a9"
    text = ("signal VS (in, gnd) 1 \u00b5V\nresistor R1 (in, out) 4.7 k\u2126\n"
            "capacitor C1 (out, gnd) 1 \u03bcF\nload RL (out, gnd) \uff11\uff10 k\u03a9\n")
    nl = _parse(text, "t.pw", fast)
    vals = [s.value.value for s in nl.statements]
    assert vals == pytest.approx([1e-6, 4700.0, 1e-6, 1e4])
    assert nl.source == text  # what the user wrote is kept
    title = 'title "\uff21\u2126"\n'
    assert _parse(title, "t.pw", fast).statements[0].text == "\uff21\u2126"  # strings as written


def test_files_not_in_utf8_say_save_as_utf8(tmp_path, cli):
    latin = tmp_path / "latin.pw"
    latin.write_bytes("signal VS (in, gnd) 1 µV\n".encode("latin-1"))
    utf16 = tmp_path / "utf16.pw"
    utf16.write_text(CE, encoding="utf-16")
    for f in (latin, utf16):
        r = cli("solve", f)
        assert r.returncode == 2 and "save the file as UTF-8" in r.stderr
    assert "'µ'" in cli("solve", latin).stderr
    assert "UTF-16" in cli("solve", utf16).stderr


# --- messages -------------------------------------------------------------------------------
@pytest.mark.parametrize("fast", [True, False])
def test_misspelt_keyword_says_did_you_mean(fast):
    assert _messages("resistr RC (c, gnd) 1k\n", fast) == [(1, 1, "unknown statement 'resistr'; did you mean "
                                                                  "'resistor'?")]
    assert "did you mean 'npn'? (keywords are lower case)" in _messages("NPN Q1 (c, b, e) ic=1mA\n", fast)[0][2]
    msg = _messages("widget W1 (a, gnd) 1k\n", fast)[0][2]
    assert "a statement starts with a keyword (" in msg and "resistor" in msg and "vcvs" in msg


@pytest.mark.parametrize("line, expected", [
    ("resistor R1 (a, b)\n", "expected a value"),
    ("resistor R1 a, b 1k\n", "expected a node list such as (a, b)"),
    ("ground\n", "expected a node name"),
    ("signal VS (in, gnd) 1 V rs=50\n", "',' before a parameter, end of line"),
    ("(a, b)\n", "expected a statement keyword ("),
])
@pytest.mark.parametrize("fast", [True, False])
def test_expected_tokens_speak_the_language(fast, line, expected):
    (msg,) = [m for _, _, m in _messages(line, fast)]
    assert expected in msg
    # never a terminal's name, never "or more"
    for internal in ("BLOCK", "CLAIM", "_KW", "QUANTITY", "NAME", "LPAR", "or more", "$END"):
        assert internal not in msg


def test_reference_node_spelt_in_another_case(cli, netlist):
    r = cli("solve", netlist("signal VS (in, GND) 1 V\nresistor R1 (in, out) 1k\nload RL (out, GND) 1k\n"))
    assert r.returncode == 2
    assert "node names are case sensitive" in r.stderr and "'ground GND'" in r.stderr and "'gnd'" in r.stderr
    # no gnd anywhere: the message says so
    r = cli("solve", netlist("signal VS (in, x) 1 V, rs=50\nresistor R1 (in, out) 1k\nload RL (out, x) 1k\n"))
    assert "no element is connected to the reference node 'gnd'" in r.stderr and "ground NODE" in r.stderr
    # the signal's node behind its rs is never named
    assert "inner node" not in r.stderr and "{sig}" not in r.stderr
    # a circuit that solves anyway still hears about 'GND'
    r = cli("solve", netlist("signal VS (in, GND) 1 V\nresistor R1 (in, out) 1k\nresistor R2 (out, gnd) 1k\n"
                             "load RL (out, GND) 1k\n"))
    assert r.returncode == 0 and "warning: node 'GND' is not the reference node 'gnd'" in r.stderr


def test_internal_nodes_are_described_by_their_element():
    from solver.circuit.topology import describe_node
    c = solver.loads("signal VS (in, gnd) 1 V, rs=50\nnpn Q1 (c, in, gnd) ic=1mA, rx=100\nload RL (c, gnd) 1k\n")
    assert describe_node("{sig}", c) == "signal 'VS'"
    assert describe_node("Q1:b", c) == "npn 'Q1'"


@pytest.mark.parametrize("argv", [["--at=-5Hz"], ["--at", "-5Hz"]])
def test_negative_frequency_says_positive(cli, netlist, argv):
    r = cli("solve", netlist(CE), *argv)
    assert r.returncode == 2 and "--at: frequency must be positive" in r.stderr and "not a number" not in r.stderr


# --- options and exit codes -----------------------------------------------------------------
# a CE stage whose collector resistor is far too large: the transistor saturates (from memory:
# I_C * RC would exceed the supply, so V_CE collapses to a few tens of millivolts)
SATURATED = """\
supply VBAT (vcc, gnd) 12 V
signal VP (pick, gnd) 5 mV, rs=2k2
capacitor CIN (pick, b) 4u7
resistor RB1 (vcc, b) 68k
resistor RB2 (b, gnd) 15k
npn Q1 (c, b, e) beta=180, va=90 V, is=5f
resistor RC (vcc, c) 470k
resistor RE (e, gnd) 1k2
capacitor CE (e, gnd) 470u
capacitor COUT (c, out) 10u
load RL (out, gnd) 22k
claim Av ~ -(RC || RL || Q1.ro)*Q1.gm within 5%
"""


# a CE stage biased by one base resistor (I_B = (12 V - V_BE)/1 MΩ ≈ 11 µA, I_C ≈ 1.1 mA with β = 100, from
# memory); its claim is exact (Rout = RC || ro with the emitter grounded: Sedra & Smith, 7th ed., section 7.6),
# so checking it needs no search for limits. With RC = 470k the transistor saturates.
ONE_RESISTOR_BIAS = """\
supply VCC (vcc, gnd) 12 V
signal VS (src, gnd) 5 mV, rs=1k
capacitor CIN (src, b) 10u
resistor RB (vcc, b) 1M
npn Q1 (c, b, gnd) beta=100, va=50 V
resistor RC (vcc, c) 4k7
load RL (c, gnd) 10k
claim Rout = RC || Q1.ro
"""


def test_bias_reports_saturation_as_a_warning_and_solve_refuses(cli, netlist):
    p = netlist(SATURATED)
    r = cli("bias", p)
    assert r.returncode == 0 and "warning: Q1 is in saturation" in r.stderr and "error:" not in r.stderr
    r = cli("solve", p)
    assert r.returncode == 2 and "error: Q1 is in saturation" in r.stderr


@pytest.mark.parametrize("cmd", [["solve"], ["derive", "Av"], ["check"], ["sweep", "--from", "10Hz", "--to", "1MHz"],
                                 ["twoport", "--at", "1kHz"], ["loop", "--around", "Q1"],
                                 ["sensitivity"]])
def test_every_use_hint_works_on_the_command_that_printed_it(cli, netlist, cmd):
    import re
    p = netlist(ONE_RESISTOR_BIAS.replace("4k7", "470k"))
    r = cli(cmd[0], p, *cmd[1:])
    assert r.returncode == 2
    hints = re.findall(r"use (--[a-z-]+)", r.stderr)
    assert hints == ["--force"]
    r = cli(cmd[0], p, *cmd[1:], *hints)
    assert r.returncode in (0, 1) and "unrecognized arguments" not in r.stderr  # check: 1 = the claim fails
    assert "outside its amplifying region" in r.stderr


@pytest.mark.parametrize("cmd, opt", [(["sweep", "--from", "10Hz", "--to", "1MHz"], "--csv"),
                                      (["twoport", "--from", "1kHz", "--to", "1MHz"], "--touchstone")])
def test_overwrite_replaces_files_and_force_does_not(cli, netlist, tmp_path, cmd, opt):
    out = tmp_path / "out.txt"
    out.write_text("user data")
    p = netlist(CE.replace("load RL (c, gnd) 10k", "capacitor CO (c, o) 1u\nload RL (o, gnd) 10k"))
    r = cli(cmd[0], p, *cmd[1:], opt, out)
    assert r.returncode == 2 and "use --overwrite" in r.stderr and out.read_text() == "user data"
    assert cli(cmd[0], p, *cmd[1:], opt, out, "--force").returncode == 2 and out.read_text() == "user data"
    assert cli(cmd[0], p, *cmd[1:], opt, out, "--overwrite").returncode == 0 and out.read_text() != "user data"


def test_output_files_honour_the_umask(tmp_path):
    from solver.cli.commands.common import write_file
    # POSIX open(2): a new file's mode is 0666 & ~umask (from memory)
    old = os.umask(0o027)
    try:
        write_file(tmp_path / "a.csv", "x")
        os.umask(0o002)
        write_file(tmp_path / "b.csv", "x")
    finally:
        os.umask(old)
    assert (tmp_path / "a.csv").stat().st_mode & 0o777 == 0o640
    assert (tmp_path / "b.csv").stat().st_mode & 0o777 == 0o664


# --- midband --------------------------------------------------------------------------------
HYDRO = "circuits/hydrophone_ce_stage.pw"


def test_solve_midband_shorts_coupling_opens_device_capacitances(cli):
    from tests.conftest import ROOT
    r = solver.solve(ROOT / HYDRO, midband=True)
    assert r.midband.shorted == ["CC1", "CE", "CC2"] and r.midband.opened == ["Q1.cpi", "Q1.cmu"]
    q, d = r.quantities, r.circuit.devices[0].ss
    # CE stage with rx, emitter bypassed: Av = -gm rπ/(rπ + rx) (ro || RC || RL)
    # (Sedra & Smith, Microelectronic Circuits, 7th ed., section 7.6 (CE amplifier), from memory)
    rc, rl = 4.7e3, 10e3  # the netlist's RC and RL
    par = 1 / (1 / d["ro"] + 1 / rc + 1 / rl)
    assert q["Av"].imag == 0 and q["Av"].real == pytest.approx(-d["gm"] * d["rpi"] / (d["rpi"] + d["rx"]) * par,
                                                               rel=1e-12)
    # consistency: the flat top of the full circuit's sweep is within 0.1 % of the midband circuit's
    full = solver.solve(ROOT / HYDRO)
    assert abs(full.quantities["Gv"]) == pytest.approx(abs(q["Gv"]), rel=1e-3)
    out = cli("solve", HYDRO, "--midband")
    assert out.returncode == 0 and "CC1" in out.stdout and "shorted (coupling or bypass)" in out.stdout
    assert "opened (device)" in out.stdout
    j = json.loads(cli("solve", HYDRO, "--midband", "--json").stdout)
    assert j["midband"]["shorted"] == ["CC1", "CE", "CC2"] and "quantities" in j


def test_derive_midband_gives_the_midband_formula(cli):
    r = cli("derive", "circuits/contact_pickup_preamp.pw", "Av", "--midband")
    assert r.returncode == 0
    # CE stage, emitter bypassed: Av = -gm (ro || RC || RL) (Sedra & Smith, 7th ed., section 7.6, from memory)
    assert "Av = -Q1.gm*(Q1.ro || RC || RL)" in r.stdout
    assert "CIN" in r.stdout and "shorted" in r.stdout
    j = json.loads(cli("derive", "circuits/contact_pickup_preamp.pw", "Av", "--midband", "--json").stdout)
    assert j["expression"] == "-Q1.gm*(Q1.ro || RC || RL)" and j["midband"]["shorted"] == ["CIN", "CE", "COUT"]


def test_midband_classifies_a_small_wiring_capacitor_as_open():
    # RC low-pass after a coupling capacitor: tau(C1) = (rs + R1) C1 = 20 ms, tau(C2) = (rs || R1) C2 = 0.5 µs,
    # the band's middle lies between 1/(2π 20 ms) = 8 Hz and 1/(2π 0.5 µs) = 318 kHz (from memory)
    c = solver.loads("signal VS (a, gnd) 1 V, rs=1k\ncapacitor C1 (a, b) 10u\n"
                     "resistor R1 (b, gnd) 1k\ncapacitor C2 (b, gnd) 1n\noutput (b, gnd)\n")
    r = solver.solve(c, midband=True)
    items = {i.name: i for i in r.midband.items}
    assert items["C1"].tau == pytest.approx(20e-3) and items["C1"].action == "shorted"
    assert items["C2"].tau == pytest.approx(1e-6) and items["C2"].action == "opened"
    assert r.quantities["Gv"].real == pytest.approx(0.5)  # R1/(rs + R1)


# --- the Python API -------------------------------------------------------------------------
@pytest.mark.parametrize("fn, args, cmd", [
    ("solve", {}, ["solve"]),
    ("bias", {}, ["bias"]),
    ("derive", {"quantity": "Av"}, ["derive", "Av"]),
    ("check", {}, ["check"]),
    ("sweep", {"start": 10.0, "stop": 1e6, "points": 21}, ["sweep", "--from", "10", "--to", "1e6", "--points", "21"]),
    ("twoport", {"at": 1e3}, ["twoport", "--at", "1kHz"]),
])
def test_api_function_for_every_command(cli, netlist, fn, args, cmd):
    path = netlist(ONE_RESISTOR_BIAS)
    res = getattr(solver, fn)(path, **args)
    d = res.to_dict()
    assert isinstance(res.to_json(), str) and json.loads(res.to_json()) == json.loads(json.dumps(d))
    assert isinstance(res.warnings, list)
    printed = json.loads(cli(cmd[0], path, *cmd[1:], "--json").stdout)
    for key in d:
        if key != "notes":
            assert printed[key] == json.loads(json.dumps(d))[key], key
    # no note speaks of a command-line option from inside the API
    for note in getattr(res, "notes", []) + d.get("notes", []) + d.get("summary", {}).get("notes", []):
        assert "--" not in note


def test_api_results_keep_the_warnings_the_cli_prints(cli, netlist):
    p = netlist(CE + "resistor R2 (in, in) 1k\n")
    res = solver.solve(p)
    assert [w.message for w in res.warnings] == [w.message for w in solver.derive(p, "Av").warnings]
    assert "R2 has both ends on node 'in'" in res.warnings[0].message
    assert res.warnings[0].message in cli("solve", p).stderr


# --- output ---------------------------------------------------------------------------------
def test_plot_corner_labels_stay_off_the_curve_and_impedance_is_in_ohms():
    import numpy as np
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from solver.output.plot import figure
    f = np.logspace(0, 6, 200)
    # a band-pass whose flat top reaches the top of the panel: 1st-order high- and low-pass,
    # corners 10 Hz and 100 kHz (scipy.signal would give the same; closed form from memory)
    h = (1j * f / 10) / (1 + 1j * f / 10) / (1 + 1j * f / 1e5)
    fig = figure(f, h, "t", "Gv", {"f_low": 10.0, "f_high": 1e5}, 0.0)
    FigureCanvasAgg(fig).draw()
    r = fig.canvas.get_renderer()
    ax_m = fig.axes[0]
    panel = ax_m.get_window_extent(r)
    texts = [t for t in fig.findobj(lambda a: hasattr(a, "get_text") and "f_L" in str(a.get_text()))]
    assert texts, "the corner labels are drawn"
    for t in texts:  # every label lies above the plotting area, where the curve is
        assert t.get_window_extent(r).y0 >= panel.y1 - 1
    # an impedance: Ω on a log axis, never "dB" of ohms
    fz = figure(f, 1e3 * (1 + 1j * f / 1e3), "t", "Rin")
    assert fz.axes[0].get_yscale() == "log" and fz.axes[0].get_ylabel() == "|Rin| (Ω)"
    assert fig.axes[0].get_ylabel() == "|Gv| (dB)"


def test_complex_values_one_style_and_rounding_noise_is_zero():
    from solver.output.report import complex_text, phase_deg
    assert complex_text(complex(2300, -133), "Ω") == "2.3 - j0.133 kΩ"
    # noise relative to the matrix's largest entry: 4.2e-13 beside 1e4 is 0
    assert complex_text(complex(4.235e-13, 1.2), "Ω", scale=1e4) == "j1.2 Ω"
    assert complex_text(complex(4.235e-13, 0.0), "Ω", scale=1e4) == "0 Ω"
    # phases in (-180°, 180°]: a negative real is +180° (numpy.angle gives -180° for -1-0j)
    import numpy as np
    assert np.degrees(np.angle(complex(-1, -0.0))) == -180.0 and phase_deg(complex(-1, -0.0)) == 180.0


def test_twoport_report_shows_noise_as_zero(cli):
    # a common-source stage without cgd has no reverse transmission: z12 = y12 = 0 exactly (Gray,
    # Hurst, Lewis, Meyer, 5th ed., section 1.5 (unilateral small-signal model), from memory), while
    # the float solve leaves ~1e-13 Ω beside entries of 1e7 Ω
    import re
    r = cli("twoport", "circuits/hydrophone_cs_stage.pw", "--at", "1kHz")
    assert r.returncode == 0
    assert re.search(r"z12  0 Ω", r.stdout) and re.search(r"y12  0 S", r.stdout)
    assert not re.search(r"\de-(1\d|[2-9]\d)", r.stdout) and "fΩ" not in r.stdout  # no 3.657e-20 S, no 92.48 fΩ


def test_gains_near_the_real_axis_print_as_signed_reals_with_one_note(cli):
    r = cli("solve", HYDRO)
    out = r.stdout
    assert "  Gv    -79.35 V/V   37.99 dB" in out  # -179.9° at midband (the sweep's figure)
    assert out.count("phase within 0.5° of 0° or 180°") == 1
    assert "∠ -180" not in out


def test_infinite_ideal_gain_says_why_and_no_repeated_rows(cli, netlist):
    r = cli("solve", netlist("signal VS (a, gnd) 1 V\nopamp U1 (o, a, o)\nload RL (o, gnd) 1k\n"))
    ai = [l for l in r.stdout.splitlines() if l.strip().startswith("Ai")][0]
    assert "∞" in ai and "ideal op-amp" in ai
    r = cli("solve", netlist("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1G\nvcvs E1 (o, gnd) (a, gnd) 2\n"
                             "resistor R2 (o, gnd) 1k\noutput (o, gnd)\n"))
    rows = [l.split()[0] for l in r.stdout.splitlines() if l.startswith("  ")]
    assert "Av" not in rows and "Gv" not in rows and "Av," in rows
    assert "Av, Gv, Gvo = Avo (no load and no source resistance)" in r.stdout
    j = json.loads(cli("solve", netlist("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1G\n"
                                        "vcvs E1 (o, gnd) (a, gnd) 2\nresistor R2 (o, gnd) 1k\noutput (o, gnd)\n"),
                       "--json").stdout)
    assert set(j["quantities"]) >= {"Av", "Gv", "Gvo"}  # the JSON keeps every key


def test_cautions_only_when_a_supply_exceeds_the_extra_low_voltage_limits(cli, netlist):
    from solver.output.cautions import CAUTION
    # IEC 61140 extra-low voltage: 120 V ripple-free d.c. (from memory)
    low = cli("solve", "circuits/mic_preamp.pw")
    assert CAUTION not in low.stdout and "caution" not in low.stdout
    high = cli("bias", netlist(SATURATED.replace("12 V", "300 V")))
    assert "caution: supply VBAT is 300 V" in high.stdout and CAUTION in high.stdout
    assert CAUTION.split(".")[0] in cli("--help").stdout.replace("\n", " ")
    assert CAUTION.split(".")[0] in cli("sweep", "--help").stdout.replace("\n", " ")


def test_bias_report_never_shows_internal_nodes(cli, netlist):
    p = netlist("supply VCC (vcc, gnd) 12 V\nsignal VS (in, gnd) 1 mV, rs=1k\ncapacitor C1 (in, b) 10u\n"
                "resistor RB (vcc, b) 1M\nnpn Q1 (c, b, gnd) beta=100, rx=100\nresistor RC (vcc, c) 4k7\n"
                "opamp U1 (o, c, o) gain=1e5, fp=10\nload RL (o, gnd) 10k\n")
    r = cli("bias", p)
    assert r.returncode == 0 and "U1:pole" not in r.stdout and "{sig}" not in r.stdout and "Q1:" not in r.stdout
    assert "    vcc" in r.stdout


def test_options_take_the_compatibility_forms_too(cli):
    # Unicode Standard Annex #15 (NFKC), as in the netlist
    r = cli("twoport", "circuits/mic_preamp.pw", "--at", "\uff11kHz", "--z0", "75 \u2126", "--json")
    j = json.loads(r.stdout)
    assert r.returncode == 0 and j["frequency_hz"] == 1000.0 and j["z0"] == 75.0


def test_element_between_two_names_of_the_reference_and_block_warnings_once():
    w = _warnings("signal VS (a, gnd) 1 V\nresistor R0 (gnd, 0) 1k\nblock b (x)\n resistor R (x, gnd) 10m\nend\n"
                  "use b B1 (a)\nuse b B2 (a)\nload RL (a, gnd) 1k\n")
    assert w == [(2, "R0 has both ends on the reference node: it carries no current and does nothing "
                     "(a typo for another node?)"),
                 (4, "10 mΩ is implausible for a resistor (below 1 Ω); for megaohms write 10M")]


def test_api_derive_midband_matches_the_command(cli):
    from tests.conftest import ROOT
    d = solver.derive(ROOT / "circuits/contact_pickup_preamp.pw", "Av", midband=True).to_dict()
    printed = json.loads(cli("derive", "circuits/contact_pickup_preamp.pw", "Av", "--midband", "--json").stdout)
    assert d["expression"] == printed["expression"] and d["midband"] == printed["midband"]


def test_plot_phase_starts_in_the_half_open_interval():
    import numpy as np
    from solver.output.plot import figure
    f = np.logspace(0, 4, 50)
    # an inverting stage: -1/(1 + s/ω0) starts at 180° (never -180°), and falls toward 90°
    h = -1 / (1 + 1j * f / 100) * np.exp(-1j * 1e-30)
    h[0] = complex(-abs(h[0]), -0.0)
    line = figure(f, h).axes[1].get_lines()[0]
    y = line.get_ydata()
    assert -180 < y[0] <= 180 and y[0] == pytest.approx(180.0, abs=1.0)


# --- an input that draws no current -------------------------------------------------------------
# An op-amp's input draws no current in our model (a controlled source between the inputs, no
# input resistance), so the non-inverting stage's Rin = v_in/i_in is infinite and Ai too:
# Sedra & Smith, Microelectronic Circuits, the non-inverting configuration (ideal input
# resistance infinite). Round-off must not turn that into a huge number of random sign.
NONINVERTING = """\
signal VB (p, gnd) 2 mV, rs=350
opamp U1 (out, p, fb) gain=200k
resistor R1 (fb, gnd) 1k
resistor R2 (out, fb) 99k
load RL (out, gnd) 10k
"""


def test_an_input_that_draws_no_current_has_infinite_rin():
    import numpy as np
    from solver.analysis import frequency
    c = solver.loads(NONINVERTING)
    r = solver.solve(c)
    assert r.quantities["Rin"] == complex(float("inf"), 0)
    assert r.quantities["Ai"] == complex(float("inf"), 0)
    assert json.loads(r.to_json())["quantities"]["Rin"]["re"] == "inf"
    h = frequency.response(frequency.scenario(c, "Rin"), np.array([10.0, 1e3, 1e5]))
    assert np.all(np.isinf(h.real))
    # a real input current is never snapped: 1 MΩ from p to gnd gives Rin = 1 MΩ
    r2 = solver.solve(solver.loads(NONINVERTING + "resistor RP (p, gnd) 1M\n"))
    assert r2.quantities["Rin"].real == pytest.approx(1e6, rel=1e-9)
