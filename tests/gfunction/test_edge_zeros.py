"""Zeros of p_n next to soft and hard edges (gfunction.edge_zeros) against closed forms and direct zeros.

The rates asserted are those of the table in the gfunction.edge_zeros docstring (derived there from
the sizes of the entries of E in the Airy/Bessel parametrices): at a hard edge the scaling prediction
f_e(x) = -j_{alpha,m}^2/(4n^2) has relative error O(1/n) and the Bessel form (order 0) O(1/n^2); at a
soft edge the scaling prediction f_e(x) = iota_m n^{-2/3} has error O(1/n) and the Airy form O(1/n^2).
Each slope is fitted over a factor 16 in n where the errors follow clean power laws (the measured
slopes are within 0.01 of the integers), so +-0.1 is a tolerance on the exponent, not on luck.
"""

import mpmath
import numpy as np
import pytest
from scipy.special import roots_genlaguerre, roots_hermite

from equilibrium import Field, IntervalSet, solve
from gfunction import predictor
from gfunction.edge_zeros import bessel_zeros, edge_scaling_zeros, edge_zeros
from equilibrium.weight import Weight, parse_factor
from workbench.polynomials import recurrence_coefficients, zeros


def _slope(ns, err):
    return np.polyfit(np.log(ns), np.log(err), 1)[0]


@pytest.mark.parametrize("alpha", [0.7, 2.5, 0.0, 1.0, 3.0])
def test_bessel_zeros_against_mpmath(alpha):
    # mpmath.besseljzero is the referee (integer orders go through scipy.special.jn_zeros)
    got = bessel_zeros(alpha, 6)
    want = [float(mpmath.besseljzero(alpha, m)) for m in range(1, 7)]
    assert np.max(np.abs(got / want - 1)) < 1e-14, (got, want)


@pytest.mark.parametrize("alpha", [-0.3, -0.5, -0.9])
def test_bessel_zeros_of_negative_order(alpha):
    # mpmath.besseljzero takes no negative orders: each value is a zero of mpmath.besselj (one Newton
    # step at 30 digits moves it by < 1e-14 relative), and none is missing, because the zeros of J_a
    # and J_{a+1} interlace, j_{a,m} < j_{a+1,m} < j_{a,m+1} (NIST DLMF 10.21(i)), with j_{a+1,m}
    # from mpmath.besseljzero; for a = -1/2 they are (m - 1/2) pi (J_{-1/2} = (2/(pi x))^{1/2} cos x)
    got = bessel_zeros(alpha, 6)
    with mpmath.workdps(30):
        for j in got:
            step = mpmath.besselj(alpha, j) / mpmath.besselj(alpha, j, derivative=1)
            assert abs(step) < 1e-14 * j
    upper = np.array([float(mpmath.besseljzero(alpha + 1, m)) for m in range(1, 7)])
    assert np.all(got < upper) and np.all(upper[:-1] < got[1:])
    if alpha == -0.5:
        assert np.allclose(got, (np.arange(1, 7) - 0.5) * np.pi, rtol=1e-14)


def test_bessel_zeros_refuse_bad_orders():
    from equilibrium.errors import InputError
    for bad in (-1.0, -2.5, float("nan")):
        with pytest.raises(InputError):
            bessel_zeros(bad, 3)


@pytest.fixture(scope="module")
def laguerre():
    on = IntervalSet.parse("0:")
    mu = solve(Field.from_expression("x"), on=on)
    return predictor(mu, parse_factor("x^0.7", on=on))


