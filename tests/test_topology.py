"""Topology checks and the singular-system diagnosis.

The conditions checked are the classical ones for a unique MNA solution: no
loop of voltage-defined branches, no cut set of current-defined branches, every
node with a path to the reference (L. O. Chua, P.-M. Lin, *Computer-Aided
Analysis of Electronic Circuits*, 1975, chapter on network topology, from memory;
C.-W. Ho, A. E. Ruehli, P. A. Brennan, IEEE Trans. CAS 22(6), 1975, from memory).
"""
from __future__ import annotations

import numpy as np
import pytest

from solver import api
from solver.diagnostics import InputError
from solver.circuit.elements import CurrentSource, Resistor, VCCS
from solver.engine import mna
from solver.engine.mna import COND_WARN, assemble, condition_estimate, diagnose


def errors_of(text: str, at=None) -> list[str]:
    with pytest.raises(InputError) as e:
        api.solve(api.loads(text, "t.pw"), at)
    return [d.message for d in e.value.diagnostics if d.severity == "error"], e.value.diagnostics


def test_floating_pair_named_with_line():
    msgs, diags = errors_of("signal VS (in, gnd) 1 V\nresistor R1 (in, gnd) 1k\nresistor R2 (x, y) 1k\n"
                            "load RL (in, gnd) 1k\n")
    assert msgs == ["nodes 'x', 'y' have no path to the reference node (joined by R2 (line 3))"]
    assert diags[0].loc.line == 3


def test_cut_set_of_current_sources():
    # a transconductance into a node that only it and a floating resistor reach
    msgs, _ = errors_of("signal VS (in, gnd) 1 V\nvccs G1 (z, gnd) (in, gnd) 1 mS\nresistor R1 (z, w) 1k\n"
                        "resistor R2 (in, out) 1k\nload RL (out, gnd) 1k\n")
    assert len(msgs) == 1 and "only through current-defined branch G1 (line 2)" in msgs[0]
    assert "'w', 'z'" in msgs[0]


def test_transistor_without_collector_load_is_a_cut_set():
    # an ideal gm (no ro) is the only branch at the collector: v(c) is undefined
    msgs, _ = errors_of("signal VS (b, gnd) 1 mV\nnpn Q1 (c, b, gnd) ic=1 mA\nresistor R1 (b, out) 1k\n"
                        "load RL (out, gnd) 1k\n")
    assert any("Q1.gm (line 2)" in m and "'c'" in m for m in msgs)


def test_loop_of_supply_and_signal():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V\nsupply VCC (in, gnd) 12 V\nload RL (in, gnd) 1k\n")
    assert msgs and "loop of voltage-defined branches" in msgs[0] and "VCC (line 2)" in msgs[0]


def test_loop_of_vcvs_outputs():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k\n"
                        "vcvs E1 (out, gnd) (in, gnd) 2\nvcvs E2 (out, gnd) (in, gnd) 3\nload RL (out, gnd) 1k\n")
    assert any("E1 (line 3), E2 (line 4)" in m for m in msgs)


def test_inductor_loop_only_in_dc_view():
    text = "signal VS (in, gnd) 1 V\ninductor L1 (in, gnd) 1 mH\nresistor R1 (in, out) 1k\nload RL (out, gnd) 1k\n"
    api.solve(api.loads(text), 1e3)  # an impedance at 1 kHz: fine
    msgs, _ = errors_of(text, 0.0)
    assert "DC view" in msgs[0] and "L1 (line 2)" in msgs[0]


def test_node_reached_only_through_capacitor_has_no_dc_path():
    text = ("signal VS (in, gnd) 1 V, rs=1k\ncapacitor C1 (in, x) 1 uF\nresistor R1 (x, y) 1k\n"
            "capacitor C2 (y, gnd) 1 uF\nresistor R2 (in, gnd) 1k\nload RL (in, gnd) 1k\n")
    api.solve(api.loads(text), 1e3)
    msgs, _ = errors_of(text, 0.0)
    assert "'x', 'y'" in msgs[0] and "DC view" in msgs[0]


