"""Sensitivity, Monte Carlo spreads, worst case and tune, against outside references."""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

import solver
from solver.analysis import batchbias
from solver.analysis.bias import solve_bias
from solver.analysis.eseries import E6, E12, E24, E48, E96, E192, SERIES, neighbours
from solver.analysis.pipeline import prepare
from solver.analysis.spread import Z95, spread, wilson
from solver.analysis.tune import NoSolution, tune
from solver.analysis.variation import Evaluator, knob
from solver.circuit.devices import thermal_voltage
from solver.diagnostics import InputError
from solver.language import parse as P

ROOT = Path(__file__).resolve().parent.parent

DIVIDER = """signal VS (a, gnd) 1 V
resistor R1 (a, b) 1k
resistor R2 (b, gnd) 3k
output (b, gnd)
"""

# a CE stage biased from its supply by a base divider, emitter resistor bypassed (an invented
# sensor-amplifier stage)
CE_BIASED = """title "biased CE"
supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 1 mV, rs=1k
capacitor C1 (in, b) 10u
resistor R1 (vcc, b) 82k
resistor R2 (b, gnd) 22k
resistor RC (vcc, c) 4k7
resistor RE (e, gnd) 1k
capacitor CE (e, gnd) 100u
npn Q1 (c, b, e) beta=150, va=80 V
capacitor C2 (c, out) 10u
load RL (out, gnd) 10k
"""


def _solve(text, q, at):
    return solver.solve(solver.loads(text), at).quantities[q]


def _rows(res, q):
    return {r["parameter"]: r for r in res.quantities[q]}


# --- sensitivity ------------------------------------------------------------------------------
def test_divider_sensitivity_closed_form():
    # H = R2/(R1+R2): S_R1 = -R1/(R1+R2), S_R2 = R1/(R1+R2) (differentiate the ratio; any
    # circuit-theory text, e.g. Vlach & Singhal, chapter on sensitivity, from memory)
    rows = _rows(solver.sensitivity(solver.loads(DIVIDER), ["Gv"]), "Gv")
    assert rows["R1"]["normalized"] == pytest.approx(-0.25, rel=1e-12)
    assert rows["R2"]["normalized"] == pytest.approx(0.25, rel=1e-12)


def test_ce_gain_sensitivity_to_rc_is_one():
    # Av = -gm*RC for a CE stage with ro = inf and no emitter resistor (Sedra & Smith, 7th ed.,
    # section 7.3): S_RC = S_gm = 1, and Rin = rpi does not depend on RC at all
    c = solver.loads("signal VS (b, gnd) 1 mV\nsupply VCC (vcc, gnd) 9 V\nresistor RC (vcc, c) 10k\n"
                     "npn Q1 (c, b, gnd) ic=1 mA, beta=100\noutput (c, gnd)\n")
    res = solver.sensitivity(c, ["Av", "Rin"])
    av = _rows(res, "Av")
    assert av["RC"]["normalized"] == pytest.approx(1.0, rel=1e-12)
    assert av["Q1.gm"]["normalized"] == pytest.approx(1.0, rel=1e-12)
    assert abs(_rows(res, "Rin")["Q1.rpi"]["normalized"] - 1.0) < 1e-12
    assert res.quantities["Av"][0]["parameter"] in ("RC", "Q1.gm")  # ranked by |S|


def test_operating_point_parameters_by_the_chain_rule():
    # gm = IC/VT and rpi = beta/gm (Sedra & Smith, 7th ed., section 7.2, from memory): a device
    # given by ic= and beta= has S_ic = S_gm - S_rpi and S_beta = S_rpi (ro = inf here)
    c = solver.loads("signal VS (b, gnd) 1 mV, rs=2k\nsupply VCC (vcc, gnd) 12 V\nresistor RC (vcc, c) 10k\n"
                     "resistor RE1 (e, gnd) 100\nnpn Q1 (c, b, e) ic=1 mA, beta=100\noutput (c, gnd)\n")
    rows = _rows(solver.sensitivity(c, ["Gv"]), "Gv")
    s_gm, s_rpi = rows["Q1.gm"]["normalized"], rows["Q1.rpi"]["normalized"]
    assert abs(rows["Q1.ic"]["normalized"] - (s_gm - s_rpi)) < 1e-8
    assert abs(rows["Q1.beta"]["normalized"] - s_rpi) < 1e-8
    assert rows["Q1.ic"]["via"] == "device parameter"


