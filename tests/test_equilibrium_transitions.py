"""Phase transitions located by continuation."""

import math

import pytest

from equilibrium import Field, InputError
from equilibrium.transitions import locate_transition


def test_symmetric_quartic_splits_at_two():
    """x⁴/4 - t x²/2 goes from one band to two at t = 2 (Bleher and Its, Ann. of Math. 150 (1999) 185–266)."""
    transition = locate_transition(lambda t: Field.from_coefficients([0, 0, -t / 2, 0, 0.25]), 1.3, 2.9)
    assert abs(transition.parameter - 2.0) < 1e-8
    assert (transition.bands_before, transition.bands_after) == (1, 2)
    assert transition.kind == "interior zero of the density"


def test_birth_of_a_band_in_a_tilted_double_well():
    """A shallow second well is born as a band where the effective potential first touches zero.

    Internal check (no closed form known to us): at the located parameter the solutions on either
    side differ in the number of bands, and the margin vanishes."""
    family = lambda s: Field.from_coefficients([0, s, -1.5, 0, 0.25])
    transition = locate_transition(family, 1.2, 1.9)
    assert transition.bands_before != transition.bands_after
    assert abs(transition.margin_at_parameter) < 1e-9
    assert transition.kind in (
        "effective potential touches zero off the support",
        "interior zero of the density",
        "density vanishes faster than a square root at a soft edge",
    )


def test_bracket_without_transition_is_refused():
    with pytest.raises(InputError):
        locate_transition(lambda t: Field.from_coefficients([0, 0, -t / 2, 0, 0.25]), 0.0, 1.0)
