"""Benchmark: bias solve time against circuit size (prints what it measures; not a test).

Run: python tests/bench/bench_bias.py
Builds N four-resistor CE stages on one supply, each capacitor-coupled to the next,
and times solver.analysis.bias.solve_bias (Newton iterations re-stamp the whole DC view).
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import solver  # noqa: E402
from solver.analysis.bias import solve_bias# noqa: E402


def netlist(n: int) -> str:
    lines = ["supply VCC (vcc, gnd) 12 V", "signal VS (in, gnd) 1 mV, rs=600", "capacitor C0 (in, b0) 10u"]
    for i in range(n):
        lines += [f"resistor R1_{i} (vcc, b{i}) 56k", f"resistor R2_{i} (b{i}, gnd) 12k",
                  f"npn Q{i} (c{i}, b{i}, e{i}) beta=150, va=90 V", f"resistor RC{i} (vcc, c{i}) 3k3",
                  f"resistor RE{i} (e{i}, gnd) 1k", f"capacitor CE{i} (e{i}, gnd) 220u",
                  f"capacitor CC{i} (c{i}, b{i + 1}) 10u"]
    lines += [f"resistor RLAST (b{n}, gnd) 10k", "output (c0, gnd)"]
    return "\n".join(lines) + "\n"


def main() -> None:
    for n in (1, 10, 50, 200):
        c = solver.loads(netlist(n))
        t0 = time.perf_counter()
        r = solve_bias(c)
        dt = time.perf_counter() - t0
        print(f"{n:4d} stages  {len(r.nodes):5d} nodes  {r.iterations:3d} iterations  {dt * 1e3:8.1f} ms  "
              f"({dt / r.iterations * 1e3:.2f} ms per iteration)")


if __name__ == "__main__":
    main()
