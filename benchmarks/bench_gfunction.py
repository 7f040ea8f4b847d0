"""Timings of the steepest-descent side (prints a table).

Targets: the full model problem of a three-band field in 50 ms; predictions
(recurrence coefficients) for 1000 consecutive degrees in 1 s.
"""

import time

import numpy as np

from equilibrium import Field, IntervalSet, solve
from gfunction import g_function, jump_residuals, matching_mismatch, model_problem, predictor, szego_function


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

    class _Factor:  # |x - 1.5|^1 · e^{0.3x} in the factor protocol of gfunction.szego
        singular_points = ((1.5, 1.0),)

        def log_value(self, x, omit=()):
            return 0.3 * x + (0.0 if 1.5 in omit else np.log(np.abs(x - 1.5)))

    factor = (_Factor(),)
    rows = [
        ("model problem, 3 bands (curve, d, checks)", best(lambda: model_problem(mu.support)), 0.050),
        ("g-function, 3 bands (with checks)", best(lambda: g_function(mu)), None),
        ("jump residuals, 3 bands", best(lambda: jump_residuals(pred.model, [0.3, 0.7])), None),
        ("a, b for 1000 degrees", best(lambda: pred.recurrence(degrees)), 1.0),
        ("a, b, gap zeros, band counts, 1000 degrees", best(lambda: pred.predict(degrees)), 1.0),
        ("Szegő function, 3 bands, FH + smooth factor", best(lambda: szego_function(factor, mu.support)), None),
        ("Airy matching P N^-1 - I, one edge, 5 degrees", best(lambda: matching_mismatch(pred, 5, [100, 200, 400, 800, 1600])), None),
    ]
    print(f"{'task':<46} {'seconds':>10} {'target':>8}  ok")
    for name, t, target in rows:
        ok = "-" if target is None else ("yes" if t <= target else "NO")
        print(f"{name:<46} {t:>10.4f} {'' if target is None else target:>8}  {ok}")


if __name__ == "__main__":
    main()
