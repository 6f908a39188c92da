"""Parse speed in netlist lines per second (goal: at least 50,000).

Run: ``python tests/bench/bench_parse.py [LINES]`` from the project root. Prints one
row per netlist kind: lines, best-of-5 seconds, lines/s, for the fast LALR loop
(the default path of ``solver.language.parse.parse``) and for lark's own loop on the same
grammar and transformer, so the gain of the fast loop is visible.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from netlists import flat_mixed, rc_ladder, transistor_chain  # noqa: E402

from solver.language import parse as P# noqa: E402


def best_of(fn, repeat=5):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main(lines: int = 50_000) -> None:
    P.parse("resistor R1 (a, gnd) 1k\n")  # compile the grammar outside the timing
    cases = {"RC ladder": rc_ladder(lines // 2), "mixed flat": flat_mixed(lines),
             "block chain": transistor_chain(lines)}
    print(f"{'netlist':<12} {'lines':>8} {'fast s':>8} {'fast lines/s':>13} {'lark s':>8} {'lark lines/s':>13}")
    for name, text in cases.items():
        n = text.count("\n")
        fast = best_of(lambda: P.parse(text, "bench.pw"))
        lark = best_of(lambda: P._run("start", text, "bench.pw"), repeat=2)
        print(f"{name:<12} {n:>8} {fast:>8.3f} {n / fast:>13,.0f} {lark:>8.3f} {n / lark:>13,.0f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 50_000)
