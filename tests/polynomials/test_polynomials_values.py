"""Scaled values, Christoffel–Darboux kernel, Cauchy transforms and Y(z) (workbench.polynomials.values/.cauchy)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.polynomial import hermite as H
from scipy.special import eval_hermite, gammaln, wofz

from equilibrium import Field
from equilibrium.errors import NumericalFailure
from workbench.polynomials.cauchy import (cauchy_transform, cauchy_transform_by_quadrature, orthogonality_matrix,
                                          orthogonality_matrix_for_weight, second_kind_values)
from workbench.polynomials.discretisation import discretise
from workbench.polynomials.recurrence import recurrence_coefficients
from workbench.polynomials.values import (christoffel_darboux, monic_values, orthonormal_derivatives,
                                          orthonormal_values, weighted_values)
from equilibrium.weight import Weight
from workbench.polynomials.zeros import gauss_rule

HERMITE = Weight(Field.from_expression("x**2"), 1)  # exp(-x^2)


@pytest.fixture(scope="module")
def hermite_rc():
    return recurrence_coefficients(HERMITE, 3000)


def log_hermite_norm(k):
    # ∫ H_k^2 e^{-x^2} = sqrt(pi) 2^k k!  (DLMF Table 18.3.1)
    return 0.5 * (0.5 * math.log(math.pi) + k * math.log(2.0) + gammaln(k + 1))


def test_orthonormal_values_against_scipy_hermite(hermite_rc):
    # p_k = H_k / ||H_k||, H_k from scipy.special.eval_hermite
    x = np.linspace(-6, 6, 25)
    for k in (0, 1, 7, 60):
        ref = eval_hermite(k, x) * math.exp(-log_hermite_norm(k))
        got = orthonormal_values(hermite_rc, x, k).value()
        assert np.max(np.abs(got - ref)) < 1e-12 * max(1.0, np.max(np.abs(ref)))


def test_values_in_scaled_form_do_not_overflow(hermite_rc):
    # p_2500(60): |H_2500(60)| is far beyond 1e308; compare log|p_k| with numpy's Hermite series in log form
    # via the recurrence ratio check p_{k+1}/p_k at a point where both overflow
    v = orthonormal_values(hermite_rc, np.array([60.0]), 2500)
    assert np.isfinite(v.log_scale).all() and v.log_scale[0] > 800
    # weighted values p_k(x) e^{-x^2/2} stay bounded by O(k^{1/4}) on the line (Christoffel bound)
    x = np.linspace(-80, 80, 2001)
    wv = weighted_values(hermite_rc, HERMITE, x, 2500)
    assert np.all(np.isfinite(wv)) and np.max(np.abs(wv)) < 2.0


def test_complex_values_against_numpy_hermite(hermite_rc):
    # monic π_k = H_k / 2^k at complex z; numpy.polynomial.hermite evaluates the physicists' series
    z = np.array([0.3 + 0.7j, -2.0 + 1.5j, 4.0 - 3.0j])
    for k in (5, 30):
        coef = np.zeros(k + 1)
        coef[k] = 1.0
        ref = H.hermval(z, coef) / 2.0**k
        got = monic_values(hermite_rc, z, k).value()
        assert np.max(np.abs(got - ref) / np.abs(ref)) < 1e-12


def test_christoffel_darboux(hermite_rc):
    # the sum form against the Christoffel–Darboux formula (Szegő 1939, Thm 3.2.2) and its diagonal limit
    N = 200
    x = np.array([-3.0, 0.2, 5.5])
    y = np.array([1.0, 0.21, -7.0])
    kernel = christoffel_darboux(hermite_rc, HERMITE, x, y, degree=N)
    half = 0.5 * (HERMITE.log_weight(x) + HERMITE.log_weight(y))
    pn_x, pm_x = (orthonormal_values(hermite_rc, x, k).value() for k in (N, N - 1))
    pn_y, pm_y = (orthonormal_values(hermite_rc, y, k).value() for k in (N, N - 1))
    closed = hermite_rc.a[N] * (pn_x * pm_y - pm_x * pn_y) / (x - y) * np.exp(half)
    assert np.max(np.abs(kernel - closed)) < 1e-11 * np.max(np.abs(kernel))
    diag = christoffel_darboux(hermite_rc, HERMITE, x, degree=N)
    pn, dpn = orthonormal_derivatives(hermite_rc, x, N)
    pm, dpm = orthonormal_derivatives(hermite_rc, x, N - 1)
    limit = hermite_rc.a[N] * (dpn.value() * pm.value() - dpm.value() * pn.value()) * np.exp(HERMITE.log_weight(x))
    assert np.max(np.abs(diag - limit) / diag) < 1e-11
    # reproducing property with the Gauss rule (exact for degree < 2N): Σ_j λ_j K(x, x_j)^2 = K(x, x)
    rule = gauss_rule(hermite_rc, N)
    k_xy = np.array([christoffel_darboux(hermite_rc, HERMITE, np.full(N, xi), rule.nodes, degree=N) for xi in x])
    reproduced = np.sum(k_xy**2 * np.exp(rule.log_weights - HERMITE.log_weight(rule.nodes))[None, :], axis=1)
    assert np.max(np.abs(reproduced - diag) / diag) < 1e-11


def test_stieltjes_transform_against_faddeeva(hermite_rc):
    # q_0(z) = p_0 ∫ e^{-t^2}/(z - t) dt = -iπ w(z) π^{-1/4} for Im z > 0 (DLMF 7.7.2; scipy.special.wofz)
    z = np.array([0.5 + 0.6j, -2.0 + 1.0j, 10j, 3.0 + 2.0j])
    q = second_kind_values(hermite_rc, z, 0)
    ref = -1j * math.pi * wofz(z) * math.pi ** -0.25
    assert np.max(np.abs(q.values.value() - ref) / np.abs(ref)) < 1e-13
    assert q.verified and np.max(q.convergence) < 1e-12 and q.checks["convergence"] == np.max(q.convergence)


def test_cauchy_transform_against_quadrature_far_from_the_set(hermite_rc):
    # far from Σ and for small k the discretisation itself is a valid quadrature (no cancellation yet)
    z = np.array([6.0 + 6.0j, -25.0 + 3.0j])
    disc = discretise(HERMITE, 201)
    rc = hermite_rc
    for k in (0, 1, 2):
        by_fraction = cauchy_transform(rc, z, k, monic=False)
        by_sum = cauchy_transform_by_quadrature(rc, disc, z, k)
        assert by_fraction.verified
        assert np.max(np.abs(by_fraction.values.value() - by_sum) / np.abs(by_sum)) < 1e-11


def test_determinant_of_Y_gaussian_and_two_band():
    # det Y = 1 (Fokas–Its–Kitaev 1992: Y has unit determinant)
    z = np.array([0.5 + 0.5j, -3.0 + 0.6j, 2.5 - 1.0j, 1.0 + 4.0j])
    Y, _ = orthogonality_matrix_for_weight(Weight(Field.from_expression("x**2/2"), 200), z, 200)
    assert Y.checks["det_error"] < 1e-10
    z2 = np.array([0.0 + 0.6j, 1.6 + 0.7j, -1.5 - 0.8j, 3.0 + 1.0j])
    Y2, rc2 = orthogonality_matrix_for_weight(Weight(Field.from_expression("x**4/4 - 1.5*x**2 + 0.2*x"), 300), z2, 300)
    assert Y2.checks["det_error"] < 1e-10
    assert np.all(np.isfinite(Y2.log_scale))


def test_Y_large_z_asymptotics_give_a_n():
    # Y(z) z^{-nσ3} = I + Y_1/z + ...: (Y_1)_12 (Y_1)_21 = a_n^2 (CONVENTIONS; Deift et al., CPAM 52 (1999) 1335).
    # (Y_1)_12 = lim z^{n+1} Y_12, (Y_1)_21 = lim z^{-(n-1)} Y_21: the constant terms of Laurent series,
    # taken as the mean over a large circle (trapezoid rule = exact Laurent coefficient up to aliasing).
    n = 40
    weight = Weight(Field.from_expression("x**4/4 - x**2"), n)
    rc = recurrence_coefficients(weight, n + 200)
    R, M = 30.0, 64
    z = R * np.exp(2j * math.pi * (np.arange(M) + 0.5) / M)
    Y = orthogonality_matrix(rc, z, n)
    y12 = Y.mantissa[0, 1] * np.exp(Y.log_scale[0, 1] + (n + 1) * np.log(z))
    y21 = Y.mantissa[1, 0] * np.exp(Y.log_scale[1, 0] - (n - 1) * np.log(z))
    c12, c21 = np.mean(y12), np.mean(y21)
    assert abs(c12 * c21 - rc.a[n] ** 2) < 1e-12


def test_Y_too_close_to_the_set_fails_loudly(hermite_rc):
    rc = hermite_rc.truncated(300)
    z = np.array([0.5 + 1e-3j])
    with pytest.raises(NumericalFailure, match="continued fraction with 300 coefficients"):
        orthogonality_matrix(rc, z, 100)
    marked = orthogonality_matrix(rc, z, 100, on_failure="mark")
    assert not marked.verified and marked.checks["convergence"] > 1e-12 and "convergence = " in marked.message
    with pytest.raises(NumericalFailure, match="convergence"):
        second_kind_values(rc, z, 100)
    assert not second_kind_values(rc, z, 100, on_failure="mark").verified
