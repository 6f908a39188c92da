"""Whole-process time of `portwise report` on a pathological 200-stage netlist (goal: under 5 s).

Run from the project root: ``python tests/bench/bench_report.py [REPEATS]`` (default 5).

The netlist is :func:`netlists.transistor_chain` (200 common-emitter stages, each a block
instance with its npn, bias divider, collector and emitter resistors and a coupling
capacitor: 803 MNA unknowns, 600 capacitors) plus one claim line. The report leaves out what
is too large for it (symbolic forms, claims, poles and zeros, hand estimates) and says so;
the benchmark checks that it did, and times ``python -m solver report FILE -o OUT.html
--overwrite`` as a user types it. Also timed, for scale: the report of every bundled example.
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(Path(__file__).parent))
from netlists import transistor_chain  # noqa: E402

GOAL_SECONDS = 5.0
STAGES = 200


def run_once(cmd) -> tuple[float, str]:
    t0 = time.perf_counter()
    p = subprocess.run(cmd, cwd=ROOT, check=True, capture_output=True, text=True)
    return time.perf_counter() - t0, p.stdout


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    tmp = Path(tempfile.mkdtemp(prefix="bench-report-"))
    net = tmp / "chain200.pw"
    net.write_text(transistor_chain(STAGES) + "claim Av ~ -1 within 50%\n")
    cmd = [sys.executable, "-m", "solver", "report", str(net), "-o", str(tmp / "chain200.html"), "--overwrite"]
    _, out = run_once(cmd)  # warm the caches, not counted
    for part in ("symbolic forms", "claims", "poles and zeros", "hand estimates"):
        assert f"left out for size: {part}" in out, out
    times = [run_once(cmd)[0] for _ in range(repeats)]
    b, m = min(times), statistics.median(times)
    print(f"python {sys.version.split()[0]}, {repeats} runs")
    print(f"python -m solver report chain200.pw ({STAGES} stages)  best {b:.2f} s  median {m:.2f} s  "
          f"(goal < {GOAL_SECONDS:g} s: {'met' if m < GOAL_SECONDS else 'NOT met'})")
    print("left out for size, as the report says:")
    print("\n".join("  " + line.strip() for line in out.splitlines() if "left out" in line))
    for f in sorted((ROOT / "circuits").glob("*.pw")):
        t, _ = run_once([sys.executable, "-m", "solver", "report", str(f), "-o", str(tmp / "x.html"), "--overwrite"])
        print(f"python -m solver report circuits/{f.name:<28} {t:.2f} s")


if __name__ == "__main__":
    main()
