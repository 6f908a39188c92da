"""Whole-process time of the commands that report Acm/CMRR, supply rejection and headroom.

Run from the project root: ``python tests/bench/bench_diff.py [REPEATS] [--baseline DIR]``
(default 15 repeats). With ``--baseline DIR`` (another checkout, e.g. the main branch before
issue 18) every command is also run there, interleaved round by round with this tree, so that
a busy machine slows both alike; the figure to read is the difference of the medians (what the
common-mode solve, one solve per supply and the headroom add to a user's command).

Commands (as a user types them, ``python -m solver ...`` from the checkout's root):

* ``solve circuits/geophone_diffpair.pw`` -- a differential pair: Acm and CMRR;
* ``solve circuits/contact_pickup_preamp.pw`` -- a biased stage with a supply: PSRR, headroom;
* ``bias circuits/contact_pickup_preamp.pw --json`` -- the bias point with headroom and swing;
* ``sweep circuits/contact_pickup_preamp.pw --from 1Hz --to 10MHz --supply VBAT`` -- PSRR over
  frequency (only in this tree: the option is new).
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

COMMANDS = {
    "solve diffpair": ["solve", "circuits/geophone_diffpair.pw"],
    "solve pickup": ["solve", "circuits/contact_pickup_preamp.pw"],
    "bias pickup --json": ["bias", "circuits/contact_pickup_preamp.pw", "--json"],
    "sweep --supply": ["sweep", "circuits/contact_pickup_preamp.pw", "--from", "1Hz", "--to", "10MHz",
                       "--supply", "VBAT"],
}
NEW_ONLY = {"sweep --supply"}


def run_once(cwd: Path, args) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "solver"] + args, cwd=cwd, check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main():
    argv = sys.argv[1:]
    base = None
    if "--baseline" in argv:
        k = argv.index("--baseline")
        base = Path(argv[k + 1]).resolve()
        argv = argv[:k] + argv[k + 2:]
    repeats = int(argv[0]) if argv else 15
    trees = {"this": ROOT} | ({"baseline": base} if base else {})
    times = {(t, name): [] for t in trees for name in COMMANDS if t == "this" or name not in NEW_ONLY}
    for _ in range(repeats):
        for (t, name) in times:
            times[(t, name)].append(run_once(trees[t], COMMANDS[name]))
    print(f"{repeats} rounds, whole process (python -m solver ...), seconds: best / median")
    for name in COMMANDS:
        line = f"  {name:<20}"
        for t in trees:
            v = times.get((t, name))
            if v:
                line += f"  {t}: {min(v):.3f} / {statistics.median(v):.3f}"
        if base and (("baseline", name) in times):
            d = statistics.median(times[("this", name)]) - statistics.median(times[("baseline", name)])
            b = min(times[("this", name)]) - min(times[("baseline", name)])
            line += f"  (best {b * 1000:+.0f} ms, median {d * 1000:+.0f} ms)"
        print(line)


if __name__ == "__main__":
    main()
