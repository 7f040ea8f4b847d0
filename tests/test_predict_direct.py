"""Predictions of the model problem against directly computed recurrence coefficients.

The direct coefficients come from ``workbench.polynomials`` (discretised
Stieltjes procedure; independent of the g-function / theta machinery).  The
error of the leading-order steepest-descent prediction is O(1/n) (DKMVZ, Comm.
Pure Appl. Math. 52 (1999) 1335-1425, Theorem 1.1), so the worst error over a
window of near-diagonal degrees must fall with slope about -1 in n.
"""

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
from workbench.polynomials import Weight, recurrence_coefficients

FIELDS = {
    # two bands, Ω irrational (asymmetric double well)
    "two_band": "x**4/4 - 3*x**2/2 + 0.3*x",
    # three bands, Ω irrational
    "three_band": "x**6/6 - 1.5*x**4 + 3.3*x**2 + 0.3*x",
}
SCALINGS = (200, 400, 800)
REPEATS = 4     # diagonal degrees N = n, n+1, ... (weight exp(-N V) each)
SHIFTS = 2      # near-diagonal a_{N+j}^{(N)}, j = 0, 1 (error O((1+|j|)/N))


def _errors(expr):
    field = Field.from_expression(expr)
    mu = solve(field, on=IntervalSet.real_line())
    pred = predictor(mu)
    out = []
    for n0 in SCALINGS:
        err = 0.0
        for n in range(n0, n0 + REPEATS):
            rc = recurrence_coefficients(Weight(field, n), n + SHIFTS, measure=mu)
            N = np.arange(n, n + SHIFTS)
            a, b, checks = pred.recurrence(N, np.full(N.shape, float(n)))
            assert checks["imag_a2"] < 1e-12 and checks["imag_b"] < 1e-12
            err = max(err, np.max(np.abs(rc.a[N] - a)), np.max(np.abs(rc.b[N] - b)))
        out.append(err)
    return mu, np.array(out)


@pytest.mark.parametrize("name", sorted(FIELDS))
def test_error_falls_like_one_over_n(name):
    mu, err = _errors(FIELDS[name])
    assert len(mu.support) == (2 if name == "two_band" else 3)
    # irrational-looking phases: not within 1e-3 of a rational with denominator <= 20
    for om in mu.omega:
        assert min(abs(om * q - round(om * q)) for q in range(1, 21)) > 1e-3
    slope = np.polyfit(np.log(SCALINGS), np.log(err), 1)[0]
    assert -1.4 <= slope <= -0.6, (err, slope)
    assert err[-1] < 2e-3, err
