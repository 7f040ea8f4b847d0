"""Timings of the steepest-descent side (prints a table).

Targets: the full model problem of a three-band field in 50 ms; predictions
(recurrence coefficients) for 1000 consecutive degrees in 1 s; beyond leading order
(issue 10) a_n, b_n at order 2 for 1000 degrees of a three-band field in 2 s, with the gap
zeros and band counts at order 2 (``gfunction.corrected.corrected_prediction``) in 2 s too, and the
residual problem solved numerically in 20 ms per degree, independent of n (its
preparation -- circles, tables, the neglected-jump exponent -- is done once per field).
"""

import os
import time

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):  # as the workbench does
    os.environ.setdefault(_name, "1")

import numpy as np

from equilibrium import Field, IntervalSet, solve
from gfunction import g_function, jump_residuals, matching_mismatch, model_problem, predictor, szego_function
from gfunction.corrected import corrected_prediction
from gfunction.residual_problem import residual_solver
from gfunction.series import corrected_recurrence
from equilibrium.weight import parse_factor


def best(fn, repeats=3):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main():
    mu = solve(Field.from_expression("x**6/6 - 1.5*x**4 + 3.3*x**2 + 0.3*x"), on=IntervalSet.real_line())
    pred = predictor(mu)
    degrees = np.arange(1000, 2000)

    # |x - 1.5|^1 · e^{0.3x}: a Fisher–Hartwig root and a smooth factor (equilibrium.weight)
    factor = parse_factor("abs(x-1.5)^1*exp(0.3*x)")
    solver = residual_solver(pred)
    per = 5                                        # degrees per timing of the residual method
    rows = [
        ("model problem, 3 bands (curve, d, checks)", best(lambda: model_problem(mu.support)), 0.050),
        ("g-function, 3 bands (with checks)", best(lambda: g_function(mu)), None),
        ("jump residuals, 3 bands", best(lambda: jump_residuals(pred.model, [0.3, 0.7])), None),
        ("a, b for 1000 degrees", best(lambda: pred.recurrence(degrees)), 1.0),
        ("a, b, gap zeros, band counts, 1000 degrees", best(lambda: pred.predict(degrees)), 1.0),
        ("Szegő function, 3 bands, FH + smooth factor", best(lambda: szego_function(factor, mu.support)), None),
        ("Airy matching P N^-1 - I, one edge, 5 degrees", best(lambda: matching_mismatch(pred, 5, [100, 200, 400, 800, 1600])), None),
        ("a, b at order 2, 1000 degrees, 3 bands", best(lambda: corrected_recurrence(pred, degrees, 2)), 2.0),
        ("a, b, gap zeros, band counts at order 2, 1000 degrees, 3 bands",
         best(lambda: corrected_prediction(pred, degrees, order=2)), 2.0),
        ("residual problem: preparation, 3 bands", best(lambda: residual_solver(pred)), None),
    ] + [
        (f"residual problem, per degree, n = {n:.0e}", best(lambda n=n: solver.solve([n] * per)) / per, 0.020)
        for n in (10 ** 3, 10 ** 6, 10 ** 9)
    ]
    print(f"load average {' '.join(f'{x:.2f}' for x in os.getloadavg())} (2 cores)")
    print(f"{'task':<64} {'seconds':>10} {'target':>8}  ok")
    for name, t, target in rows:
        ok = "-" if target is None else ("yes" if t <= target else "NO")
        print(f"{name:<64} {t:>10.4f} {'' if target is None else target:>8}  {ok}")


if __name__ == "__main__":
    main()
