"""Zeros and Gauss rules (workbench.polynomials.zeros) against scipy.special (reference library)."""

from __future__ import annotations

import dataclasses
import math

import mpmath
import numpy as np
import pytest
from scipy.special import roots_genlaguerre, roots_hermite, roots_jacobi

from equilibrium import Field, IntervalSet, solve
from workbench.polynomials.recurrence import recurrence_coefficients
from equilibrium.weight import JacobiFactor, Weight, parse_factor
from workbench.polynomials.zeros import gauss_rule, zeros


def test_gauss_hermite():
    # exp(-x^2): scipy.special.roots_hermite
    K = 60
    rc = recurrence_coefficients(Weight(Field.from_expression("x**2"), 1), K)
    rule = gauss_rule(rc, K)
    x, w = roots_hermite(K)
    assert np.max(np.abs(rule.nodes - x)) < 1e-13 * max(1.0, np.max(np.abs(x)))
    assert np.max(np.abs(rule.weights - w) / w) < 1e-12
    assert rule.checks["log_mass_difference"] < 1e-13
    assert rule.checks["eigenvector_weight_difference"] < 1e-14


def test_gauss_laguerre():
    # x^α e^{-x} on [0, ∞): scipy.special.roots_genlaguerre
    K, alpha = 50, 0.7
    on = IntervalSet.parse("0:")
    rc = recurrence_coefficients(Weight(Field.from_expression("x"), 1, on, parse_factor(f"x^{alpha}", on=on)), K)
    rule = gauss_rule(rc, K)
    x, w = roots_genlaguerre(K, alpha)
    assert np.max(np.abs(rule.nodes - x) / np.maximum(1.0, x)) < 1e-13
    assert np.max(np.abs(rule.weights - w) / w) < 1e-11


def _jacobi_recurrence_mp(K, al, be):
    """Orthonormal Jacobi recurrence a_1..a_K, b_0..b_K in mpmath (closed form, DLMF Table 18.9.1)."""
    a = [mpmath.mpf(0)] * (K + 1)
    b = [mpmath.mpf(0)] * (K + 1)
    for k in range(K + 1):
        s = 2 * k + al + be
        b[k] = (be - al) / (al + be + 2) if k == 0 else (be**2 - al**2) / (s * (s + 2))
        if k >= 1:
            a[k] = mpmath.sqrt(4 * k * (k + al) * (k + be) * (k + al + be) / (s**2 * (s + 1) * (s - 1))) if k > 1 \
                else mpmath.sqrt(4 * (1 + al) * (1 + be) / ((2 + al + be) ** 2 * (3 + al + be)))
    return a, b


def _jacobi_coefficients(K, alpha, beta, dps=30):
    """The closed-form a_k, b_k (k = 0..K) correctly rounded to double (a_0 = 0 as in RecurrenceCoefficients)."""
    with mpmath.workdps(dps):
        a, b = _jacobi_recurrence_mp(K, mpmath.mpf(alpha), mpmath.mpf(beta))
        return np.array([float(v) for v in a]), np.array([float(v) for v in b])


def _gauss_jacobi_mp(K, alpha, beta, start, dps=30):
    """Gauss–Jacobi rule in mpmath: Newton on p_K from ``start`` with the closed-form orthonormal
    recurrence (DLMF Table 18.9.1), weights 1/Σ_{k<K} p_k(x)^2 (Christoffel numbers, Szegő 1939 §3.4)."""
    with mpmath.workdps(dps):
        al, be = mpmath.mpf(alpha), mpmath.mpf(beta)
        a, b = _jacobi_recurrence_mp(K, al, be)
        mass = 2 ** (al + be + 1) * mpmath.beta(al + 1, be + 1)
        nodes, weights = [], []
        for x0 in start:
            x = mpmath.mpf(float(x0))
            for _ in range(3):  # quadratic convergence from a double-precision start
                p_prev, p, d_prev, d = mpmath.mpf(0), 1 / mpmath.sqrt(mass), mpmath.mpf(0), mpmath.mpf(0)
                squares = 0
                for k in range(K):
                    squares += p * p
                    p_next = ((x - b[k]) * p - a[k] * p_prev) / a[k + 1]
                    d_next = ((x - b[k]) * d + p - a[k] * d_prev) / a[k + 1]
                    p_prev, p, d_prev, d = p, p_next, d, d_next
                x = x - p / d
            nodes.append(float(x))
            weights.append(float(1 / squares))
        return np.array(nodes), np.array(weights)


