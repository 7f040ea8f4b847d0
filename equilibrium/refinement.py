r"""The endpoint equations of a polynomial field solved in extended precision.

Why
---
The band masses of :func:`equilibrium.solve` are double-precision quadratures; the filling
fractions ``Ω_j`` built from them carry an error of a few units of 1e-16 (the measure's
``mass_error``).  Every multi-band prediction depends on n through the phases ``n Ω_j`` of the
outer parametrix, so that error is multiplied by n: about 1e-12 at n = 3000, 1e-9 at n = 10⁶, which
is above the accuracy of the corrected predictions and of the residual problem.  This module
re-solves the endpoint equations with mpmath (Newton's method started from the double solution) and
returns ``Ω_j`` as a pair of doubles ``omega + omega_low`` (~1e-30), from which :mod:`gfunction.phase`
forms the phases exactly at any n.

Equations
---------
With ``R(z) = Π_i (z - e_i)`` over all band ends, ``Q(z) = Π_hard (z - e_i)`` over the hard ones
and ``h`` a polynomial, the Stieltjes transform of μ is ``G(z) = (V'(z) - h(z) R(z)^{1/2}/Q(z))/2``
(:mod:`equilibrium.conventions`).  The unknowns are the soft ends and the coefficients of h; the
equations are

1. ``G(z) = 1/z + O(z^-2)`` at infinity: the coefficients of ``z^p`` of ``h R^{1/2}/Q`` equal those
   of ``V'`` for ``p ≥ 0``, and the coefficient of ``z^-1`` is ``-2`` (unit mass);
2. ``∫_{b_j}^{a_{j+1}} h |R|^{1/2}/Q dx = 0`` across every gap: the effective potential takes the
   same value ℓ on all bands.

Counting: with ``s`` soft and ``t`` hard ends (``s + t = 2k``), ``R^{1/2}/Q ~ z^{(s-t)/2}``; h has
degree ``D = max(deg V', -1) - (s - t)/2``, so there are ``D + 1 + s`` unknowns and
``D + (s - t)/2 + 2 + (k - 1) = D + 1 + s`` equations.  (Deift, *Orthogonal polynomials and random
matrices: a Riemann-Hilbert approach*, 1999, §6.6-6.7, for soft edges; the hard-edge factor
``1/Q`` is the usual one, common practice.)

The expansion at infinity uses ``R^{1/2}/Q = z^{(s-t)/2} S(1/z)`` with
``S(w) = Π_i (1 - e_i w)^{σ_i}``, ``σ = +1/2`` (soft) and ``-1/2`` (hard), whose coefficients follow
from ``S'/S = -Σ_{m≥0} P_{m+1} w^m``, ``P_m = Σ_i σ_i e_i^m``:
``(m + 1) s_{m+1} = -Σ_{j=0}^{m} P_{j+1} s_{m-j}``.  The integrals over a gap or band
``[e_i, e_{i+1}]`` are taken in the angle of ``x = e_i + L sin²(θ/2)``, which turns the square roots
(soft) and inverse square roots (hard) at its ends into smooth functions of θ, by tanh-sinh
quadrature (mpmath ``quad``).  The Jacobian of Newton's method
is a forward difference at the working precision (step ``10^{-(digits+10)/2}``); started within ~1e-15 of
the root, two steps reach the working precision.

Only polynomial fields are covered (their V' is exact); the double coefficients of V are taken as
exact.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .errors import InputError, NumericalFailure

__all__ = ["FrequencyRefinement", "REFINEMENT_CHECKS", "refine_frequencies", "refinement_figures",
           "with_refined_frequencies"]

#: the checks :func:`with_refined_frequencies` adds to a measure
REFINEMENT_CHECKS = ("omega_shift", "ends_shift", "endpoint_residual", "refined_mass_defect", "omega_error")


@dataclass(frozen=True)
class FrequencyRefinement:
    """Ω_j and the band ends from the endpoint equations in extended precision.

    Attributes
    ----------
    omega : Ω_j (bands - 1,), correctly rounded to double.
    omega_low : Ω_j - omega, rounded: ``omega + omega_low`` is Ω_j to ~2^-106 (for exact phases nΩ_j at
        any n, :mod:`gfunction.phase`).
    ends : the band ends e_1 < … < e_{2k}, correctly rounded.
    masses : the band masses, correctly rounded.
    omega_shift : max_j |Ω_j - Ω_j(double solve)|: the error of the double Ω this replaces.
    ends_shift : max_i |e_i - e_i(double solve)|.
    residual : max of |equations| at the root, at the working precision (≤ 10^-digits).
    mass_defect : |Σ masses - 1| at the working precision (an independent check of equation 1).
    digits : decimal digits of the working precision.
    newton_steps : steps taken from the double solution.
    """

    omega: np.ndarray
    omega_low: np.ndarray
    ends: np.ndarray
    masses: np.ndarray
    omega_shift: float
    ends_shift: float
    residual: float
    mass_defect: float
    digits: int
    newton_steps: int

    @property
    def checks(self) -> dict[str, float]:
        return {"omega_shift": self.omega_shift, "ends_shift": self.ends_shift,
                "endpoint_residual": self.residual, "refined_mass_defect": self.mass_defect}


def _applicable(measure) -> str:
    """Empty when the endpoint equations of this module describe ``measure``, else why not."""
    field = measure.field
    if field.polynomial is None:
        return "the field is not a polynomial (its V' is a Chebyshev fit, not exact)"
    if not measure.classification.regular:
        return f"the measure is {measure.classification} (the endpoint equations degenerate there)"
    if not measure.positive:
        return "the density changes sign (the band masses here integrate |ψ|)"
    return ""


def refine_frequencies(measure, digits: int = 32, max_steps: int = 8) -> FrequencyRefinement:
    """Solve the endpoint equations of ``measure``'s polynomial field in extended precision.

    Parameters
    ----------
    measure : EquilibriumMeasure of a polynomial field with a positive density (soft and hard edges;
        a signed measure when its density is ≥ 0).
    digits : decimal digits of the result's working precision (≥ 20; the double results are
        correctly rounded from it).
    max_steps : Newton steps allowed from the double solution.

    Returns
    -------
    FrequencyRefinement

    Raises
    ------
    InputError
        The field is not a polynomial, the measure is singular, or its density changes sign.
    NumericalFailure
        Newton's method did not converge from the double solution, or the refined ends moved by more
        than 1e-8 (the double solution was not near this root).

    Examples
    --------
    >>> from equilibrium import Field, solve
    >>> mu = solve(Field.from_expression("x**4/4 - 3*x**2/2"))
    >>> float(refine_frequencies(mu).omega[0])    # symmetric bands: Ω = 1/2
    0.5
    """
    import mpmath

    why = _applicable(measure)
    if why:
        raise InputError(f"Ω in extended precision needs a regular measure of a polynomial field: {why}")
    digits = max(int(digits), 20)
    structure = measure.structure
    ends0 = np.asarray(structure.ends, dtype=float)
    hard = np.asarray(structure.hard, dtype=bool)
    k = ends0.size // 2
    soft_index = np.nonzero(~hard)[0]
    s, t = int(soft_index.size), int(hard.sum())
    half = (s - t) // 2                                   # R^{1/2}/Q ~ z^half

    omega_double = np.asarray(measure.omega, dtype=float).reshape(k - 1)

    with mpmath.workdps(digits + 10):
        mpf = mpmath.mpf
        sigma = [mpf(-1) / 2 if hard[i] else mpf(1) / 2 for i in range(2 * k)]   # exponents of S
        V = [mpf(float(c)) for c in measure.field.polynomial]
        dV = [i * V[i] for i in range(1, len(V))]
        while dV and dV[-1] == 0:
            dV.pop()
        d = len(dV) - 1                                   # -1 when V' = 0
        D = max(d, -1) - half                             # degree of h
        if D < 0:
            raise InputError("Ω in extended precision: no polynomial h fits these ends (too many hard ends)")
        top = D + half                                    # highest power of h R^{1/2}/Q

        def split(u):
            e = [mpf(float(x)) for x in ends0]
            for i, index in enumerate(soft_index):
                e[index] = u[i]
            return e, list(u[s:])

        def h_at(x, h):
            return mpmath.polyval(h[::-1], x)

        def between(i, h, e, absolute=False):
            """∫_{e_i}^{e_{i+1}} h |R|^{1/2}/Q dx with x = e_i + L sin²(θ/2): the factors of the two
            ends become L sin²(θ/2), L cos²(θ/2) exactly, and the square roots (soft) or inverse
            square roots (hard) at the ends turn into smooth functions of θ ∈ [0, π]."""
            lo, hi = e[i], e[i + 1]
            L = hi - lo
            others = [j for j in range(2 * k) if j not in (i, i + 1)]
            power = [(-1 if hard[j] else 1) for j in (i, i + 1)]

            def integrand(theta):
                sn, cs = mpmath.sin(theta / 2), mpmath.cos(theta / 2)
                x = lo + L * sn * sn
                value = h_at(x, h) * L * sn * cs                           # h dx/dθ
                value *= (mpmath.sqrt(L) * sn) ** power[0] * (mpmath.sqrt(L) * cs) ** power[1]
                for j in others:
                    factor = x - e[j]
                    value *= mpmath.sqrt(abs(factor)) ** (-1 if hard[j] else 1)
                    if hard[j] and factor < 0:
                        value = -value                                     # Q carries signs, |R| does not
                return abs(value) if absolute else value

            return mpmath.quad(integrand, [0, mpmath.pi])

        def equations(u):
            e, h = split(u)
            terms = top + 2                               # w^0 … w^(top+1) of S
            P = [sum(sg * ei ** m for sg, ei in zip(sigma, e)) for m in range(terms + 1)]
            S = [mpf(1)]
            for m in range(terms - 1):
                S.append(-sum(P[j + 1] * S[m - j] for j in range(m + 1)) / (m + 1))

            def power(p):                                 # coefficient of z^p in h(z) z^half S(1/z)
                return sum(h[i] * S[i + half - p] for i in range(D + 1) if 0 <= i + half - p < len(S))

            out = [power(p) - (dV[p] if p <= d else 0) for p in range(top + 1)]
            out.append(power(-1) + 2)
            for j in range(k - 1):
                out.append(between(2 * j + 1, h, e))
            return mpmath.matrix(out)

        # start: the double ends and the coefficients of h fitted to the double density
        h0 = _h_start(measure, D)
        u = mpmath.matrix([mpf(float(ends0[i])) for i in soft_index] + [mpf(float(c)) for c in h0])
        if len(u) != len(equations(u)):
            raise NumericalFailure("Ω in extended precision: the endpoint equations do not balance the unknowns")
        tol = mpf(10) ** (-digits)
        step = mpf(10) ** (-(digits + 10) // 2)
        F = equations(u)
        J = mpmath.matrix(len(u), len(u))
        for col in range(len(u)):
            du = mpmath.matrix(u)
            scale = max(abs(u[col]), mpf(1))
            du[col] += step * scale
            Fc = equations(du)
            for row in range(len(u)):
                J[row, col] = (Fc[row] - F[row]) / (step * scale)
        steps = 0
        while mpmath.norm(F, mpmath.inf) > tol:
            if steps >= max_steps:
                raise NumericalFailure(
                    f"Ω in extended precision: Newton's method did not converge in {max_steps} steps "
                    f"(residual {mpmath.nstr(mpmath.norm(F, mpmath.inf), 3)})")
            u = u - mpmath.lu_solve(J, F)
            F = equations(u)
            steps += 1
        e, h = split(u)
        masses = [between(2 * j, h, e, absolute=True) / (2 * mpmath.pi) for j in range(k)]
        defect = abs(mpmath.fsum(masses) - 1)
        omega = [mpmath.fsum(masses[j + 1:]) for j in range(k - 1)]
        ends = np.array([float(x) for x in e])
        rounded = np.array([float(x) for x in omega])
        result = FrequencyRefinement(
            omega=rounded,
            omega_low=np.array([float(x - mpf(float(x))) for x in omega]),
            ends=ends,
            masses=np.array([float(x) for x in masses]),
            omega_shift=float(np.max(np.abs(rounded - omega_double), initial=0.0)),
            ends_shift=float(np.max(np.abs(ends - ends0))),
            residual=float(mpmath.norm(F, mpmath.inf)),
            mass_defect=float(defect),
            digits=digits,
            newton_steps=steps,
        )
    if result.ends_shift > 1e-8 or result.mass_defect > 10.0 ** (-digits + 2):
        raise NumericalFailure(
            f"Ω in extended precision: the refined ends moved by {result.ends_shift:.2g} and the masses sum to 1 "
            f"within {result.mass_defect:.2g}; the double solution is not near this root")
    return result


def _h_start(measure, D: int) -> np.ndarray:
    """Monomial coefficients (ascending) of the degree-D polynomial h of the double solution, by
    interpolation of ``measure.h`` at Chebyshev points of the hull of the support."""
    lo, hi = measure.support[0][0], measure.support[-1][1]
    x = 0.5 * (lo + hi) + 0.5 * (hi - lo) * np.cos(np.pi * (np.arange(D + 1) + 0.5) / (D + 1))
    values = np.real(np.asarray(measure.h(x)))
    return np.polynomial.polynomial.polyfit(x, values, D) if D > 0 else np.array([float(np.mean(values))])


def with_refined_frequencies(measure, digits: int = 32):
    """``measure`` with Ω_j from :func:`refine_frequencies` (``omega`` and ``omega_low``) and the
    refinement's figures in its checks.

    One band has no Ω and is returned unchanged.  The checks gain ``omega_shift``, ``ends_shift``,
    ``endpoint_residual``, ``refined_mass_defect`` and ``omega_error``, a bound on
    ``|Ω_j - omega - omega_low|`` (``10^{2-digits}`` plus the rounding ``2^-106 Ω_j`` of the pair), which
    the residual problem's phase error reads in place of ``mass_error``.  The rest of the measure
    (ends, density, g) is the double solution: only the phases n Ω_j multiply an error by n.
    """
    if len(measure.support) < 2:
        return measure
    refined = refine_frequencies(measure, digits)
    bound = 10.0 ** (2 - refined.digits) + 2.0 ** -106 * float(np.max(np.abs(refined.omega)))
    checks = {**measure.checks, **refined.checks, "omega_error": bound}
    return replace(measure, omega=refined.omega, omega_low=refined.omega_low, checks=checks)


def refinement_figures(measure) -> dict[str, float] | None:
    """The checks :func:`with_refined_frequencies` added to ``measure`` (:data:`REFINEMENT_CHECKS`),
    or None when its Ω is that of the double solve."""
    if "omega_error" not in measure.checks:
        return None
    return {key: float(measure.checks[key]) for key in REFINEMENT_CHECKS}
