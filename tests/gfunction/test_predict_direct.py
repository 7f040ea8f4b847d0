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
from equilibrium.weight import Weight
from workbench.polynomials import recurrence_coefficients

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
            rec = pred.recurrence(N, np.full(N.shape, float(n)))
            a, b = rec.a, rec.b
            assert rec.verified and rec.checks["imag_a2"] < 1e-12 and rec.checks["imag_b"] < 1e-12
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


def test_bulk_zeros_of_the_semicircle_against_hermite_roots(nearest_distance):
    """V = x²/2: p_n for exp(-n x²/2) is the Hermite polynomial H_n(x (n/2)^{1/2}), so
    its zeros are h_j (2/n)^{1/2} with h_j the roots of H_n (scipy.special.roots_hermite).
    The zeros of the bulk form are within O(1/n²) of them (DKMVZ 1999, Theorem 1.1 at
    leading order); the quantile rule is only O(1/n) there."""
    from scipy.special import roots_hermite

    pred = predictor(solve(Field.from_expression("x**2/2")))
    errors, quantile_errors = [], []
    for n in (50, 100, 200, 400):
        exact = roots_hermite(n)[0] * np.sqrt(2.0 / n)
        bulk = pred.bulk_zeros(n)
        assert bulk.size >= 0.7 * n  # the inner 80% of the band holds most zeros
        errors.append(nearest_distance(exact, bulk))
        quantile = pred.quantile_zeros(n)
        quantile_errors.append(np.max(np.abs(quantile - exact)[np.abs(quantile) < 1.6]))
    slope = np.polyfit(np.log([50, 100, 200, 400]), np.log(errors), 1)[0]
    assert -2.3 <= slope <= -1.7, (errors, slope)
    assert errors[-1] * 400**2 < 1.0, errors
    assert min(quantile_errors) > 10 * max(errors[1:]), (quantile_errors, errors)


def test_bulk_zeros_of_two_bands_against_direct_polynomials(nearest_distance):
    """Two bands, Ω irrational: the zeros of p_n computed from the weight (workbench.polynomials)
    against the zeros of the bulk form; the distance falls like 1/n² (measured n²·error
    between 1.7 and 2.8 for n = 50..400), although the counts per band move with nΩ."""
    from workbench.polynomials import zeros

    field = Field.from_expression("x**4/4 - 3.1*x**2/2 + 0.23*x")
    mu = solve(field)
    pred = predictor(mu)
    errors = []
    for n in (50, 100, 200, 400):
        rc = recurrence_coefficients(Weight(field, n), n, measure=mu)
        errors.append(nearest_distance(zeros(rc, n), pred.bulk_zeros(n)))
    slope = np.polyfit(np.log([50, 100, 200, 400]), np.log(errors), 1)[0]
    assert -2.4 <= slope <= -1.6, (errors, slope)
    assert max(e * n * n for e, n in zip(errors, (50, 100, 200, 400))) < 5.0, errors


@pytest.mark.parametrize("text", [
    "x**2/2 - 0.2806*log(1 + 1.3853*x**2) + 0.3277*x",
    "1.6969*sqrt(1 + x**2) - 0.3739*x + 0.1534*tanh(3.9009*x)",
])
def test_non_polynomial_field_with_a_long_series(text):
    """V' needs a Chebyshev series of degree 117 and 276 on the window, so h is trusted only
    close to the real line (``EquilibriumMeasure.h_ellipse``) and the g-function switches to
    the direct sum nearer the band. Its two evaluations agree (continuity), and the
    predictions meet the direct coefficients: one band, so b_n is off by O(1/n) and a_n by
    O(1/n²) (from memory, for one-band fields; measured here: the a_n error falls by 4.0 per
    doubling of n)."""
    field = Field.from_expression(text)
    mu = solve(field)
    pred = predictor(mu)
    assert pred.g.checks["continuity"] < 1e-10 and pred.g.far_rho < 1.6
    ns = (100, 200, 400)
    err_a, err_b = [], []
    for n in ns:
        rc = recurrence_coefficients(Weight(field, n), n + 1, measure=mu)
        rec = pred.recurrence([n], [float(n)])
        a, b = rec.a, rec.b
        err_a.append(abs(rc.a[n] - a[0]))
        err_b.append(abs(rc.b[n] - b[0]))
    slope_a = np.polyfit(np.log(ns), np.log(err_a), 1)[0]
    slope_b = np.polyfit(np.log(ns), np.log(err_b), 1)[0]
    assert -2.3 <= slope_a <= -1.7, err_a
    assert -1.3 <= slope_b <= -0.7, err_b