@pytest.mark.parametrize("name, old, new", [
    ("RC", "resistor RC (vcc, c) 4k7", "resistor RC (vcc, c) {v}"),
    ("R1", "resistor R1 (vcc, b) 82k", "resistor R1 (vcc, b) {v}"),
    ("CE", "capacitor CE (e, gnd) 100u", "capacitor CE (e, gnd) {v}"),
    ("VCC", "supply VCC (vcc, gnd) 12 V", "supply VCC (vcc, gnd) {v} V"),
    ("Q1.beta", "beta=150", "beta={v}"),
    ("Q1.va", "va=80 V", "va={v} V"),
])
def test_sensitivity_matches_finite_differences_through_the_bias(name, old, new):
    # the reference: a central difference of two complete solves of edited netlists
    at = 1000.0
    res = solver.sensitivity(solver.loads(CE_BIASED), ["Av"], at=at)
    row = _rows(res, "Av")[name]
    x = row["value"]
    h = 1e-4 * x
    up = _solve(CE_BIASED.replace(old, new.format(v=repr(x + h))), "Av", at)
    dn = _solve(CE_BIASED.replace(old, new.format(v=repr(x - h))), "Av", at)
    q = res.values["Av"]
    fd = x * (up - dn) / (2 * h) / q
    assert abs(row["normalized"] - fd) < 1e-5 * max(1.0, abs(fd))
    assert row["via"] == ("adjoint" if name == "CE" else "bias point")


MOS_TEXT = (Path(__file__).resolve().parent.parent / "circuits" / "hydrophone_cs_stage.pw").read_text()
PNP = """supply VCC (vcc, gnd) 12 V
signal VS (in, gnd) 1 mV, rs=600
capacitor C1 (in, b) 10u
resistor R1 (b, gnd) 82k
resistor R2 (vcc, b) 22k
resistor RE (vcc, e) 1k
capacitor CE (vcc, e) 100u
pnp Q1 (c, b, e) beta=120, va=60 V
resistor RC (c, gnd) 4k7
load RL (c, gnd) 10k
"""


@pytest.mark.parametrize("text, name, old, new", [
    (MOS_TEXT, "RD", "resistor RD (vdd, d) 6k8", "resistor RD (vdd, d) {v}"),
    (MOS_TEXT, "M1.vth", "vth=1.2 V", "vth={v} V"),
    (MOS_TEXT, "M1.k", "k=5 mA/V^2", "k={v} A/V^2"),
    (MOS_TEXT, "M1.lambda", "lambda=0.02", "lambda={v}"),
    (MOS_TEXT, "VDD", "supply VDD (vdd, gnd) 9 V", "supply VDD (vdd, gnd) {v} V"),
    (PNP, "Q1.beta", "beta=120", "beta={v}"),
    (PNP, "R2", "resistor R2 (vcc, b) 22k", "resistor R2 (vcc, b) {v}"),
    (PNP, "Q1.is", "pnp Q1 (c, b, e) beta=120", "pnp Q1 (c, b, e) is={v}, beta=120"),
])
def test_exact_bias_point_sensitivity_mos_and_pnp(text, name, old, new):
    # implicit differentiation of the DC solution against central differences of whole solves
    at = 1000.0
    res = solver.sensitivity(solver.loads(text), ["Av", "Rin"], at=at)
    for q in ("Av", "Rin"):
        row = _rows(res, q)[name]
        assert row["via"] == "bias point"
        x = row["value"]
        h = 1e-4 * x
        up = _solve(text.replace(old, new.format(v=repr(x + h))), q, at)
        dn = _solve(text.replace(old, new.format(v=repr(x - h))), q, at)
        fd = x * (up - dn) / (2 * h) / res.values[q]
        assert abs(row["normalized"] - fd) < 1e-6 * max(1.0, abs(fd)) + 1e-9, (q, row, fd)


def test_sensitivity_json_shape():
    d = solver.sensitivity(solver.loads(DIVIDER), ["Gv"]).to_dict()
    row = d["quantities"]["Gv"][0]
    assert set(row) >= {"parameter", "value", "normalized"} and set(row["normalized"]) == {"re", "im"}
    json.dumps(d, allow_nan=False)


# --- the batched engine against the one-at-a-time solve -------------------------------------------
MOS = (ROOT / "circuits" / "hydrophone_cs_stage.pw").read_text()


