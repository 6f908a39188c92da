"""Benchmark: Monte Carlo and sensitivities, each timed as the whole process a user types.

Run: python tests/bench/bench_spread.py
1. ``portwise spread FILE --samples 10000 --seed 1 --json`` on ten capacitor-coupled CE stages,
   each biased from a 12 V supply by a base divider (10 transistors, bias re-solved for every
   sample), with 5 % spreads on all 40 bias resistors and beta 100 .. 300 on every transistor.
   Goal: under 3 s.
2. ``portwise sensitivity FILE Gv --json`` on a 1,000-resistor ladder (every resistor a
   parameter, adjoint method). Goal: under 1 s.
Other work on the machine slows both; the figures printed are the best of three runs.
"""
from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def ce_chain(n: int = 10) -> str:
    lines = ["title \"ten-stage bench chain\"", "supply VCC (vcc, gnd) 12 V", "signal VS (in, gnd) 1 mV, rs=600",
             "capacitor C0 (in, b0) 10u"]
    for i in range(n):
        lines += [f"resistor R1_{i} (vcc, b{i}) 56k", f"resistor R2_{i} (b{i}, gnd) 12k",
                  f"npn Q{i} (c{i}, b{i}, e{i}) beta=150, va=90 V", f"resistor RC{i} (vcc, c{i}) 3k3",
                  f"resistor RE{i} (e{i}, gnd) 1k", f"capacitor CE{i} (e{i}, gnd) 220u",
                  f"capacitor CC{i} (c{i}, b{i + 1}) 10u"]
    lines += [f"load RL (b{n}, gnd) 10k"]
    for i in range(n):
        lines += [f"spread R1_{i} 5%", f"spread R2_{i} 5%", f"spread RC{i} 5%", f"spread RE{i} 5%",
                  f"spread Q{i}.beta 100 .. 300"]
    return "\n".join(lines) + "\n"


def ladder(n: int = 1000) -> str:
    lines = ["signal VS (n0, gnd) 1 V, rs=50"]
    for i in range(n // 2):
        lines += [f"resistor RS{i} (n{i}, n{i + 1}) 100", f"resistor RP{i} (n{i + 1}, gnd) 10k"]
    lines += [f"output (n{n // 2}, gnd)"]
    return "\n".join(lines) + "\n"


def timed(args) -> tuple[float, float]:
    """(best wall-clock time, best CPU time user + sys) of the whole process, over three runs.

    On a shared machine the wall time includes waiting for a core; the CPU time is what the
    process itself used, close to its wall time on an idle machine.
    """
    best, best_cpu = float("inf"), float("inf")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    for _ in range(3):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        r = subprocess.run([sys.executable, "-m", "solver", *args], capture_output=True, text=True, env=env)
        dt = time.perf_counter() - t0
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        if r.returncode != 0:
            raise SystemExit(r.stderr)
        best = min(best, dt)
        best_cpu = min(best_cpu, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime))
    return best, best_cpu


def main() -> None:
    with tempfile.TemporaryDirectory() as d:
        chain = Path(d) / "chain.pw"
        chain.write_text(ce_chain())
        lad = Path(d) / "ladder.pw"
        lad.write_text(ladder())
        t, cpu = timed(["spread", str(chain), "--samples", "10000", "--seed", "1", "--json"])
        print(f"spread, 10 transistors biased per sample, 50 spreads, 10,000 samples: {t:.2f} s wall, "
              f"{cpu:.2f} s CPU (goal 3 s)")
        t, cpu = timed(["sensitivity", str(lad), "Gv", "--json"])
        print(f"sensitivity of Gv to all 1,000 resistors of a ladder: {t:.2f} s wall, {cpu:.2f} s CPU (goal 1 s)")
        t, cpu = timed(["sensitivity", str(lad), "--json"])
        print(f"sensitivity of all 6 port quantities to all 1,000 resistors: {t:.2f} s wall, {cpu:.2f} s CPU")
    print(f"load average during the run: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")


if __name__ == "__main__":
    main()
