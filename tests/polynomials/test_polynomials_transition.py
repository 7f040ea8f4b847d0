"""Recurrence coefficients near the birth of a gap (workbench.polynomials.discretisation).

V = x⁴/4 - t x²/2: one band for t < 2, the density vanishes quadratically at 0 for
t = 2 and a gap opens for t > 2 (Bleher & Its, Ann. Math. 150 (1999) 185–266, the
symmetric quartic; the critical value t² = 4 for this normalisation is the
discriminant of the one-cut ansatz, checked here through the equilibrium package).
Near t = 2 the density is small near 0 and the panels sized by the zero spacing
were far too long (the two discretisations disagreed by 1.9e-5 at n = 320).

Outside references: the mpmath referee (independent arithmetic and quadrature,
tanh–sinh, workbench.polynomials.highprecision; its tables in data/recurrence) at moderate n; at large n a third
discretisation placed from the equilibrium measure of (n/2n)V (another support,
cut level and panel layout, no density minimum).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from workbench.polynomials.discretisation import (
    PRIMARY, SECONDARY, discretise, growth_bound, measure_for, nominal_exponent,
)
from workbench.polynomials.recurrence import recurrence_coefficients, stieltjes
from equilibrium.weight import Weight

QUARTIC = "x**4/4 - t*x**2/2"


def quartic(t: float) -> Field:
    return Field.from_expression(QUARTIC, parameters={"t": t})


def test_transition_structure():
    # the three cases really are: a deep minimum, the critical point, a short gap
    mu = {t: solve(quartic(t), on=IntervalSet.real_line()) for t in (1.96, 2.0, 2.02)}
    assert len(mu[1.96].support) == 1 and mu[1.96].density(np.array([0.0]))[0] < 0.01
    assert len(mu[2.0].support) == 1 and mu[2.0].density(np.array([0.0]))[0] < 1e-8
    assert len(mu[2.02].support) == 2
    # gap (-α, α), α² = t - 2 (one-cut/two-cut ansatz for the even quartic, common practice)
    assert abs(mu[2.02].support[1][0] - math.sqrt(0.02)) < 1e-10


@pytest.mark.parametrize("t", [1.96, 2.0, 2.02])
@pytest.mark.parametrize("n", [400, 1600])
def test_two_discretisations_and_an_oversized_one_agree(t, n):
    weight = Weight(quartic(t), n)
    rc = recurrence_coefficients(weight, n)
    assert rc.verified and rc.error_estimate < 1e-11
    # third placement: nodes from μ of (1/2)V for degrees up to 2n (wider support, larger cut level)
    third = discretise(weight, 2 * n + 1, SECONDARY, measure_for(weight, 2 * n + 1))
    a3, b3 = stieltjes(third, n)
    assert max(np.max(np.abs(a3 - rc.a)), np.max(np.abs(b3 - rc.b))) < 1e-11


@pytest.mark.parametrize("t", [1.96, 2.0, 2.02])
def test_against_mpmath_referee(t, reference_table):
    # the referee's tables: data/recurrence/quartic_t{t}_n40_K40.csv (data/README.md)
    weight = Weight(quartic(t), 40)
    rc = recurrence_coefficients(weight, 40)
    _, ref = reference_table(f"recurrence/quartic_t{t}_n40_K40")
    assert np.max(np.abs(rc.a - ref["a"])) < 1e-13
    assert np.max(np.abs(rc.b - ref["b"])) < 1e-13


def test_panels_at_the_minimum_follow_the_critical_scale():
    # at t = 2, ψ ≈ c x² near 0: the panel holding 0 must be O((K c)^{-1/3}) long (growth_bound docstring)
    n = 1600
    weight = Weight(quartic(2.0), n)
    measure = measure_for(weight, n + 1)
    h = 1e-2
    psi = measure.density(np.array([-h, 0.0, h]))
    c = (psi[0] - 2 * psi[1] + psi[2]) / (2 * h * h)
    panels = discretise(weight, n + 1, PRIMARY, measure).panels
    at_zero = panels[(panels[:, 0] <= 0.0) & (panels[:, 1] >= 0.0)]
    assert np.max(at_zero[:, 1] - at_zero[:, 0]) < 4.0 * (n * c) ** (-1.0 / 3.0)


def test_growth_bound_reduces_to_the_zero_count_in_the_bulk():
    # V = x²/2, semicircle ψ = sqrt(4 - x²)/(2π): a short panel at 0 holding ζ zeros has the
    # linear-model bound π ζ (ρ - 1/ρ)/2 - 2 m log ρ (module docstring of discretisation)
    n = 2000
    weight = Weight(Field.from_expression("x**2/2"), n)
    measure = measure_for(weight, n)
    zeta = 12.0
    length = zeta / ((n + 1) * (1.0 / math.pi))  # ψ(0) = 1/π
    panel = np.array([[-0.5 * length, 0.5 * length]])
    bound = growth_bound(panel, np.array([40.0]), measure, measure.support, measure.edges, n)[0]
    assert abs(bound - nominal_exponent(zeta, 40)) < 0.5