@pytest.mark.parametrize("text, knobs", [
    (CE_BIASED, {"RC": (4e3, 5.5e3), "Q1.beta": (80, 400), "R2": (18e3, 26e3), "VCC": (9, 15)}),
    (MOS, {"RD": (6e3, 7.5e3), "M1.vth": (1.0, 1.4), "M1.k": (3e-3, 7e-3)}),
])
def test_batched_evaluation_equals_solve(text, knobs):
    c = solver.loads(text)
    p = prepare(c)
    ev = Evaluator(c, p, 1000.0, ["Av", "Rin", "Rout", "Avo", "Ai", "Gv"])
    rng = np.random.default_rng(5)
    n = 6
    vals = {name: rng.uniform(lo, hi, n) for name, (lo, hi) in knobs.items()}
    got = ev.run({knob(c, k): v for k, v in vals.items()}, n)
    assert got.valid.all()
    for i in range(n):
        cc = solver.loads(text)
        cc.spreads = []
        # the reference: the ordinary pipeline on a circuit carrying the sample's values
        for name, v in vals.items():
            x = float(v[i])
            if name.endswith((".beta", ".vth", ".k")):
                dev, key = name.split(".")
                cc.device(dev).params[key] = x
            elif name == "VCC":
                cc.supplies[0].value = x
            else:
                next(e for e in cc.elements if e.name == name).value = x
        ref = solver.solve(cc, 1000.0).quantities
        for q in ("Av", "Rin", "Rout", "Avo", "Ai", "Gv"):  # loaded ones by the rank-one update
            assert abs(got.quantities[q][i] - ref[q]) < 1e-9 * abs(ref[q])


def test_batched_newton_equals_scalar_bias():
    c = solver.loads(CE_BIASED)
    p = prepare(c)
    ev = Evaluator(c, p, 0.0, ["Av"])
    betas = np.array([60.0, 150.0, 500.0])
    params = {"Q1": dict(c.devices[0].params, beta=betas)}
    conv, ops, *_ = batchbias.solve(c, ev.linear, {}, params, 3, p.bias.nodes)
    assert conv.all()
    for i, b in enumerate(betas):
        cc = solver.loads(CE_BIASED)
        cc.devices[0].params["beta"] = float(b)
        ic = solve_bias(cc).devices["Q1"]["ic"]
        assert ops["Q1"][1][i] == pytest.approx(abs(ic), rel=1e-9)


# --- Monte Carlo ----------------------------------------------------------------------------------
def test_divider_monte_carlo_against_numerical_integration():
    # H = R2/(R1+R2), R1, R2 uniform over +-10 %: the mean and variance of H are double
    # integrals over the rectangle (scipy.integrate.dblquad); the Monte Carlo mean must lie
    # within 4 standard errors of it, and its standard deviation within 4 of its own error
    from scipy.integrate import dblquad
    c = solver.loads(DIVIDER + "spread R1 10%\nspread R2 10%\n")
    n = 20000
    r = spread(c, samples=n, seed=11)
    a, b = (900.0, 1100.0), (2700.0, 3300.0)
    area = (a[1] - a[0]) * (b[1] - b[0])
    m1 = dblquad(lambda r2, r1: r2 / (r1 + r2), *a, *b)[0] / area
    m2 = dblquad(lambda r2, r1: (r2 / (r1 + r2)) ** 2, *a, *b)[0] / area
    sd = math.sqrt(m2 - m1 * m1)
    st = r.quantities["Gv"]
    assert abs(st["mean"] - m1) < 4 * sd / math.sqrt(n)
    assert abs(st["std"] - sd) < 4 * sd / math.sqrt(2 * (n - 1))
    assert r.out_of_region == 0 and r.samples == n


def test_seed_reproduces_and_normal_distribution_spread():
    c = solver.loads(DIVIDER + "spread R1 3%, dist=normal\nspec Gv 0.74 .. 0.76\n")
    a = solver.spread(c, samples=500, seed=3).to_dict()
    b = solver.spread(c, samples=500, seed=3).to_dict()
    assert a == b and a["seed"] == 3
    # normal with +-3 % as 3 sigma: R1 has sigma 1 %; dH/H = -0.25 dR1/R1, so sigma_H = 0.25 % of H
    # (first-order propagation; the second-order terms are below 1e-4 of it)
    c2 = solver.loads(DIVIDER + "spread R1 3%, dist=normal\n")
    st = spread(c2, samples=20000, seed=9).quantities["Gv"]
    assert st["std"] == pytest.approx(0.75 * 0.0025, rel=0.03)


