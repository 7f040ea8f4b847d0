"""The comparison functions of workbench.compare, on plain arrays (no case, no file)."""

from __future__ import annotations

import doctest
import math

import numpy as np
import pytest
from scipy.special import roots_hermite

import workbench.compare as compare
from equilibrium.errors import InputError
from workbench.compare import (
    edge_scaled,
    band_counts,
    finite_maximum,
    fit_rate,
    gap_zero_counts,
    gap_zeros,
    zeros_from_edge,
    nearest_zero_distances,
    rounding_floor,
    scaled_maximum,
    value_normalisation,
)


def test_examples_in_docstrings_hold():
    assert doctest.testmod(compare).failed == 0


# ----------------------------------------------------------------------- rates
def test_fit_rate_recovers_c_n_to_the_minus_two():
    n = np.array([25, 50, 100, 200, 400, 800.0])
    fit = fit_rate(n, 7.5 * n ** -2.0)
    assert fit.verified and fit.message == "" and fit.points == 6
    assert abs(fit.slope + 2) < 1e-13 and abs(fit.intercept - math.log(7.5)) < 1e-12
    assert fit.stderr < 1e-13 and fit.residual < 1e-13
    assert fit.checks == {"points": 6.0, "residual": fit.residual}


def test_fit_rate_matches_scipy_linregress():
    from scipy.stats import linregress  # outside reference for the OLS slope and its standard error

    rng = np.random.default_rng(1)
    n = np.array([10, 20, 40, 80, 160.0])
    err = 3.0 * n ** -1.5 * np.exp(0.05 * rng.standard_normal(n.size))
    fit = fit_rate(n, err)
    ref = linregress(np.log(n), np.log(err))
    assert fit.slope == pytest.approx(ref.slope, rel=1e-12)
    assert fit.stderr == pytest.approx(ref.stderr, rel=1e-10)
    assert fit.intercept == pytest.approx(ref.intercept, rel=1e-12)


def test_fit_rate_leaves_out_what_carries_no_rate():
    n = np.array([10, 20, 40, 80, 160.0])
    err = 2.0 * n ** -1.0
    err[[1, 3]] = [np.nan, 1e-17]           # a missing comparison and one at rounding level
    fit = fit_rate(n, err, floor=rounding_floor())
    assert fit.points == 3 and abs(fit.slope + 1) < 1e-13 and fit.verified
    two = fit_rate([10, 20], [1.0, 0.5])
    assert not two.verified and math.isnan(two.stderr) and "points = 2 (at least 3e+00)" in two.message
    none = fit_rate(n, np.full(n.size, 1e-17), floor=rounding_floor())
    assert not none.verified and none.points == 0 and math.isnan(none.slope)
    same = fit_rate([10, 10, 10], [1.0, 0.5, 0.2])
    assert not same.verified and "not distinct" in same.message
    with pytest.raises(InputError, match="same length"):
        fit_rate([1, 2, 3], [1.0, 2.0])


def test_scaled_maximum_shows_one_over_n_with_a_quasi_periodic_coefficient():
    # e_n = (1 + 0.5 sin n)/n: a fitted slope over few n wanders, n e_n stays below 1.5
    n = np.arange(50, 400, 7.0)
    err = (1 + 0.5 * np.sin(n)) / n
    assert scaled_maximum(n, err) <= 1.5 and scaled_maximum(n, err, second_half=True) <= 1.5
    assert scaled_maximum(n, err, power=2.0) > 100
    assert math.isnan(scaled_maximum([1, 2], [np.nan, np.nan]))


# ----------------------------------------------------------------------- zeros
def _semicircle_quantile_zeros(n: int) -> np.ndarray:
    """F(x_j) = (j - 1/2)/n for the semicircle on [-2, 2], F(x) = 1/2 + x sqrt(4 - x²)/(4π) + arcsin(x/2)/π."""
    from scipy.optimize import brentq

    def F(x):
        return 0.5 + x * math.sqrt(4 - x * x) / (4 * math.pi) + math.asin(x / 2) / math.pi

    return np.array([brentq(lambda x, q=(j - 0.5) / n: F(x) - q, -2.0, 2.0, xtol=1e-15)
                     for j in range(1, n + 1)])


def test_nearest_zero_matching_on_hermite_roots_against_the_quantile_rule():
    # zeros of p_n for e^{-n x²/2} are sqrt(2/n) times those of H_n (scipy.special.roots_hermite,
    # weight e^{-t²}); the quantile rule of the semicircle (V = x²/2, support [-2, 2]) places them to
    # O(1/n) in the bulk (DKMVZ, Comm. Pure Appl. Math. 52 (1999) 1335-1425, the quantile form)
    ns = np.array([50, 100, 200, 400])
    worst = []
    for n in ns:
        exact = roots_hermite(int(n))[0] * math.sqrt(2.0 / n)
        rule = _semicircle_quantile_zeros(int(n))
        bulk = np.abs(rule) < 1.6                                   # the inner 80% of the band
        d = nearest_zero_distances(exact, rule[bulk])
        # in the bulk the errors are far below half the spacing: nearest = same index
        assert np.array_equal(d, np.abs(exact[bulk] - rule[bulk]))
        worst.append(float(d.max()))
    # measured: 1.30e-2, 7.46e-3, 3.84e-3, 1.90e-3; slope -0.93 over the four, -1.02 over the last doubling
    fit = fit_rate(ns, worst)
    assert fit.verified and -1.1 < fit.slope < -0.85, (worst, fit)
    assert fit_rate(ns[2:], worst[2:]).slope == pytest.approx(-1.0, abs=0.05)
    n_times = ns * np.asarray(worst)                                  # 0.65, 0.75, 0.77, 0.76: O(1/n)
    assert scaled_maximum(ns, worst) == n_times.max() and abs(n_times[-1] - n_times[-2]) < 0.02
    # the matching does not care about order or about zeros with no counterpart
    shuffled = np.random.default_rng(3).permutation(roots_hermite(50)[0])
    assert np.max(nearest_zero_distances(shuffled, roots_hermite(50)[0][10:20])) == 0.0
    assert np.isnan(nearest_zero_distances([], [0.5])).all()