def test_hard_edge_zeros_of_laguerre(laguerre):
    """x^0.7 e^{-nx} on [0, inf): p_n(x) is L_n^{(0.7)}(n x) up to a constant, so its zeros are t_m/n with
    t_m the zeros of L_n^{(0.7)} (scipy.special.roots_genlaguerre, polished by Newton steps; checked
    against mpmath.laguerre roots to 4e-15 relative at n = 50..800)."""
    alpha = 0.7
    ns = np.array([50, 100, 200, 400, 800])
    scaling_err, form_err = [], []
    for n in ns:
        with np.errstate(over="ignore"):   # scipy's weights overflow at n = 800; the roots do not
            exact = roots_genlaguerre(n, alpha)[0][:3] / n
        s = edge_scaling_zeros(laguerre, 0, n, 3)
        z = edge_zeros(laguerre, 0, n, 3)
        assert z.kind == "hard" and z.alpha == pytest.approx(alpha) and z.verified, z.message
        assert z.checks["imag_ratio"] < 1e-12
        assert np.allclose(z.model_zeros, -bessel_zeros(alpha, 3) ** 2 / 4)
        scaling_err.append(np.max(np.abs(s.offsets / exact - 1)))
        form_err.append(np.max(np.abs(z.offsets / exact - 1)))
        # the nearest zeros by a factor n^{-2}: the Bessel scaling
        assert np.all(np.diff(z.zeros) > 0) and z.zeros[0] * n ** 2 == pytest.approx(bessel_zeros(alpha, 1)[0] ** 2 / 4,
                                                                                      rel=5.0 / n)
    scaling_err, form_err = np.array(scaling_err), np.array(form_err)
    assert abs(_slope(ns, scaling_err) + 1) < 0.1, scaling_err
    assert abs(_slope(ns, form_err) + 2) < 0.1, form_err
    # the relative error of the scaling prediction is (N - n)/n with N = n + (alpha + 1)/2, the
    # effective degree of the Bessel approximation x_m ~ j_m^2/(4 n N) of Laguerre zeros (Tricomi;
    # e.g. Szego, Orthogonal Polynomials, 1975, Thm 8.9.2 -- from memory)
    assert ns[-1] * scaling_err[-1] == pytest.approx((alpha + 1) / 2, rel=0.01)
    assert form_err[-1] < 1e-6


def test_hard_edge_zeros_of_jacobi_at_both_edges(jacobi_edge_offsets):
    """V = 0 on [-1, 1] with h = (1-x)^0.5 (1+x)^-0.3, degree n: the Jacobi polynomial P_n^{(0.5,-0.3)}
    (scipy.special.roots_jacobi; near the edges e -+ x_m is polished with mpmath.jacobi). Both edges
    are hard, the left one with the conjugated Bessel parametrix."""
    on = IntervalSet([(-1.0, 1.0)])
    alpha, beta = 0.5, -0.3
    pr = predictor(solve(Field.from_expression("0"), on=on), parse_factor(f"(1-x)^{alpha}*(1+x)^{beta}", on=on))
    ns = np.array([20, 40, 80, 160, 320])
    for index, exponent in ((1, alpha), (0, beta)):
        e = pr.g.edge_points[index]
        scaling_err, form_err = [], []
        for n in ns:
            exact = jacobi_edge_offsets(n, alpha, beta, e, 3)
            s = edge_scaling_zeros(pr, index, n, 3)
            z = edge_zeros(pr, index, n, 3)
            assert z.alpha == pytest.approx(exponent) and z.verified, z.message
            scaling_err.append(np.max(np.abs(s.offsets / exact - 1)))
            form_err.append(np.max(np.abs(z.offsets / exact - 1)))
        scaling_err, form_err = np.array(scaling_err), np.array(form_err)
        assert abs(_slope(ns, scaling_err) + 1) < 0.1, (index, scaling_err)
        assert abs(_slope(ns, form_err) + 2) < 0.1, (index, form_err)
        # 1 - x_m ~ j_m^2/(2N^2) with N = n + (alpha+beta+1)/2 (Szego 1975, Thm 8.1.2, Mehler-Heine;
        # from memory): the scaling prediction is off by 2(N - n)/n = (alpha + beta + 1)/n
        assert ns[-1] * scaling_err[-1] == pytest.approx(alpha + beta + 1, rel=0.02)