def test_let_spread_moves_matched_parts_together():
    # both divider legs from one let: the ratio cannot move
    c = solver.loads("let R = 10k\nsignal VS (a, gnd) 1 V\nresistor R1 (a, b) R\nresistor R2 (b, gnd) R\n"
                     "output (b, gnd)\nspread R 20%\n")
    st = spread(c, samples=200, seed=1).quantities["Gv"]
    assert st["min"] == pytest.approx(0.5, rel=1e-12) and st["max"] == pytest.approx(0.5, rel=1e-12)
    # and Rin = 2R moves with it
    rin = spread(c, samples=200, seed=1).quantities["Rin"]
    assert 16e3 <= rin["min"] < rin["max"] <= 24e3


def test_let_spread_reevaluates_every_expression_that_uses_it():
    # the reference: the ordinary solve of the netlist with the let edited
    t = ("let R = 10k\nlet G = 2\nsignal VS (a, gnd) 1 V, rs=R/10\nresistor R1 (a, b) R || 30k\n"
         "resistor R2 (b, gnd) G*R + R1\nresistor R3 (b, gnd) sqrt(R*R) ^ 1\n"
         "npn Q1 (c, b, gnd) ic=R/10k * 1 mA, beta=100\nresistor RC (c, gnd) 1k\noutput (c, gnd)\n")
    c = solver.loads(t)
    ev = Evaluator(c, prepare(c), 0.0, ["Gv", "Rin"])
    vals = np.array([5e3, 20e3])
    got = ev.run({knob(c, "R"): vals}, 2)
    for i, r in enumerate(vals):
        ref = solver.solve(solver.loads(t.replace("let R = 10k", f"let R = {float(r)!r}")), 0.0).quantities
        for q in ("Gv", "Rin"):
            assert got.quantities[q][i] == pytest.approx(ref[q], rel=1e-12)


def test_wilson_interval_against_scipy():
    # scipy.stats.binomtest(...).proportion_ci(method="wilson") (Wilson 1927)
    from scipy.stats import binomtest, norm
    assert Z95 == pytest.approx(norm.ppf(0.975), rel=1e-15)
    for k, n in ((0, 20), (7, 20), (20, 20), (9876, 10000)):
        ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
        lo, hi = wilson(k, n)
        assert lo == pytest.approx(ci.low, abs=1e-12) and hi == pytest.approx(ci.high, abs=1e-12)


def test_yield_and_out_of_region_samples_are_counted_and_excluded():
    # beta up to 2000 pushes IC high enough to saturate the stage: those samples are counted
    text = CE_BIASED.replace("resistor R2 (b, gnd) 22k", "resistor R2 (b, gnd) 22k\nspread R1 30k .. 120k")
    c = solver.loads(text + "spec Av 100 .. 400\n")
    r = spread(c, samples=400, seed=2)
    assert r.out_of_region > 0
    y = r.yields[0]
    assert y["counted"] == 400 - r.out_of_region - r.failed
    assert y["low"] <= y["fraction"] <= y["high"]
    assert any("outside its amplifying region" in n for n in r.notes)


def test_samples_without_a_solution_are_counted_not_dropped():
    # sqrt of a negative value has no solution: such samples are 'failed', and the yield counts
    # only the others
    c = solver.loads("let X = 1\nsignal VS (a, gnd) 1 V\nresistor R1 (a, b) 1k*sqrt(X)\n"
                     "resistor R2 (b, gnd) 1k\noutput (b, gnd)\nspread X -1 .. 1\nspec Gv 0 .. 1\n")
    r = spread(c, samples=400, seed=5)
    assert 120 < r.failed < 280 and r.out_of_region == 0
    assert r.yields[0]["counted"] == 400 - r.failed and r.yields[0]["fraction"] == 1.0


def test_worst_case_against_exact_corners():
    # the divider's extremes are at the corners R1 high, R2 low (min) and R1 low, R2 high (max):
    # the closed form gives them exactly
    c = solver.loads(DIVIDER + "spread R1 10%\nspread R2 5%\n")
    w = spread(c, samples=50, seed=1, worst=True).worst["Gv"]
    assert w["min"] == pytest.approx(2850 / (1100 + 2850), rel=1e-12)
    assert w["max"] == pytest.approx(3150 / (900 + 3150), rel=1e-12)
    assert w["corner_min"] == {"R1": 1100.0, "R2": 2850.0}
    assert w["confirmed"] is True and w["method"] == "all 4 corners"


