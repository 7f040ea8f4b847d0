"""Direct tests of equilibrium.chebyshev and equilibrium.ellipse against closed forms.

References:
* e^{cos θ} = I_0(1) + 2 Σ_{m≥1} I_m(1) cos mθ (NIST DLMF 10.35.3), so the Chebyshev coefficients
  of e^t are I_0(1), 2 I_1(1), 2 I_2(1), …, with I_m from scipy.special.iv;
* T_n(cos θ) = cos nθ (DLMF 18.5.1): the roots of T_n are cos((j - 1/2)π/n);
* the Chebyshev U generating function Σ_n U_n(y) s^n = 1/(1 - 2ys + s²) (DLMF 18.12.10), which on
  z = (u + 1/u)/2 gives the Laurent series 1/(z - y) = 2 Σ_{m≥1} U_{m-1}(y) u^{-m} (outer part only),
  U_m from scipy.special.eval_chebyu;
* the Poisson kernel Σ_m r^{|m|} v^m = (1 - r²)/((1 - rv)(1 - r/v)) (common practice), which with
  t = (v + 1/v)/2 and x_0 = (r + 1/r)/2 gives 1/(x_0 - t) = (x_0² - 1)^{-1/2} (1 + 2 Σ_{m≥1} r^m T_m(t))
  (inner part only).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.polynomial import chebyshev as C
from scipy.special import eval_chebyu, iv

from equilibrium.chebyshev import (COLLEAGUE_MAX, chebyshev_fit, chebyshev_from_first_kind_values,
                                   chebyshev_points, real_roots)
from equilibrium.ellipse import ellipse_for


def test_chebyshev_points_are_numpys_first_kind_points():
    for n in (1, 2, 7, 64):
        assert np.allclose(np.sort(chebyshev_points(n)), C.chebpts1(n), atol=1e-15)


def test_interpolant_coefficients_of_exp_are_bessel_values():
    """DLMF 10.35.3: e^t = I_0(1) + 2 Σ I_m(1) T_m(t); 24 points interpolate it to rounding."""
    n = 24
    c = chebyshev_from_first_kind_values(np.exp(chebyshev_points(n)))
    m = np.arange(n)
    exact = np.where(m == 0, 1.0, 2.0) * iv(m, 1.0)
    assert np.max(np.abs(c - exact)) < 4e-16


def test_adaptive_fit_on_a_shifted_window_and_its_antiderivative():
    """e^x on [2, 5]: coefficients e^{c} (DLMF 10.35.3 with argument d) in t = (x - c)/d;
    antiderivative with F(2) = e^2 is e^x."""
    lo, hi = 2.0, 5.0
    c, d = 3.5, 1.5
    fit = chebyshev_fit(np.exp, lo, hi)
    assert not fit.exact and fit.tail <= 2e-16
    m = np.arange(fit.degree + 1)
    exact = np.exp(c) * np.where(m == 0, 1.0, 2.0) * iv(m, d)
    assert np.max(np.abs(fit.coefficients - exact)) < 4e-16 * np.exp(hi)
    x = np.linspace(lo, hi, 101)
    assert np.max(np.abs(fit(x) - np.exp(x))) < 2e-15 * np.exp(hi)
    F = fit.antiderivative(lo, np.exp(lo))
    assert np.max(np.abs(F(x) - np.exp(x))) < 4e-15 * np.exp(hi)
    # a polynomial of given degree is exact: (x - 3)^3 = d^3 t^3 = d^3 (3 T_1 + T_3)/4
    cubic = chebyshev_fit(lambda s: (s - 3.5) ** 3, lo, hi, degree=3)
    assert cubic.exact and np.allclose(cubic.coefficients, [0, 0.75 * d ** 3, 0, 0.25 * d ** 3], atol=1e-14)


@pytest.mark.parametrize("n", [5, 12, COLLEAGUE_MAX + 21])
def test_real_roots_of_T_n(n):
    """Roots of T_n in (-0.9, 0.95) against cos((j - 1/2)π/n) (DLMF 18.5.1): the colleague matrix
    for short series, sign changes on a grid (half a grid step) for long ones."""
    coefficients = np.zeros(n + 1)
    coefficients[n] = 1.0
    exact = np.cos((np.arange(1, n + 1) - 0.5) * np.pi / n)
    exact = np.sort(exact[(exact > -0.9) & (exact < 0.95)])
    roots = real_roots(coefficients, -0.9, 0.95)
    assert roots.shape == exact.shape
    tolerance = 1e-14 if n <= COLLEAGUE_MAX else 0.5 * 1.85 / 4000
    assert np.max(np.abs(roots - exact)) <= tolerance


@pytest.mark.parametrize("lower,upper", [(-1.0, 1.0), (3.0, 7.0)])
def test_laurent_split_of_two_poles(lower, upper):
    """f = 1/(x_0 - z) + 1/(z - y): the pole x_0 outside the ellipse belongs to the inner part K,
    the pole y on the window to the outer part r (module docstring (1)); both parts against the
    Poisson kernel and the U generating function (sources in the module docstring)."""
    c, d = 0.5 * (lower + upper), 0.5 * (upper - lower)
    E = ellipse_for(lower, upper, degree=6, bands=1)
    # the ellipse itself: |u| = ρ maps into the exterior of J, u_of_z inverts the map
    assert np.allclose(E.z, c + E.zeta) and np.allclose(E.u_of_z(E.z), E.u, rtol=1e-13)
    assert abs(E.real_crossing - (c + d * 0.5 * (E.rho + 1 / E.rho))) < 1e-15 * abs(upper)
    t0, s = 2.0, 0.3                                   # x_0 = c + d t_0, y = c + d s
    r = t0 - np.sqrt(t0 * t0 - 1)
    half = E.upper_half
    f = 1.0 / (d * (t0 - E.zeta[half] / d)) + 1.0 / (E.zeta[half] - d * s)
    scaled = E.laurent_real(f)
    count = 30
    m = np.arange(count)
    inner_exact = np.where(m == 0, 1.0, 2.0) * r ** m / np.sqrt(t0 * t0 - 1) / d
    assert np.max(np.abs(E.chebyshev_part(scaled, count) - inner_exact)) < 2e-15 / d
    m = np.arange(1, 9)
    outer_exact = 2.0 * eval_chebyu(m - 1, s) / d     # 1/(z - y) = (1/d) · 1/(t - s)
    assert np.max(np.abs(E.outer_part(scaled, 8) - outer_exact)) < 1e-14 / d
    # on_ellipse evaluates a Chebyshev series at the sample points: numpy's chebval at t(u)
    series = np.array([0.3, -1.0, 0.25, 0.0, 2.0])
    t = (E.u + 1 / E.u) / 2
    assert np.allclose(E.on_ellipse(series), C.chebval(t, series), rtol=1e-13, atol=1e-13)


def test_dct2_is_scipys_dct_bit_for_bit_without_importing_scipy_fft():
    # equilibrium.chebyshev.dct2 runs scipy's pocketfft routine loaded from its extension file:
    # the numbers must be scipy.fft.dct(type=2)'s exactly (1-D and along the last axis of 2-D)
    import subprocess
    import sys

    import scipy.fft

    from equilibrium.chebyshev import dct2

    rng = np.random.default_rng(5)
    for shape in [(1,), (2,), (3,), (7,), (64,), (65,), (127,), (1000,), (5, 33), (3, 4, 16)]:
        values = rng.standard_normal(shape)
        assert np.array_equal(dct2(values), scipy.fft.dct(values, type=2, axis=-1)), shape
    values = rng.standard_normal(17) + 1j * rng.standard_normal(17)
    assert np.array_equal(dct2(values), scipy.fft.dct(values, type=2, axis=-1))
    # DCT-II by its definition y_k = 2 Σ_j v_j cos(π k (2j+1)/(2N)) (scipy.fft.dct documentation)
    values = rng.standard_normal(9)
    k, j = np.meshgrid(np.arange(9), np.arange(9), indexing="ij")
    assert np.max(np.abs(dct2(values) - 2 * np.cos(np.pi * k * (2 * j + 1) / 18) @ values)) < 1e-13
    script = ("import sys, numpy as np\nfrom equilibrium.chebyshev import dct2\nfrom equilibrium import Field, solve\n"
              "solve(Field.from_expression('x**4/4 - 1.5*x**2 + 0.2*x'))\n"
              "print(sorted(m for m in sys.modules if m.startswith('scipy')))")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"  # a polynomial field is solved without importing scipy
