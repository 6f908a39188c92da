"""Property-based robustness: any input ends in a result or a clean diagnostic, never a crash.

Random valid netlists are checked against an independent dense nodal solve
with numpy (nodal analysis as in C. A. Desoer, E. S. Kuh, *Basic Circuit
Theory*, 1969, chapter on node analysis, from memory); mutated netlists and
random bytes must end with exit code 0 or 2 and GNU-style ``FILE:LINE:COL``
diagnostics (GNU Coding Standards, section 4.4, from memory).
"""
from __future__ import annotations

import cmath
import contextlib
import io
import math
import re

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from solver import api
from solver import cli as C
from solver.language import parse as P

SETTINGS = dict(deadline=3000, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
DIAG = re.compile(r"^(?P<file>.+?):(?P<line>\d+):(?P<col>\d+): (error|warning|note): ")


# --- random valid RC networks --------------------------------------------------------------
@st.composite
def networks(draw):
    """(netlist text, elements [(kind, a, b, value)], rs, load or None, output node)."""
    n = draw(st.integers(2, 7))
    nodes = [f"n{i}" for i in range(1, n + 1)]
    els = []
    # a spanning tree of resistors over nodes + ground keeps every node on a path to the reference
    for i in range(1, n + 1):
        j = draw(st.integers(0, i - 1))
        a, b = nodes[i - 1], ("gnd" if j == 0 else nodes[j - 1])
        els.append(("resistor", a, b, draw(st.sampled_from([10.0, 47.0, 220.0, 1e3, 4.7e3, 22e3, 1e5]))))
    for _ in range(draw(st.integers(0, 6))):
        a, b = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes + ["gnd"]))
        if a == b:
            continue
        kind = draw(st.sampled_from(["resistor", "capacitor"]))
        value = draw(st.sampled_from([1e-9, 4.7e-9, 1e-7, 1e-6])) if kind == "capacitor" else \
            draw(st.floats(1.0, 1e6, allow_nan=False))
        els.append((kind, a, b, value))
    rs = draw(st.sampled_from([1.0, 50.0, 600.0, 10e3]))
    out = draw(st.sampled_from(nodes[1:] or nodes))
    load = draw(st.one_of(st.none(), st.sampled_from([100.0, 10e3])))
    lines = [f"signal VS (n1, gnd) 1 V, rs={rs!r}"]
    for k, (kind, a, b, v) in enumerate(els):
        lines.append(f"{kind} {kind[0].upper()}{k} ({a}, {b}) {v!r}")
    lines.append(f"load RL ({out}, gnd) {load!r}" if load else f"output ({out}, gnd)")
    return "\n".join(lines) + "\n", els, rs, load, out


def dense_reference(els, rs, load, out, f):
    """Gv, Av, Rin from a dense nodal matrix built here with numpy (Norton form of the source)."""
    names = sorted({n for _, a, b, _ in els for n in (a, b) if n != "gnd"} | {"n1", out})
    idx = {n: i for i, n in enumerate(names)}
    Y = np.zeros((len(names), len(names)), complex)
    w = 2 * math.pi * f

    def stamp(a, b, y):
        for p, q, s in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
            if p != "gnd" and q != "gnd":
                Y[idx[p], idx[q]] += s * y
    for kind, a, b, v in els:
        stamp(a, b, 1 / v if kind == "resistor" else 1j * w * v)
    if load:
        stamp(out, "gnd", 1 / load)
    stamp("n1", "gnd", 1 / rs)
    i = np.zeros(len(names), complex)
    i[idx["n1"]] = 1 / rs
    v = np.linalg.solve(Y, i)
    v1, vo = v[idx["n1"]], v[idx[out]]
    return vo, vo / v1, v1 / ((1 - v1) / rs)