def test_worst_case_biased_against_solved_corners():
    text = CE_BIASED + "spread RC 5%\nspread Q1.beta 100 .. 300\n"
    w = spread(solver.loads(text), samples=20, seed=1, worst=True, at=1000.0).worst["Av"]
    corner = w["corner_max"]
    ref = _solve(CE_BIASED.replace("4k7", repr(corner["RC"])).replace("beta=150", f"beta={corner['Q1.beta']!r}"),
                 "Av", 1000.0)
    assert w["max"] == pytest.approx(abs(ref), rel=1e-9)


# --- tune -------------------------------------------------------------------------------------------
def test_tune_degenerated_ce_against_closed_form():
    # |Av| = beta*RC/(rpi + (beta+1)*RE) for a CE stage with an unbypassed RE and ro = inf
    # (Sedra & Smith, 7th ed., section 7.3.4), solved for RE
    c = solver.loads("signal VS (b, gnd) 1 mV\nsupply VCC (vcc, gnd) 12 V\nresistor RC (vcc, c) 10k\n"
                     "resistor RE1 (e, gnd) 100\nnpn Q1 (c, b, e) ic=1 mA, beta=100\noutput (c, gnd)\n")
    r = tune(c, "Av", -20.0, "RE1")
    rpi = 100 / (1e-3 / thermal_voltage(300.0))
    assert r.value == pytest.approx((100 * 10e3 / 20 - rpi) / 101, rel=1e-10)
    assert r.series == "E24" and r.below["value"] == 430.0 and r.above["value"] == 470.0
    assert r.above["result"] == pytest.approx(100 * 10e3 / (rpi + 101 * 470.0), rel=1e-10)
    assert r.method.startswith("exact")


def test_tune_magnitude_at_a_frequency():
    # RC low-pass: |H| = 1/sqrt(1 + (w R C)^2) = 1/sqrt(2) at R = 1/(w C)
    c = solver.loads("signal VS (a, gnd) 1 V\nresistor R1 (a, b) 1k\ncapacitor C1 (b, gnd) 100n\noutput (b, gnd)\n")
    r = tune(c, "Gv", 1 / math.sqrt(2), "R1", at=1000.0)
    assert r.value == pytest.approx(1 / (2 * math.pi * 1000.0 * 100e-9), rel=1e-9)


def test_tune_through_the_bias_and_no_solution():
    c = solver.loads(CE_BIASED)
    r = tune(c, "Av", 150.0, "RC", at=1000.0)
    assert abs(_solve(CE_BIASED.replace("4k7", repr(r.value)), "Av", 1000.0)) == pytest.approx(150.0, rel=1e-8)
    assert "bias" in r.method
    with pytest.raises(NoSolution):
        tune(solver.loads(DIVIDER), "Gv", 2.0, "R1")


# --- IEC 60063 --------------------------------------------------------------------------------------
def test_e_series_tables():
    # IEC 60063:2015 tables (from memory): the counts, the decimation of E192, and the
    # geometric series 10^(i/n) rounded to 2 (E6-E24) or 3 (E48-E192) figures, with exactly the
    # standard's known deviations
    assert [len(SERIES[s]) for s in ("E6", "E12", "E24", "E48", "E96", "E192")] == [6, 12, 24, 48, 96, 192]
    assert E96 == E192[::2] and E48 == E96[::2] and E12 == E24[::2] and E6 == E12[::2]
    exceptions = {"E6": {33, 47}, "E12": {27, 33, 39, 47, 82}, "E24": {27, 30, 33, 36, 39, 43, 47, 82},
                  "E48": set(), "E96": set(), "E192": {920}}
    for name, table in SERIES.items():
        n, digits = len(table), (2 if len(table) <= 24 else 3)
        off = {v for i, v in enumerate(table) if v != round(10 ** (i / n) * 10 ** (digits - 1))}
        assert off == exceptions[name], name
    assert neighbours(4600.0, "E24") == (4300.0, 4700.0)
    assert neighbours(1.0e4, "E96") == (1.0e4, 1.0e4)
    assert neighbours(9.9e3, "E6") == (6.8e3, 1.0e4)


