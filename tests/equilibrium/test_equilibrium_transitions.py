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


def test_cosh_family_splits_where_the_density_vanishes_at_zero():
    """V_t = cosh(x) - t x²: one band [-b, b] while ψ(0) > 0. For a symmetric one-band
    measure (Deift, Orthogonal Polynomials and Random Matrices, 1999, §6.7; x = b cos θ)
        (1/2π) ∫ s V'(s) ds/√(b²-s²) = 1   ⇔   b I_1(b) - t b² = 2,
        ψ(0) = 0  ⇔  ∫ V'(s)/s ds/√(b²-s²) = 0   ⇔   t = ½ Σ_k (b/2)^{2k}/((2k+1) k!²),
    solved with mpmath (30 digits): t* = 0.954284437446448543, b = 2.836654065968526.
    The continuation is started from both sides of the bracket's interior."""
    import mpmath as mp

    mp.mp.dps = 30

    def t_of_b(b):
        return mp.nsum(lambda k: (b / 2) ** (2 * k) / ((2 * k + 1) * mp.factorial(k) ** 2), [0, mp.inf]) / 2

    b_star = mp.findroot(lambda b: b * mp.besseli(1, b) - t_of_b(b) * b ** 2 - 2, 2.0)
    t_star = float(t_of_b(b_star))
    for lower, upper in ((0.2, 2.0), (0.5, 1.0)):
        transition = locate_transition(lambda t: Field.from_expression(f"cosh(x) - {t!r}*x**2"), lower, upper)
        assert transition.bands_before == 1 and transition.bands_after == 2
        assert transition.kind == "interior zero of the density"
        assert abs(transition.parameter - t_star) < 1e-10, (transition.parameter, t_star)
