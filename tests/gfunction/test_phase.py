"""The phases nΩ reduced exactly (gfunction.phase), against exact rational arithmetic
(Python's fractions.Fraction: every double is a rational number, IEEE 754)."""

from fractions import Fraction

import numpy as np

from gfunction.phase import exact_product, reduced_phase


def test_exact_product_is_exact():
    rng = np.random.default_rng(5)
    a = np.floor(rng.uniform(1, 1e12, 200))
    b = rng.uniform(0, 1, 200)
    p, e = exact_product(a, b)
    for ai, bi, pi, ei in zip(a, b, p, e):
        assert Fraction(float(pi)) + Fraction(float(ei)) == Fraction(float(ai)) * Fraction(float(bi))


def test_reduced_phase_against_fractions():
    rng = np.random.default_rng(6)
    omega = rng.uniform(0, 1, 50)
    low = omega * rng.uniform(-1, 1, 50) * 2.0 ** -53          # a trailing part as refinement gives
    for n in (1.0, 3000.0, 1e6, 1e9, 123456789012.0):
        for modulus in (1.0, 2.0):
            w = reduced_phase(n, omega, low, modulus)
            for wi, om, lo in zip(w, omega, low):
                exact = Fraction(n) * (Fraction(float(om)) + Fraction(float(lo)))
                exact -= Fraction(modulus) * (exact // Fraction(modulus))     # a float factor would round
                err = abs(Fraction(float(wi)) - exact)
                err = min(err, abs(err - Fraction(modulus)))            # 0 and modulus are one point
                assert err <= Fraction(2.0 ** -52), (n, float(err))
    # the plain product loses the digits: at n = 10^9 it is off by ~1e-8 where this is off by ~1e-16
    n, om = 1e9 + 7, 0.6103001831975395
    plain = (n * om) % 1.0
    exact = Fraction(n) * Fraction(om)
    exact -= exact // 1
    assert abs(Fraction(plain) - exact) > 1e-10 > abs(Fraction(float(reduced_phase(n, om))) - exact) * 1e5
