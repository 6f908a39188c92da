"""Benchmark: a 10-node circuit over 10,000 frequency points (goal: under 50 ms of compute).

The circuit is stamped once (timed separately); the sweep itself is the batched dense
solve of (G + s_k C) x = b for all s_k. Prints the best of five runs.

Run:  python tests/bench/bench_sweep_vectorized.py
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from solver import loads# noqa: E402
from solver.analysis.frequency import frequencies, response, scenario# noqa: E402

# an invented two-stage audio filter model: ten nodes of R and C, one VCVS buffer
NETLIST = """\
signal VS (n0, gnd) 1 V, rs=600
resistor R1 (n0, n1) 1k
capacitor C1 (n1, gnd) 10n
resistor R2 (n1, n2) 2k2
capacitor C2 (n2, gnd) 4n7
resistor R3 (n2, n3) 4k7
capacitor C3 (n3, n1) 1n
vcvs E1 (n4, gnd) (n3, gnd) 2
resistor R4 (n4, n5) 1k
capacitor C4 (n5, gnd) 22n
resistor R5 (n5, n6) 3k3
capacitor C5 (n6, n4) 2n2
resistor R6 (n6, n7) 10k
capacitor C6 (n7, gnd) 470p
resistor R7 (n7, n8) 1k
resistor R8 (n8, gnd) 10k
load RL (n8, gnd) 47k
"""


def main() -> None:
    c = loads(NETLIST)
    t = time.perf_counter()
    sc = scenario(c, "Gv")
    t_stamp = time.perf_counter() - t
    f = frequencies(1, 1e7, points=10_000)
    best = float("inf")
    for _ in range(5):
        t = time.perf_counter()
        h = response(sc, f)
        best = min(best, time.perf_counter() - t)
    print(f"{sc.size} unknowns ({len(c.elements)} elements), {len(f)} points")
    print(f"  stamp once        {1e3 * t_stamp:7.2f} ms")
    print(f"  sweep (best of 5) {1e3 * best:7.2f} ms   (goal < 50 ms)")
    print(f"  |Gv| at {f[0]:g} Hz = {abs(h[0]):.6f}, at {f[-1]:g} Hz = {abs(h[-1]):.3e}")


if __name__ == "__main__":
    main()
