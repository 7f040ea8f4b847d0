"""The discretisation takes its band breaks and its exterior pieces from the measure itself."""

from __future__ import annotations

import math

import numpy as np

from equilibrium import Field, IntervalSet, solve
from equilibrium.weight import Weight
from workbench.polynomials.discretisation import PRIMARY, discretise, measure_for


def semicircle_distribution(x):
    """F(x) of ψ = (4 - x²)^{1/2}/(2π) on [-2, 2] (the semicircle law of V = x²/2; integrate
    with x = 2 sin φ: F = 1/2 + (φ + sin φ cos φ)/π)."""
    phi = np.arcsin(np.clip(x / 2, -1, 1))
    return 0.5 + (phi + np.sin(phi) * np.cos(phi)) / math.pi


def test_band_breaks_are_the_quantiles_of_the_measure():
    n = 200
    weight = Weight(Field.from_expression("x**2/2"), n)
    measure = measure_for(weight, n)
    panels = discretise(weight, n, PRIMARY, measure).panels
    ends = np.unique(panels.ravel())
    count = math.ceil((n + 1) / PRIMARY.zeros_per_panel)
    levels = np.arange(1, count) / count
    values = semicircle_distribution(ends)
    for level in levels:
        assert np.min(np.abs(values - level)) < 1e-13, level


def test_exterior_pieces_are_the_complement_of_the_support():
    # Σ = [-5, -4] ∪ [-3, 3]: μ of x²/2 is the semicircle on [-2, 2]; Σ \ S has three pieces
    on = IntervalSet.parse("-5:-4,-3:3")
    mu = solve(Field.from_expression("x**2/2"), on=on)
    assert np.allclose(np.ravel(mu.support), [-2, 2], atol=1e-12)
    pieces = mu.complement()
    assert len(pieces) == 3
    assert pieces[0] == (-5.0, -4.0)
    assert pieces[1][0] == -3.0 and abs(pieces[1][1] + 2) < 1e-12
    assert abs(pieces[2][0] - 2) < 1e-12 and pieces[2][1] == 3.0
    # the real line: two half-lines
    mu = solve(Field.from_expression("x**2/2"))
    (lo0, hi0), (lo1, hi1) = mu.complement()
    assert lo0 == -math.inf and hi1 == math.inf and hi0 == mu.support[0][0] and lo1 == mu.support[0][1]
    # the discretisation of the set with a separate piece [-5, -4] carries no nodes there
    # (the weight is below rounding: e^{-n eff} with eff > 0), and none outside Σ
    disc = discretise(Weight(Field.from_expression("x**2/2"), 40, on), 40)
    assert np.all(on.contains(disc.nodes))
