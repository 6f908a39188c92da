"""How time and memory grow with netlist size, and a 1,000-transistor netlist through solve.

Run: ``python tests/bench/bench_scale.py [--sizes 1000,10000,...]``.
Each size runs in its own child process, so the peak resident memory
(``ru_maxrss``) is that size's alone. Columns: elements, seconds for parse,
elaborate, topology checks, the port solve (three sparse LU solves) and the
total, then the peak memory. Goals: memory under 1 GB at 200,000 elements;
time close to linear in size.
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]


def measure(kind: str, size: int) -> dict:
    """Child process: build the netlist, time each stage, report peak memory."""
    import gc
    import resource
    sys.path[:0] = [str(ROOT), str(HERE)]
    from netlists import rc_ladder, transistor_chain

    from solver.circuit import topology
    from solver.circuit.elaborate import elaborate
    from solver.language.parse import parse
    from solver.analysis.ports import port_quantities
    text = rc_ladder(size // 2) if kind == "ladder" else transistor_chain(size)
    gc.collect()
    gc.disable()  # as solver.api.loads and solve do (solver.bulk)
    t0 = time.perf_counter()
    nl = parse(text, "bench.pw")
    t1 = time.perf_counter()
    c = elaborate(nl)
    t2 = time.perf_counter()
    topology.require_sound(c, "ac")
    t3 = time.perf_counter()
    r = port_quantities(c, 1e3)
    t4 = time.perf_counter()
    elements = len(c.elements) + len(c.devices)
    return {"kind": kind, "size": size, "elements": elements, "lines": text.count("\n"),
            "parse": t1 - t0, "elaborate": t2 - t1, "check": t3 - t2, "solve": t4 - t3, "total": t4 - t0,
            "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
            "Gv": abs(r.quantities["Gv"])}


def child(kind: str, size: int) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, __file__, "--child", kind, str(size)], capture_output=True,
                         text=True, env=env, check=True)
    return json.loads(out.stdout)


def cli_run(size: int) -> float:
    """Wall time of a whole ``python -m solver solve`` process on a transistor chain."""
    import tempfile
    sys.path[:0] = [str(HERE)]
    from netlists import transistor_chain
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "chain.pw"
        p.write_text(transistor_chain(size), encoding="utf-8")
        env = dict(os.environ, PYTHONPATH=str(ROOT))
        t0 = time.perf_counter()
        r = subprocess.run([sys.executable, "-m", "solver", "solve", str(p), "--at", "1kHz"], cwd=ROOT, env=env,
                           capture_output=True, text=True)
        dt = time.perf_counter() - t0
        if r.returncode != 0:
            raise SystemExit(r.stderr)
    return dt


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="1000,10000,50000,100000,200000")
    ap.add_argument("--child", nargs=2)
    a = ap.parse_args()
    if a.child:
        print(json.dumps(measure(a.child[0], int(a.child[1]))))
        return
    print("1,000 transistors (block chain of common-emitter stages), in process:")
    row = child("chain", 1000)
    print(f"  {row['elements']} elements/devices, {row['lines']} lines: parse {row['parse']:.3f} s, elaborate "
          f"{row['elaborate']:.3f} s, check {row['check']:.3f} s, solve {row['solve']:.3f} s, total "
          f"{row['total']:.3f} s, peak {row['rss_mb']:.0f} MB")
    print(f"  whole `python -m solver solve` process: {cli_run(1000):.2f} s")
    print()
    print("RC ladder, time by stage (s) and peak memory:")
    print(f"| elements | parse | elaborate | check | solve | total | µs/element | peak MB |")
    print(f"|---:|---:|---:|---:|---:|---:|---:|---:|")
    for size in map(int, a.sizes.split(",")):
        r = child("ladder", size)
        print(f"| {r['elements']:,} | {r['parse']:.3f} | {r['elaborate']:.3f} | {r['check']:.3f} | {r['solve']:.3f} "
              f"| {r['total']:.3f} | {1e6 * r['total'] / r['elements']:.1f} | {r['rss_mb']:.0f} |", flush=True)


if __name__ == "__main__":
    main()
