"""Hankel determinants computed from the weight: time and accuracy up to n = 10⁴.

    python benchmarks/bench_hankel.py [--quick]

Prints a table: n, wall and CPU time of ``hankel_determinant`` (equilibrium
measure, both discretisations, both Stieltjes runs, the sums), log D_n, the
error estimate relative to |log D_n|, and the actual relative error against
the closed form: Mehta's integral for e^{-n x²/2}, Barnes' G for the Laguerre
weight x^{1/2} e^{-nx} (DLMF 18.3 norms), both with mpmath.  The target of
issue 15 is 1e-12 relative at n up to 10⁴.  One core: the BLAS/OpenMP thread
counts are set to 1 before numpy is imported.
"""

from __future__ import annotations

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import time  # noqa: E402

import mpmath  # noqa: E402

from equilibrium import Field, IntervalSet  # noqa: E402
from workbench.polynomials.hankel import hankel_determinant  # noqa: E402
from workbench.polynomials.weight import Weight, parse_factor  # noqa: E402

TARGET = 1e-12


def _g(z):
    return mpmath.log(mpmath.barnesg(z))


def gaussian(n: int):
    """e^{-n x²/2}: log D_n = (n/2) log 2π - (n²/2) log n + log G(n+1) (Mehta's integral)."""
    with mpmath.workdps(40):
        return float(mpmath.mpf(n) / 2 * mpmath.log(2 * mpmath.pi) - mpmath.mpf(n) ** 2 / 2 * mpmath.log(n) + _g(n + 1))


def laguerre(n: int):
    """x^{1/2} e^{-nx} on [0, ∞): log D_n = log G(n+1) + log G(n+3/2) - log G(3/2) - (n² + n/2) log n."""
    with mpmath.workdps(40):
        a = mpmath.mpf(1) / 2
        return float(_g(n + 1) + _g(n + a + 1) - _g(a + 1) - (mpmath.mpf(n) ** 2 + a * n) * mpmath.log(n))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="only n = 1000 and 10000")
    args = parser.parse_args()
    sizes = [1000, 10000] if args.quick else [100, 1000, 2000, 4000, 10000]
    half_line = IntervalSet.parse("0:")
    weights = {
        "gaussian": (lambda n: Weight(Field.from_expression("x**2/2"), n), gaussian),
        "laguerre": (lambda n: Weight(Field.from_expression("x"), n, half_line,
                                      parse_factor("x^0.5", on=half_line)), laguerre),
    }
    hankel_determinant(weights["gaussian"][0](50))  # warm-up (imports, caches)
    print(f"load average before the run: {os.getloadavg()[0]:.2f} (wall time is inflated when the machine is busy)")
    print(f"{'weight':>9} {'n':>6} {'wall [s]':>9} {'cpu [s]':>8} {'log D_n':>24} {'est. rel.':>10} "
          f"{'actual rel.':>12} {'target':>7}")
    for n in sizes:
        for name, (weight, exact) in weights.items():
            start, cpu = time.perf_counter(), time.process_time()
            result = hankel_determinant(weight(n))
            wall, cpu = time.perf_counter() - start, time.process_time() - cpu
            truth = exact(n)
            actual = abs(result.log_det - truth) / abs(truth)
            print(f"{name:>9} {n:>6} {wall:>9.2f} {cpu:>8.2f} {result.log_det:>24.17g} "
                  f"{result.relative_error_estimate:>10.1e} {actual:>12.1e} "
                  f"{'met' if actual <= TARGET and result.relative_error_estimate <= TARGET else 'NOT':>7}")


if __name__ == "__main__":
    main()