def test_single_connection_is_a_warning_with_spelling_hint():
    c = api.loads("signal VS (in, gnd) 1 V, rs=50\nresistor R1 (in, out) 1k\nresistor R4 (outt, gnd) 1k\n"
                  "resistor R2 (outt, x) 1k\nload RL (out, gnd) 1k\n")
    w = [d for d in api.solve(c).warnings if "'x' has a single connection (R2 (line 4))" in d.message]
    assert len(w) == 1 and (w[0].loc.line, w[0].loc.col) == (4, 20)  # the caret goes under the node name


def test_unloaded_configuration_checked():
    # only the load gives 'out' a path: the unloaded solve (Avo) would be singular
    msgs, _ = errors_of("signal VS (in, gnd) 1 V\nvccs G1 (out, gnd) (in, gnd) 1 mS\nload RL (out, gnd) 1k\n")
    assert msgs and msgs[0].endswith("without the load")


def test_several_errors_in_one_run():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V\nsupply V1 (in, gnd) 5 V\nresistor R2 (x, y) 1k\n"
                        "load RL (in, gnd) 1k\n")
    assert len(msgs) == 2


def test_numeric_cancellation_named():
    # 1k || -1k is an open: node a has no conductance at all, although the pattern is full
    msgs, diags = errors_of("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k\nresistor R2 (a, gnd) 1k\n"
                            "resistor R3 (a, gnd) -1k\nvcvs E1 (out, gnd) (a, gnd) 2\nload RL (out, gnd) 1k\n")
    assert "numerically singular" in msgs[0] and "node 'a'" in msgs[0] and "KCL at 'a'" in msgs[0]
    assert diags[0].loc.line == 3


def test_structural_rank_by_matching():
    # a node reached only by the control input of a vccs: no equation holds v(c)
    els = [Resistor("R1", ("a", "0"), 1e3), VCCS("G1", ("a", "0"), 1e-3, ctrl=("c", "0")),
           CurrentSource("I1", ("0", "a"), 1.0)]
    info = diagnose(assemble(els, {"0"}), 0)
    assert info.structural and info.rank == 1 and info.undetermined == ["v(c)"] and info.redundant == ["v(c)"]


def test_condition_estimate_agrees_with_numpy():
    # reference: numpy.linalg.cond (1-norm) of the same equilibrated dense matrix
    from solver.engine.mna import _equilibrate
    rng = np.random.default_rng(1)
    els = [Resistor(f"R{i}", (f"n{i}", f"n{i + 1}" if i < 7 else "0"), float(rng.uniform(10, 1e4)))
           for i in range(8)] + [Resistor("Rg", ("n0", "0"), 50.0)]
    sys_ = assemble(els, {"0"})
    ref = np.linalg.cond(_equilibrate(sys_.matrix(0)).toarray(), 1)
    est = condition_estimate(sys_, 0)
    assert ref / 3 <= est <= ref * 1.0001  # the estimator is a lower bound, usually exact


def test_ill_conditioned_warning():
    # a and b tied by 1 Ω but held to the reference only by 1e15 Ω each: the nodal matrix
    # [[G+g, -G], [-G, G+g]] has condition about 2G/g = 2e15, and no row or column scaling helps
    # (Golub & Van Loan, Matrix Computations, 4th ed., section 2.6, from memory)
    c = api.loads("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k\nvccs G1 (gnd, a) (in, gnd) 1m\n"
                  "resistor R2 (a, b) 1\nresistor R3 (a, gnd) 1e15\nresistor R4 (b, gnd) 1e15\noutput (a, gnd)\n")
    r = api.solve(c)
    assert [d.severity for d in r.warnings if "ill-conditioned" in d.message] == ["warning"]
    assert any(f"{COND_WARN:.0g}" in d.message for d in r.warnings)
    well = api.loads("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k\noutput (in, gnd)\n")
    assert not any("ill-conditioned" in d.message for d in api.solve(well).warnings)


def test_output_node_not_connected():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 1k\noutput (nowhere, gnd)\n")
    assert msgs == ["port node 'nowhere' is not connected to any element"]