# --- the language ----------------------------------------------------------------------------------
LINES = ["spread RC 5%", "spread Q1.beta 100 .. 300", "spread M1.vth 0.9 V .. 1.1 V, dist=normal",
         "spread X1.RC 1%, dist=uniform", "spec Av 25 .. 35", "spec Rin 2k .. inf", "spec Gv 28 dB .. 31 dB",
         "spec Gv 10^(28/20) .. 31 dB", "spread RC 2*2.5%", "spread RC 4k5 .. 5k"]


@pytest.mark.parametrize("line", LINES)
def test_fast_path_matches_lark_for_spread_and_spec(line, monkeypatch):
    ref = P._parse(line + "\n", "f.pw", fast=False).statements

    def no_lark(*args, **kw):
        raise AssertionError("the fast path called lark")
    monkeypatch.setattr(P, "_run", no_lark)
    assert P._fast_statements(line + "\n", "f.pw") == ref


@pytest.mark.parametrize("extra, message", [
    ("spread RC 5 V", "tolerance"),
    ("spread M1.vth 1 A .. 2 A", "is in V"),
    ("spread RC 5k .. 4k", "LO <= HI"),
    ("spread RC 5%, dist=flat", "dist= is uniform or normal"),
    ("spread RC 5%\nspread RC 1%", "has a spread already"),
    ("spread RX 5%", "undefined name 'RX'"),
    ("spread M1.gm 1%", "follows from the bias point"),
    ("spread M1.beta 1%", "not 'beta'"),
    ("spec Rin 20 dB .. 30 dB", "dB is for the gains"),
    ("spec Av 1k .. 2 V", "is in"),
    ("spec Bw 1 .. 2", "unknown quantity"),
])
def test_spread_and_spec_errors(extra, message):
    text = MOS.replace("spread RD 5%", "") + "resistor RC (d, gnd) 1M\n" + extra + "\n"
    with pytest.raises(InputError) as e:
        solver.loads(text)
    assert any(message in d.message for d in e.value.diagnostics), [d.message for d in e.value.diagnostics]


def test_spec_in_db_converted():
    c = solver.loads(DIVIDER + "spec Gv -3 dB .. 0 dB\n")
    assert c.specs[0].lo == pytest.approx(10 ** (-3 / 20)) and c.specs[0].hi == 1.0


# --- the command line ---------------------------------------------------------------------------------
def _cli(capsys, *args):
    from solver.cli import main
    rc = main(list(args))
    out = capsys.readouterr()
    return rc, out.out, out.err


def test_cli_spread_json_and_tune_exit_codes(tmp_path, capsys):
    f = tmp_path / "div.pw"
    f.write_text(DIVIDER + "spread R1 5%\nspec Gv 0.7 .. 0.8\n")
    rc, out, err = _cli(capsys, "spread", str(f), "--samples", "300", "--seed", "4", "--worst", "--json")
    assert rc == 0, err
    d = json.loads(out)
    assert d["samples"] == 300 and d["seed"] == 4 and d["out_of_region"] == 0
    assert set(d["quantities"]["Gv"]) >= {"mean", "std", "min", "max", "p1", "p50", "p99"}
    assert d["yield"][0]["line"] == 6 and d["yield"][0]["spec"] == "Gv 0.7 .. 0.8"
    assert set(d["worst"]["Gv"]) >= {"min", "max", "corner_min"}
    rc, out, err = _cli(capsys, "tune", str(f), "--set", "Gv=2", "--vary", "R1")
    assert rc == 1 and "no solution" in err
    rc, out, err = _cli(capsys, "tune", str(f), "--set", "Gv=0.5", "--vary", "R1", "--series", "E12", "--json")
    assert rc == 0 and json.loads(out)["value"] == pytest.approx(3000.0)
    rc, out, err = _cli(capsys, "sensitivity", str(f), "Gv")
    assert rc == 0 and "R1" in out and "R2" in out
    rc, out, err = _cli(capsys, "spread", str(ROOT / "circuits" / "mic_preamp.pw"))
    assert rc == 2 and "no 'spread' lines" in err
    plot = tmp_path / "h.png"
    rc, out, err = _cli(capsys, "spread", str(f), "--samples", "50", "--seed", "1", "--plot", str(plot))
    assert rc == 0 and plot.read_bytes()[:4] == b"\x89PNG"
    rc, out, err = _cli(capsys, "spread", str(f), "--samples", "50", "--plot", str(plot))
    assert rc == 2 and "--overwrite" in err  # nothing the user has is replaced without asking
