"""The failure policy shared by the packages (equilibrium.verification)."""

from __future__ import annotations

import doctest
import math
from dataclasses import dataclass

import numpy as np
import pytest

import equilibrium.verification as verification
from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failed_checks, failure_message, failure_policy, float_checks, settle, worst


def test_examples_in_docstrings_hold():
    assert doctest.testmod(verification).failed == 0


def test_worst_reduces_arrays_and_keeps_nan():
    assert worst(np.array([1e-3, -2e-3, 5e-4])) == 2e-3
    assert worst(np.array([3 + 4j, 1j])) == 5.0
    assert worst(np.array([0.3, -0.1, 0.2]), lower=True) == -0.1
    assert math.isnan(worst(np.array([1.0, np.nan])))
    assert math.isnan(worst(np.array([1.0, np.nan]), lower=True))
    assert worst(np.zeros(0)) == 0.0 and worst(np.zeros(0), lower=True) == math.inf
    checks = float_checks({"residual": np.array([1e-12, 3e-12]), "margin": [0.2, 0.1], "count": 3},
                          lower=("margin",))
    assert checks == {"residual": 3e-12, "margin": 0.1, "count": 3.0}
    assert all(type(v) is float for v in checks.values())


def test_nan_never_passes():
    tolerances = {"residual": 1e-10, "margin": 0.0}
    assert failed_checks({"residual": math.nan}, tolerances) == ["residual"]
    assert failed_checks({"margin": math.nan}, tolerances, lower=("margin",)) == ["margin"]
    # a check without a tolerance is informative, but a NaN (or an overflow) there fails too
    assert failed_checks({"nodes": 300.0, "other": math.nan, "big": math.inf}, tolerances) == ["other", "big"]
    # a margin bounded below may be +inf (nothing to bound: no region off the support)
    assert failed_checks({"margin": math.inf}, tolerances, lower=("margin",)) == []
    assert failed_checks({"residual": 1e-11, "margin": 0.5}, tolerances, lower=("margin",)) == []
    assert failed_checks({"margin": -1e-3}, tolerances, lower=("margin",)) == ["margin"]


def test_message_names_value_and_tolerance():
    text = failure_message({"residual": 2e-6, "margin": -0.5, "fine": 1e-15},
                           {"residual": 1e-10, "margin": 0.0, "fine": 1e-12}, lower=("margin",), what="the thing")
    assert text.startswith("the thing not verified: ")
    assert "residual = 2e-06 (tolerance 1e-10)" in text and "margin = -0.5 (at least 0e+00)" in text
    assert "fine" not in text
    assert failure_message({"fine": 1e-15}, {"fine": 1e-12}) == ""


@dataclass(frozen=True)
class _Result:
    verified: bool
    checks: dict
    message: str


def test_settle_raises_or_marks():
    good, bad = _Result(True, {}, ""), _Result(False, {"x": 1.0}, "not verified: x = 1")
    assert settle(good, "raise") is good and settle(bad, "mark") is bad
    with pytest.raises(NumericalFailure, match="x = 1"):
        settle(bad, "raise")
    with pytest.raises(InputError, match="'raise' or 'mark'"):
        failure_policy("ignore")
