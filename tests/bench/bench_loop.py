"""Whole-process time of `portwise loop` beside `portwise sweep` on the same netlist and points.

Run from the project root: ``python tests/bench/bench_loop.py [REPEATS] [POINTS]`` (default 5
rounds, 1000 points).

`portwise loop --around U1 --from 1kHz --to 100MHz --points N` solves, at every point, the
return ratio and the asymptotic gain model for Zt and Av (T, G_inf, G0 and G: four systems
each) and Blackman's four return ratios and two dead impedances, then refines the margins
by root finding and finds the closed-loop poles; `portwise sweep` solves one system per
point. Measured in interleaved rounds (a busy machine slows both alike) against the start-up
floor `python -c "import numpy"`; the goal is a loop sweep within 4x the plain sweep's time
(common practice for "one analysis costs a few sweeps", no source).
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOAL_RATIO = 4.0
FILE = "circuits/pin_tia_front_end.pw"


def run_once(cmd) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, cwd=ROOT, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    points = sys.argv[2] if len(sys.argv) > 2 else "1000"
    sweep = ["--from", "1kHz", "--to", "100MHz", "--points", points]
    cmds = {"floor": [sys.executable, "-c", "import numpy"],
            "sweep": [sys.executable, "-m", "solver", "sweep", FILE] + sweep,
            "loop": [sys.executable, "-m", "solver", "loop", FILE, "--around", "U1"] + sweep,
            "loop --at": [sys.executable, "-m", "solver", "loop", FILE, "--around", "U1", "--at", "100kHz"],
            "loop --break": [sys.executable, "-m", "solver", "loop", FILE, "--break", "out"] + sweep}
    for cmd in cmds.values():
        run_once(cmd)
    times = {k: [] for k in cmds}
    for _ in range(repeats):
        for k, cmd in cmds.items():
            times[k].append(run_once(cmd))
    print(f"python {sys.version.split()[0]}, {repeats} interleaved rounds, {points} points, {FILE}")
    for k, t in times.items():
        print(f"  {k:<14} best {min(t):.3f} s  median {statistics.median(t):.3f} s")
    ratio = min(times["loop"]) / min(times["sweep"])
    print(f"loop sweep / plain sweep (best): {ratio:.2f}  (goal <= {GOAL_RATIO:g}: "
          f"{'met' if ratio <= GOAL_RATIO else 'NOT met'})")


if __name__ == "__main__":
    main()
