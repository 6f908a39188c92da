"""Whole-process time of `portwise check FILE` on every bundled example with claim lines.

Run from the project root: ``python tests/bench/bench_check.py [REPEATS]`` (default 5).

Each bundled example in circuits/*.pw that has claim lines is checked as a user types
it, ``python -m solver check FILE`` (a fresh interpreter: imports, parse, bias, the
numeric and symbolic engines, the exact-when search and the printing all count), in
interleaved rounds so that a busy machine slows every file alike. Prints best and median
wall time, the exit code (0 every claim holds, 1 a claim fails: both are finished runs),
and whether each exact-when search finished within its bound (from ``--json``).

The start-up floor ``python -c "import numpy"`` is timed in the same rounds: on a shared
machine the ratio to it says more than the seconds do.

Goal (issue 12): every bundled example under 2 s whole process.
"""
from __future__ import annotations

import json
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOAL_S = 2.0


def run_once(cmd) -> tuple[float, int, str]:
    t0 = time.perf_counter()
    r = subprocess.run(cmd, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, timeout=600)
    return time.perf_counter() - t0, r.returncode, r.stdout


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    examples = [f for f in sorted((ROOT / "circuits").glob("*.pw"))
                if any(line.lstrip().startswith("claim ") for line in f.read_text().splitlines())]
    cmds = {f.name: [sys.executable, "-m", "solver", "check", str(f.relative_to(ROOT))] for f in examples}
    floor = [sys.executable, "-c", "import numpy"]
    floor_t = []
    searched = {}
    for k, cmd in cmds.items():  # warm the file and bytecode caches (not counted); read the search report
        _, code, out = run_once(cmd + ["--json"])
        claims = json.loads(out)["claims"] if code in (0, 1) else []
        searched[k] = all(c.get("exact_when_search", {}).get("complete", True) for c in claims)
    times: dict[str, list[float]] = {k: [] for k in cmds}
    codes: dict[str, int] = {}
    for _ in range(repeats):
        floor_t.append(run_once(floor)[0])
        for k, cmd in cmds.items():
            t, code, _ = run_once(cmd)
            times[k].append(t)
            codes[k] = code
    print(f"python {sys.version.split()[0]}, {repeats} interleaved rounds, cwd {ROOT}")
    fm = statistics.median(floor_t)
    print(f"floor  python -c \"import numpy\"                   best {min(floor_t):.3f} s  median {fm:.3f} s")
    worst = 0.0
    for k in cmds:
        b, m = min(times[k]), statistics.median(times[k])
        worst = max(worst, m)
        print(f"python -m solver check circuits/{k:<26} best {b:.3f} s  median {m:.3f} s ({m / fm:.1f}x floor)  exit {codes[k]}  "
              f"search {'complete' if searched[k] else 'stopped at its bound'}")
    ok = worst < GOAL_S and all(c in (0, 1) for c in codes.values())
    print(f"worst median: {worst:.3f} s  (goal < {GOAL_S:g} s: {'met' if ok else 'NOT met'})")


if __name__ == "__main__":
    main()
