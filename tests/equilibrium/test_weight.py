"""Factors of the weight and their text form (equilibrium.weight)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from equilibrium import Field, IntervalSet
from equilibrium.errors import InputError
from equilibrium.weight import (ConstantFactor, JacobiFactor, PowerFactor, SmoothFactor, Weight,
                                          parse_factor)

INTERVAL = IntervalSet.parse("-1:1")


def test_jacobi_product_is_recognised():
    factors = parse_factor("(1-x)^0.5*(1+x)^-0.3", on=INTERVAL)
    jac = [f for f in factors if isinstance(f, JacobiFactor)]
    assert len(jac) == 2 and not any(isinstance(f, SmoothFactor) for f in factors)
    points = dict(Weight(Field.zero(), 1, INTERVAL, factors).singular_points)
    assert points == {-1.0: -0.3, 1.0: 0.5}
    x = np.array([-0.5, 0.0, 0.7])
    total = sum(f.log_value(x) for f in factors)
    assert np.allclose(total, 0.5 * np.log(1 - x) - 0.3 * np.log(1 + x), rtol=0, atol=1e-15)


def test_parameters_power_operators_and_quadratic_base():
    factors = parse_factor("x**alpha", {"alpha": 1.5}, on=IntervalSet.parse("0:"))
    assert dict(Weight(Field.from_expression("x"), 1, IntervalSet.parse("0:"), factors).singular_points) == {0.0: 1.5}
    # (1 - x^2)^a = (1-x)^a (1+x)^a
    factors = parse_factor("(1-x^2)^(-1/4)", on=INTERVAL)
    assert dict(Weight(Field.zero(), 1, INTERVAL, factors).singular_points) == {-1.0: -0.25, 1.0: -0.25}
    # sqrt(P) is P^(1/2); division negates the exponent
    factors = parse_factor("sqrt(1-x)/(1+x)^0.25", on=INTERVAL)
    assert dict(Weight(Field.zero(), 1, INTERVAL, factors).singular_points) == {-1.0: -0.25, 1.0: 0.5}


def test_fisher_hartwig_and_smooth_remainder():
    factors = parse_factor("abs(x-0.2)^0.6*exp(x)*2", on=INTERVAL)
    kinds = {type(f) for f in factors}
    assert PowerFactor in kinds and SmoothFactor in kinds
    power = next(f for f in factors if isinstance(f, PowerFactor))
    assert power.c == pytest.approx(0.2, abs=1e-15) and power.gamma == pytest.approx(0.3, abs=1e-15)
    x = np.array([-0.9, 0.1, 0.8])
    total = sum(f.log_value(x) for f in factors)
    assert np.allclose(total, 0.6 * np.log(np.abs(x - 0.2)) + x + math.log(2), rtol=0, atol=1e-14)


@pytest.mark.parametrize("text", ["(1-x)^-1.5", "abs(x)^-1", "(1+x)^(-1)", "x^-2"])
def test_exponents_at_or_below_minus_one_are_refused(text):
    on = IntervalSet.parse("0:1") if text.startswith("x") else INTERVAL
    with pytest.raises(InputError, match="exponents must exceed -1"):
        parse_factor(text, on=on)


def test_sign_changes_and_domains_are_refused():
    with pytest.raises(InputError, match="changes sign"):
        parse_factor("(x-0.3)^0.5", on=INTERVAL)
    with pytest.raises(InputError):
        Weight(Field.from_expression("x**2"), 1, IntervalSet.real_line(), (JacobiFactor(-1, 1, 0.5, 0.5),))
    with pytest.raises(InputError, match="changes sign"):
        parse_factor("x", on=INTERVAL)  # x on [-1, 1] changes sign at 0
    with pytest.raises(InputError, match="not positive"):
        SmoothFactor(lambda x: x, "x").log_value(np.array([-0.5, 0.5]))
    with pytest.raises(InputError):
        ConstantFactor(-1.0)
