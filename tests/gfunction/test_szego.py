"""Szegő function of a weight factor: closed forms, jump relations, predictions with a factor."""

import numpy as np
import pytest
import mpmath

from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
from gfunction.szego import chebyshev_cauchy, interior_singular_points, szego_function
from equilibrium.weight import PowerFactor, Weight, parse_factor
from workbench.polynomials import recurrence_coefficients

THREE = [(-3.0, -2.1), (-1.0, 0.5), (1.1, 2.9)]


def test_chebyshev_cauchy_against_quadrature():
    # closed form of ∫ T_m(t)/(sqrt(1-t²)(t-ζ)) (Mason & Handscomb 2003, from memory) vs mpmath.quad of
    # the same integral after t = cos θ, ∫_0^π cos(mθ)/(cos θ - ζ) dθ (smooth integrand, 30 digits)
    z = 0.4 + 0.3j
    for m in (0, 1, 4):
        c = np.zeros(m + 1); c[m] = 1.0
        with mpmath.workdps(30):
            ref = complex(mpmath.quad(lambda t: mpmath.cos(m * t) / (mpmath.cos(t) - mpmath.mpc(z)), [0, mpmath.pi]))
        assert abs(chebyshev_cauchy(c, -1.0, 1.0, np.array([z]))[0] - ref) < 1e-13


def test_one_band_jacobi_closed_form():
    # D = (z-1)^{α/2}(z+1)^{β/2}/φ^{(α+β)/2}, φ = z + (z²-1)^{1/2}, D_∞ = 2^{-(α+β)/2}
    # (Kuijlaars, McLaughlin, Van Assche, Vanlessen, Adv. Math. 188 (2004), §5)
    al, be = 0.5, -0.25
    D = szego_function(parse_factor("(1-x)^0.5*(1+x)^-0.25", on=IntervalSet([(-1, 1)])), [(-1, 1)])
    z = np.array([0.3 + 0.2j, 1.5, -1.2 + 0.1j, 0.5, -0.3 - 0.4j, 3.0, 40j])
    phi = z + np.sqrt(z - 1 + 1e-300j) * np.sqrt(z + 1)
    exact = (z - 1 + 1e-300j) ** (al / 2) * (z + 1) ** (be / 2) / phi ** ((al + be) / 2)
    assert np.max(np.abs(D(z) / exact - 1)) < 1e-13
    assert abs(D.limit - 2 ** (-(al + be) / 2)) < 1e-14


def test_one_band_smooth_closed_form():
    # h = e^x on [-1,1]: log D = (z - (z²-1)^{1/2})/2 (its boundary values add up to x; bounded at ∞;
    # derivation in the comment, "common practice")
    D = szego_function(parse_factor("exp(x)"), [(-1, 1)])
    z = np.array([0.3 + 0.2j, 0.99, -1.2 + 0.1j, 5.0])
    exact = np.exp((z - np.sqrt(z - 1 + 1e-300j) * np.sqrt(z + 1)) / 2)
    assert np.max(np.abs(D(z) / exact - 1)) < 1e-14 and abs(D.limit - 1) < 1e-14


@pytest.mark.parametrize("text", ["abs(x+0.2)^0.6*exp(0.3*x)*(3-x)^0.5", "abs(x-1.5)^1*(4+x)^2"])
def test_three_band_jumps(text):
    D = szego_function(parse_factor(text), THREE)
    x = np.concatenate([np.linspace(a + 1e-3, b - 1e-3, 23) for a, b in THREE])
    dp, dm = D.boundary_values(x)
    assert np.max(np.abs(dp * dm / np.exp(D.log_h(x)) - 1)) < 1e-12          # D_+ D_- = h
    for j in range(2):
        xg = np.linspace(THREE[j][1] + 1e-3, THREE[j + 1][0] - 1e-3, 9)
        dp, dm = D.boundary_values(xg)
        assert np.max(np.abs(dp / dm - np.exp(2j * np.pi * D.phase_shift[j]))) < 1e-12   # constant gap jumps
    z = 1e4 * np.exp(1j * np.array([0.2, 2.5, -1.3]))
    assert np.max(np.abs(D(z) / D.limit - 1)) < 1e-3 and D.checks["infinity"] < 1e-6     # D → D_∞ (O(1/z))


