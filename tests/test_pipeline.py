"""The one pipeline every command runs, and the defects it fixed (each against a netlist
written in the test; the expected behaviour follows from Kirchhoff's laws or the documented
conventions, cited beside each check)."""
from __future__ import annotations

import json

import pytest

import solver
from solver import InputError
from solver.analysis import pipeline, scenarios
from solver.analysis.ports import port_quantities

BIAS_ONLY = """title "bias network alone"
supply VCC (vcc, gnd) 12 V
resistor R1 (vcc, b) 47k
resistor R2 (b, gnd) 10k
resistor RC (vcc, c) 4k7
resistor RE (e, gnd) 1k
npn Q1 (c, b, e) beta=150
"""

FLOATING_PAIR = """signal VS (in, gnd) 1 V, rs=50
resistor R1 (in, out) 1k
load RL (out, gnd) 1k
resistor RA (x, y) 1k
resistor RB (x, y) 2k
"""


def test_bias_needs_no_signal_and_no_output(cli, netlist):
    # a DC operating point is defined by the supplies alone; the base divider gives
    # V_B ~ 12 * 10/57 less the base current's drop (Sedra & Smith, 7th ed., 6.4, from memory)
    p = netlist(BIAS_ONLY)
    r = cli("bias", p, "--json")
    assert r.returncode == 0, r.stderr
    obj = json.loads(r.stdout)
    assert obj["devices"]["Q1"]["region"] == "active"
    assert 1.8 < obj["nodes"]["b"] < 12 * 10 / 57
    r = cli("solve", p)  # a small-signal analysis still needs both
    assert r.returncode == 2
    assert "no signal" in r.stderr and "no output port" in r.stderr


@pytest.mark.parametrize("args", [("solve",), ("derive", "Av"), ("check",), ("sweep", "--from", "1Hz", "--to", "1kHz"),
                                  ("twoport", "--at", "1kHz")])
def test_every_command_runs_the_topology_checks(cli, netlist, args):
    # R_A and R_B join x and y to each other only: no path to the reference, so their
    # potential is undefined (Chua & Lin, Computer-Aided Analysis of Electronic Circuits,
    # 1975, topological conditions, from memory)
    p = netlist(FLOATING_PAIR + "claim Av = RL/(R1 + RL)\n")
    r = cli(args[0], p, *args[1:])
    assert r.returncode == 2, (args, r.stdout, r.stderr)
    assert f"{p}:4:" in r.stderr and "'x', 'y' have no path to the reference" in r.stderr


def test_a_node_fed_only_by_a_current_supply_is_an_error(cli, netlist):
    # Kirchhoff's current law at b: the 1 mA of I1 has nowhere to go (a cut set of current
    # sources, Chua & Lin 1975, from memory)
    p = netlist("supply I1 (b, c) 1 mA\nsignal VS (c, gnd) 1 V, rs=50\nresistor R1 (c, gnd) 1k\n"
                "load RL (c, gnd) 1k\n")
    for cmd in (("solve",), ("derive", "Av"), ("bias",)):
        r = cli(*cmd[:1], p, *cmd[1:])
        assert r.returncode == 2, cmd
        assert f"{p}:1:1: error:" in r.stderr and "only through current-defined branch I1" in r.stderr


def test_analyses_do_not_write_onto_the_circuit():
    c = solver.loads(BIAS_ONLY.replace('title "bias network alone"',
                                       "signal VS (in, gnd) 1 mV, rs=600\ncapacitor C1 (in, b) 10u\n"
                                       "output (c, gnd)"))
    before = (dict(c.values), [dict(d.ss) for d in c.devices], list(c.warnings))
    r = solver.solve(c)
    assert r.circuit is not c and r.bias is not None
    assert (dict(c.values), [dict(d.ss) for d in c.devices], list(c.warnings)) == before
    assert c.devices[0].ss == {} and r.circuit.devices[0].ss["gm"] > 0
    assert not hasattr(c, "bias") and not hasattr(c.devices[0], "op")


def test_pnp_current_sign_convention():
    # ic= is the magnitude; a pnp may be given its signed value (current into the collector is
    # negative for a pnp in the active region), which means the same device: gm = |I_C|/V_T
    # (Sedra & Smith, 7th ed., 6.2 and 7.2, from memory)
    from scipy.constants import elementary_charge, k
    text = ("signal VS (b, gnd) 1 mV\npnp Q1 (c, b, gnd) ic={ic}, beta=100\nresistor RC (c, gnd) 10k\n"
            "load RL (c, gnd) 1k\n")
    neg = solver.solve(solver.loads(text.format(ic="-1.5 mA")))
    pos = solver.solve(solver.loads(text.format(ic="1.5 mA")))
    vt = k * 300.0 / elementary_charge  # CODATA through scipy.constants
    assert neg.devices["Q1"]["gm"] == pos.devices["Q1"]["gm"] == pytest.approx(1.5e-3 / vt, rel=1e-12)
    assert neg.quantities == pos.quantities
    with pytest.raises(InputError) as e:
        solver.loads(text.replace("pnp", "npn").format(ic="-1.5 mA"))
    d = e.value.diagnostics[0]
    assert d.loc.line == 2 and "negative ic= is for a p-type device" in d.message


def test_the_scenario_table_is_what_every_engine_reads():
    # Gv of a divider driven from rs: RL/(rs + R1 + RL) (Ohm's law); the numeric, swept and
    # symbolic engines all read this one table
    from solver.analysis.frequency import response, scenario
    from solver.analysis.symbolic.ports import symbolic_port_quantities
    import numpy as np
    c = solver.loads("signal VS (a, gnd) 1 V, rs=50\nresistor R1 (a, b) 1k\nload RL (b, gnd) 2k\n")
    # Ai = i_load / i_in: the same current flows in R1 and RL (in series), so Ai = 1
    want = {"Gv": 2000 / 3050, "Gvo": 1.0, "Av": 2 / 3, "Avo": 1.0, "Rin": 3000.0, "Rout": 1050.0, "Ai": 1.0}
    num = port_quantities(c, 0.0).quantities
    sym = symbolic_port_quantities(c)
    assert list(num) == scenarios.quantities(c) == list(sym)
    for q, v in want.items():
        assert num[q].real == pytest.approx(v, rel=1e-12), q
        assert complex(response(scenario(c, q), np.array([1.0]))[0]).real == pytest.approx(v, rel=1e-12), q
        assert sym[q].value(c.values) == pytest.approx(v, rel=1e-12), q
    assert scenarios.why_undefined(c, "Zt").startswith("Zt needs a current signal")


def test_prepare_reports_warnings_instead_of_storing_them():
    c = solver.loads("signal VS (in, gnd) 1 V, rs=50\nresistor R1 (in, out) 1k\nresistor R2 (out, x) 1k\n"
                     "load RL (out, gnd) 1k\n")
    p = pipeline.prepare(c, "ports")
    assert [(d.severity, d.loc.line) for d in p.warnings] == [("warning", 3)]
    assert c.warnings == []
