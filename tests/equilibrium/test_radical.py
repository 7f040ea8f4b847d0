"""The one R^{1/2}: branch on both sides of every band and gap, for 1, 2 and 3 bands.

Two independent references:
* the sign table derived from counting the ends left of x (each factor
  (x - e)^{1/2}_+ is |x - e|^{1/2} right of e and i|x - e|^{1/2} left of it; the
  table is written out in the docstrings of equilibrium.radical and of the
  period formulas in gfunction/curve.py);
* analytic continuation of y with y^2 = R(z), started at y = +|R|^{1/2} far right
  on the real axis (R^{1/2} ~ z^k) and carried along a path in the upper (or lower)
  half plane by always taking the root of R(z) nearest the previous value: no
  principal root of a factor is used.
"""

from __future__ import annotations

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from equilibrium.radical import sqrt_R

SUPPORTS = {
    1: [(-1.0, 2.0)],
    2: [(-2.0, -1.0), (1.0, 2.0)],
    3: [(-3.0, -1.5), (-0.5, 0.25), (1.0, 2.5)],
}


def sign_table(x: float, support) -> complex:
    """R^{1/2}_+(x) from the table: (-1)^{k-j} times 1 (gap j) or i (band j)."""
    ends = np.ravel(support)
    ends_right = int(np.sum(ends > x))         # factors (x - e) with x < e: each gives a factor i
    modulus = np.sqrt(abs(np.prod(x - ends)))
    # i^m for m ends right of x: m even -> (-1)^{m/2} (a gap or outside), m odd -> i (-1)^{(m-1)/2} (a band)
    return modulus * (1j ** ends_right)


def continued(x: float, support, side: int, steps: int = 4000) -> complex:
    """y(x + side i 0) by continuation of y^2 = R(z) from far right along a half circle."""
    ends = np.ravel(support)
    centre, radius = 0.5 * (x + ends[-1] + 10.0), 0.5 * (ends[-1] + 10.0 - x)
    theta = np.linspace(0.0, np.pi, steps)
    path = centre + radius * np.exp(1j * side * theta)      # from x_far = e_max + 10 to x
    path[-1] = x + side * 1e-300j
    y = np.sqrt(np.prod(path[0] - ends))                     # positive: R > 0 right of all ends
    for z in path[1:]:
        r = np.sqrt(complex(np.prod(z - ends)))
        y = r if abs(r - y) < abs(r + y) else -r
    return y


def sample_points(support):
    """The midpoint of every band and gap, a point just inside every end, and the two outer rays."""
    ends = np.ravel(support)
    mids = 0.5 * (ends[:-1] + ends[1:])
    near = np.concatenate([ends[:-1] + 1e-9, ends[1:] - 1e-9])
    return np.sort(np.concatenate([[ends[0] - 0.7, ends[-1] + 0.7], mids, near]))


@pytest.mark.parametrize("bands", [1, 2, 3])
def test_branch_on_both_sides_of_every_band_and_gap(bands):
    support = SUPPORTS[bands]
    ends = np.ravel(support)
    x = sample_points(support)
    table = np.array([sign_table(t, support) for t in x])
    above = np.array([continued(t, support, +1) for t in x])
    below = np.array([continued(t, support, -1) for t in x])
    scale = np.abs(table)
    # the continuation agrees with the table from above; below it is the conjugate of the table
    # (on a band -R_+, in a gap or outside the same value)
    assert np.allclose(above, table, rtol=1e-9, atol=1e-12)
    assert np.allclose(below, np.conj(table), rtol=1e-9, atol=1e-12)
    in_band = np.array([any(a < t < b for a, b in support) for t in x])
    assert np.allclose(below[in_band], -table[in_band], rtol=1e-9, atol=1e-12)
    assert np.allclose(below[~in_band], table[~in_band], rtol=1e-9, atol=1e-12)
    # the one R^{1/2}: real points (+0.0, -0.0 or float) give the value from above,
    # x ± i eps the two sides
    for z in (x.astype(float), x + 0.0j, np.array([complex(t, -0.0) for t in x])):
        assert np.allclose(sqrt_R(z, ends), table, rtol=1e-13, atol=1e-15 * scale.max())
    eps = 1e-13
    assert np.allclose(sqrt_R(x + 1j * eps, ends), table, rtol=1e-6, atol=1e-6)
    assert np.allclose(sqrt_R(x - 1j * eps, ends), np.conj(table), rtol=1e-6, atol=1e-6)


@pytest.mark.parametrize("bands", [1, 2, 3])
def test_behaviour_at_infinity_and_symmetry(bands):
    ends = np.ravel(SUPPORTS[bands])
    z = 1e4 * np.exp(1j * np.linspace(-np.pi + 0.01, np.pi - 0.01, 41))
    # R^{1/2} / z^k -> 1 in every direction (first sheet)
    assert np.allclose(sqrt_R(z, ends) / z ** bands, 1.0, atol=1e-3)
    w = np.array([0.3 + 0.7j, -2.2 + 0.01j, 1.7 + 3j])
    assert np.allclose(sqrt_R(np.conj(w), ends), np.conj(sqrt_R(w, ends)), rtol=1e-14)


def test_the_issue_example_is_the_same_through_every_route():
    """x = conj(1.5 + 0j) on [-2, -1] ∪ [1, 2]: +1.479i everywhere (issue 11 measured −1.479i,
    +1.479i and NaN from three copies)."""
    from gfunction.curve import curve_of_bands

    support = SUPPORTS[2]
    x = np.conj(np.array([1.5 + 0j]))
    expected = sign_table(1.5, support)
    assert abs(expected - 1.4790199457749j) < 1e-12          # sqrt(3.5 * 2.5 * 0.5 * 0.5)
    assert np.allclose(sqrt_R(x, np.ravel(support)), expected, rtol=1e-14)
    assert np.allclose(sqrt_R(np.array([1.5]), np.ravel(support)), expected, rtol=1e-14)
    assert np.allclose(curve_of_bands(support).sqrt_R(x), expected, rtol=1e-14)
    # a measure with exactly these bands: V = 0 on Σ = support (four hard ends), sqrt_ratio = R^{1/2}/Q_h
    mu = solve(Field.zero(), IntervalSet(support))
    ends = np.ravel(mu.support)
    q_hard = np.prod(1.5 - ends)
    assert np.allclose(mu.sqrt_ratio(x), expected / q_hard, rtol=1e-13)