def test_soft_edge_zeros_of_hermite():
    """V = x^2/2: p_n(x) is H_n(x (n/2)^{1/2}) up to a constant, zeros t_m (2/n)^{1/2}
    (scipy.special.roots_hermite). Scaling prediction O(1/n), Airy form O(1/n^2)."""
    pr = predictor(solve(Field.from_expression("x**2/2")))
    ns = np.array([100, 200, 400, 800, 1600])
    scaling_err, form_err = [], []
    for n in ns:
        exact = roots_hermite(n)[0][::-1][:3] * np.sqrt(2.0 / n)
        s = edge_scaling_zeros(pr, 1, n, 3)
        z = edge_zeros(pr, 1, n, 3)
        assert z.kind == "soft" and z.verified and z.checks["imag_ratio"] < 1e-12, z.message
        scaling_err.append(np.max(np.abs(s.zeros - exact)))
        form_err.append(np.max(np.abs(z.zeros - exact)))
        left = edge_zeros(pr, 0, n, 3)
        assert np.allclose(left.zeros, -z.zeros, rtol=0, atol=1e-13)   # the field is even
    assert abs(_slope(ns, scaling_err) + 1) < 0.1, scaling_err
    assert abs(_slope(ns, form_err) + 2) < 0.1, form_err
    assert form_err[-1] < 1e-8


def test_soft_edge_zeros_of_a_quartic_field_against_direct_zeros():
    """x^4/4 + x/2 (no closed form): zeros of p_n from workbench.polynomials (eigenvalues of the Jacobi
    matrix of directly computed coefficients), both edges; Airy form O(1/n^2)."""
    field = Field.from_expression("x**4/4 + x/2")
    mu = solve(field, on=IntervalSet.real_line())
    pr = predictor(mu)
    ns = np.array([100, 200, 400, 800])
    err = []
    for n in ns:
        x = zeros(recurrence_coefficients(Weight(field, n), n, measure=mu), n)
        worst = 0.0
        for index, ref in ((1, x[::-1][:3]), (0, x[:3])):
            z = edge_zeros(pr, index, n, 3)
            assert z.verified, z.message
            worst = max(worst, np.max(np.abs(z.zeros - ref)))
        err.append(worst)
    assert abs(_slope(ns, err) + 2) < 0.15, err


def test_edge_zeros_refuse_bad_requests(laguerre):
    from equilibrium.errors import InputError
    with pytest.raises(InputError):
        edge_zeros(laguerre, 0, 100, 3, order=-1)
    with pytest.raises(InputError):
        edge_zeros(laguerre, 5, 100, 3)
    with pytest.raises(InputError):
        edge_zeros(laguerre, 0, 0, 3)
    with pytest.raises(InputError):
        edge_zeros(laguerre, 0, 100, 0)


def test_local_variable_next_to_hard_edges_keeps_its_digits():
    """V = 0 on [-1, 1]: G(z) = (z^2 - 1)^{-1/2} (the arcsine law; common knowledge), so h r = -2/(z^2-1)^{1/2},
    phi_1(x) = -2i arccos(x) on the band from above and f_1 = phi^2/16 = -arccos(x)^2/4; at the left edge
    f_{-1} = -arccos(-x)^2/4 (referee: mpmath at 30 digits).  Distances 1e-10 … 0.3 from the edges:
    relative rounding, where summing h r at the rounded s = e + t(z - e) had lost 5e-10 at 1e-4 and
    4e-6 at 1e-8."""
    from gfunction import g_function

    g = g_function(solve(Field.from_expression("0"), on=IntervalSet([(-1.0, 1.0)])))
    for d in (1e-10, 1e-8, 1e-6, 1e-4, 1e-2, 0.3):
        for index, x in ((1, 1.0 - d), (0, -1.0 + d)):
            f = g.local_variable(index, np.array([x + 0j]))[0]
            with mpmath.workdps(30):
                ref = -mpmath.acos(mpmath.mpf(x) if index == 1 else -mpmath.mpf(x)) ** 2 / 4
            assert abs(f.real / float(ref) - 1) < 1e-14, (index, d, f, ref)


def test_zeros_beyond_the_matching_disc_are_not_predicted(laguerre):
    # at n = 4 the fifth Laguerre zero lies beyond the disc (radius 4/3) around the hard edge 0:
    # no prediction there (NaN), counted in outside_disc, and the result stays verified
    z = edge_zeros(laguerre, 0, 4, 5)
    s = edge_scaling_zeros(laguerre, 0, 4, 5)
    for found in (z, s):
        assert found.verified and found.checks["outside_disc"] >= 1
        inside = np.isfinite(found.zeros)
        assert inside[0] and not inside[-1]
        assert np.all(np.abs(found.zeros[inside] - found.position) < 4.0 / 3.0)