@settings(max_examples=60, **SETTINGS)
@given(networks(), st.sampled_from([0.0, 1e3, 1e5]))
def test_random_rc_networks_agree_with_dense_numpy(net, f):
    text, els, rs, load, out = net
    has_cap = any(k == "capacitor" for k, *_ in els)
    r = api.solve(api.loads(text, "rand.pw"), f if has_cap else 0.0)
    gv, av, rin = dense_reference(els, rs, load, out, f if has_cap else 0.0)
    q = r.quantities
    assert cmath.isclose(q["Gv"], gv, rel_tol=1e-7, abs_tol=1e-12)
    assert cmath.isclose(q["Av"], av, rel_tol=1e-7, abs_tol=1e-12)
    assert cmath.isclose(q["Rin"], rin, rel_tol=1e-7, abs_tol=1e-9)


# --- mutated netlists and random bytes through the command line ----------------------------
SEED = """\
title "sensor front end"
let RB = 47k || 10k
signal VS (in, gnd) 10 mV, rs=600
resistor RBIAS (in, gnd) RB
npn Q1 (c, in, e) ic=1.2 mA, beta=150, va=80 V
resistor RE1 (e, gnd) 100
capacitor CE (e, gnd) 10 uF
resistor RC (c, gnd) 6k8
block follower (i, o) rload=1k
  resistor R (i, o) rload
end
use follower X1 (c, x) rload=2k2
load RL (x, gnd) 10k
claim Av ~ -(RC || RL)/(Q1.re + RE1) within 10%
"""
SEED2 = """\
title "photodiode transimpedance front end"
ground agnd
let RF = 100k
signal IS (pd, agnd) 1 uA
opamp U1 (out, agnd, pd)
resistor RF1 (pd, out) RF
capacitor CF (pd, out) 2.2 pF
resistor RSENSE (out, mid) 10
ccvs H1 (buf, gnd) RSENSE 50
cccs F1 (gnd, aux) RSENSE 2
resistor RAUX (aux, gnd) 1k
inductor L1 (buf, o2) 10 uH
nmos M1 (o2, buf, gnd) id=1 mA, vov=0.3 V, lambda=0.02 /V
diode D1 (mid, gnd) id=10 uA
resistor RM (mid, gnd) 1k
load RL (o2, gnd) 2k
claim Zt ~ -RF within 50%
"""
SEEDS = [SEED, SEED2]
TOKEN = re.compile(r"\s+|[(),=]|[^\s(),=]+")
UNITS = ["", "k", "V", "A", "F", "H", "Ω", "Hz", "K", "mA", "%", "nF", "kK", "µ", "ohm"]


def run_main(path) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = C.main(["solve", str(path)])
        except SystemExit as e:  # argparse usage errors
            code = e.code
    return code, out.getvalue(), err.getvalue()


def assert_clean(code, err, path):
    assert code in (0, 2), err
    assert "Traceback" not in err and "internal error" not in err
    if code == 2:
        heads = [l for l in err.splitlines() if DIAG.match(l) or l.startswith("portwise: ")]
        assert heads, err
        for h in heads:
            m = DIAG.match(h)
            if m:
                assert m.group("file") == str(path) and int(m.group("line")) >= 1 and int(m.group("col")) >= 1


@st.composite
def mutants(draw):
    toks = TOKEN.findall(draw(st.sampled_from(SEEDS)))
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["delete", "unit", "insert", "duplicate", "swap"]))
        i = draw(st.integers(0, len(toks) - 1))
        if op == "delete":
            del toks[i]
        elif op == "unit":
            t = toks[i]
            m = re.match(r"^(\d[\d.]*)(.*)$", t)
            toks[i] = (m.group(1) if m else t) + draw(st.sampled_from(UNITS))
        elif op == "insert":
            toks.insert(i, draw(st.text(min_size=1, max_size=4)))
        elif op == "duplicate":
            toks.insert(i, toks[i])
        else:
            j = draw(st.integers(0, len(toks) - 1))
            toks[i], toks[j] = toks[j], toks[i]
        if not toks:
            break
    return "".join(toks)


