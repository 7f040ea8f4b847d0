"""Speed of the equilibrium solver; prints a table.

Targets (issue #2, medians after warm-up, one process):
  * a polynomial field with up to three bands, full positive solve with verification: 20 ms;
  * the signed problem on five intervals: 10 ms;
  * a gap of 1e-8 of the hull: at most twice the time of a wide gap.

Usage::

    python benchmarks/bench_equilibrium.py [--repeats 30] [--rounds 3]

The median is over all repeats of all rounds; "round medians" shows how far
the machine's speed drifted between rounds.
"""

from __future__ import annotations

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):  # as the workbench command does
    os.environ.setdefault(_name, "1")

import argparse
import statistics
import time

import numpy as np

from equilibrium import Field, IntervalSet, solve, solve_signed


def timings(function, repeats: int, offset: int = 0) -> list[float]:
    """Times of function(i) for ``repeats`` values of i; each repeat perturbs the problem
    slightly (i enters the coefficients or the set), so nothing computed for one repeat
    serves the next."""
    times = []
    for i in range(offset, offset + repeats):
        start = time.perf_counter()
        function(i)
        times.append(time.perf_counter() - start)
    return times


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=30, help="repeats per round and case")
    parser.add_argument("--rounds", type=int, default=3,
                        help="rounds over all cases (the machine's speed drifts; rounds spread the cases over it)")
    args = parser.parse_args()
    field = Field.from_expression("x**2/2 + 0.1*x**3/3")

    def five(i):
        d = 1e-4 * i
        return [(-3.0, -2.2 + d), (-1.9, -1.0), (-0.2, 0.4), (1.0, 1.3), (2.0, 3.5 + d)]

    def tiny(i):
        d = 1e-4 * i
        return [(-3.0, -2.2 + d), (-1.9, -1.0), (-0.2, 0.25), (0.25 + 6.5e-8, 1.3), (2.0, 3.5 + d)]  # gap 1e-8 of the hull

    e = 1e-4
    rows = [
        ("positive, 1 band  (x^4/4 - x^2/2 + x/5)", lambda i: solve(Field.from_coefficients([0, 0.2 + e * i, -0.5, 0, 0.25])), 20.0),
        ("positive, 2 bands (x^4/4 - 3x^2/2 + x/5)", lambda i: solve(Field.from_coefficients([0, 0.2 + e * i, -1.5, 0, 0.25])), 20.0),
        ("positive, 3 bands (sextic triple well)", lambda i: solve(Field.from_coefficients([0, 0.1 + e * i, 3.0, 0, -2.6, 0, 0.5])), 20.0),
        ("positive, 3 bands (degree 10)", lambda i: solve(Field.from_coefficients([0, 0.2 + e * i, 6, 0, -6, 0, 1.5, 0, 0, 0, 0.01])), 20.0),
        ("positive, hard edge (2x^2 on [-1/2, 3])", lambda i: solve(Field.from_coefficients([0, e * i, 2.0]), IntervalSet([(-0.5, 3.0)])), 20.0),
        ("positive, 1 band, cosh(x) + c x", lambda i: solve(Field.from_callables(lambda x: np.cosh(x) + e * i * x, lambda x: np.sinh(x) + e * i)), None),
        ("signed, 5 intervals, wide gaps", lambda i: solve_signed(field, IntervalSet(five(i))), 10.0),
        ("signed, 5 intervals, one gap 1e-8", lambda i: solve_signed(field, IntervalSet(tiny(i))), None),
    ]
    for _, function, _ in rows:  # warm-up: imports, cached θ-rules
        for i in range(3):
            function(-1 - i)
    samples = {name: [] for name, _, _ in rows}
    round_medians = {name: [] for name, _, _ in rows}
    for r in range(args.rounds):
        for name, function, _ in rows:
            times = timings(function, args.repeats, offset=r * args.repeats)
            samples[name] += times
            round_medians[name].append(statistics.median(times))
    print(f"load average: {os.getloadavg()[0]:.2f}   {args.rounds} rounds of {args.repeats} repeats per case")
    print(f"{'case':<44} {'median ms':>10} {'round medians':>15} {'target ms':>10}  met")
    results = {}
    for name, _, target in rows:
        seconds = statistics.median(samples[name])
        results[name] = seconds
        spread = f"{1e3 * min(round_medians[name]):.1f}-{1e3 * max(round_medians[name]):.1f}"
        met = "" if target is None else ("yes" if seconds * 1e3 <= target else "NO")
        print(f"{name:<44} {seconds * 1e3:10.2f} {spread:>15} {'' if target is None else f'{target:10.0f}':>10}  {met}")
    ratio = results["signed, 5 intervals, one gap 1e-8"] / results["signed, 5 intervals, wide gaps"]
    print(f"{'tiny gap / wide gap time ratio':<44} {ratio:10.2f} {'':>15} {'2':>10}  {'yes' if ratio <= 2 else 'NO'}")


if __name__ == "__main__":
    main()
