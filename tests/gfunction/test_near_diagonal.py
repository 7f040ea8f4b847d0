"""Near-diagonal coefficients a_{n+j}^{(n)}, b_{n+j}^{(n)} from the rescaled field (n/N)V (gfunction.near_diagonal).

Sources: direct coefficients of the same weight e^{-nV} (workbench.polynomials, discretised Stieltjes);
Laguerre closed form (DLMF 18.9.2 rescaled: a_k² = k(k+α)/n², b_k = (2k+α+1)/n for x^α e^{-nx}).
"""

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from equilibrium.errors import InputError
from gfunction import predictor
from gfunction.near_diagonal import near_diagonal_recurrence
from workbench.polynomials import Weight, parse_factor, recurrence_coefficients


def test_two_bands_against_direct_and_shifted_phase():
    """Measured at n = 300, j = -2 … 2: order 2 within 2.6e-10 (a) and 6.1e-9 (b) of the direct
    coefficients, the residual method within 3.5e-13; the order-0 value of the rescaled field and the
    shifted-phase leading order (Predictor.recurrence(N, n)) differ by 1.3e-3, O(1/n)."""
    field = Field.from_expression("x**4/4 - 3.1*x**2/2 + 0.23*x")
    mu = solve(field)
    n, js = 300, np.array([-2, -1, 0, 1, 2])
    series = near_diagonal_recurrence(mu, n, js, order=2)
    resid = near_diagonal_recurrence(mu, n, js, method="residual")
    rc = recurrence_coefficients(Weight(field, n), n + 2, measure=mu)
    assert series.verified and resid.verified
    assert np.max(np.abs(series.a - rc.a[n + js])) < 2e-9 and np.max(np.abs(series.b - rc.b[n + js])) < 3e-8
    assert np.max(np.abs(resid.a - rc.a[n + js])) < 1e-11 and np.max(np.abs(resid.b - rc.b[n + js])) < 1e-11
    lead = predictor(mu).recurrence(n + js, np.full(js.size, n))
    gap = np.max(np.abs(series.corrections_a[:, 0] - lead.a))
    assert 1e-5 < gap < 0.05 and np.max(np.abs(lead.a - rc.a[n + js])) < 0.05
    # j = 0 is the diagonal itself
    assert series.a[2] == pytest.approx(float(rc.a[n]), abs=2e-9)


def test_laguerre_off_diagonal_closed_form():
    al, n = 0.7, 200
    on = IntervalSet.parse("0:")
    mu = solve(Field.from_expression("x"), on=on)
    js = np.array([-3, 0, 4])
    r = near_diagonal_recurrence(mu, n, js, factor=parse_factor(f"x^{al}", {}, on), order=2)
    k = n + js
    # order 2 leaves O(n^-3) in a (the series of √(k(k+α))/n in 1/k) and nothing in b
    assert np.max(np.abs(r.a - np.sqrt(k * (k + al)) / n)) < 1e-8   # α³/(16k³)·k/n ≈ 2.7e-9
    assert np.max(np.abs(r.b - (2 * k + al + 1) / n)) < 1e-13


def test_bad_shifts():
    mu = solve(Field.from_expression("x**2/2"))
    with pytest.raises(InputError, match="n \\+ j >= 1"):
        near_diagonal_recurrence(mu, 3, [-3])
    with pytest.raises(InputError, match="method"):
        near_diagonal_recurrence(mu, 30, [1], method="exact")
