"""The command line: JSON shape, exit codes, diagnostics in the GNU FILE:LINE:COL form."""
import json
import re

import pytest

from conftest import CIRCUITS

GNU = re.compile(r"^(?P<file>[^:\n]+):(?P<line>\d+):(?P<col>\d+): error: ", re.M)


def test_help_explains_with_example(cli):
    r = cli("--help")
    assert r.returncode == 0 and "solve" in r.stdout and "exit codes" in r.stdout
    r = cli("solve", "--help")
    assert r.returncode == 0 and "--at" in r.stdout and "example" in r.stdout


def test_solve_json_shape(cli):
    r = cli("solve", CIRCUITS / "mic_preamp.pw", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    assert set(data) >= {"circuit", "frequency_hz", "quantities", "devices"}
    assert isinstance(data["frequency_hz"], float)
    assert set(data["quantities"]) == {"Rin", "Rout", "Avo", "Av", "Gv", "Gvo", "Ai"}
    for name, unit in (("Rin", "ohm"), ("Avo", "V/V"), ("Ai", "A/A")):
        assert data["quantities"][name]["unit"] == unit
        assert set(data["quantities"][name]) == {"re", "im", "unit"}
    assert set(data["devices"]["Q1"]) >= {"gm", "rpi", "ro", "re", "beta"}


def test_infinite_is_a_string(cli, netlist):
    p = netlist("signal VS (i, gnd) 1 V\nopamp U1 (o, i, o)\noutput (o, gnd)\n")
    data = json.loads(cli("solve", p, "--json").stdout)
    # an ideal op-amp follower: Rin infinite, Avo = 1 (Sedra & Smith 7th ed., section 2.3.4, from
    # memory); JSON (RFC 8259) has no infinity, so it is written as the string "inf"
    assert data["quantities"]["Rin"]["re"] == "inf"
    assert data["quantities"]["Avo"]["re"] == pytest.approx(1.0)


def test_at_option(cli, netlist):
    p = netlist("signal VS (i, gnd) 1 V\nresistor R (i, o) 1k\ncapacitor C (o, gnd) 159.155n\noutput (o, gnd)\n")
    data = json.loads(cli("solve", p, "--at", "1kHz", "--json").stdout)
    assert data["frequency_hz"] == 1000.0
    g = complex(data["quantities"]["Gv"]["re"], data["quantities"]["Gv"]["im"])
    # first-order low-pass at its corner 1/(2 pi R C) = 1 kHz: H = 1/(1+j) (Sedra & Smith 7th ed.,
    # section 1.6, from memory); C = 159.155 nF rounds 1/(2 pi 1k 1kHz), hence rel=1e-5
    assert g == pytest.approx(1 / (1 + 1j), rel=1e-5)


@pytest.mark.parametrize("text, fragment", [
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd 1k\noutput (a, gnd)\n", "unexpected"),
    ("signal VS (a, gnd) 1 V\nwidget W1 (a, gnd) 1k\noutput (a, gnd)\n", "unknown statement 'widget'"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k, tol=5\noutput (a, gnd)\n", "no parameter 'tol'"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, b, gnd) 1k\noutput (a, gnd)\n", "takes 2 nodes"),
    ("signal VS (a, gnd) 1 V\ncapacitor C1 (a, gnd) 1 kohm\noutput (a, gnd)\n", "must be in F"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k\nresistor R1 (a, gnd) 2k\noutput (a, gnd)\n", "defined twice"),
    ("signal VS (a, gnd) 1 V\nlet x = y + 1\nlet y = x\nresistor R1 (a, gnd) x\noutput (a, gnd)\n", "cyclic"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k/(2-2)\noutput (a, gnd)\n", "division by zero"),
    ("signal VS (a, gnd) 1 V\nuse amp X1 (a, gnd)\noutput (a, gnd)\n", "unknown block"),
    ("resistor R1 (a, gnd) 1k\noutput (a, gnd)\n", "no signal"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k\n", "no output port"),
    ("signal VS (a, gnd) 1 V\nvcvs E1 (a, gnd) (a, gnd) 2\noutput (a, gnd)\n", "loop of voltage-defined"),
    ("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) __import__(1)\noutput (a, gnd)\n", "unknown function"),
])
def test_bad_input_exit_2_gnu_form(cli, netlist, text, fragment):
    p = netlist(text)
    r = cli("solve", p)
    assert r.returncode == 2, r.stdout + r.stderr
    assert "Traceback" not in r.stderr
    assert fragment in r.stderr
    assert GNU.search(r.stderr), r.stderr


def test_several_errors_in_one_run(cli, netlist):
    p = netlist("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k, x=1\ncapacitor C1 (a, gnd) 3 V\n"
                "npn Q1 (a, b) ic=1m\noutput (a, gnd)\n")
    r = cli("solve", p)
    lines = sorted({int(m.group("line")) for m in GNU.finditer(r.stderr)})
    assert lines == [2, 3, 4], r.stderr
    assert "^" in r.stderr  # a caret under the spot


def test_several_syntax_errors_in_one_run(cli, netlist):
    p = netlist("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd 1k\nload RL (a, gnd)) 1k\n")
    r = cli("solve", p)
    assert sorted({int(m.group("line")) for m in GNU.finditer(r.stderr)}) == [2, 3], r.stderr


def test_missing_file_and_bad_frequency(cli, netlist):
    r = cli("solve", "no/such/file.pw")
    assert r.returncode == 2 and "cannot read" in r.stderr
    p = netlist("signal VS (a, gnd) 1 V\nload RL (a, gnd) 1k\n")
    r = cli("solve", p, "--at", "3 V")
    assert r.returncode == 2 and "Hz" in r.stderr


def test_every_example_runs(cli):
    files = sorted(CIRCUITS.glob("*.pw"))
    assert len(files) >= 6
    for f in files:
        r = cli("solve", f)
        assert r.returncode == 0, (f, r.stderr)
        assert "Traceback" not in r.stderr
