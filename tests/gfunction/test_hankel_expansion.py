"""The expansion of log D_n (gfunction.hankel) against exact determinants and the direct side.

Sources: Barnes' G asymptotics, NIST DLMF 5.17.5 (log G(z+1) ~ z²/2 log z - 3z²/4 + z/2 log 2π
- 1/12 log z + ζ'(-1) + Σ B_{2k+2}/(4k(k+1) z^{2k})); Mehta's integral for the Gaussian; the
Laguerre norms (DLMF Table 18.3.1) and Selberg's integral (DLMF 5.14.1) for Laguerre and Jacobi
(their closed forms are checked in tests/polynomials/test_hankel_direct.py); mpmath for ζ'(-1)
and G.  The model formulas that are "from memory" (see gfunction/hankel.py) are checked here
against the direct determinants of workbench.polynomials.hankel: model - direct must tend to 0
at the rate stated in each test.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from equilibrium.errors import InputError, NumericalFailure
from gfunction.hankel import expansion_support, hankel_expansion
from workbench.polynomials.hankel import hankel_determinant
from equilibrium.weight import Weight, parse_factor



@pytest.fixture(autouse=True)
def _forty_digits():
    # other test modules set mpmath's global precision; these references need 40 digits
    with mpmath.workdps(40):
        yield

with mpmath.workdps(40):
    ZETA1 = mpmath.zeta(-1, derivative=1)


def _log_g(z):
    return mpmath.log(mpmath.barnesg(z))


def _setup(potential, on=None, factor=None, **parameters):
    field = Field.from_expression(potential, parameters) if potential else Field.zero()
    sigma = IntervalSet.parse(on) if on else IntervalSet.real_line()
    factors = parse_factor(factor, on=sigma) if factor else ()
    measure = solve(field, on=sigma)
    return field, sigma, factors, measure


def _differences(potential, ns, on=None, factor=None, **parameters):
    """model - direct at each n, the expansion, and the direct results."""
    field, sigma, factors, measure = _setup(potential, on, factor, **parameters)
    expansion = hankel_expansion(measure, factors)
    direct = [hankel_determinant(Weight(field, n, sigma, factors)) for n in ns]
    assert all(d.verified for d in direct)
    model = expansion.log_det(ns)
    return np.array([m - d.log_det for m, d in zip(model, direct)]), expansion, direct


def _slope(ns, errors) -> float:
    return float(np.polyfit(np.log(ns), np.log(np.abs(errors)), 1)[0])


# ----------------------------------------------------------------------------- Gaussian
def test_gaussian_expansion_against_barnes():
    # Mehta: log D_n = (n/2) log 2π - (n²/2) log n + log G(n+1).  With DLMF 5.17.5 at z = n:
    #   log D_n = -3n²/4 + n log 2π - (1/12) log n + ζ'(-1) - 1/(240 n²) + 1/(1008 n⁴) + ...
    # (-n²/2 log n cancels z²/2 log z; (n/2) log 2π appears twice; B_4/8 = -1/240, B_6/24 = 1/1008).
    for n in (10, 20, 40, 80, 160):
        exact = mpmath.mpf(n) / 2 * mpmath.log(2 * mpmath.pi) - mpmath.mpf(n) ** 2 / 2 * mpmath.log(n) + _log_g(n + 1)
        through_constant = -mpmath.mpf(3) / 4 * n * n + n * mpmath.log(2 * mpmath.pi) - mpmath.log(n) / 12 + ZETA1
        error = exact - through_constant
        assert abs(error * n * n + mpmath.mpf(1) / 240) <= 1.01 / (1008 * n * n)
    # the module's expansion has these coefficients (the energy and the constant from the measure)
    expansion = hankel_expansion(solve(Field.from_expression("x**2/2")))
    c = expansion.coefficients
    assert expansion.regime == "one band (Gaussian)"
    assert abs(c["energy"] - 0.75) < 1e-15
    assert abs(c["linear"] - math.log(2 * math.pi)) < 1e-15
    assert abs(c["log_n"] + 1 / 12) < 1e-15
    assert abs(c["constant"] - float(ZETA1)) < 1e-14
    assert c["inverse_n"] == 0.0 and c["inverse_n_squared"] == -1 / 240


def test_gaussian_terms_by_name():
    expansion = hankel_expansion(solve(Field.from_expression("x**2/2")))
    terms = expansion.terms([100])
    assert set(terms) == {"quadratic", "linear", "log_n", "constant", "inverse_n", "inverse_n_squared"}
    assert terms["quadratic"][0] == pytest.approx(-7500.0, rel=1e-15)
    assert expansion.log_det([100])[0] == pytest.approx(math.fsum(v[0] for v in terms.values()), abs=1e-9)
    assert expansion.log_partition([100])[0] == pytest.approx(math.lgamma(101) + expansion.log_det([100])[0])


# ----------------------------------------------------------------------------- classical weights
def laguerre_exact(n, alpha):
    return _log_g(n + 1) + _log_g(n + alpha + 1) - _log_g(alpha + 1) - (mpmath.mpf(n) ** 2 + alpha * n) * mpmath.log(n)


def jacobi_exact(n, alpha, beta):
    return ((mpmath.mpf(n) ** 2 + n * (alpha + beta)) * mpmath.log(2) + _log_g(n + 1) + _log_g(n + alpha + 1)
            + _log_g(n + beta + 1) + _log_g(n + alpha + beta + 1) - _log_g(alpha + 1) - _log_g(beta + 1)
            - _log_g(2 * n + alpha + beta + 1))


@pytest.mark.parametrize("alpha", ["0", "0.5", "-0.4", "1.7"])
def test_laguerre_expansion(alpha):
    # the one-band formula (hard edge at 0, soft edge at 4) reproduces the Barnes expansion of the
    # Laguerre determinant: constant 2ζ'(-1) + (α/2) log 2π - log G(1+α) (derived with DLMF 5.17.5),
    # and through c_2/n² the error is O(n^-3)
    a = mpmath.mpf(alpha)
    on = IntervalSet.parse("0:")
    factors = parse_factor(f"x^{alpha}", on=on) if alpha != "0" else ()
    expansion = hankel_expansion(solve(Field.from_expression("x"), on=on), factors)
    c = expansion.coefficients
    assert expansion.regime == "one band (Laguerre)"
    assert abs(c["constant"] - float(2 * ZETA1 + a / 2 * mpmath.log(2 * mpmath.pi) - _log_g(1 + a))) < 1e-12
    assert abs(c["log_n"] - float(a * a / 2 - mpmath.mpf(1) / 6)) < 1e-15
    ns = np.array([20, 40, 80])
    errors = [float(laguerre_exact(int(n), a)) - expansion.log_det([n])[0] for n in ns]
    assert _slope(ns, errors) <= -2.9            # measured: -3.0 (-4.0 for α = 0)


@pytest.mark.parametrize("alpha, beta", [("0", "0"), ("0.5", "-0.3"), ("1.2", "0.7")])
def test_jacobi_expansion(alpha, beta):
    # two hard edges, V = 0 on [-1, 1]: constant 3ζ'(-1) + (1/12) log 2 + ((α+β)/2) log 2π
    # - ((α+β)²/2) log 2 - log G(1+α) - log G(1+β) (derived from Selberg's integral and DLMF 5.17.5);
    # through c_2/n² the error is O(n^-3)
    a, b = mpmath.mpf(alpha), mpmath.mpf(beta)
    on = IntervalSet.parse("-1:1")
    factors = parse_factor(f"(1-x)^{alpha}*(1+x)^{beta}", on=on) if (alpha, beta) != ("0", "0") else ()
    expansion = hankel_expansion(solve(Field.zero(), on=on), factors)
    constant = (3 * ZETA1 + mpmath.log(2) / 12 + (a + b) / 2 * mpmath.log(2 * mpmath.pi)
                - (a + b) ** 2 / 2 * mpmath.log(2) - _log_g(1 + a) - _log_g(1 + b))
    assert expansion.regime == "one band (Jacobi)"
    assert abs(expansion.coefficients["constant"] - float(constant)) < 1e-12
    ns = np.array([20, 40, 80])
    errors = [float(jacobi_exact(int(n), a, b)) - expansion.log_det([n])[0] for n in ns]
    assert _slope(ns, errors) <= -2.9            # measured: -3.0 (-4.0 for α = β = 0)


def test_scaled_classical_weights_have_the_same_constant():
    # D_n of V(x/s) is s^{n²} (and s^{αn} with the factor) times D_n of V: the constant is scale invariant
    reference = hankel_expansion(solve(Field.from_expression("x"), on=IntervalSet.parse("0:")),
                                 parse_factor("x^0.5", on=IntervalSet.parse("0:"))).coefficients["constant"]
    on = IntervalSet.parse("1:")
    moved = hankel_expansion(solve(Field.from_expression("2*x - 2"), on=on), parse_factor("(x-1)^0.5", on=on))
    assert moved.regime == "one band (Laguerre)"
    assert moved.coefficients["constant"] == pytest.approx(reference, abs=1e-12)


# ----------------------------------------------------------------------------- one band vs direct
def test_one_band_quartic_rate():
    # the tilted quartic of cases/one_band_quartic.toml: h = 1, so model - direct = F_2/n² + ...
    ns = np.array([100, 200, 400, 800])
    errors, _, _ = _differences("x**4/4 - t*x**2/2 + s*x", ns, t=0.7, s=0.15)
    assert _slope(ns, errors) <= -1.8            # measured: -2.04
    assert np.all(np.abs(errors) * ns ** 2 < 0.01)   # n² (model - direct) ≈ 0.0077


def test_hard_edge_of_a_field():
    # V = x + x²/2 on [0, ∞): a hard edge at 0 for a field that is not Laguerre; h = 1, so O(1/n²)
    ns = np.array([100, 200, 400, 800])
    errors, expansion, _ = _differences("x + x**2/2", ns, on="0:")
    assert expansion.regime == "one band"
    assert _slope(ns, errors) <= -1.8            # measured: -1.99
    # V = 3x on [-1, 1] with (1-x)^0.5 (1+x)^-0.3 (cases/hard_edge_jacobi.toml): hard edge at -1 with
    # exponent -0.3, soft edge at 1/3, and the smooth rest of h: the next term is O(1/n)
    errors, _, _ = _differences("3*x", ns, on="-1:1", factor="(1-x)^0.5*(1+x)^-0.3")
    assert -1.1 <= _slope(ns, errors) <= -0.95   # measured: -1.01 (n (model - direct) -> -0.0061)


def test_smooth_factor():
    # h = 2 + cos x on the tilted quartic: n ∫ log h dμ_V + (1/8) Σ m W_m², then O(1/n)
    ns = np.array([100, 200, 400, 800])
    errors, expansion, _ = _differences("x**4/4 - t*x**2/2 + s*x", ns, factor="2+cos(x)", t=0.7, s=0.15)
    assert _slope(ns, errors) <= -0.95           # measured: -0.99
    assert expansion.constant_parts["smooth factor: (1/8) sum m W_m^2"] > 100 * abs(errors[-1])


def test_fisher_hartwig_root_in_the_gaussian_band():
    # |x - 0.4|^{2γ}, γ = 0.4, inside the band [-2, 2] of x²/2: γ² log n and the constant
    # γ² log(π L ψ(c)/2) + log(G(1+γ)²/G(1+2γ)); the next term is O(1/n) and oscillates with n
    ns = np.array([100, 200, 400, 800])
    errors, expansion, _ = _differences("x**2/2", ns, factor="abs(x-0.4)^0.8")
    assert expansion.coefficients["log_n"] == pytest.approx(0.16 - 1 / 12, abs=1e-15)
    assert np.all(np.abs(errors) * ns <= 0.1)    # measured: n |model - direct| = 0.039, 0.034, 0.070, 0.042
    root = next(v for k, v in expansion.constant_parts.items() if k.startswith("Fisher-Hartwig"))
    assert abs(errors[-1]) < 2e-4 < abs(root) / 100


# ----------------------------------------------------------------------------- several bands
def test_two_bands_need_the_theta_term():
    # the tilted double well of cases/two_band_irrational.toml (Ω = 0.4222 is not rational):
    # with log θ(nε|-τ⁻¹) model - direct = O(1/n) with a quasi-periodic coefficient; without it the
    # difference keeps oscillating with amplitude ~0.28 = max |log θ|
    ns = np.array([100, 200, 400, 800, 1600])
    errors, expansion, _ = _differences("x**4/4 - t*x**2/2 + s*x", ns, t=3.1, s=0.23)
    assert expansion.regime == "several bands"
    assert np.all(np.abs(errors) * ns <= 0.02)   # measured: n |model - direct| <= 0.011
    without_theta = errors - expansion.terms(ns)["log_theta"]
    assert np.max(np.abs(without_theta[-3:])) > 0.1   # measured: 0.164, 0.0087, 0.283
    assert np.max(np.abs(without_theta)) > 100 * np.max(np.abs(errors))


def test_three_bands():
    # genus 2 (cases/three_band.toml): the same formula with a 2 × 2 period matrix
    ns = np.array([141, 400, 800])
    errors, expansion, _ = _differences("x**6/6 - t*x**4/4 + u*x**2/2 + s*x", ns, t=5.0, u=4.5, s=0.1)
    assert expansion.theta_tau.shape == (2, 2)
    assert np.all(np.abs(errors) * ns <= 0.1)    # measured: 0.004, 0.006, 0.020
    without_theta = errors - expansion.terms(ns)["log_theta"]
    assert np.max(np.abs(without_theta)) > 0.1


def test_theta_in_the_basis_of_the_outer_parametrix():
    # θ(nε | -τ⁻¹) with ε the masses of bands 2..k is θ(W(nΩ) | τ') of gfunction.outer
    from gfunction.outer import model_problem
    from gfunction.theta import riemann_theta

    measure = solve(Field.from_expression("x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x"))
    expansion = hankel_expansion(measure)
    model = model_problem(measure.support)
    n = np.array([50.0, 73.0, 1234.0])
    W = model.W(n[:, None] * np.asarray(measure.omega)[None, :])
    assert np.max(np.abs(model.tau - expansion.theta_tau)) < 1e-14
    assert np.max(np.abs(np.log(riemann_theta(W, model.tau).value.real) - expansion.log_theta(n))) < 1e-12


# ----------------------------------------------------------------------------- scope and failures
@pytest.mark.parametrize("potential, on, factor, words", [
    (None, "-1:-0.25,0.4:1", None, "soft edges only"),
    ("x**2/2", None, "abs(x-2)^0.5", "soft edge"),
    ("x**4/4 - t*x**2/2 + s*x", None, "2+cos(x)", "constant factor"),
    ("x**4/4 - x**2", None, None, "not regular"),
])
def test_outside_the_formulas(potential, on, factor, words):
    _, _, factors, measure = _setup(potential, on, factor, t=3.1, s=0.23)
    reason = expansion_support(measure, factors)
    assert reason is not None and words in reason
    with pytest.raises(InputError, match="no expansion"):
        hankel_expansion(measure, factors)


def test_failure_policy():
    measure = solve(Field.from_expression("x**2/2"))
    # a negative tolerance fails every check, even one that is exactly 0 on this machine's rounding
    with pytest.raises(NumericalFailure, match="not verified"):
        hankel_expansion(measure, tolerance=-1.0)
    marked = hankel_expansion(measure, tolerance=-1.0, on_failure="mark")
    assert not marked.verified and "band_rule_mass_error" in marked.message
    with pytest.raises(InputError, match="on_failure"):
        hankel_expansion(measure, on_failure="warn")
