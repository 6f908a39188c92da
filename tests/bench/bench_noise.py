"""Benchmark: the noise analysis (adjoint method, vectorised over frequency).

Goals:
1. a 10-transistor circuit (ten capacitor-coupled CE stages, rx and a flicker corner on every
   transistor) over 1,000 frequencies in under 0.2 s of compute (the analysis itself, from the
   prepared circuit: stamping, the adjoint solves, every generator, en/in, NF, totals);
2. a 20,000-section RC ladder over 200 points: the whole `python -m solver noise` process
   within 1.5x the whole `python -m solver sweep` process on the same netlist.

Both are printed with the whole-process times (fresh processes, best of three). Other work on
the machine changes the figures; run it on a quiet one for the README.

Run:  python tests/bench/bench_noise.py
"""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_sweep_ladder import nested_netlist  # noqa: E402
from netlists import transistor_chain  # noqa: E402

COMPUTE_GOAL = 0.2
RATIO_GOAL = 1.5


def chain_netlist(stages: int = 10) -> str:
    """The benchmark chain with every transistor's rx and base flicker corner given."""
    return transistor_chain(stages).replace("cmu=1 pF", "cmu=1 pF, rx=100, fc=1kHz")


def best_of(cmd, runs=3, env=None):
    """(best wall time, best CPU time) of fresh processes; the CPU time (user + system of the
    child) counts less of what other work on a shared machine does to the wall clock."""
    import resource
    times, cpus = [], []
    for _ in range(runs):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t = time.perf_counter()
        p = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=ROOT)
        times.append(time.perf_counter() - t)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
        if p.returncode != 0:
            raise SystemExit(f"{' '.join(map(str, cmd[:4]))} failed:\n{p.stderr}")
    return min(times), min(cpus)


def main() -> None:
    import numpy as np

    from solver import loads
    from solver.analysis import noise as nm
    from solver.analysis.frequency import frequencies
    from solver.analysis.pipeline import prepare

    env = dict(os.environ, PYTHONPATH=str(ROOT))
    text = chain_netlist(10)
    c = prepare(loads(text)).circuit
    f = frequencies(10.0, 10e6, points=1000)
    nm.analyse(c, f)  # warm-up (imports, first-call costs)
    runs, cpu = [], []
    for _ in range(10):
        t, c0 = time.perf_counter(), time.process_time()
        nz = nm.analyse(c, f)
        runs.append(time.perf_counter() - t)
        cpu.append(time.process_time() - c0)
    sys_size = nm._system(c)[0].stamper.size
    print(f"10-transistor chain, {sys_size} unknowns, {len(nz.sources)} noise generators, {f.size} frequencies")
    print(f"  compute (best of 10)    {min(runs) * 1e3:7.1f} ms wall, {min(cpu) * 1e3:.1f} ms CPU   "
          f"(goal < {COMPUTE_GOAL * 1e3:.0f} ms)")
    with tempfile.TemporaryDirectory() as tmp:
        chain = Path(tmp) / "chain.pw"
        chain.write_text(text)
        whole, whole_cpu = best_of([sys.executable, "-m", "solver", "noise", str(chain), "--from", "10Hz",
                                    "--to", "10MHz", "--points", "1000", "--json"], env=env)
        print(f"  whole process (--json)  {whole:7.2f} s wall, {whole_cpu:.2f} s CPU")
        ladder = Path(tmp) / "ladder.pw"
        ladder.write_text(nested_netlist())
        common = [str(ladder), "--from", "1kHz", "--to", "100MHz", "--points", "200", "--json"]
        t_sweep, c_sweep = best_of([sys.executable, "-m", "solver", "sweep", *common], env=env)
        t_noise, c_noise = best_of([sys.executable, "-m", "solver", "noise", *common], env=env)
        print("RC ladder, 20,000 sections, 200 points (whole processes, best of 3)")
        print(f"  portwise sweep          {t_sweep:7.2f} s wall   {c_sweep:6.2f} s CPU")
        print(f"  portwise noise          {t_noise:7.2f} s wall   {c_noise:6.2f} s CPU")
        print(f"  ratio                   {t_noise / t_sweep:7.2f} wall     {c_noise / c_sweep:6.2f} CPU"
              f"   (goal <= {RATIO_GOAL:.2f})")
    assert np.all(np.isfinite(nz.output_psd))


if __name__ == "__main__":
    main()
