"""The small-norm matrix T M^{-1} - I (gfunction.small_norm) from Y given as arrays."""

from __future__ import annotations

import doctest

import numpy as np
import pytest

import gfunction.small_norm as small_norm
from equilibrium import Field, solve
from equilibrium.errors import InputError
from gfunction import predictor
from gfunction.small_norm import small_norm_deviation, small_norm_matrix
from workbench.compare import fit_rate
from workbench.polynomials import RecurrenceCoefficients, orthogonality_matrix, recurrence_coefficients
from equilibrium.weight import Weight


def test_examples_in_docstrings_hold():
    assert doctest.testmod(small_norm).failed == 0


def _hermite(n: int, extra: int = 100) -> RecurrenceCoefficients:
    # e^{-n x²/2}: a_k = sqrt(k/n), b_k = 0, ∫w = sqrt(2π/n) (scaled Hermite, DLMF 18.9.1)
    k = np.arange(n + extra + 1)
    return RecurrenceCoefficients(a=np.sqrt(k / n), b=np.zeros(k.size), n=float(n), error_estimate=0.0,
                                  method="closed form", weight_description="exp(-n x^2/2)",
                                  log_mass=0.5 * np.log(2 * np.pi / n))


def test_one_band_deviation_is_order_one_over_n():
    # DKMVZ, Comm. Pure Appl. Math. 52 (1999) 1335-1425, §7: T M^{-1} = I + O(1/n) off the support
    pred = predictor(solve(Field.from_expression("x**2/2")))
    z = 3.0 * np.exp(2j * np.pi * (np.arange(32) + 0.5) / 32)
    ns = np.array([20, 40, 80, 160])
    worst = []
    for n in ns:
        Y = orthogonality_matrix(_hermite(int(n)), z, int(n))
        R = small_norm_matrix(z, Y.mantissa, Y.log_scale, pred.g(z), pred.measure.lagrange, n,
                              pred.model, pred.phases([n])[0])
        assert R.shape == z.shape + (2, 2)
        # det(I + R) = det T / det M = 1 (det Y = 1, det M = 1)
        assert np.max(np.abs(np.linalg.det(R + np.eye(2)) - 1)) < 1e-12
        worst.append(float(np.abs(R).max()))
    # measured n·max|R| = 0.1451, 0.1432, 0.1423, 0.1419: O(1/n) with a converging coefficient
    assert fit_rate(ns, worst).slope == pytest.approx(-1.0, abs=0.02), worst
    n_times = ns * np.asarray(worst)
    assert abs(n_times[-1] - n_times[-2]) < 2e-3


def test_two_bands_with_direct_coefficients():
    # V = x⁴/4 - 3x²/2 (two bands, Ω = 1/2): Y from the direct coefficients; on a circle around the
    # support the deviation is O(1/n) (even n: the phases nΩ are integers, the same model at every n)
    mu = solve(Field.from_expression("x**4/4 - 3*x**2/2"))
    pred = predictor(mu)
    z = 3.5 * np.exp(2j * np.pi * (np.arange(48) + 0.5) / 48)
    g = pred.g(z)
    ns = np.array([40, 80, 160])
    worst = []
    for n in ns:
        rc = recurrence_coefficients(Weight(mu.field, float(n)), int(n) + 120)
        Y = orthogonality_matrix(rc, z, int(n), tolerance=1e-10)
        d = small_norm_deviation(z, Y.mantissa, Y.log_scale, g, mu.lagrange, n, pred.model, pred.phases([n])[0])
        worst.append(float(d.max()))
    fit = fit_rate(ns, worst)               # measured 1.68e-3, 8.36e-4, 4.17e-4: slope -1.008
    assert fit.slope == pytest.approx(-1.0, abs=0.05), (worst, fit)


def test_shapes_are_checked():
    pred = predictor(solve(Field.from_expression("x**2/2")))
    z = np.array([3.0 + 1j, -3.0 + 0.5j])
    with pytest.raises(InputError, match="shape"):
        small_norm_matrix(z, np.ones((2, 2, 3)), np.zeros((2, 2, 3)), np.zeros(2), 1.0, 10, pred.model,
                          np.zeros(0))