def test_zeros_sorted_into_bands_and_gaps():
    support = [(-2.0, -1.0), (1.0, 2.0)]
    zeros = np.array([-2.0, -1.7, -1.0, 0.3, 1.1, 1.5, 2.0])
    assert band_counts(zeros, support).tolist() == [3, 3]              # ends belong to the bands
    assert gap_zeros(zeros, support).tolist() == [0.3]
    assert np.isnan(gap_zeros([-1.5, 0.2, 0.4, 1.5], support)).all()   # two zeros in the gap: no single one
    assert gap_zero_counts([-1.5, 0.2, 0.4, 1.5], support).tolist() == [2]
    assert gap_zeros(zeros, [(-2.0, 2.0)]).shape == (0,)
    assert band_counts(zeros, support).sum() + np.isfinite(gap_zeros(zeros, support)).sum() == zeros.size
    with pytest.raises(InputError, match="bands"):
        band_counts(zeros, [(1.0, 0.0)])
    right = zeros_from_edge([0.1, 0.5], 3)
    assert right[:2].tolist() == [0.5, 0.1] and np.isnan(right[2])
    assert zeros_from_edge(zeros, 2, "left").tolist() == [-2.0, -1.7]
    with pytest.raises(InputError, match="side"):
        zeros_from_edge(zeros, 2, "top")
    rows = finite_maximum([[np.nan, 2.0, 1.0], [np.nan, np.nan, np.nan]])
    assert rows[0] == 2.0 and np.isnan(rows[1]) and finite_maximum(np.zeros((3, 0))).shape == (3,)


def test_edge_scaling_of_hermite_zeros_at_a_soft_edge():
    # the largest zeros of p_n for e^{-n x²/2} against the Airy zeros (scipy.special.ai_zeros): with the
    # scale of the first zero, the next ones approach ι_j (Plancherel–Rotach; DLMF 18.16.iv, from memory)
    from scipy.special import ai_zeros

    iota = ai_zeros(4)[0]
    errors = []
    for n in (100, 400, 1600):
        x = zeros_from_edge(roots_hermite(n)[0] * math.sqrt(2.0 / n), 4)
        scaled = edge_scaled(x, x[:1], iota[0], 2.0)
        assert scaled[0] == pytest.approx(iota[0], rel=1e-15)
        errors.append(float(np.max(np.abs(scaled[1:] - iota[1:]))))
    # measured 0.29, 0.16, 0.094: they decrease (slope about -0.4 in n, pre-asymptotic at these n)
    assert errors[0] > errors[1] > errors[2], errors
    assert fit_rate([100, 400, 1600], errors).slope < -0.3, errors


# --------------------------------------------------------------- normalisation
def test_value_normalisation_of_the_scaled_hermite_weight():
    # e^{-n x²/2}: a_k = sqrt(k/n), ∫w = sqrt(2π/n), ℓ = 1 (semicircle on [-2, 2]).  From the
    # Hermite leading coefficients (DLMF 18.3, rescaled) γ_n = n^{n/2} / sqrt(n! sqrt(2π/n)), so
    # γ_n e^{-nℓ/2} = O(1) in n
    values = []
    for n in (10, 100, 1000):
        k = np.arange(n + 1)
        log_mass = 0.5 * math.log(2 * math.pi / n)
        got = value_normalisation(log_mass, np.sqrt(k / n), n, 1.0)
        exact = math.exp(0.5 * n * math.log(n) - 0.5 * math.lgamma(n + 1) - 0.5 * log_mass - 0.5 * n)
        assert got == pytest.approx(exact, rel=1e-12)
        values.append(got)
    # Stirling: n! = sqrt(2πn) (n/e)^n (1 + O(1/n)), so γ_n e^{-n/2} -> (2π)^{-1/4} (2π)^{-1/4} = (2π)^{-1/2}
    assert abs(values[-1] * math.sqrt(2 * math.pi) - 1) < 1e-3
    with pytest.raises(InputError, match="a_1 .. a_n"):
        value_normalisation(0.0, [0.0, 1.0], 5, 0.0)


def test_edge_scaling_of_jacobi_zeros_at_a_hard_edge():
    # Legendre (α = β = 0) on [-1, 1]: near x = 1 the zeros are 1 - j_{0,m}²/(2n²) (1 + O(1/n))
    # (Mehler–Heine; DLMF 18.11.5, from memory of the form); scaled by the first zero, the next
    # ones approach the model zeros -j_{0,m}²/4 (scipy.special.jn_zeros for j_{0,m})
    from scipy.special import jn_zeros, roots_legendre

    model = -jn_zeros(0, 4) ** 2 / 4
    errors = []
    for n in (50, 200, 800):
        x = zeros_from_edge(roots_legendre(n)[0], 4)
        scaled = edge_scaled(x, x[:1], model[0], 1.0)
        errors.append(float(np.max(np.abs(scaled[1:] / model[1:] - 1))))
    # measured 4.3e-3, 2.8e-4, 1.7e-5: slope -1.99 (the scaling of the first zero absorbs the 1/n part)
    assert errors[0] > errors[1] > errors[2], errors
    assert fit_rate([50, 200, 800], errors).slope == pytest.approx(-2.0, abs=0.1), errors