@pytest.mark.parametrize("alpha,beta", [(-0.5, 0.5), (0.25, -0.75)])
def test_gauss_jacobi(alpha, beta):
    # (1-x)^α (1+x)^β on [-1, 1]: scipy.special.roots_jacobi, and an mpmath Gauss–Jacobi rule
    K = 80
    weight = Weight(Field.zero(), 1, IntervalSet.parse("-1:1"), (JacobiFactor(-1.0, 1.0, alpha, beta),))
    rule = gauss_rule(recurrence_coefficients(weight, K), K)
    x, w = roots_jacobi(K, alpha, beta)
    assert np.max(np.abs(rule.nodes - x)) < 1e-14
    # scipy's weights lose ~1e-11 relative at the nodes next to the endpoints (measured: they differ from
    # the 30-digit mpmath rule below by up to 4e-11 there), so scipy is the reference at 1e-10 only ...
    assert np.max(np.abs(rule.weights - w) / w) < 1e-10
    # ... and the 30-digit mpmath rule is the sharper reference: nodes to the eigenvalue accuracy
    # (a few K·eps), weights to 1e-11 -- near an endpoint the Christoffel function varies like
    # (1 -/+ x)^{α+1/2}, so a node error δx ~ 5e-15 at distance 1e-4 moves λ by ~1e-11 relative
    x_mp, w_mp = _gauss_jacobi_mp(K, alpha, beta, rule.nodes)
    assert np.max(np.abs(rule.nodes - x_mp)) < 1e-14
    assert np.max(np.abs(rule.weights - w_mp) / w_mp) < 1e-11
    # Away from the ends the weights carry the error of the coefficients they are built from: the direct
    # b_k are accurate to ~2.5e-15 absolute (their error estimate: 2.2e-15), i.e. ~5e-11 relative at k ~ 50
    # where b_k ~ 5e-5, and K = 80 steps of the recurrence carry that into the Christoffel sums (measured:
    # 1.0e-13 at the node next to 0).  The rule itself is tested apart, on the exactly rounded
    # coefficients of DLMF Table 18.9.1 (measured 5.8e-15).
    interior = np.abs(x_mp) < 0.9
    assert np.max(np.abs(rule.weights - w_mp)[interior] / w_mp[interior]) < 1e-12
    a_exact, b_exact = _jacobi_coefficients(K, alpha, beta)
    direct = recurrence_coefficients(weight, K)
    exact = gauss_rule(dataclasses.replace(direct, a=a_exact[: direct.a.size], b=b_exact[: direct.b.size]), K)
    x_ex, w_ex = _gauss_jacobi_mp(K, alpha, beta, exact.nodes)
    assert np.max(np.abs(exact.weights - w_ex)[interior] / w_ex[interior]) < 2e-14
    assert np.max(np.abs(direct.b[:K] - b_exact[:K])) < 2 * direct.error_estimate + 1e-15


def test_tiny_gauss_weights_in_log_form():
    # Hermite K = 400: the outer weights are ~ e^{-x^2} at x ~ 28 (below 1e-300); the log weights stay exact.
    K = 400
    rc = recurrence_coefficients(Weight(Field.from_expression("x**2"), 1), K)
    rule = gauss_rule(rc, K)
    assert np.min(rule.log_weights) < math.log(1e-300)
    assert rule.checks["log_mass_difference"] < 1e-12
    # symmetric rule: λ(x_j) = λ(-x_j) to rounding, including the tiny ones
    assert np.max(np.abs(rule.log_weights - rule.log_weights[::-1]) / np.abs(rule.log_weights)) < 1e-12
    # the Gauss rule integrates x^2 e^{-x^2} exactly: sqrt(pi)/2 (DLMF 5.9.1 / Gaussian integral)
    top = rule.log_weights.max()
    value = math.exp(top) * np.sum(np.exp(rule.log_weights - top) * rule.nodes**2)
    assert abs(value - math.sqrt(math.pi) / 2) < 1e-13


def test_zeros_follow_equilibrium_quantiles():
    # zeros of p_n for exp(-n x^2/2) vs the semicircle quantile rule F(x_j) = (j - 1/2)/n (bulk prediction)
    n = 2000
    field = Field.from_expression("x**2/2")
    x = zeros(recurrence_coefficients(Weight(field, n), n - 1), n)
    assert np.all(np.diff(x) > 0)
    mu = solve(field, on=IntervalSet.real_line())
    j = np.arange(1, n + 1)
    bulk = slice(n // 10, n - n // 10)
    assert np.max(np.abs(mu.distribution(x[bulk]) - (j[bulk] - 0.5) / n)) < 2.0 / n
    # largest zero approaches the soft edge 2 at the Airy scale n^{-2/3}
    assert 0 < 2 - x[-1] < 3 * n ** (-2 / 3)
