"""Hankel determinants computed from the norms (workbench.polynomials.hankel) against closed forms.

References: Mehta's integral for the Gaussian weight, ``D_n = (2π)^{n/2} n^{-n²/2} ∏_{k<n} k!``
(CONVENTIONS; Mehta, Random Matrices, 3rd ed. 2004, (17.6.7) -- equation number from
memory); the monic norms of Laguerre and Jacobi polynomials from NIST DLMF 18.3
(Table 18.3.1, norms and leading coefficients); Selberg's integral, DLMF 5.14.1;
Barnes' G from mpmath (``mpmath.barnesg``) for the products of factorials and
Gamma functions.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest

from equilibrium import Field, IntervalSet
from equilibrium.errors import InputError, NumericalFailure
from workbench.polynomials.hankel import hankel_determinant, log_det_from_coefficients
from workbench.polynomials.recurrence import recurrence_coefficients
from equilibrium.weight import Weight, parse_factor



@pytest.fixture(autouse=True)
def _forty_digits():
    # other test modules set mpmath's global precision; these references need 40 digits
    with mpmath.workdps(40):
        yield

ALPHA, BETA = mpmath.mpf("0.5"), mpmath.mpf("-0.3")


def _log_g(z):
    return mpmath.log(mpmath.barnesg(z))


def gaussian_exact(n: int):
    """Mehta's integral for e^{-n x²/2}: log D_n = (n/2) log 2π - (n²/2) log n + log G(n + 1)."""
    return mpmath.mpf(n) / 2 * mpmath.log(2 * mpmath.pi) - mpmath.mpf(n) ** 2 / 2 * mpmath.log(n) + _log_g(n + 1)


def laguerre_norms(n: int, alpha):
    """Σ log h_k for x^α e^{-nx} on [0, ∞): DLMF Table 18.3.1, L_k^{(α)} has norm Γ(k+α+1)/k! and
    leading coefficient (-1)^k/k!, so the monic norm of e^{-x} is k! Γ(k+α+1); x -> n x gives n^{-(2k+α+1)}."""
    return mpmath.fsum(mpmath.log(mpmath.factorial(k)) + mpmath.loggamma(k + alpha + 1) - (2 * k + alpha + 1) * mpmath.log(n)
                       for k in range(n))


def laguerre_exact(n: int, alpha):
    """The product of :func:`laguerre_norms` with Barnes' G: ∏ k! = G(n+1), ∏ Γ(k+α+1) = G(n+α+1)/G(α+1)."""
    return _log_g(n + 1) + _log_g(n + alpha + 1) - _log_g(alpha + 1) - (mpmath.mpf(n) ** 2 + alpha * n) * mpmath.log(n)


def jacobi_norms(n: int, alpha, beta):
    """Σ log h_k for (1-x)^α (1+x)^β on [-1, 1]: DLMF Table 18.3.1, P_k^{(α,β)} has norm
    2^{α+β+1} Γ(k+α+1) Γ(k+β+1) / ((2k+α+β+1) Γ(k+α+β+1) k!) and leading coefficient
    (k+α+β+1)_k / (2^k k!)."""
    out = []
    for k in range(n):
        norm = (mpmath.mpf(2) ** (alpha + beta + 1) * mpmath.gamma(k + alpha + 1) * mpmath.gamma(k + beta + 1)
                / ((2 * k + alpha + beta + 1) * mpmath.gamma(k + alpha + beta + 1) * mpmath.factorial(k)))
        lead = mpmath.rf(k + alpha + beta + 1, k) / (mpmath.mpf(2) ** k * mpmath.factorial(k))
        out.append(mpmath.log(norm) - 2 * mpmath.log(lead))
    return mpmath.fsum(out)


def jacobi_exact(n: int, alpha, beta):
    """Selberg's integral (DLMF 5.14.1, c = 1) on [0, 1] moved to [-1, 1] (factor 2^{n² + n(α+β)}) and
    divided by n!: D_n = 2^{n²+n(α+β)} G(n+1) G(n+α+1) G(n+β+1) G(n+α+β+1) / (G(α+1) G(β+1) G(2n+α+β+1))."""
    return ((mpmath.mpf(n) ** 2 + n * (alpha + beta)) * mpmath.log(2) + _log_g(n + 1) + _log_g(n + alpha + 1)
            + _log_g(n + beta + 1) + _log_g(n + alpha + beta + 1) - _log_g(alpha + 1) - _log_g(beta + 1)
            - _log_g(2 * n + alpha + beta + 1))


