"""Recurrence coefficients computed from the weight (workbench.polynomials.recurrence).

External references: NIST DLMF §18.9 (Table 18.9.1) for Hermite, Laguerre and
Jacobi recurrences; the Gaussian scaling (a_k^{(n)})² = k/n follows from the
Hermite recurrence under x -> x sqrt(2n)... (DLMF 18.9.1 with a change of variable);
mpmath (independent arbitrary-precision arithmetic, tanh-sinh quadrature) as referee.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from equilibrium.errors import InputError, NumericalFailure
from workbench.polynomials.discretisation import PanelLayout, discretise, measure_for
from workbench.polynomials.highprecision import recurrence_coefficients_mp
from workbench.polynomials.recurrence import recurrence_coefficients, stieltjes
from equilibrium.weight import JacobiFactor, PowerFactor, Weight, parse_factor

DOUBLE_WELL_2000 = "x**4/4 - 1.5*x**2 + 0.2*x"
DOUBLE_WELL_TRAP = "x**4/4 - 1.5*x**2 + 0.3*x"


@pytest.mark.parametrize("n", [1000, 10000])
def test_gaussian_scaling(n):
    # V = x^2/2, weight exp(-n x^2/2): orthonormal Hermite rescaled, a_k^2 = k/n, b_k = 0
    # (DLMF Table 18.9.1, Hermite H_n: x H_n = H_{n+1}/2 + n H_{n-1}, with x -> x sqrt(n/2))
    rc = recurrence_coefficients(Weight(Field.from_expression("x**2/2"), n), n)
    k = np.arange(n + 1)
    assert rc.verified
    assert np.max(np.abs(rc.a - np.sqrt(k / n))) < 1e-12
    assert np.max(np.abs(rc.b)) < 1e-12
    assert rc.error_estimate < 1e-12
    # ∫ exp(-n x²/2) dx = sqrt(2π/n)
    assert abs(rc.log_mass - 0.5 * math.log(2 * math.pi / n)) < 1e-12


def test_hermite_fixed_weight():
    # exp(-x^2) on R, n = 1, degree growing: a_k^2 = k/2, b_k = 0 (DLMF Table 18.9.1)
    K = 1500
    rc = recurrence_coefficients(Weight(Field.from_expression("x**2"), 1), K)
    k = np.arange(K + 1)
    scale = np.maximum(1.0, rc.a)
    assert np.max(np.abs(rc.a - np.sqrt(k / 2)) / scale) < 1e-12
    assert np.max(np.abs(rc.b) / scale) < 1e-12
    assert abs(rc.log_mass - 0.5 * math.log(math.pi)) < 1e-13  # ∫ e^{-x²} = sqrt(π)


@pytest.mark.parametrize("alpha", [-0.5, 1.3])
def test_laguerre(alpha):
    # x^α e^{-x} on [0, ∞): b_k = 2k + α + 1, a_k^2 = k (k + α) (DLMF Table 18.9.1, Laguerre L^(α))
    K = 400
    on = IntervalSet.parse("0:")
    weight = Weight(Field.from_expression("x"), 1, on, parse_factor(f"x^{alpha}", on=on))
    rc = recurrence_coefficients(weight, K)
    k = np.arange(K + 1)
    scale = np.maximum(1.0, 2 * k + alpha + 1)
    assert np.max(np.abs(rc.b - (2 * k + alpha + 1)) / scale) < 1e-12
    assert np.max(np.abs(rc.a - np.sqrt(k * (k + alpha))) / scale) < 1e-12
    assert abs(rc.log_mass - math.lgamma(alpha + 1)) < 1e-12  # ∫ x^α e^{-x} = Γ(α+1)


def jacobi_coefficients(K, alpha, beta):
    """Orthonormal Jacobi recurrence for (1-x)^α (1+x)^β on [-1, 1] (DLMF Table 18.9.1 / 18.9.2, standard form)."""
    k = np.arange(K + 1, dtype=float)
    s = 2 * k + alpha + beta
    with np.errstate(divide="ignore", invalid="ignore"):
        b = (beta**2 - alpha**2) / (s * (s + 2))
        a2 = 4 * k * (k + alpha) * (k + beta) * (k + alpha + beta) / (s**2 * (s + 1) * (s - 1))
    b[0] = (beta - alpha) / (alpha + beta + 2)
    a2[0] = 0.0
    if K >= 1:  # k = 1 formula has no removable singularity unless α+β = -1
        s1 = 2 + alpha + beta
        a2[1] = 4 * (1 + alpha) * (1 + beta) / (s1**2 * (s1 + 1))
    return np.sqrt(a2), b


@pytest.mark.parametrize("alpha,beta", [(-0.5, 0.7), (0.3, -0.6), (2.5, -0.9)])
def test_jacobi(alpha, beta):
    K = 400
    on = IntervalSet.parse("-1:1")
    weight = Weight(Field.zero(), 1, on, (JacobiFactor(-1.0, 1.0, alpha, beta),))
    rc = recurrence_coefficients(weight, K)
    a, b = jacobi_coefficients(K, alpha, beta)
    assert np.max(np.abs(rc.a - a)) < 1e-13
    assert np.max(np.abs(rc.b - b)) < 1e-13
    # ∫ (1-x)^α (1+x)^β = 2^{α+β+1} B(α+1, β+1) (DLMF 18.3, Table 18.3.1)
    log_mass = (alpha + beta + 1) * math.log(2) + math.lgamma(alpha + 1) + math.lgamma(beta + 1) - math.lgamma(alpha + beta + 2)
    assert abs(rc.log_mass - log_mass) < 1e-13


def test_jacobi_from_factor_text():
    # the same weight through the --factor parser: (1-x^2)^(-1/2) is Chebyshev T: a_1 = 1/sqrt(2), a_k = 1/2 (DLMF 18.9.1)
    on = IntervalSet.parse("-1:1")
    weight = Weight(Field.zero(), 1, on, parse_factor("(1-x^2)^(-1/2)", on=on))
    rc = recurrence_coefficients(weight, 200)
    assert abs(rc.a[1] - math.sqrt(0.5)) < 1e-14
    assert np.max(np.abs(rc.a[2:] - 0.5)) < 1e-14
    assert np.max(np.abs(rc.b)) < 1e-14


def test_quartic_double_well_against_mpmath(reference_table):
    # float64 path vs the mpmath referee (independent arithmetic and quadrature), K = 40;
    # the referee's table: data/recurrence/double_well_n30_K40.csv (data/README.md)
    weight = Weight(Field.from_expression("x**4/4 - x**2 + 0.1*x"), 30)
    rc = recurrence_coefficients(weight, 40)
    header, ref = reference_table("recurrence/double_well_n30_K40")
    assert np.max(np.abs(rc.a - ref["a"])) < 1e-12
    assert np.max(np.abs(rc.b - ref["b"])) < 1e-12
    assert abs(rc.log_mass - float(header["log_mass"])) < 1e-12


def test_fisher_hartwig_factor_against_mpmath(reference_table):
    # |x - 0.3|^{2γ} inside the band, split with Gauss-Jacobi panels; mpmath referee
    # (data/recurrence/fisher_hartwig_n12_K30.csv)
    weight = Weight(Field.from_expression("x**2/2"), 12, IntervalSet.real_line(), (PowerFactor(0.3, 0.4),))
    rc = recurrence_coefficients(weight, 30)
    _, ref = reference_table("recurrence/fisher_hartwig_n12_K30")
    assert np.max(np.abs(rc.a - ref["a"])) < 1e-12
    assert np.max(np.abs(rc.b - ref["b"])) < 1e-12


def test_the_referee_itself_at_a_small_size():
    """The stored tables come from the mpmath referee (data/scripts); the referee itself stays
    under test here at a size CI can afford (K = 12), against the float64 engine."""
    weight = Weight(Field.from_expression("x**4/4 - x**2 + 0.1*x"), 30)
    ref = recurrence_coefficients_mp(weight, 12)
    rc = recurrence_coefficients(weight, 12)
    assert ref.verified
    assert max(np.max(np.abs(rc.a - ref.a)), np.max(np.abs(rc.b - ref.b))) < 1e-12


def test_two_band_double_well_two_discretisations():
    n = 2000
    field = Field.from_expression(DOUBLE_WELL_2000)
    mu = solve(field, on=IntervalSet.real_line())
    assert len(mu.support) == 2 and mu.verified  # two bands (equilibrium package)
    weight = Weight(field, n)
    rc = recurrence_coefficients(weight, n)
    assert rc.error_estimate < 1e-11
    # a third, coarser and differently laid out discretisation
    layout = PanelLayout(8.0, 30, 0.7, 0.21, 2.5, "third")
    third = discretise(weight, n + 1, layout, measure_for(weight, n + 1))
    a3, b3 = stieltjes(third, n)
    assert max(np.max(np.abs(a3 - rc.a)), np.max(np.abs(b3 - rc.b))) < 1e-11
    # two-band behaviour: b_n oscillates between the two wells (quasi-periodic), not constant
    assert np.ptp(rc.b[-50:]) > 0.5


def test_underflow_trap_wells_of_different_depth():
    n = 5000
    field = Field.from_expression(DOUBLE_WELL_TRAP)
    mu = solve(field, on=IntervalSet.real_line())
    assert len(mu.support) == 2 and mu.masses.min() > 0.3
    # the trap: relative to the deep well, the shallow well's weight is exp(-5194): zero in double precision
    x_deep, x_shallow = -1.3, 1.15
    depth = n * (field.V(np.array([x_shallow])) - field.V(np.array([x_deep])))[0]
    assert depth > 5000 and np.exp(-depth) == 0.0
    rc = recurrence_coefficients(Weight(field, n), n)
    assert rc.verified and rc.error_estimate < 1e-11
    # invariance under V -> V + c (the shift moves every log-weight by -n c = -36500)
    shifted = Field.from_expression(DOUBLE_WELL_TRAP + " + 7.3")
    rc_shift = recurrence_coefficients(Weight(shifted, n), n)
    assert max(np.max(np.abs(rc.a - rc_shift.a)), np.max(np.abs(rc.b - rc_shift.b))) < 1e-11
    # the shallow band is present: the diagonal coefficients oscillate between the two bands
    assert np.ptp(rc.b[-50:]) > 1.0


def test_trap_potential_against_mpmath_at_moderate_n(reference_table):
    # mpmath referee: data/recurrence/trap_quartic_n40_K36.csv
    weight = Weight(Field.from_expression(DOUBLE_WELL_TRAP), 40)
    rc = recurrence_coefficients(weight, 36)
    _, ref = reference_table("recurrence/trap_quartic_n40_K36")
    assert np.max(np.abs(rc.a - ref["a"])) < 1e-12
    assert np.max(np.abs(rc.b - ref["b"])) < 1e-12


def test_union_of_intervals_symmetry():
    # V = 0 on [-1,-0.2] ∪ [0.2,1] (symmetric set): b_k = 0; a_k from two computations agree
    on = IntervalSet.parse("-1:-0.2,0.2:1")
    rc = recurrence_coefficients(Weight(Field.zero(), 1, on), 300)
    assert np.max(np.abs(rc.b)) < 1e-13
    assert rc.error_estimate < 1e-12
    # symmetric weight: p_{2k} even, so the monic recurrence gives a_1^2 = ∫x^2 / ∫1 = (1 - 0.008)/(3 * 0.8)
    assert abs(rc.a[1] ** 2 - (1 - 0.2**3) / (3 * 0.8)) < 1e-14


def test_bad_inputs():
    weight = Weight(Field.from_expression("x**2/2"), 10)
    with pytest.raises(InputError):
        recurrence_coefficients(weight, -1)
    with pytest.raises(InputError):
        recurrence_coefficients(weight, 2.5)
    with pytest.raises(InputError):
        Weight(Field.from_expression("x**2/2"), 0)
    with pytest.raises(InputError, match="exponents must exceed -1"):
        JacobiFactor(-1, 1, -1.0, 0.0)
    with pytest.raises(InputError):
        recurrence_coefficients(weight, 10**9)  # memory estimate over the limit


def test_disagreeing_discretisations_raise():
    # a tolerance below the rounding level cannot be certified: NumericalFailure, or marked unverified
    weight = Weight(Field.from_expression("x**2/2"), 300)
    with pytest.raises(NumericalFailure):
        recurrence_coefficients(weight, 300, tolerance=1e-18)
    rc = recurrence_coefficients(weight, 300, tolerance=1e-18, on_failure="mark")
    assert not rc.verified and rc.checks["relative_error_estimate"] > 1e-18


def test_initial_vector_from_the_log_weight_pairs_is_exact_to_rounding():
    # r_0 = sqrt(λ/Σλ) = m 2^e from log λ = hi + lo (double-double, ~1e5 in size as at n = 10^5):
    # against 50-digit mpmath, relative error ≤ 4 eps; plain double (log λ rounded to hi, the code
    # before) is off by ~1e-11 (exp of the rounding of a number of size 10^5)
    import mpmath

    from workbench.polynomials.discretisation import Discretisation
    from workbench.polynomials.recurrence import _initial

    mpmath.mp.dps = 50
    rng = np.random.default_rng(7)
    hi = -rng.uniform(0.0, 2.0e5, 300)
    hi[0] = 0.0
    lo = np.array([rng.uniform(-0.5, 0.5) * math.ulp(v) for v in hi])
    disc = Discretisation(np.linspace(-1.0, 1.0, hi.size), hi, np.zeros((1, 2)), 10, 40.0, PanelLayout(1, 1, 1, 0), lo)
    _, m, _, e, _ = _initial(disc)
    plain = Discretisation(disc.nodes, hi, disc.panels, 10, 40.0, disc.layout, None)
    _, m_plain, _, e_plain, _ = _initial(plain)
    mass = mpmath.mpf(disc.log_mass)
    worst, worst_plain = 0.0, 0.0
    for i in range(hi.size):
        exact = mpmath.exp((mpmath.mpf(float(hi[i])) + mpmath.mpf(float(lo[i])) - mass) / 2)
        if exact == 0:
            continue
        got = mpmath.ldexp(mpmath.mpf(float(m[i])), int(e[i]))
        worst = max(worst, float(abs(got / exact - 1)))
        got_plain = mpmath.ldexp(mpmath.mpf(float(m_plain[i])), int(e_plain[i]))
        worst_plain = max(worst_plain, float(abs(got_plain / exact - 1)))
    assert worst <= 4 * np.finfo(float).eps
    assert worst_plain > 1e-13  # what the pair removes