@settings(max_examples=80, **SETTINGS)
@given(mutants())
def test_mutated_netlists_end_cleanly(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("m") / "mut.pw"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    code, _, err = run_main(path)
    assert_clean(code, err, path)


@settings(max_examples=40, **SETTINGS)
@given(st.binary(max_size=300))
def test_random_bytes_end_cleanly(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("b") / "bytes.pw"
    path.write_bytes(data)
    code, _, err = run_main(path)
    assert_clean(code, err, path)


FIXED_MUTANTS = [SEED.replace("6k8", "6k8 F"), SEED.replace(")", "", 1), SEED[:200],
                 SEED.replace("Q1.re", "Q1.rx.gm"), "\x00\x01binary\n", SEED + "end\n"]


def test_fixed_mutants_end_cleanly_in_process(tmp_path):
    codes = []
    for k, text in enumerate(FIXED_MUTANTS):
        p = tmp_path / f"m{k}.pw"
        p.write_text(text, encoding="utf-8")
        code, _, err = run_main(p)
        assert_clean(code, err, p)
        codes.append(code)
    assert codes == [2] * len(FIXED_MUTANTS)  # every one is bad input: a diagnostic, exit 2


def test_real_process_never_shows_a_traceback(real_cli, tmp_path):
    # a few fixed mutants through a real `python -m solver` process (the in-process runs above
    # cannot see what the interpreter itself would print on an uncaught exception)
    # (three of them: a unit error, a syntax error, binary bytes; the in-process runs cover the rest)
    for k, text in enumerate([FIXED_MUTANTS[0], FIXED_MUTANTS[1], FIXED_MUTANTS[4]]):
        p = tmp_path / f"m{k}.pw"
        p.write_text(text, encoding="utf-8")
        r = real_cli("solve", p)
        assert r.returncode in (0, 2) and "Traceback" not in r.stderr


# --- the fast path gives what lark gives ---------------------------------------------------
FRAGMENTS = ["resistor", "capacitor", "npn", "vccs", "cccs", "signal", "load", "let", "block", "end", "use",
             "claim", "title", "output", "ground", "R1", "a", "gnd", "Q1.gm", "(", ")", ",", "=", "~", "||",
             "+", "-", "*", "/", "^", "1k", "4k7", "2.2 nF", "10 mV", "1e-3", "5%", '"t"', "within", "\n",
             " ", "\t", "# note\n", "\\\n", "sqrt", "x", ".", "\f", "\r\n", "2/V", "resistorR1", "µ"]


def _outcome(text, fast):
    try:
        return P._parse(text, "f.pw", fast=fast).statements
    except Exception as e:  # an InputError (syntax, unit, unknown function): compare the messages
        return ("error", type(e).__name__, str(e))


@settings(max_examples=300, **SETTINGS)
@given(st.lists(st.sampled_from(FRAGMENTS), max_size=30), st.sampled_from([SEED, SEED2, ""]))
def test_fast_path_matches_lark(frags, prefix):
    text = prefix + " ".join(frags) if frags and frags[0] not in "\n" else prefix + "".join(frags)
    assert _outcome(text, True) == _outcome(text, False)
    # line by line: what the fast path takes at all, lark takes and reads the same
    fast = P._Fast("f.pw")
    for raw in text.replace("\r\n", "\n").split("\n"):
        try:
            stmt = fast.statement(raw, 1)
        except P._Decline:
            continue
        if stmt is None:
            continue
        assert P._run("start", raw + "\n", "f.pw") == [stmt]


# --- random circuits of every element kind: a result or a clean diagnostic -------------------
@st.composite
def circuits(draw):
    """Random wiring of every element kind; many are singular on purpose (floating, loops, cut sets)."""
    nodes = ["n1", "n2", "n3", "n4", "gnd"]
    node = st.sampled_from(nodes)
    lines, resistors = [], []
    sig = draw(st.sampled_from(["1 V", "1 V, rs=50", "1 uA", "1 uA, rs=10k"]))
    lines.append(f"signal VS (n1, {draw(st.sampled_from(['gnd', 'n2']))}) {sig}")
    for k in range(draw(st.integers(1, 9))):
        kind = draw(st.sampled_from(["resistor", "capacitor", "inductor", "vccs", "vcvs", "cccs", "ccvs",
                                     "supplyV", "supplyA", "npn", "pnp", "nmos", "diode", "opamp", "opampg",
                                     "unbiased"]))
        a, b, c, d = (draw(node) for _ in range(4))
        if kind == "resistor":
            lines.append(f"resistor R{k} ({a}, {b}) {draw(st.sampled_from(['1k', '-1k', '10', '1e9']))}")
            resistors.append(f"R{k}")
        elif kind == "capacitor":
            lines.append(f"capacitor C{k} ({a}, {b}) 1 nF")
        elif kind == "inductor":
            lines.append(f"inductor L{k} ({a}, {b}) 1 mH")
        elif kind == "vccs":
            lines.append(f"vccs G{k} ({a}, {b}) ({c}, {d}) 1 mS")
        elif kind == "vcvs":
            lines.append(f"vcvs E{k} ({a}, {b}) ({c}, {d}) 2")
        elif kind in ("cccs", "ccvs"):
            if resistors:
                lines.append(f"{kind} {kind[:2].upper()}{k} ({a}, {b}) {draw(st.sampled_from(resistors))} "
                             f"{'2' if kind == 'cccs' else '1k'}")
        elif kind == "supplyV":
            lines.append(f"supply V{k} ({a}, {b}) 9 V")
        elif kind == "supplyA":
            lines.append(f"supply I{k} ({a}, {b}) 1 mA")
        elif kind in ("npn", "pnp"):
            lines.append(f"{kind} Q{k} ({a}, {b}, {c}) ic=1 mA, beta=100{draw(st.sampled_from(['', ', va=50 V']))}")
        elif kind == "nmos":
            lines.append(f"nmos M{k} ({a}, {b}, {c}) id=1 mA, vov=0.2 V, ro=20k")
        elif kind == "diode":
            lines.append(f"diode D{k} ({a}, {b}) id=1 mA")
        elif kind == "unbiased":
            lines.append(f"npn Q{k} ({a}, {b}, {c}) beta=100")
        elif kind == "opamp":
            lines.append(f"opamp U{k} ({a}, {b}, {c})")
        else:
            lines.append(f"opamp U{k} ({a}, {b}, {c}) gain=1e5")
    out = draw(st.sampled_from(["n2", "n3", "n4"]))
    lines.append(draw(st.sampled_from([f"load RL ({out}, gnd) 1k", f"output ({out}, gnd)"])))
    return "\n".join(lines) + "\n"


@settings(max_examples=120, **SETTINGS)
@given(circuits(), st.sampled_from([None, "0", "1kHz"]))
def test_random_circuits_end_in_a_result_or_a_diagnostic(tmp_path_factory, text, at):
    path = tmp_path_factory.mktemp("c") / "rand.pw"
    path.write_text(text, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = C.main(["solve", str(path)] + (["--at", at] if at else []))
    assert_clean(code, err.getvalue(), path)


@settings(max_examples=60, **SETTINGS)
@given(circuits(), st.sampled_from([["bias"], ["bias", "--json"], ["twoport", "--at", "1kHz"],
                                    ["twoport", "--at", "0", "--json"]]))
def test_random_circuits_through_bias_and_twoport(tmp_path_factory, text, args):
    # the DC-view checks before Newton and the two-port network checks: a clean end either way
    path = tmp_path_factory.mktemp("c") / "rand.pw"
    path.write_text(text, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = C.main([args[0], str(path)] + args[1:])
    assert_clean(code, err.getvalue(), path)
