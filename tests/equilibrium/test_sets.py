"""The set Σ: parsing and validation."""

import math

import numpy as np
import pytest

from equilibrium import InputError, IntervalSet


def test_parse_forms():
    assert IntervalSet.parse(":").is_real_line
    assert IntervalSet.parse("0:").intervals == ((0.0, math.inf),)
    assert IntervalSet.parse(":0").intervals == ((-math.inf, 0.0),)
    assert IntervalSet.parse("-inf:inf").is_real_line
    s = IntervalSet.parse("2:3,-1:1")
    assert s.intervals == ((-1.0, 1.0), (2.0, 3.0)) and s.is_compact
    assert s.finite_endpoints == (-1.0, 1.0, 2.0, 3.0)
    np.testing.assert_array_equal(s.contains(np.array([-2, 0, 1.5, 2.5, 4])), [False, True, False, True, False])
    assert s.clipped(0, 2.5).intervals == ((0.0, 1.0), (2.0, 2.5))


@pytest.mark.parametrize(
    "text,fragment",
    [
        ("1:0", "reversed"),
        ("1:1", "single point"),
        ("0:2,1:3", "overlap"),
        ("0:1,1:2", "touch"),
        ("", "empty"),
        ("0", "a:b"),
        ("0:1:2", "a:b"),
        ("x:1", "not a number"),
        ("0:1e999", "not finite"),
        ("0:,2:3", "overlap"),
        ("nan:1", "not a number"),
    ],
)
def test_refusals(text, fragment):
    with pytest.raises(InputError) as info:
        IntervalSet.parse(text)
    assert fragment in str(info.value)
