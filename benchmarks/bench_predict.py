"""Timings and memory of theta-based predictions (gfunction.predict), optionally against another checkout.

    python benchmarks/bench_predict.py [--rounds R] [--against DIR] [--degrees N] [--memory]

For the shipped two- and three-band cases (genus 1 and 2) and a five-band field of
our own (genus 4), ``Predictor.predict`` (a, b, gap zeros, band counts) for 1000
consecutive degrees (200 in genus 4): the best of three calls after a warm-up, in a
fresh process per round.  With ``--against DIR`` the same timing runs with
``PYTHONPATH=DIR`` (another checkout, e.g. the main branch) in the same rounds,
alternating, so that each round gives a ratio on the same machine load.

``--memory``: the peak traced memory (tracemalloc) of ``predict`` for 2·10⁴ and
10⁵ degrees of the three-band case (issue 16: independent of the number of degrees).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
FIVE_BAND = "10*((x**2-4)**2*(x**2-1)**2*x**2/40 + 0.005*x)"   # five wells: genus 4 (our scenario)

_CHILD = r"""
import json, sys, time, tomllib
import numpy as np
from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
root, five, degrees = sys.argv[1], sys.argv[2], int(sys.argv[3])
fields = {}
for name in ("two_band_irrational", "three_band"):
    d = tomllib.load(open(f"{root}/cases/{name}.toml", "rb"))
    fields[name] = Field.from_expression(d["field"]["expression"], d["field"].get("parameters", {}))
fields["five_band (genus 4)"] = Field.from_expression(five)
out = {}
for name, f in fields.items():
    pred = predictor(solve(f, on=IntervalSet.real_line()))
    N = np.arange(1000, 1000 + (degrees if pred.genus < 4 else degrees // 5))
    pred.predict(N[:50])
    best = min((lambda t0: (pred.predict(N), time.perf_counter() - t0)[1])(time.perf_counter()) for _ in range(3))
    out[name] = {"genus": pred.genus, "degrees": len(N), "seconds": best}
print(json.dumps(out))
"""

_MEMORY = r"""
import sys, tracemalloc, tomllib
import numpy as np
from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
d = tomllib.load(open(f"{sys.argv[1]}/cases/three_band.toml", "rb"))
pred = predictor(solve(Field.from_expression(d["field"]["expression"], d["field"].get("parameters", {})),
                       on=IntervalSet.real_line()))
for count in (20000, 100000):
    tracemalloc.start()
    pred.predict(np.arange(1000, 1000 + count))
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"  {count:>7} degrees: peak traced memory {peak / 2**20:.0f} MB")
"""


def timing(checkout: Path, degrees: int) -> dict:
    env = dict(os.environ, PYTHONPATH=str(checkout))
    done = subprocess.run([sys.executable, "-c", _CHILD, str(checkout), FIVE_BAND, str(degrees)],
                          capture_output=True, text=True, env=env, check=True)
    return json.loads(done.stdout)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--against", type=Path, default=None, help="another checkout to time in the same rounds")
    parser.add_argument("--degrees", type=int, default=1000)
    parser.add_argument("--memory", action="store_true")
    args = parser.parse_args()
    print(f"Predictor.predict, best of 3 per round, {args.rounds} rounds; load average {os.getloadavg()[0]:.2f}")
    rows: dict[str, list] = {}
    for _ in range(args.rounds):
        here = timing(ROOT, args.degrees)
        there = timing(args.against, args.degrees) if args.against else None
        for name, value in here.items():
            rows.setdefault(name, []).append((value, there[name] if there else None))
    head = f"{'case':<22} {'genus':>5} {'degrees':>7} {'seconds (range)':>18}"
    if args.against:
        head += f" {'against (range)':>18} {'speed-up (range)':>18}"
    print(head)
    for name, pairs in rows.items():
        mine = [p[0]["seconds"] for p in pairs]
        line = (f"{name:<22} {pairs[0][0]['genus']:>5} {pairs[0][0]['degrees']:>7} "
                f"{min(mine):>8.3f}-{max(mine):<9.3f}")
        if args.against:
            theirs = [p[1]["seconds"] for p in pairs]
            ratio = [t / m for m, t in zip(mine, theirs)]
            line += f" {min(theirs):>8.3f}-{max(theirs):<9.3f} {min(ratio):>8.2f}-{max(ratio):<9.2f}"
        print(line)
    if args.memory:
        print("memory of predict (three-band case):")
        for checkout in [ROOT] + ([args.against] if args.against else []):
            print(f" {checkout}:")
            done = subprocess.run([sys.executable, "-c", _MEMORY, str(checkout)], capture_output=True, text=True,
                                  env=dict(os.environ, PYTHONPATH=str(checkout)))
            print(done.stdout.rstrip() or done.stderr.strip().splitlines()[-1])


if __name__ == "__main__":
    main()
