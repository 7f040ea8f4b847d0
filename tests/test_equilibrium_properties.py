"""Property tests over random confining polynomial fields (hypothesis).

Every result either passes all of its verification figures, or says it is
unverified and names the figures; and a verified result really has the
properties the figures claim (checked here on independent sample points)."""

import math

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from equilibrium import Field, NumericalFailure, solve


@st.composite
def confining_polynomials(draw):
    degree = draw(st.sampled_from([2, 4, 6, 8, 10]))
    lower = [draw(st.floats(-3.0, 3.0, allow_nan=False, allow_infinity=False)) for _ in range(degree)]
    leading = draw(st.floats(0.05, 2.0))
    return [0.0] + lower[1:] + [leading]


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(confining_polynomials())
def test_verified_or_says_so(coefficients):
    field = Field.from_coefficients(coefficients)
    try:
        mu = solve(field)
    except NumericalFailure as failure:
        assert str(failure)  # a failure always explains itself
        return
    if not mu.verified:
        assert "unverified" in mu.message
        return
    support = np.array(mu.support)
    assert np.all(np.diff(support.ravel()) > 0)
    assert abs(mu.masses.sum() - 1) < 1e-10
    assert abs(float(mu.distribution(np.array([support[-1, 1]]))[0]) - 1) < 1e-10
    for a, b in mu.support:
        x = a + (b - a) * np.linspace(0.01, 0.99, 41)
        assert np.all(mu.density(x) >= -1e-10 * np.max(mu.density(x)))
    gaps = [(support[j, 1], support[j + 1, 0]) for j in range(len(support) - 1)]
    span = support[-1, 1] - support[0, 0]
    regions = gaps + [(support[-1, 1], support[-1, 1] + span), (support[0, 0] - span, support[0, 0])]
    for lo, hi in regions:
        x = np.linspace(lo, hi, 61)[1:-1]
        assert np.all(mu.effective_potential(x) >= -1e-9 * max(1.0, abs(mu.lagrange)))
