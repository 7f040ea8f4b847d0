"""Ω_j and the band ends in extended precision (equilibrium.refinement).

Sources: the two-band quartic x⁴/4 − t x²/2 (t > 2) has bands ±[√(t−2), √(t+2)] and Ω = 1/2 by
symmetry (Bleher and Its, Ann. Math. 150 (1999), the symmetric quartic -- from memory); V = x on
[0, ∞) has the Marchenko–Pastur band [0, 4] (common knowledge: the Laguerre scaling of DLMF 18.16.8
-- from memory); V = 0 on a set symmetric about 0 has Ω = 1/2; and an independent mpmath solution of
the endpoint equations (tests/conftest.py, ``omega_to_rounding``: monomial unknowns, mpmath.findroot,
quadrature in x) for irrational Ω.
"""

import math

import numpy as np
import pytest

from equilibrium import Field, InputError, IntervalSet, solve
from equilibrium.refinement import REFINEMENT_CHECKS, refine_frequencies, with_refined_frequencies


def test_symmetric_quartic_closed_form():
    r = refine_frequencies(solve(Field.from_expression("x**4/4 - 3*x**2/2")))
    # a² = t − 2 = 1, b² = t + 2 = 5: correctly rounded ends
    assert np.array_equal(r.ends, [-math.sqrt(5), -1.0, 1.0, math.sqrt(5)])
    assert r.omega.tolist() == [0.5] and r.masses.tolist() == [0.5, 0.5] and abs(r.omega_low[0]) < 1e-40
    assert r.residual < 1e-24 and r.mass_defect < 1e-24


def test_hard_edges():
    # Marchenko–Pastur: V = x on [0, ∞), band [0, 4], one hard and one soft end
    r = refine_frequencies(solve(Field.from_expression("x"), on=IntervalSet.parse("0:")))
    assert r.ends.tolist() == [0.0, 4.0] and r.omega.size == 0 and r.mass_defect < 1e-24
    # four hard ends, V = 0 on a symmetric set: Ω = 1/2 exactly
    r = refine_frequencies(solve(Field.from_expression("0"), on=IntervalSet.parse("-2:-1,1:2")))
    assert r.omega.tolist() == [0.5] and r.ends.tolist() == [-2.0, -1.0, 1.0, 2.0]
    # hard ends and a field: the double solve is already right to rounding here
    mu = solve(Field.from_expression("x"), on=IntervalSet.parse("-2:-1,1:2"))
    r = refine_frequencies(mu)
    assert abs(r.omega[0] - mu.omega[0]) <= 4e-16 and r.residual < 1e-24 and r.mass_defect < 1e-24


@pytest.mark.parametrize("expr", ["x**4/4 - 3.1*x**2/2 + 0.23*x", "x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x",
                                  "x**6/6 - 1.5*x**4 + 3.3*x**2 + 0.3*x"])
def test_against_independent_mpmath_solution(expr, omega_to_rounding):
    field = Field.from_expression(expr)
    mu = solve(field)
    r = refine_frequencies(mu)
    # two independent extended-precision solutions round to the same doubles
    assert np.array_equal(r.omega, omega_to_rounding(field, mu))
    # the double Ω it replaces is off by a few units of 1e-16, within the measure's mass_error
    assert 0 <= r.omega_shift <= max(mu.checks["mass_error"], 2 ** -52)
    assert r.ends_shift < 1e-14 and r.newton_steps <= 3


def test_with_refined_frequencies_and_refusals():
    mu = solve(Field.from_expression("x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x"))
    refined = with_refined_frequencies(mu)
    assert set(REFINEMENT_CHECKS) <= set(refined.checks)
    assert refined.checks["omega_error"] < 1e-29
    # omega + omega_low is Ω beyond double: 32 and 40 digits agree to ~1e-30 in the trailing part
    finer = refine_frequencies(mu, digits=40)
    assert np.array_equal(finer.omega, refined.omega) and np.all(refined.omega_low != 0)
    assert np.max(np.abs(finer.omega_low - refined.omega_low)) < 1e-30
    assert np.all(np.abs(refined.omega_low) <= 2.0 ** -53 * refined.omega)
    assert refined.support == mu.support and np.array_equal(refined.omega, refine_frequencies(mu).omega)
    one = solve(Field.from_expression("x**2/2"))
    assert with_refined_frequencies(one) is one                       # one band: no Ω
    with pytest.raises(InputError, match="not a polynomial"):
        refine_frequencies(solve(Field.from_expression("cosh(x)")))


def test_signed_measures():
    from equilibrium import solve_signed

    # a positive signed measure on a given set (four hard ends): refined like any other
    mu = solve_signed(Field.from_expression("x**2"), IntervalSet.parse("-1:-0.5,0.5:1.2"))
    r = refine_frequencies(mu)
    assert mu.positive and abs(r.omega[0] - mu.omega[0]) <= max(mu.checks["mass_error"], 2 ** -52)
    # a density that changes sign is refused with the reason (its masses are not those of |ψ|)
    negative = solve_signed(Field.from_expression("x**4/4 - 3*x**2/2"), IntervalSet.parse("-3:-0.5,0.5:3"))
    with pytest.raises(InputError, match="changes sign"):
        refine_frequencies(negative)