def _jacobi_monic(n, al, be):
    # NIST DLMF §18.9 (monic form of 18.9.2): a_n² and b_n of the Jacobi weight (1-x)^α(1+x)^β
    s = 2 * n + al + be
    a2 = 4 * n * (n + al) * (n + be) * (n + al + be) / (s ** 2 * (s + 1) * (s - 1))
    b = (be ** 2 - al ** 2) / (s * (s + 2))
    return np.sqrt(a2), b


def test_jacobi_recurrence_prediction():
    al, be = 0.5, -0.3
    on = IntervalSet([(-1.0, 1.0)])
    mu = solve(Field.zero(), on=on)
    pr = predictor(mu, parse_factor("(1-x)^0.5*(1+x)^-0.3", on=on))
    ns = np.array([100, 200, 400, 800])
    rec = pr.recurrence(ns)
    a, b = rec.a, rec.b
    ea, eb = _jacobi_monic(ns, al, be)
    err = np.maximum(np.abs(a - ea), np.abs(b - eb))
    slope = np.polyfit(np.log(ns), np.log(err), 1)[0]
    assert -2.2 <= slope <= -1.8 and err[-1] < 1e-6, (err, slope)        # O(1/n²)


def test_factor_against_direct_coefficients():
    field = Field.from_expression("x**4/4 - 3*x**2/2 + 0.3*x")
    mu = solve(field, on=IntervalSet.real_line())
    fac = parse_factor("abs(x-1.5)^1*exp(0.3*x)")       # FH root inside the right band, smooth part
    pr = predictor(mu, fac)
    assert 0.01 < abs(pr.szego.phase_shift[0]) < 0.99
    ns = (200, 400, 800)
    errs = []
    for n0 in ns:
        err = 0.0
        for n in range(n0, n0 + 6):
            rc = recurrence_coefficients(Weight(field, n, factors=fac), n + 1, measure=mu)
            rec = pr.recurrence([n], [n])
            a, b = rec.a, rec.b
            err = max(err, abs(rc.a[n] - a[0]), abs(rc.b[n] - b[0]))
        errs.append(err)
    slope = np.polyfit(np.log(ns), np.log(errs), 1)[0]
    assert -1.6 <= slope <= -0.7 and errs[-1] < 2e-3, (errs, slope)
    # without the phase shift of the Szegő function the prediction is wrong at O(1)
    a0 = predictor(mu).recurrence([800], [800]).a
    rc = recurrence_coefficients(Weight(field, 800, factors=fac), 801, measure=mu)
    assert abs(rc.a[800] - a0[0]) > 0.05


def test_interior_singular_points_whatever_the_spelling_of_the_factor():
    """A root |x - c|^{2γ} is one singular point whether built as PowerFactor (kind = fisher_hartwig)
    or read from the expression abs(x - c)^p; inside a band it is interior, at an edge (within 1e-12
    relative) it is an end, outside the support it does not count."""
    line = IntervalSet.real_line()
    bands = ((-2.0, -1.0), (1.0, 2.0))
    assert interior_singular_points((PowerFactor(c=1.5, gamma=0.4),), bands) == (1.5,)
    assert interior_singular_points(parse_factor("abs(x-1.5)^0.8", {}, line), bands) == (1.5,)
    assert interior_singular_points(parse_factor("abs(x-1.5)^0.8*abs(x+1.2)^0.3", {}, line), bands) == (-1.2, 1.5)
    assert interior_singular_points(parse_factor("abs(x-2)^0.8", {}, line), bands) == ()
    assert interior_singular_points((PowerFactor(c=2.0 + 1e-13, gamma=0.4),), bands) == ()
    assert interior_singular_points(parse_factor("abs(x)^0.8", {}, line), bands) == ()      # in the gap
    assert interior_singular_points(parse_factor("exp(x)", {}, line), bands) == ()