def test_cli_prints_every_error_with_caret(cli, netlist):
    p = netlist("signal VS (in, gnd) 1 V\nsupply V1 (in, gnd) 5 V\nresistor R2 (x, y) 1k\nload RL (in, gnd) 1k\n")
    r = cli("solve", p)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    heads = [l for l in r.stderr.splitlines() if ": error: " in l]
    assert len(heads) == 2 and heads[1].startswith(f"{p}:3:1: error: ")
    assert " resistor R2 (x, y) 1k\n ^~~~~~~~" in r.stderr


def test_opamp_output_against_a_supply_is_a_loop():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V, rs=1k\nresistor R1 (in, gnd) 10k\nopamp U1 (out, in, fb)\n"
                        "resistor RF (out, fb) 10k\nresistor RG (fb, gnd) 10k\nsupply V1 (out, gnd) 5 V\n"
                        "load RL (out, gnd) 1k\n")
    assert any("loop of voltage-defined branches" in m and "U1 (line 3)" in m and "V1 (line 6)" in m for m in msgs)


def test_node_only_sensed_by_a_control_input():
    msgs, _ = errors_of("signal VS (in, gnd) 1 V\nresistor R1 (in, out) 1k\nvccs G1 (out, gnd) (c, gnd) 1m\n"
                        "load RL (out, gnd) 1k\n")
    assert msgs == ["node 'c' is only sensed by G1 (line 3) (a control input draws no current): nothing sets "
                    "its voltage"]


def test_numeric_path_is_sparse_and_linear_in_size():
    # a ladder's nodal matrix is tridiagonal: about 3 entries per node (sparse storage, CSC)
    import scipy.sparse as sp
    from solver.circuit.views import signal_elements, small_signal_elements
    sections = 3000
    text = "signal VS (n0, gnd) 1 V, rs=50\n" + "".join(
        f"resistor R{i} (n{i}, n{i + 1}) 1k\ncapacitor C{i} (n{i + 1}, gnd) 1 nF\n" for i in range(sections))
    text += f"output (n{sections}, gnd)\n"
    c = api.loads(text)
    sys_ = assemble(small_signal_elements(c) + signal_elements(c), c.ground)
    A = sys_.matrix(2j * np.pi * 1e3)
    assert sp.issparse(A) and A.format == "csc" and sys_.G.format == "csc"
    assert A.nnz <= 4 * sys_.stamper.size


def test_device_without_bias_is_a_clean_error():
    # a transistor without ic= (or gm=) is biased from the supplies; with none it sits in cutoff,
    # where the small-signal model does not apply: a clean error at its line, not a crash
    msgs, diags = errors_of("signal VS (b, gnd) 1 mV, rs=1k\nnpn Q1 (c, b, gnd) beta=100\n"
                            "resistor RC (c, gnd) 1k\nload RL (c, gnd) 1k\n")
    assert len(msgs) == 1 and msgs[0].startswith("Q1 is in cutoff")
    assert diags[0].loc.line == 2


def test_op_amp_inputs_on_a_pair_another_op_amp_already_ties():
    # two nullators across the same node pair (U0 and U2 both force v(n4) = v(n2)): a loop of
    # voltage constraints, the nullor dual of a loop of voltage sources (Chua & Lin 1975, and
    # J. Vlach, K. Singhal, Computer Methods for Circuit Analysis and Design, 2nd ed., the
    # nullor sections, from memory), named before any solve
    msgs, diags = errors_of("signal VS (n1, gnd) 1 uA, rs=10k\nopamp U0 (n4, n4, n2)\nopamp U1 (n2, n2, n1)\n"
                            "opamp U2 (n3, n4, n2)\ncapacitor C3 (n1, n2) 1 nF\nload RL (n2, gnd) 1k\n")
    assert len(msgs) == 1 and diags[0].loc.line == 4
    assert msgs[0].startswith("the inputs of op-amp U2 (line 4), 'n4' and 'n2', are already tied by "
                              "the inputs of op-amp U0 (line 2)")


