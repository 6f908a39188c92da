"""Whole-process time of `portwise solve` on bundled examples (goal: under 0.6 s each).

Run: python tests/bench/bench_cli.py [REPEATS]
Prints the best and median wall time of `python -m solver solve FILE` per example.
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOAL_S = 0.6


def measure(args, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "solver", *args], cwd=ROOT, check=True,
                       stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times)


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    base, _ = min((measure(["--version"], 3)), (9, 9))
    print(f"python -m solver --version: {base:.3f} s (start-up floor)")
    worst = 0.0
    for f in sorted((ROOT / "circuits").glob("*.pw")):
        best, med = measure(["solve", str(f)], repeats)
        worst = max(worst, best)
        print(f"solve {f.name:<28} best {best:.3f} s  median {med:.3f} s")
    print(f"worst best-of-{repeats}: {worst:.3f} s  (goal < {GOAL_S} s: {'met' if worst < GOAL_S else 'NOT met'})")


if __name__ == "__main__":
    main()
