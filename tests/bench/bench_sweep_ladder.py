"""Benchmark: `portwise sweep` of a 20,000-section RC ladder over 200 points vs a bare sparse-LU loop.

Goal: the whole `python -m solver sweep` process costs at most 1.3x a bare
script that builds the same sparse MNA matrices with scipy and calls splu once per
point. Both run as fresh processes here, each three times; the best wall times and
their ratio are printed. The ladder is written with nested blocks (10 sections per
level), as an engineer would write it; a flat 40,000-line netlist is also timed
once, for information (its cost is the parser's, not the sweep's).

Run:  python tests/bench/bench_sweep_ladder.py
"""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
SECTIONS = 20_000
POINTS = 200
R, C, RS, RL = 0.1, 1e-12, 50.0, 1e3
F_FROM, F_TO = 1e3, 1e8


def nested_netlist() -> str:
    """20,000 = 2 x 10^4 sections: blocks of ten, four levels, two at the top."""
    out = ["# RC ladder benchmark (delay-line model), written with nested blocks",
           "signal VS (n0, gnd) 1 V, rs=50",
           "block L0 (a, b)", "  resistor R (a, b) 0.1", "  capacitor C (b, gnd) 1p", "end"]
    for level in range(1, 5):
        out.append(f"block L{level} (a, b)")
        nodes = ["a"] + [f"m{k}" for k in range(1, 10)] + ["b"]
        for k in range(10):
            out.append(f"  use L{level - 1} X{k} ({nodes[k]}, {nodes[k + 1]})")
        out.append("end")
    out += ["use L4 A (n0, mid)", "use L4 B (mid, out)", "load RL (out, gnd) 1k"]
    return "\n".join(out) + "\n"


def flat_netlist() -> str:
    out = ["signal VS (n0, gnd) 1 V, rs=50"]
    for k in range(SECTIONS):
        out.append(f"resistor R{k} (n{k}, n{k + 1}) 0.1")
        out.append(f"capacitor C{k} (n{k + 1}, gnd) 1p")
    out.append(f"load RL (n{SECTIONS}, gnd) 1k")
    return "\n".join(out) + "\n"


BARE = f'''
import numpy as np, scipy.sparse as sp, scipy.sparse.linalg as spla
N, R, C, RS, RL = {SECTIONS}, {R}, {C}, {RS}, {RL}
# unknowns: v(n0..nN), v(sig), i(VS)  -- the same MNA system portwise stamps
n = N + 3
sig, br = N + 1, N + 2
rows, cols, vals = [], [], []
def g(a, b, y):
    for r, c, v in ((a, a, y), (b, b, y), (a, b, -y), (b, a, -y)):
        if r is not None and c is not None:
            rows.append(r); cols.append(c); vals.append(v)
for k in range(N):
    g(k, k + 1, 1 / R)
g(sig, 0, 1 / RS)
g(N, None, 1 / RL)
rows += [sig, br]; cols += [br, sig]; vals += [1.0, 1.0]
G = sp.coo_matrix((vals, (rows, cols)), shape=(n, n)).tocsc()
ci = np.arange(1, N + 1)
Cm = sp.coo_matrix((np.full(N, C), (ci, ci)), shape=(n, n)).tocsc()
b = np.zeros(n, complex); b[br] = 1.0
out = []
for f in np.logspace(np.log10({F_FROM}), np.log10({F_TO}), {POINTS}):
    x = spla.splu((G + 2j * np.pi * f * Cm).tocsc()).solve(b)
    out.append(x[N])
print(abs(out[0]), abs(out[-1]))
'''


def best_of(cmd, runs=3, env=None):
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        p = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=ROOT)
        times.append(time.perf_counter() - t)
        if p.returncode != 0:
            raise SystemExit(f"{cmd[:3]} failed:\n{p.stderr}")
    return min(times), p.stdout


def main() -> None:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    with tempfile.TemporaryDirectory() as tmp:
        nested = Path(tmp) / "ladder_nested.pw"
        nested.write_text(nested_netlist())
        bare = Path(tmp) / "bare.py"
        bare.write_text(BARE)
        sweep = [sys.executable, "-m", "solver", "sweep", str(nested), "--from", "1kHz", "--to", "100MHz",
                 "--points", str(POINTS), "--json"]
        t_tool, out = best_of(sweep, env=env)
        t_bare, bare_out = best_of([sys.executable, str(bare)])
        print(f"RC ladder, {SECTIONS} sections, {POINTS} points (best of 3 fresh processes)")
        print(f"  portwise sweep (nested blocks)   {t_tool:7.2f} s")
        print(f"  bare splu-per-point script       {t_bare:7.2f} s")
        print(f"  ratio                            {t_tool / t_bare:7.2f}   (goal <= 1.30)")
        import json
        pts = json.loads(out)["points"]
        first, last = abs(complex(pts[0]["re"], pts[0]["im"])), abs(complex(pts[-1]["re"], pts[-1]["im"]))
        b0, b1 = map(float, bare_out.split())
        print(f"  same answer: |H(f_from)| {first:.9g} vs {b0:.9g}, |H(f_to)| {last:.3e} vs {b1:.3e}")
        # the sweep's own linear algebra, in this process: banded LU (chosen for this ladder) vs SuperLU
        sys.path.insert(0, str(ROOT))
        import numpy as np
        from solver.api import load
        from solver.analysis.frequency import frequencies, scenario, solve_many
        sc = scenario(load(nested), "Gv")
        s = 2j * np.pi * frequencies(F_FROM, F_TO, points=POINTS)
        for banded in (True, False):
            t = time.perf_counter()
            solve_many(sc.system, s, dense=False, banded=banded)
            print(f"  in-process solves, {'banded LU' if banded else 'SuperLU  '}      "
                  f"{time.perf_counter() - t:7.2f} s")
        flat = Path(tmp) / "ladder_flat.pw"
        flat.write_text(flat_netlist())
        t_flat, _ = best_of(sweep[:4] + [str(flat)] + sweep[5:], runs=1, env=env)
        print(f"  for information: the same ladder as a flat 40,000-line netlist {t_flat:.2f} s "
              f"(ratio {t_flat / t_bare:.2f}; parsing is its largest part)")


if __name__ == "__main__":
    main()
