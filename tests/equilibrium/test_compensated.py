"""Error-free transformations and the compensated Horner scheme against mpmath at 50 digits."""

from __future__ import annotations

import math

import mpmath
import numpy as np

from equilibrium import Field, IntervalSet
from equilibrium.compensated import compensated_horner, scaled_polynomial, split, two_prod, two_sum
from equilibrium.weight import JacobiFactor, Weight

mpmath.mp.dps = 50


def exact(values) -> list:
    return [mpmath.mpf(float(v)) for v in np.ravel(values)]


def test_two_sum_and_two_prod_are_exact():
    # exactness of TwoSum (Knuth, TAOCP 2, §4.2.2 Thm B) and of Dekker's product (Numer.
    # Math. 18 (1971) 224, Thm 4.7), checked in 50-digit mpmath arithmetic (exact here: the
    # sums and products of two doubles need at most 106 bits and far fewer than 50 digits' range)
    rng = np.random.default_rng(1)
    a = rng.standard_normal(400) * 10.0 ** rng.integers(-8, 9, 400)
    b = rng.standard_normal(400) * 10.0 ** rng.integers(-8, 9, 400)
    s, e = two_sum(a, b)
    p, f = two_prod(a, b)
    h, l = split(a)
    for i in range(a.size):
        A, B = mpmath.mpf(float(a[i])), mpmath.mpf(float(b[i]))
        assert mpmath.mpf(float(s[i])) + mpmath.mpf(float(e[i])) == A + B
        assert mpmath.mpf(float(p[i])) + mpmath.mpf(float(f[i])) == A * B
        assert mpmath.mpf(float(h[i])) + mpmath.mpf(float(l[i])) == A
    assert np.all(s == a + b) and np.all(p == a * b)


def _reference(coefficients, x) -> list:
    """Σ c_j x^j in 50-digit mpmath (the doubles c_j and x taken as exact)."""
    c = [mpmath.mpf(float(v)) for v in coefficients]
    return [mpmath.polyval(c[::-1], X) for X in exact(x)]


def test_compensated_horner_is_faithful_and_twice_as_accurate():
    # Graillat, Langlois & Louvet, "Compensated Horner scheme" (RR2005-04, 2005), Thm 3.1:
    # |s + e - p(x)| <= γ_{2d}² p̃(|x|); the rounded result fl(s + e) is within one ulp of p(x)
    coefficients = [0.0, 0.2, -1.5, 0.0, 0.25]                     # x⁴/4 - 1.5x² + 0.2x
    x = np.linspace(-3.1, 3.1, 2001)
    s, e = compensated_horner(coefficients, x)
    reference = _reference(coefficients, x)
    d = len(coefficients) - 1
    u = 2.0**-53
    gamma = 2 * d * u / (1 - 2 * d * u)
    absolute = np.polynomial.polynomial.polyval(np.abs(x), np.abs(coefficients))  # p̃(|x|)
    worst_ulps = 0.0
    for i in range(x.size):
        pair_error = abs(mpmath.mpf(float(s[i])) + mpmath.mpf(float(e[i])) - reference[i])
        assert pair_error <= gamma**2 * absolute[i], (x[i], pair_error)
        rounded = float(s[i] + e[i])
        ulp = math.ulp(float(reference[i])) if reference[i] != 0 else 2.0**-1074
        worst_ulps = max(worst_ulps, float(abs(mpmath.mpf(rounded) - reference[i]) / ulp))
    assert worst_ulps <= 1.0
    # the plain Horner value is not that good everywhere (the reason for the scheme)
    plain = np.polynomial.polynomial.polyval(x, coefficients)
    plain_ulps = max(float(abs(mpmath.mpf(float(plain[i])) - reference[i]) / math.ulp(float(reference[i])))
                     for i in range(x.size) if reference[i] != 0)
    assert plain_ulps > 1.0


def test_scaled_polynomial_at_large_n_is_one_ulp_of_its_final_value():
    # -n V(x) - c at n = 10^5 (the log weights of the direct engine), c near the maximum:
    # hi is the double nearest to the 50-digit value, hi + lo agrees with it to ~eps² relative
    coefficients = [0.0, 0.2, -1.5, 0.0, 0.25]
    n = 1e5
    x = np.linspace(-2.6, 2.6, 1501)
    shift = 2.6e5
    hi, lo = scaled_polynomial(-n, coefficients, x, shift)
    reference = _reference(coefficients, x)
    for i in range(x.size):
        value = -mpmath.mpf(n) * reference[i] - mpmath.mpf(shift)
        assert abs(mpmath.mpf(float(hi[i])) - value) <= 0.5 * math.ulp(float(hi[i])) * (1 + 1e-10)
        assert abs(mpmath.mpf(float(hi[i])) + mpmath.mpf(float(lo[i])) - value) <= 1e-28 * abs(value) + 1e-300


def test_weight_pair_matches_the_weight_and_mpmath():
    # Weight.log_weight_pair: the pair of a polynomial field with a Jacobi factor against
    # 50-digit mpmath (-n V + β log(x - a)); the plain log_weight agrees with hi to its own rounding
    field = Field.from_expression("x**4/4 - 1.5*x**2 + 0.2*x")
    weight = Weight(field, 1e5, on=IntervalSet.parse("-3:inf"), factors=(JacobiFactor(-3.0, math.inf, 0.0, 0.5),))
    x = np.linspace(-2.5, 2.5, 301)
    hi, lo = weight.log_weight_pair(x)
    plain = weight.log_weight(x)
    reference = _reference(field.polynomial, x)
    for i in range(x.size):
        value = -mpmath.mpf(1e5) * reference[i] + 0.5 * mpmath.log(mpmath.mpf(float(x[i])) + 3)
        # the factor enters as a double (its own rounding, ~1 ulp of an order-one number)
        assert abs(mpmath.mpf(float(hi[i])) + mpmath.mpf(float(lo[i])) - value) <= 4e-16
    assert np.max(np.abs(plain - hi)) < 1e-9 and np.max(np.abs(plain - hi)) > 0  # plain Horner at n = 10^5
    # a field that is not a polynomial keeps the plain path (no low part)
    cosh = Weight(Field.from_expression("cosh(x)"), 10.0)
    hi, lo = cosh.log_weight_pair(x)
    assert np.all(lo == 0) and np.array_equal(hi, cosh.log_weight(x))
