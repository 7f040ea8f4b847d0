"""Fuzz tests (hypothesis) of the other parsers of user text: sets, --param and weight factors.

Random text is given to :meth:`IntervalSet.parse`, to
:func:`workbench.commands._common.parse_parameters` and to
:func:`equilibrium.weight.parse_factor`; each must return a valid
object or raise :class:`InputError` with a one-line message -- nothing else --
and none of them may call eval/exec/compile (the ``tripwires`` on the builtins
from tests/conftest.py, as in tests/equilibrium/test_expression_fuzz.py, which also wires
``__import__`` for the expression parser; calls made by the import machinery
itself, which runs source files of installed modules, are let through).  A
parsed object is then checked against its own invariants (ordered disjoint
intervals; finite parameter values; a weight whose log is finite or refused
on its set).
"""

from __future__ import annotations

import math
import string

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from equilibrium.errors import InputError
from equilibrium.field import Field
from equilibrium.sets import IntervalSet
from workbench.commands._common import parse_parameters
from equilibrium.weight import Weight, parse_factor

SET_PIECES = list(string.digits + ":,.-+eE ") + ["inf", "-inf", "infinity", "1e400", "nan", ":", ",",
                                                 "0", "1", "-1", "2.5", "1e3", "x", "(", "__import__"]
PARAM_PIECES = list(string.ascii_letters[:6] + string.digits + "=.-+eE _ ") + [
    "t", "=", "inf", "nan", "1e400", "__class__", "os.system", "'", "(", ")"]
FACTOR_PIECES = list(string.printable[:94]) + [
    "x", "(", ")", "^", "**", "abs(", "sqrt(", "1-x", "1+x", "x-0.2", "-1", "-0.5", "0.5", "2", "t",
    "1e308", "1e400", "inf", "exp(", "log(", "/", "*", "x^2", "__import__", "lambda", ".real"]


def _text(pieces):
    return st.one_of(st.text(max_size=40), st.lists(st.sampled_from(pieces), max_size=25).map("".join))


def _refused(error: InputError) -> None:
    message = str(error)
    assert message and "\n" not in message


SETTINGS = settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(_text(SET_PIECES))
def test_set_parser_returns_a_valid_set_or_refuses(tripwires, text):
    with tripwires(let_library_through=True):
        try:
            on = IntervalSet.parse(text)
        except InputError as error:
            _refused(error)
            return
    ends = [e for ab in on.intervals for e in ab]
    assert all(a < b for a, b in zip(ends, ends[1:]))           # ordered, disjoint, not touching
    assert not any(math.isnan(e) for e in ends)
    assert all(math.isfinite(e) for e in ends[1:-1])             # only the outer ends may be infinite
    assert IntervalSet.parse(on.describe()) == on                # the text form round-trips


@SETTINGS
@given(st.lists(_text(PARAM_PIECES), max_size=4))
def test_parameter_parser_returns_finite_numbers_or_refuses(tripwires, items):
    with tripwires(let_library_through=True):
        try:
            values = parse_parameters(items)
        except InputError as error:
            _refused(error)
            return
    assert len(values) == len(items)
    for name, value in values.items():
        assert name.isidentifier() and isinstance(value, float) and math.isfinite(value)


ON = IntervalSet.parse("-1:1")
PROBE = np.linspace(-0.999, 0.999, 37)


@SETTINGS
@given(_text(FACTOR_PIECES), st.sampled_from([ON, IntervalSet.real_line(), None]))
def test_factor_parser_returns_factors_or_refuses(tripwires, text, on):
    with tripwires(let_library_through=True):
        try:
            factors = parse_factor(text, {"t": 0.5}, on=on)
        except InputError as error:
            _refused(error)
            return
        for factor in factors:
            for c, p in factor.singular_points:                  # integrable singularities only
                assert p > -1.0 and math.isfinite(c)
        if on is None:
            return
        try:
            weight = Weight(Field.from_expression("x**2"), 1.0, on, factors)
            log_w = weight.log_weight(PROBE, omit=[c for c, _ in weight.singular_points])
        except InputError as error:
            _refused(error)
            return
    # off the singular points the weight is a finite positive number or refused above
    assert log_w.shape == PROBE.shape
    assert np.all(np.isfinite(log_w) | np.isin(PROBE, [c for c, _ in weight.singular_points]))


def test_the_tripwire_catches_a_direct_call(tripwires):
    import pytest

    with pytest.raises(AssertionError, match="eval was called"):
        with tripwires(let_library_through=True):
            eval("1")  # noqa: S307 - the point of the test