def _gaussian(n):
    return Weight(Field.from_expression("x**2/2"), n)


def _laguerre(n):
    on = IntervalSet.parse("0:")
    return Weight(Field.from_expression("x"), n, on, parse_factor("x^0.5", on=on))


def _jacobi(n):
    on = IntervalSet.parse("-1:1")
    return Weight(Field.zero(), n, on, parse_factor("(1-x)^0.5*(1+x)^-0.3", on=on))


def test_closed_forms_agree_with_the_norms():
    # the Barnes-G forms used below are the products of the DLMF norms (and Selberg's integral)
    n = 50
    assert abs(laguerre_norms(n, ALPHA) - laguerre_exact(n, ALPHA)) < mpmath.mpf(10) ** -30
    assert abs(jacobi_norms(n, ALPHA, BETA) - jacobi_exact(n, ALPHA, BETA)) < mpmath.mpf(10) ** -30
    gauss_norms = mpmath.fsum(mpmath.log(mpmath.factorial(k)) + mpmath.log(mpmath.sqrt(2 * mpmath.pi / n))
                              - k * mpmath.log(n) for k in range(n))   # Hermite: h_k = sqrt(2π/n) k!/n^k
    assert abs(gauss_norms - gaussian_exact(n)) < mpmath.mpf(10) ** -30


@pytest.mark.parametrize("n", [50, 400, 2000])
@pytest.mark.parametrize("weight, exact", [
    (_gaussian, gaussian_exact),
    (_laguerre, lambda n: laguerre_exact(n, ALPHA)),
    (_jacobi, lambda n: jacobi_exact(n, ALPHA, BETA)),
], ids=["gaussian", "laguerre", "jacobi"])
def test_direct_against_closed_forms(n, weight, exact):
    result = hankel_determinant(weight(n))
    truth = float(exact(n))
    assert result.verified, result.message
    assert abs(result.log_det - truth) <= 1e-12 * abs(truth)
    # the error estimate is honest: it covers the actual error (at least one rounding unit of the value)
    assert abs(result.log_det - truth) <= max(result.error_estimate, math.ulp(truth))
    assert result.relative_error_estimate < 1e-13
    assert result.log_partition == pytest.approx(math.lgamma(n + 1) + result.log_det, rel=1e-15)
    assert result.checks["discretisation_difference"] <= result.checks["discretisation_bound"] + 1e-300


def test_size_one_is_the_mass():
    # D_1 = ∫ e^{-x²/2} dx = sqrt(2π)
    assert hankel_determinant(_gaussian(1)).log_det == pytest.approx(0.5 * math.log(2 * math.pi), abs=1e-14)


def test_reuses_given_coefficients():
    weight = _gaussian(60)
    fresh = hankel_determinant(weight)
    # the coefficients it computes itself (count n - 1 = 59), given: the same numbers
    assert hankel_determinant(weight, coefficients=recurrence_coefficients(weight, 59)).log_det == fresh.log_det
    # more coefficients (a layout for K = 62: other nodes) are used as given, and agree within the estimate
    rc = recurrence_coefficients(weight, 62)
    again = hankel_determinant(weight, coefficients=rc)
    assert again.log_det == log_det_from_coefficients(rc.a, rc.log_mass, 60)
    assert abs(again.log_det - fresh.log_det) <= fresh.error_estimate


def test_bad_input():
    with pytest.raises(InputError, match="integer scaling"):
        hankel_determinant(Weight(Field.from_expression("x**2/2"), 10.5))
    weight = _gaussian(30)
    with pytest.raises(InputError, match="second discretisation"):
        hankel_determinant(weight, coefficients=recurrence_coefficients(weight, 29, verify=False))
    with pytest.raises(InputError, match="k up to 29"):
        hankel_determinant(weight, coefficients=recurrence_coefficients(weight, 10))
    with pytest.raises(InputError, match="on_failure"):
        hankel_determinant(weight, on_failure="ignore")


def test_failure_policy():
    # a tolerance no computation meets: raise, or mark the result with the figure
    weight = _gaussian(30)
    with pytest.raises(NumericalFailure, match="log D_30 not verified: error_relative_to_terms"):
        hankel_determinant(weight, tolerance=1e-30)
    marked = hankel_determinant(weight, tolerance=1e-30, on_failure="mark")
    assert not marked.verified and "error_relative_to_terms" in marked.message
    assert marked.log_det == hankel_determinant(weight).log_det