def test_op_amp_inputs_shorted_or_across_a_rail():
    msgs, diags = errors_of("signal VS (in, gnd) 10 mV, rs=1k\nresistor RI (in, n) 1k\nopamp U1 (out, n, n)\n"
                            "resistor RF (n, out) 10k\nload RL (out, gnd) 10k\n")
    assert msgs == ["op-amp U1 (line 3) has both inputs on 'n': its input condition v+ = v- says nothing, "
                    "so nothing sets its output (connect the inputs to different nodes)"]
    # a supply is an AC short, so inputs at the rail and at ground are tied already
    msgs, _ = errors_of("supply VCC (vcc, gnd) 12 V\nsignal VS (in, gnd) 10 mV, rs=1k\nresistor RI (in, out) 1k\n"
                        "opamp U1 (out, vcc, gnd)\nload RL (out, gnd) 10k\n")
    assert len(msgs) == 1 and "are already tied by VCC (line 1)" in msgs[0]


def test_a_follower_driven_without_source_resistance_passes_the_graph_checks():
    # signal, nullator (in, out) and the output (a norator) form a loop; the norator's voltage
    # is free, so this is not a loop of constraints: unity gain (Sedra & Smith, 7th ed., 2.3.4,
    # from memory)
    c = api.loads("signal VS (in, gnd) 10 mV\nopamp U1 (out, in, out)\nload RL (out, gnd) 10k\n")
    assert api.solve(c).quantities["Av"] == pytest.approx(1.0, rel=1e-12)


def test_op_amp_constraints_that_the_graph_checks_cannot_see():
    # an op-amp with no feedback passes the graph checks (no loop of constraints), but nothing
    # sets its output: named by the bipartite matching (Duff 1981, maximum transversal, from memory)
    msgs, diags = errors_of("signal VS (in, gnd) 1 mV, rs=10k\nopamp U1 (out, in, n)\n"
                            "resistor RN (n, gnd) 1k\nload RL (out, gnd) 1k\n")
    assert "structurally singular" in msgs[0] and "undetermined: the output current of op-amp U1" in msgs[0]
    assert "the input condition of op-amp U1 (v+ = v-)" in msgs[0]


# --- the bias solve's DC view (capacitors open, inductors shorted), checked before Newton ---
# The same classical conditions (Chua & Lin, 1975, from memory), on the large-signal circuit:
# junctions conduct, a MOSFET gate and an op-amp input only read a voltage.
GATE_STAGE = """supply VDD (vdd, gnd) 12 V
signal VS (in, gnd) 10 mV, rs=10k
capacitor C1 (in, g) 100n
{bias}
nmos M1 (d, g, s) k=4 mA/V^2, vth=1 V
resistor RD (vdd, d) 4k7
resistor RS (s, gnd) 1k
capacitor C2 (d, out) 1u
load RL (out, gnd) 47k
"""


def bias_errors(cli, netlist, text):
    r = cli("bias", netlist(text))
    assert r.returncode == 2 and "Traceback" not in r.stderr, r.stderr
    return [ln for ln in r.stderr.splitlines() if ": error: " in ln]


def test_a_gate_reached_only_through_a_capacitor_is_an_error(cli, netlist):
    # the gate divider forgotten: nothing sets the gate's DC voltage (it draws no current)
    errs = bias_errors(cli, netlist, GATE_STAGE.format(bias="# no gate bias"))
    assert len(errs) == 1
    assert "node 'g' is only sensed by M1 (line 5)" in errs[0] and "in the DC view" in errs[0]
    assert ":5:" in errs[0]


def test_a_floating_gate_network_names_its_resistor_and_the_reader(cli, netlist):
    errs = bias_errors(cli, netlist, GATE_STAGE.format(bias="resistor RG (g, gx) 1M"))
    assert len(errs) == 1
    assert "nodes 'g', 'gx' have no path to the reference node in the DC view" in errs[0]
    assert "joined by RG (line 4)" in errs[0] and "M1 (line 5) reads their voltage" in errs[0]


def test_with_the_divider_the_same_stage_biases(cli, netlist):
    r = cli("bias", netlist(GATE_STAGE.format(bias="resistor RG1 (vdd, g) 3M3\nresistor RG2 (g, gnd) 1M")))
    assert r.returncode == 0, r.stderr


