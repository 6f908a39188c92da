"""Whole-process time of `portwise solve FILE` against the start-up floor of numpy.

Run from the project root: ``python tests/bench/bench_cli.py [REPEATS]`` (default 15).

Measured side by side in one run, in interleaved rounds (so that a busy machine slows
every command alike):

* the floor: ``python -c "import numpy"`` (an interpreter that has loaded numpy; portwise
  cannot start faster than that);
* ``python -m solver solve FILE`` for every bundled example in circuits/*.pw (the
  deliberately broken netlists in circuits/mistakes/ are skipped).

Prints best and median wall time of each and the ratio to the floor (best/best and
median/median) against the goal of at most 2.5x. A last line estimates the parser's
start-up (first parse minus a second parse of the same text in one process), so the
part of the ratio that the parser's table build accounts for can be read off.
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOAL_RATIO = 2.5  # whole `portwise solve` process at most 2.5x `python -c "import numpy"`

FLOOR = [sys.executable, "-c", "import numpy"]

PARSER_STARTUP = r"""
import time
from solver.language.parse import parse
text = "signal VS (in, gnd) 1 V, rs=50\nresistor R1 (in, out) 1k\nload RL (out, gnd) 1k\n"
t0 = time.perf_counter(); parse(text); t1 = time.perf_counter(); parse(text); t2 = time.perf_counter()
print((t1 - t0) - (t2 - t1))
"""


def run_once(cmd) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, cwd=ROOT, check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 15
    examples = sorted((ROOT / "circuits").glob("*.pw"))  # top level only: not circuits/mistakes/
    cmds = {"floor": FLOOR}
    for f in examples:
        cmds[f.name] = [sys.executable, "-m", "solver", "solve", str(f.relative_to(ROOT))]
    for cmd in cmds.values():  # warm the file cache and the bytecode caches, not counted
        run_once(cmd)
    times: dict[str, list[float]] = {k: [] for k in cmds}
    for _ in range(repeats):
        for k, cmd in cmds.items():
            times[k].append(run_once(cmd))
    fb, fm = min(times["floor"]), statistics.median(times["floor"])
    print(f"python {sys.version.split()[0]}, {repeats} interleaved rounds, cwd {ROOT}")
    print(f"floor  python -c \"import numpy\"   best {fb:.3f} s  median {fm:.3f} s")
    worst = 0.0
    for k in cmds:
        if k == "floor":
            continue
        b, m = min(times[k]), statistics.median(times[k])
        worst = max(worst, b / fb, m / fm)
        print(f"python -m solver solve circuits/{k:<26} best {b:.3f} s ({b / fb:.2f}x)  "
              f"median {m:.3f} s ({m / fm:.2f}x)")
    ok = worst <= GOAL_RATIO
    print(f"worst ratio to the floor: {worst:.2f}x  (goal <= {GOAL_RATIO}x: {'met' if ok else 'NOT met'})")
    ps = sorted(float(subprocess.run([sys.executable, "-c", PARSER_STARTUP], cwd=ROOT, check=True,
                                     capture_output=True, text=True).stdout) for _ in range(5))[2]
    rest = max((statistics.median(times[k]) - ps) / fm for k in cmds if k != "floor")
    print(f"parser start-up (first parse minus second, median of 5): {ps:.3f} s; "
          f"worst median ratio without it: {rest:.2f}x")


if __name__ == "__main__":
    main()
