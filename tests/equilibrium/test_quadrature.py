"""Direct tests of equilibrium.quadrature: both rule families, against closed forms, mpmath and scipy.

References used:
* Beta integral, NIST DLMF 5.12.1: ∫_0^1 t^{p-1} (1 - t)^{q-1} dt = B(p, q), so
  ∫_lo^hi (x - lo)^{β + j} (hi - x)^α dx = L^{α + β + j + 1} B(β + j + 1, α + 1), L = hi - lo;
* ∫_0^1 x^{-1/2} / (c - x) dx = (2/√c) artanh(1/√c) for c > 1 (substitute x = u²; a table
  integral, checked here also by mpmath.quad);
* mpmath.quad (tanh-sinh, with the near singularity as a break point) and scipy.integrate.quad.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import beta as beta_function

from equilibrium.quadrature import (
    angular_rule,
    cumulative_integral,
    gauss_jacobi,
    gauss_legendre,
    graded_jacobi_rule,
    grading_levels,
    theta_of_x,
)


def jacobi_moment(j: int, lo: float, hi: float, alpha: float, beta: float) -> float:
    """∫_lo^hi (x - lo)^j (hi - x)^α (x - lo)^β dx (DLMF 5.12.1)."""
    L = hi - lo
    return L ** (alpha + beta + j + 1) * beta_function(beta + j + 1, alpha + 1)


EXPONENTS = [(-0.5, -0.5), (0.0, 0.0), (0.0, -0.5), (-0.5, 0.5), (0.3, -0.7), (1.5, 0.25)]


@pytest.mark.parametrize("alpha,beta", EXPONENTS)
def test_gauss_jacobi_is_exact_to_degree_2n_minus_1(alpha, beta):
    n = 12
    t, w = gauss_jacobi(n, alpha, beta)
    # on [-1, 1] with (1 - t)^α (1 + t)^β: moments of (1 + t)^j from DLMF 5.12.1 with lo = -1, hi = 1
    for j in range(2 * n):
        exact = jacobi_moment(j, -1.0, 1.0, alpha, beta)
        assert abs(np.sum(w * (1.0 + t) ** j) - exact) <= 2e-14 * abs(exact) * 2 ** (j / 4), (j, alpha, beta)
    # and not beyond: the node polynomial squared, ∏ (t - t_i)², has a positive integral
    # but a quadrature sum of exactly zero
    assert np.sum(w * np.prod(t[:, None] - t[None, :], axis=1) ** 2) == 0.0


@pytest.mark.parametrize("alpha,beta", [(0.3, -0.7), (1.5, 0.25), (-0.5, 0.5)])
def test_gauss_jacobi_against_scipy_and_mpmath(alpha, beta):
    """n = 60: nodes against scipy.special.roots_jacobi; weights against the closed form
    w_i = 2^{α+β+1} Γ(n+α+1) Γ(n+β+1) / (Γ(n+α+β+1) n! (1 - x_i²) P_n'(x_i)²) (Abramowitz & Stegun
    25.4.33) in 40-digit mpmath, with P_n' = (n+α+β+1)/2 P_{n-1}^{(α+1,β+1)} (DLMF 18.9.15) at the
    Newton-polished node.  Measured: ours within 7e-14 of the closed form, scipy's weights 4.7e-12
    from it (so the comparison with scipy's weights is at its accuracy, 1e-11)."""
    from scipy.special import roots_jacobi

    n = 60
    t, w = gauss_jacobi(n, alpha, beta)
    ref_t, ref_w = roots_jacobi(n, alpha, beta)
    assert np.max(np.abs(t - ref_t)) <= 1e-15
    assert np.max(np.abs(w - ref_w) / ref_w) <= 1e-11
    with mpmath.workdps(40):
        a, b = mpmath.mpf(alpha), mpmath.mpf(beta)
        G = 2 ** (a + b + 1) * mpmath.gamma(n + a + 1) * mpmath.gamma(n + b + 1) / (
            mpmath.gamma(n + a + b + 1) * mpmath.factorial(n))
        for i in range(0, n, 6):
            x = mpmath.mpf(t[i])
            for _ in range(3):
                x -= mpmath.jacobi(n, a, b, x) / ((n + a + b + 1) / 2 * mpmath.jacobi(n - 1, a + 1, b + 1, x))
            slope = (n + a + b + 1) / 2 * mpmath.jacobi(n - 1, a + 1, b + 1, x)
            exact = G / ((1 - x * x) * slope * slope)
            assert abs(float(x - mpmath.mpf(t[i]))) <= 4e-16
            assert abs(float((exact - mpmath.mpf(w[i])) / exact)) <= 2e-13


def test_one_cache_for_legendre():
    """Gauss–Jacobi with α = β = 0 is the Gauss–Legendre rule of the angular panels, not a copy."""
    assert gauss_jacobi(17, 0.0, 0.0) is gauss_legendre(17)
    t, w = gauss_legendre(17)
    assert not t.flags.writeable and not w.flags.writeable
    ref_t, ref_w = np.polynomial.legendre.leggauss(17)
    assert np.allclose(t, ref_t, atol=1e-15) and np.allclose(w, ref_w, atol=1e-15)


@pytest.mark.parametrize("n", [1, 2, 3, 8, 16, 40, 64, 101, 200])
def test_gauss_legendre_against_mpmath(n):
    """Nodes: Newton on P_n in 40-digit mpmath from our nodes; weights 2/((1 - x²) P_n'(x)²)
    there (Abramowitz & Stegun 25.4.29).  Our numpy rule (no scipy import) is within 2e-16
    (nodes) and 2e-13 relative (weights) for n ≤ 200; scipy.special.roots_legendre's
    weights measured 4e-13 at n = 40 and 4e-11 at n = 200 against the same reference."""
    x, w = gauss_legendre(n)
    assert np.all(np.diff(x) > 0) and np.array_equal(x, -x[::-1]) and np.array_equal(w, w[::-1])
    with mpmath.workdps(40):
        for xi, wi in zip(x, w):
            t = mpmath.mpf(xi)
            for _ in range(4):
                p, q = mpmath.legendre(n, t), mpmath.legendre(n - 1, t)
                t = t - p / (n * (t * p - q) / (t * t - 1))
            slope = n * (t * mpmath.legendre(n, t) - mpmath.legendre(n - 1, t)) / (t * t - 1)
            exact_w = 2 / ((1 - t * t) * slope * slope)
            assert abs(float(t - mpmath.mpf(xi))) <= 2e-16
            assert abs(float((exact_w - mpmath.mpf(wi)) / exact_w)) <= 2e-13
    assert abs(np.sum(w) - 2.0) <= 4e-15


@pytest.mark.parametrize("alpha,beta", EXPONENTS)
@pytest.mark.parametrize("near", [(), (3.0 + 1e-7,), (-1.0 - 1e-5, 3.0 + 1e-9)])
def test_graded_jacobi_rule_on_polynomials_times_the_weight(alpha, beta, near):
    """Polynomial times Jacobi weight on [-1, 3], graded or not: the composite rule keeps the
    endpoint weights on the end panels, so it is exact up to rounding."""
    lo, hi = -1.0, 3.0
    x, w, da, db = graded_jacobi_rule(lo, hi, alpha, beta, near=near, n=20, return_distances=True)
    assert np.all((x > lo) & (x < hi))
    assert np.allclose(da, x - lo, rtol=1e-13, atol=1e-15) and np.allclose(db, hi - x, rtol=1e-13, atol=1e-15)
    for j in range(0, 15):
        exact = jacobi_moment(j, lo, hi, alpha, beta)
        assert abs(np.sum(w * da ** j) - exact) <= 1e-13 * exact, (j, near)


def test_graded_jacobi_converges_for_a_near_singularity():
    """∫_0^1 x^{-1/2}/(1 + d - x) dx, d = 1e-8: singularity at 1e-8 beyond the right end."""
    d = 1e-8
    with mpmath.workdps(30):
        c_mp = 1 + mpmath.mpf(d)       # the integrand below uses d + (1 - x): c = 1 + d exactly
        exact_mp = 2 / mpmath.sqrt(c_mp) * mpmath.atanh(1 / mpmath.sqrt(c_mp))
        ref = mpmath.quad(lambda u: 2 / (c_mp - u * u), [0, 1 - mpmath.sqrt(d), 1])   # x = u²; tanh-sinh
        assert abs(ref - exact_mp) < 1e-20 * exact_mp
    exact = float(exact_mp)
    c = 1.0 + d

    def rule_error(n, graded):
        x, w, da, db = graded_jacobi_rule(0.0, 1.0, 0.0, -0.5, near=(c,) if graded else (), n=n,
                                          return_distances=True)
        return abs(np.sum(w / (d + db)) - exact) / exact

    errors = [rule_error(n, True) for n in (4, 8, 16)]
    assert errors[0] > errors[1] > errors[2] or errors[2] < 1e-14
    assert errors[-1] < 1e-13
    # without grading the same rule size is nowhere near (rate 1 - O(sqrt d))
    assert rule_error(16, False) > 1e-3
    # the graded rule's size grows like log(1/d): count the panels
    x, _ = graded_jacobi_rule(0.0, 1.0, 0.0, -0.5, near=(c,), n=16)
    panels = x.size // 16
    assert panels <= math.ceil(math.log2(1.0 / d)) + 3


@pytest.mark.parametrize("sigma_lo,sigma_hi", [(-0.5, -0.5), (0.5, -0.5), (-0.5, 0.5), (0.5, 0.5), (0.0, 0.0)])
def test_angular_rule_on_polynomials_times_the_weight(sigma_lo, sigma_hi):
    """∫ (x - lo)^{j + σ_lo} (hi - x)^{σ_hi} dx by the angular rule, against DLMF 5.12.1."""
    lo, hi = -0.7, 1.9
    rule = angular_rule(lo, hi, points=16)
    weight = rule.from_lo ** sigma_lo * rule.to_hi ** sigma_hi * rule.dx_dtheta * rule.weights
    for j in range(0, 12):
        exact = jacobi_moment(j, lo, hi, sigma_hi, sigma_lo)
        assert abs(np.sum(weight * rule.from_lo ** j) - exact) <= 2e-15 * abs(exact) * (j + 1), (j,)


@pytest.mark.parametrize("gap", [1e-2, 1e-5, 1e-8, 1e-12])
def test_angular_rule_graded_toward_a_tiny_gap(gap):
    """A branch point at distance `gap` beyond hi: ∫_lo^hi dx / ((x-lo)(hi-x))^{1/2} / (hi + gap - x)^{1/2}.

    Reference: mpmath.quad in the variable x = lo + L sin²(θ/2) with a break point where the
    near singularity is closest (30 digits); the rule's cost grows like log(1/gap)."""
    lo, hi = 0.0, 1.0
    rule = angular_rule(lo, hi, near_hi=gap, points=16)
    # the distance hi + gap - x is formed as gap + (hi - x) from the angle: no cancellation
    approx = np.sum(rule.weights / np.sqrt(gap + rule.to_hi))
    with mpmath.workdps(30):
        g = mpmath.mpf(gap)
        f = lambda th: 1 / mpmath.sqrt(g + mpmath.cos(th / 2) ** 2)
        # closed form as a check of the reference: ∫_0^π dθ / (g + cos²(θ/2))^{1/2} = 2 K(1/(1+g)) / sqrt(1+g)
        ref = mpmath.quad(f, [0, mpmath.pi - 2 * mpmath.sqrt(g), mpmath.pi])
        closed = 2 * mpmath.ellipk(1 / (1 + g)) / mpmath.sqrt(1 + g)
    assert abs(ref - closed) < 1e-18 * abs(closed)
    # measured relative errors: 1.6e-16 (gap 1e-2), 2.7e-16 (1e-5), 5.6e-14 (1e-8), 4.1e-12 (1e-12).
    # The limit is the angle itself: nodes near θ = π carry an absolute rounding of ~eps, and
    # hi - x = L cos²(θ/2) ~ L (π - θ)²/4 then has a relative error ~ eps/(π - θ) ~ eps/gap^{1/2}
    # where the integrand peaks.  A rule storing π - θ would avoid it; the solver's gaps of
    # 1e-8 of the hull are inside what this tolerance certifies.
    eps = np.finfo(float).eps
    assert abs(approx - float(closed)) <= (1e-14 + 0.1 * eps / math.sqrt(gap)) * float(closed)
    levels = grading_levels(1.0, gap)
    assert levels == max(1, math.ceil(math.log2(1.0 / (2 * math.sqrt(gap)))))
    assert rule.theta.size == 16 * (levels + 1)


def test_angular_rule_against_scipy_quad_on_a_smooth_integrand():
    """∫_lo^hi exp(x) cos(3x) (x - lo)^{1/2} (hi - x)^{-1/2} dx against scipy.integrate.quad's
    algebraic-weight rule (QAWS, weight='alg')."""
    lo, hi = -1.3, 0.8
    rule = angular_rule(lo, hi)
    approx = np.sum(np.exp(rule.x) * np.cos(3 * rule.x) * np.sqrt(rule.from_lo / rule.to_hi)
                    * rule.dx_dtheta * rule.weights)
    ref, err = quad(lambda x: np.exp(x) * np.cos(3 * x), lo, hi, weight="alg", wvar=(0.5, -0.5),
                    epsabs=0.0, epsrel=1e-13)
    assert abs(approx - ref) <= 1e-13 * abs(ref) + err


def test_cumulative_integral_and_inverse_angle():
    """Φ(θ) = ∫_lo^{x(θ)} (s - lo)^{1/2}(hi - s)^{-1/2} ds: the closed form in θ is
    L (θ - sin θ)/2 (substitute s = lo + L sin²(φ/2))."""
    lo, hi = 2.0, 5.0
    L = hi - lo
    rule = angular_rule(lo, hi)

    def integrand(theta):
        return L * np.sin(theta / 2) ** 2     # (s-lo)^{1/2}(hi-s)^{-1/2} ds/dθ = L sin²(θ/2)

    Phi = cumulative_integral(integrand, lo, hi, rule.breaks)
    theta = np.linspace(0.0, np.pi, 37)
    assert np.allclose(Phi.at_theta(theta), L * (theta - np.sin(theta)) / 2, atol=1e-14 * L)
    assert abs(Phi.total - L * np.pi / 2) < 1e-14 * L
    x = lo + L * np.sin(theta / 2) ** 2
    assert np.allclose(theta_of_x(lo, hi, x), theta, atol=1e-7)   # arcsin near the ends: sqrt of rounding
    inner = theta[1:-1]
    assert np.allclose(theta_of_x(lo, hi, lo + L * np.sin(inner / 2) ** 2), inner, atol=1e-13)