def test_a_node_between_two_capacitors_is_tied_with_a_warning(cli, netlist):
    # nothing reads its voltage, so the bias of everything else is well defined
    text = GATE_STAGE.format(bias="resistor RG1 (vdd, g) 3M3\nresistor RG2 (g, gnd) 1M").replace(
        "capacitor C2 (d, out) 1u", "capacitor C2 (d, mid) 1u\ncapacitor C3 (mid, out) 1u")
    r = cli("bias", netlist(text))
    assert r.returncode == 0, r.stderr
    assert "node mid has no DC path to ground" in r.stderr and "1 TΩ" in r.stderr


def test_a_current_supply_into_a_capacitor_is_a_cut_set(cli, netlist):
    # 1 mA into a node that only a capacitor leaves: the DC voltage would run away
    text = GATE_STAGE.format(bias="resistor RG1 (vdd, g) 3M3\nresistor RG2 (g, gnd) 1M") + \
        "supply IX (vdd, x) 1 mA\ncapacitor CX (x, gnd) 1u\n"
    errs = bias_errors(cli, netlist, text)
    assert len(errs) == 1 and "node 'x' connects to the rest of the circuit only through" in errs[0]
    assert "IX (line 11)" in errs[0]


def test_an_inductor_across_a_supply_is_a_dc_loop(cli, netlist):
    text = GATE_STAGE.format(bias="resistor RG1 (vdd, g) 3M3\nresistor RG2 (g, gnd) 1M") + \
        "inductor LF (vdd, gnd) 10 mH\n"
    errs = bias_errors(cli, netlist, text)
    assert len(errs) == 1 and "a loop of voltage-defined branches in the DC view" in errs[0]
    assert "VDD (line 1)" in errs[0] and "LF (line 11)" in errs[0]


def test_an_op_amp_input_behind_a_capacitor_is_an_error(cli, netlist):
    # a capacitor-coupled non-inverting input with no bias resistor: the ideal input draws
    # no current, so its DC level (and the output's) is undefined
    text = ("supply VCC (vcc, gnd) 12 V\nsignal VS (in, gnd) 10 mV, rs=1k\ncapacitor C1 (in, p) 1u\n"
            "opamp U1 (out, p, n)\nresistor RF (out, n) 10k\nresistor RG (n, gnd) 1k\n"
            "npn Q1 (vcc, out, e) beta=100\nresistor RE (e, gnd) 1k\nload RL (e, gnd) 10k\n")
    errs = bias_errors(cli, netlist, text)
    assert len(errs) == 1 and "node 'p' is only sensed by U1" in errs[0]


def _cancelling_arms_behind_a_ladder(n: int) -> str:
    lines = ["signal VS (n0, gnd) 1 V, rs=1k"]
    lines += [f"resistor R{i} (n{i}, n{i + 1}) 100\nresistor RS{i} (n{i + 1}, gnd) 10k" for i in range(n)]
    lines += ["resistor RA (a, gnd) 1k", "resistor RB (a, gnd) -1k", f"vccs G1 (a, gnd) (n{n}, gnd) 1 mS",
              "vcvs E1 (out, gnd) (a, gnd) 2", "load RL (out, gnd) 1k"]
    return "\n".join(lines) + "\n"


def test_a_large_numerically_singular_system_still_names_the_node():
    # the sign slip of circuits/mistakes/sign_slip.pw behind a 2,500-node resistive ladder: past
    # the dense SVD limit, inverse iteration on one sparse LU (Golub & Van Loan, Matrix
    # Computations, 4th ed., 8.2.2, from memory) must still find the node whose arms cancel
    msgs, _ = errors_of(_cancelling_arms_behind_a_ladder(2500))
    assert "numerically singular" in msgs[0] and "rank at most 2505 of 2506" in msgs[0]
    assert "undetermined: node 'a', node 'out';" in msgs[0]  # out = 2·v(a) follows it
    assert "dependent equations: KCL at " in msgs[0]


def test_the_sparse_null_directions_agree_with_the_dense_svd(monkeypatch):
    # the same diagnosis both ways on a size the SVD (scipy.linalg.svd) handles
    text = _cancelling_arms_behind_a_ladder(300)
    dense, _ = errors_of(text)
    monkeypatch.setattr(mna, "DENSE_LIMIT", 10)
    sparse, _ = errors_of(text)
    assert sparse[0] == dense[0].replace("rank 305", "rank at most 305")
