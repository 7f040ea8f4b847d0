"""Timings and memory of theta-based predictions (gfunction.predict), optionally against another checkout.

    python benchmarks/bench_predict.py [--rounds R] [--against DIR] [--degrees N] [--memory]

For the shipped two- and three-band cases (genus 1 and 2), a four-band field (genus 3) and a
five-band field (genus 4) of our own, ``Predictor.predict`` (a, b, gap zeros, band counts) for
1000 consecutive degrees (200 in genus 4): the best of three calls after a warm-up ("repeated":
the predictor keeps its degree-independent tables between calls), and the first call on a
freshly built predictor ("first call": those tables built inside it), in a fresh process per
round, in CPU seconds of that process (``time.process_time``, BLAS on one thread: the machine is
shared, and CPU time is what the code costs, not how many other processes held the cores).  With ``--against DIR`` the same timing runs with ``PYTHONPATH=DIR`` in ``DIR`` (another
checkout, e.g. the main branch; each child checks that it imports its own checkout: run from a
checkout's root, ``python -c`` would otherwise import that checkout whatever ``PYTHONPATH`` says)
in the same rounds, alternating, so that each round gives a ratio on the same machine load; the
load average is printed at the start and at the end.

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
FOUR_BAND = "10*((x**2-4)**2*(x**2-1)**2/40 + 0.005*x)"        # four wells: genus 3 (our scenario)
FIVE_BAND = "10*((x**2-4)**2*(x**2-1)**2*x**2/40 + 0.005*x)"   # five wells: genus 4 (our scenario)

_CHILD = r"""
import json, sys, time, tomllib
import numpy as np
from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
root, four, five, degrees = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
fields = {}
for name in ("two_band_irrational", "three_band"):
    d = tomllib.load(open(f"{root}/cases/{name}.toml", "rb"))
    fields[name] = Field.from_expression(d["field"]["expression"], d["field"].get("parameters", {}))
fields["four_band (genus 3)"] = Field.from_expression(four)
fields["five_band (genus 4)"] = Field.from_expression(five)
out = {}
for name, f in fields.items():
    measure = solve(f, on=IntervalSet.real_line())
    pred = predictor(measure)
    N = np.arange(1000, 1000 + (degrees if pred.genus < 4 else degrees // 5))
    pred.predict(N[:50])
    best = min((lambda t0: (pred.predict(N), time.process_time() - t0)[1])(time.process_time()) for _ in range(3))
    fresh = predictor(measure)
    t0 = time.process_time()
    fresh.predict(N)
    out[name] = {"genus": pred.genus, "degrees": len(N), "seconds": best, "first": time.process_time() - t0}
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


def _run(checkout: Path, code: str, *args: str) -> subprocess.CompletedProcess:
    """``python -c code args`` importing the packages of ``checkout``.

    ``python -c`` puts the working folder first on ``sys.path``, before ``PYTHONPATH``: run from
    another checkout's root, the child would import that one.  So the child runs in ``checkout``
    and refuses to time anything when ``gfunction`` does not come from there.
    """
    check = (f"import gfunction, pathlib, sys; assert pathlib.Path(gfunction.__file__).resolve().parents[1] == "
             f"pathlib.Path({str(checkout.resolve())!r}), gfunction.__file__\n")
    return subprocess.run([sys.executable, "-c", check + code, *args], capture_output=True, text=True,
                          env=dict(os.environ, PYTHONPATH=str(checkout), OPENBLAS_NUM_THREADS="1",
                                   OMP_NUM_THREADS="1", MKL_NUM_THREADS="1"), cwd=checkout)


def timing(checkout: Path, degrees: int) -> dict:
    done = _run(checkout, _CHILD, str(checkout), FOUR_BAND, FIVE_BAND, str(degrees))
    if done.returncode:
        raise SystemExit(f"timing in {checkout} failed: {done.stderr.strip().splitlines()[-1]}")
    return json.loads(done.stdout)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--against", type=Path, default=None, help="another checkout to time in the same rounds")
    parser.add_argument("--degrees", type=int, default=1000)
    parser.add_argument("--memory", action="store_true")
    args = parser.parse_args()
    if args.against is not None:
        args.against = args.against.resolve()
    print(f"Predictor.predict, CPU seconds, best of 3 per round, {args.rounds} rounds; "
          f"load average {os.getloadavg()[0]:.2f}")
    rows: dict[str, list] = {}
    for _ in range(args.rounds):
        here = timing(ROOT, args.degrees)
        there = timing(args.against, args.degrees) if args.against else None
        for name, value in here.items():
            rows.setdefault(name, []).append((value, there[name] if there else None))
    head = f"{'case':<22} {'genus':>5} {'degrees':>7} {'repeated s (range)':>18}"
    if args.against:
        head += f" {'against (range)':>18} {'speed-up (range)':>18}"
    head += f" {'first call s':>18}"
    if args.against:
        head += f" {'against (range)':>18} {'speed-up (range)':>18}"
    print(head)

    def span(values, digits=3):
        return f"{min(values):>8.{digits}f}-{max(values):<9.{digits}f}"

    for name, pairs in rows.items():
        line = f"{name:<22} {pairs[0][0]['genus']:>5} {pairs[0][0]['degrees']:>7}"
        for key in ("seconds", "first"):
            mine = [p[0][key] for p in pairs]
            line += f" {span(mine)}"
            if args.against:
                theirs = [p[1][key] for p in pairs]
                line += f" {span(theirs)} {span([t / m for m, t in zip(mine, theirs)], 2)}"
        print(line)
    print(f"load average at the end {os.getloadavg()[0]:.2f}")
    if args.memory:
        print("memory of predict (three-band case):")
        for checkout in [ROOT] + ([args.against] if args.against else []):
            print(f" {checkout}:")
            done = _run(checkout, _MEMORY, str(checkout))
            print(done.stdout.rstrip() or done.stderr.strip().splitlines()[-1])


if __name__ == "__main__":
    main()
