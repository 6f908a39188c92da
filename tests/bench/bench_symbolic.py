"""Benchmark of ``portwise derive`` on N cascaded common-emitter stages (quantity Gv).

Each stage: hybrid-pi gm, rpi, ro, cpi, cmu and a collector resistor; a source
resistance and a load. Prints

* the whole process a user types, ``portwise derive FILE Gv --json`` (wall clock and
  CPU time of the child process, start-up and imports included), with the form chosen,
  its size (symbol occurrences, the JSON "size") and its printed length in characters
  (expression plus where lines);
* naive sympy (Matrix.LUsolve then cancel on the same MNA matrix, compute only, imports
  excluded) at N <= --naive-max in the same run, and the ratio to our whole process;
* with --engine, the in-process engine times as before.

Run: ``python tests/bench/bench_symbolic.py`` (about a minute). Goals (issue 12): whole
process N=2 < 0.8 s, N=4 < 1 s, N=6 < 3 s, N=8 < 5 s, N=12 (compact) < 5 s with a size
about linear in N; >= 8x faster than naive at N=4; the N=4 printed form < 20,000 characters.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))


def cascade(n: int) -> str:
    lines = ["title \"bench cascade\"", "signal VS (b1, gnd) 1 mV, rs=1k"]
    for i in range(1, n + 1):
        nxt = f"b{i + 1}" if i < n else "out"
        lines.append(f"npn Q{i} ({nxt}, b{i}, gnd) gm=40m, rpi=2k5, ro=100k, cpi=10p, cmu=1p")
        lines.append(f"resistor RC{i} ({nxt}, gnd) 5k")
    lines.append("load RL (out, gnd) 10k")
    return "\n".join(lines) + "\n"


def naive(c):
    """sympy Matrix.LUsolve + cancel on the same matrix (the loaded drive), v_out.

    "The same matrix" is the polynomial one our engine expands: ``1/X`` is its own
    symbol, as in the ring (with 1/X written as a power of X, LUsolve + cancel
    did not finish N=2 within 40 s here).
    """
    import sympy
    from solver.circuit.views import load_element, signal_elements, small_signal_elements
    from solver.analysis.symbolic.ports import choose_symbols
    from solver.engine.symbolic.ring import Ring
    from solver.engine.symbolic.stamper import SymbolicStamper, variable_names
    from solver.engine.symbolic.determinants import symbol
    kept = choose_symbols(c)
    ring = Ring(variable_names(kept), "sympy")
    els = small_signal_elements(c) + signal_elements(c, 1.0) + [load_element(c)]
    st = SymbolicStamper(els, c.ground, ring, set(kept)).stamp_all()
    syms = [sympy.Symbol(n) if n.startswith("1/") else symbol(n) for n in ring.names]
    conv = lambda p: p.as_expr(*syms) if hasattr(p, "as_expr") else sympy.sympify(p)  # trusted: ring elements we built
    A = sympy.zeros(st.size, st.size)
    for (r, k), v in st.A.items():
        A[r, k] = conv(v)
    b = sympy.zeros(st.size, 1)
    for r, v in st.b.items():
        b[r] = conv(v)
    op, on = c.output_port
    t0 = time.perf_counter()
    x = A.LUsolve(b)
    i, j = st.node(op), st.node(on)
    v = (x[i] if i is not None else 0) - (x[j] if j is not None else 0)
    sympy.cancel(v)
    return time.perf_counter() - t0


def _naive_child(n, q):
    import solver
    q.put(naive(solver.loads(cascade(n))))


def naive_timed(n: int, limit: float):
    """Naive time in a child process; None when it runs past ``limit`` seconds (then killed)."""
    import multiprocessing as mp
    q = mp.Queue()
    p = mp.Process(target=_naive_child, args=(n, q))
    p.start()
    p.join(limit)
    if p.is_alive():
        p.terminate()
        p.join()
        return None
    if p.exitcode != 0:
        raise SystemExit(f"the naive baseline failed (exit {p.exitcode})")
    return q.get()


def compact_check(c, expr, f=1e6) -> float:
    """Relative difference of the compact form from the numeric engine at f (a sanity check)."""
    import math
    from solver.analysis.ports import port_quantities
    from solver.engine.symbolic.determinants import symbol
    from solver.analysis.symbolic.ports import symbol_values
    sub = {symbol(k): v for k, v in symbol_values(c).items()}
    sub[symbol("s")] = 2j * math.pi * f
    z = complex(expr.xreplace(sub).evalf())
    ref = port_quantities(c, f).quantities["Gv"]
    return abs(z - ref) / abs(ref)


def ours(c, compact=False):
    from solver.analysis.symbolic.ports import symbolic_port_quantities
    t0 = time.perf_counter()
    r = symbolic_port_quantities(c, which=["Gv"], compact=compact)
    dt = time.perf_counter() - t0
    q = r["Gv"]
    if compact:
        return dt, compact_check(c, q)
    t1 = time.perf_counter()
    q.num  # noqa: B018  (merging X and 1/X into the circuit's symbols, done for printing)
    return dt, q.ring_terms + (time.perf_counter() - t1,)


def whole_process(n: int, tmp: Path, extra=()) -> dict:
    """``portwise derive FILE Gv --json`` as a child process: wall and CPU seconds, form, size, length."""
    import json
    import os
    import subprocess
    path = tmp / f"cascade{n}.pw"
    path.write_text(cascade(n))
    exe = Path(sys.executable).with_name("portwise")
    cmd = [str(exe) if exe.exists() else sys.executable, *([] if exe.exists() else ["-m", "solver"]),
           "derive", str(path), "Gv", "--json", *extra]
    t0 = time.perf_counter()
    r0 = os.times()
    p = subprocess.run(cmd, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    r1 = os.times()
    if p.returncode != 0:
        raise SystemExit(p.stderr)
    d = json.loads(p.stdout)
    chars = len(d["expression"]) + sum(len(w["name"]) + 3 + len(w["expression"]) for w in d["where"])
    cpu = (r1.children_user - r0.children_user) + (r1.children_system - r0.children_system)
    return {"wall": wall, "cpu": cpu, "form": d["form"], "size": d["size"], "chars": chars,
            "where": len(d["where"])}


def main() -> None:
    import tempfile
    ap = argparse.ArgumentParser()
    ap.add_argument("--naive-max", type=int, default=4, help="largest N for the naive baseline")
    ap.add_argument("--naive-timeout", type=float, default=120.0, help="seconds before the naive run is stopped")
    ap.add_argument("--sizes", default="2,4,6,8,12,16", help="N values for the whole-process runs")
    ap.add_argument("--engine", action="store_true", help="also print the in-process engine times")
    ap.add_argument("--exact-max", type=int, default=6)
    ap.add_argument("--compact-max", type=int, default=8)
    a = ap.parse_args()
    import solver
    from solver.engine.symbolic.ring import have_flint
    print(f"polynomial backend: {'python-flint' if have_flint() else 'sympy PolyRing'}; "
          f"{os.cpu_count()} cores (other load on the machine shows as wall > cpu)")
    goals = {2: 0.8, 4: 1.0, 6: 3.0, 8: 5.0, 12: 5.0}
    with tempfile.TemporaryDirectory() as tmp:
        for n in [int(x) for x in a.sizes.split(",")]:
            w = whole_process(n, Path(tmp))
            goal = f" (goal < {goals[n]:g} s)" if n in goals else ""
            row = (f"N={n:<2d} portwise derive FILE Gv --json: wall {w['wall']:6.2f} s, cpu {w['cpu']:5.2f} s{goal}; "
                   f"{w['form']} form, size {w['size']}, {w['chars']} characters, {w['where']} where lines")
            if n <= a.naive_max:
                tn = naive_timed(n, a.naive_timeout)
                if tn is None:
                    row += f"; naive sympy > {a.naive_timeout:.0f} s (stopped)"
                else:
                    row += f"; naive sympy {tn:.2f} s = {tn / w['wall']:.1f}x our whole process"
            print(row, flush=True)
    if not a.engine:
        return
    import sympy  # noqa: F401  (import time is not compute time)
    for n in range(1, max(a.exact_max, a.compact_max) + 1):
        c = solver.loads(cascade(n))
        row = [f"N={n}"]
        if n <= a.exact_max:
            dt, terms = ours(c)
            row.append(f"exact {dt * 1e3:9.1f} ms  (num {terms[0]} terms, den {terms[1]} terms; "
                       f"to circuit symbols for printing +{terms[2] * 1e3:.0f} ms)")
        if n <= a.compact_max:
            dt, diff = ours(c, compact=True)
            row.append(f"compact {dt * 1e3:9.1f} ms (vs numeric engine at 1 MHz: {diff:.1e})")
        print("  ".join(row), flush=True)


if __name__ == "__main__":
    main()
