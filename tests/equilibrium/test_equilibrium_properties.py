"""Property tests over random confining polynomial fields and analytic non-polynomial fields (hypothesis).

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


@st.composite
def analytic_fields(draw):
    """Confining non-polynomial fields, analytic near the real line, from a few families:
    their V' needs Chebyshev series of degree 30 to 300 on the window."""
    f = st.floats
    family = draw(st.sampled_from(["cosh", "log", "gauss", "sin", "tanh"]))
    if family == "cosh":
        return f"{draw(f(0.2, 2)):.4f}*cosh({draw(f(0.5, 2)):.4f}*x) + {draw(f(-1, 1)):.4f}*x - {draw(f(0, 3)):.4f}*x**2"
    if family == "log":
        return f"x**2/2 - {draw(f(0, 0.9)):.4f}*log(1 + {draw(f(0.2, 3)):.4f}*x**2) + {draw(f(-0.5, 0.5)):.4f}*x"
    if family == "gauss":
        return (f"x**4/4 - {draw(f(0, 3)):.4f}*x**2/2 - {draw(f(0, 4)):.4f}"
                f"*exp(-({draw(f(0.3, 3)):.4f}*(x - {draw(f(-1.5, 1.5)):.4f}))**2)")
    if family == "sin":
        return f"{draw(f(0.05, 1)):.4f}*x**6 - {draw(f(0, 2)):.4f}*x**2 + {draw(f(0, 1)):.4f}*sin({draw(f(0.5, 3)):.4f}*x)"
    return f"{draw(f(1.1, 3)):.4f}*sqrt(1 + x**2) + {draw(f(-1, 1)):.4f}*x + {draw(f(-1, 1)):.4f}*tanh({draw(f(0.5, 4)):.4f}*x)"


def _verified_or_says_so(field):
    try:
        mu = solve(field, on_failure="mark")
    except NumericalFailure as failure:
        assert str(failure)  # a failure always explains itself
        return
    if not mu.verified:
        assert "not verified" in mu.message
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


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(confining_polynomials())
def test_verified_or_says_so(coefficients):
    _verified_or_says_so(Field.from_coefficients(coefficients))


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(analytic_fields())
def test_analytic_fields_verified_or_say_so(text):
    _verified_or_says_so(Field.from_expression(text))
