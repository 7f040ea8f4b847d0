"""Direct tests of equilibrium.algebraic: the finite problem (1)-(4) of its module docstring for a
given band structure, against closed forms, without the search of equilibrium.search.

References:
* V = x²/2 on R: the semicircle ψ = (1/2π) √(4 - x²) on [-2, 2] (Wigner; Saff & Totik,
  Logarithmic Potentials with External Fields, 1997, IV.5), i.e. h = 1 in (1);
* V = x⁴/4 - t x²/2, t > 2: two bands [-b, -a] ∪ [a, b], a² = t - 2, b² = t + 2 and
  ψ = (1/2π) |x| √((b² - x²)(x² - a²)) (Bleher & Its, Ann. Math. 150 (1999) 185-266, from memory;
  equivalently V'(x)/2 = x³/2 - t x/2 = (1/2) x R^{1/2}(x) + O(1/x) at infinity), i.e. h = x;
* V = γx on [-1, 1] with both ends hard: ψ = (1 - γx/2)/(π √(1 - x²)) (Saff & Totik IV.3, the
  signed measure of an interval, from memory; it integrates to 1 and PV∫ √(1-s²)/(s-x) ds = -πx),
  i.e. h = γx - 2 in (1);
* the signs of R^{1/2}/Q_h on gaps and bands from equilibrium.radical, whose branch table is checked
  against analytic continuation in tests/equilibrium/test_radical.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.polynomial import chebyshev as C

from equilibrium import Field
from equilibrium.algebraic import (BandStructure, band_sign, distance_product, field_window, gap_rule, gap_sign,
                                   monic_leading, q_hard, solve_structure)
from equilibrium.quadrature import angular_rule
from equilibrium.radical import sqrt_R


def h_on_window(window, state) -> np.ndarray:
    """h of (1) as Chebyshev coefficients padded to 8 terms."""
    h = np.zeros(max(8, state.h.size))
    h[: state.h.size] = state.h
    return h[:8]


def test_semicircle_from_a_wrong_start():
    window = field_window(Field.from_expression("x^2/2"), -3.0, 3.0)
    solution = solve_structure(window, BandStructure(np.array([-1.7, 2.4]), np.array([False, False])))
    assert solution.converged and solution.residual_norm < 1e-13
    assert np.allclose(solution.state.structure.ends, [-2.0, 2.0], atol=1e-14)
    assert np.allclose(h_on_window(window, solution.state), [1, 0, 0, 0, 0, 0, 0, 0], atol=1e-14)


def test_symmetric_two_band_quartic():
    t = 3.0
    a, b = np.sqrt(t - 2), np.sqrt(t + 2)
    window = field_window(Field.from_expression("x^4/4 - 3*x^2/2"), -3.0, 3.0)
    start = BandStructure(np.array([-2.1, -0.9, 1.1, 2.3]), np.zeros(4, dtype=bool))
    solution = solve_structure(window, start)
    assert solution.converged and solution.residual_norm < 1e-13
    assert np.allclose(solution.state.structure.ends, [-b, -a, a, b], atol=1e-13)
    # h = x = d t on the window (c = 0, d = 3)
    assert np.allclose(h_on_window(window, solution.state), [0, 3, 0, 0, 0, 0, 0, 0], atol=1e-13)


@pytest.mark.parametrize("gamma", [0.0, 1.0, -1.5])
def test_linear_field_on_an_interval_with_hard_ends(gamma):
    window = field_window(Field.from_coefficients([0.0, gamma]), -1.0, 1.0)
    solution = solve_structure(window, BandStructure(np.array([-1.0, 1.0]), np.array([True, True])))
    assert solution.converged
    assert np.allclose(h_on_window(window, solution.state), [-2, gamma, 0, 0, 0, 0, 0, 0], atol=1e-14)


def test_monic_leading_is_numpys_chebyshev_coefficient():
    # x^n with x = c + d t: the T_n coefficient is d^n / 2^{n-1} (leading coefficient of T_n: 2^{n-1})
    for n in range(6):
        assert abs(monic_leading(1.7, n) - 1.7 ** n * C.poly2cheb([0] * n + [1])[-1]) < 1e-14 * 1.7 ** n


STRUCTURES = [
    BandStructure(np.array([-2.0, 1.0]), np.array([False, True])),
    BandStructure(np.array([-2.0, -1.0, 1.0, 2.0]), np.array([False, False, False, False])),
    BandStructure(np.array([-2.0, -1.0, 1.0, 2.0]), np.array([True, False, True, False])),
    BandStructure(np.array([-3.0, -1.5, -0.5, 0.25, 1.0, 2.5]), np.array([True, False, False, True, False, True])),
]


@pytest.mark.parametrize("structure", STRUCTURES, ids=range(len(STRUCTURES)))
def test_signs_and_weights_agree_with_the_one_radical(structure):
    """gap_sign: sign of R^{1/2}/Q_h on the gap (real there); band_sign: the sign of
    -Im G_+ / (h ∏|x - e|^σ) = Im(R_+^{1/2}/Q_h)/|R^{1/2}/Q_h| on the band, from (1);
    distance_product: |R^{1/2}/Q_h| · dx/dθ at the nodes of a rule."""
    e = structure.ends
    for j in range(structure.bands - 1):
        rule = gap_rule(structure, j)
        ratio = sqrt_R(rule.x, e) / q_hard(rule.x, structure)
        assert np.max(np.abs(ratio.imag)) < 1e-12 * np.max(np.abs(ratio))
        assert np.all(np.sign(ratio.real) == gap_sign(structure, j))
        weight = distance_product(structure, 2 * j + 1, 2 * j + 2, rule)
        assert np.allclose(weight, np.abs(ratio) * rule.dx_dtheta, rtol=1e-10)
    for j in range(structure.bands):
        rule = angular_rule(e[2 * j], e[2 * j + 1], points=8)
        ratio = sqrt_R(rule.x, e) / q_hard(rule.x, structure)
        assert np.max(np.abs(ratio.real)) < 1e-12 * np.max(np.abs(ratio))
        assert np.all(np.sign(ratio.imag) == band_sign(structure, j))
        weight = distance_product(structure, 2 * j, 2 * j + 1, rule, include_jacobian=False)
        assert np.allclose(weight, np.abs(ratio), rtol=1e-10)
