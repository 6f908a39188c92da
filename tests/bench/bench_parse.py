"""Parse speed against its goals (a benchmark, not a test).

Run: ``python tests/bench/bench_parse.py [LINES]`` from the project root (default 100,000).

Goals: at least 40,000 lines/s on plain element lines (an RC ladder), at least 25,000 lines/s
on mixed netlists (every element kind with comments and expressions; blocks, uses and lets),
and parsing at most a third of the whole ``python -m solver solve FILE`` process on a
100,000-element netlist. Parse rows are best-of-5 in this process, for ``parse()`` (the fast
path) and for lark alone on the same text (``fast=False``), so the gain is visible; the
solve row is the wall time of the whole child process, the command printed beside it.
"""
from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from netlists import flat_mixed, rc_ladder, transistor_chain  # noqa: E402

from solver.language import parse as P  # noqa: E402

PLAIN_GOAL = 40_000  # lines/s
MIXED_GOAL = 25_000  # lines/s
SOLVE_SHARE_GOAL = 1 / 3


def best_of(fn, repeat=5):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def verdict(ok: bool) -> str:
    return "met" if ok else "NOT met"


def main(lines: int = 100_000) -> None:
    cases = [("RC ladder", "plain", PLAIN_GOAL, rc_ladder(lines // 2)),
             ("mixed flat", "mixed", MIXED_GOAL, flat_mixed(lines)),
             ("block chain", "mixed", MIXED_GOAL, transistor_chain(lines))]
    print(f"{'netlist':<12} {'lines':>8} {'fast s':>8} {'fast lines/s':>13} {'lark s':>8} {'lark lines/s':>13}"
          f"  goal")
    for name, kind, goal, text in cases:
        n = text.count("\n")
        fast = best_of(lambda: P.parse(text, "bench.pw"))
        lark = best_of(lambda: P._parse(text, "bench.pw", fast=False), repeat=2)
        print(f"{name:<12} {n:>8} {fast:>8.3f} {n / fast:>13,.0f} {lark:>8.3f} {n / lark:>13,.0f}"
              f"  {kind} >= {goal:,}/s: {verdict(n / fast >= goal)}")

    # parse as a share of a whole solve on a 100,000-element netlist
    text = rc_ladder(50_000)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "ladder100k.pw"
        path.write_text(text, encoding="utf-8")
        cmd = [sys.executable, "-m", "solver", "solve", str(path)]
        solve = float("inf")
        for _ in range(3):
            t0 = time.perf_counter()
            subprocess.run(cmd, cwd=ROOT, check=True, stdout=subprocess.DEVNULL)
            solve = min(solve, time.perf_counter() - t0)
    parse = best_of(lambda: P.parse(text, "ladder100k.pw"), repeat=3)
    share = parse / solve
    elements = sum(isinstance(s, P.ElementStmt) for s in P.parse(text, "ladder100k.pw").statements)
    print(f"\nwhole process `python -m solver solve ladder100k.pw` ({elements:,} elements): "
          f"best of 3 {solve:.3f} s")
    print(f"parse of the same text: {parse:.3f} s = {share:.0%} of the solve "
          f"(goal <= {SOLVE_SHARE_GOAL:.0%}: {verdict(share <= SOLVE_SHARE_GOAL)})")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
