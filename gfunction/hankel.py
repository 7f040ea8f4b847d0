r"""The large-n expansion of the Hankel determinant ``log D_n`` of ``w_n = e^{-nV} h``.

``D_n = det[∫ x^{j+k} w_n]_{j,k<n}``, ``Z_n = n! D_n``.  For a regular equilibrium
measure μ_V with ``k`` bands and every term below,

    log D_n = - n² I_V + n [log 2π + ∫ log h dμ_V] + c_log log n + C
              + log θ(n ε | -τ⁻¹)                     (k ≥ 2 only)
              + c_1/n + c_2/n² + …                   (known for the classical weights)

Notation.  Bands ``[a_j, b_j]``; on a band ``ψ = η(x) ∏_e |x - e|^{σ_e}/(2π)``
(``σ_e = 1/2`` soft, ``-1/2`` hard; η is :func:`equilibrium.algebraic.band_sign`
times ``measure.h``); for one band ``L = b - a``, ``t(x) = (2x - a - b)/L`` and
``c_e = η(e) L^{σ_{e'}}/(2π)`` (``e'`` the other end), so that
``ψ ≈ c_e |x - e|^{σ_e}`` at ``e``.  The factor is split on the support as
``h = e^W ∏_e |x - e|^{α_e} ∏_j |x - c_j|^{2γ_j}`` (exponents α_e at hard
edges, Fisher–Hartwig roots inside the band, W smooth there), and
``W(x) = Σ_m W_m T_m(t)``.  ``ζ'(-1)`` is the derivative of Riemann's zeta.

Where each term comes from (everything "from memory" was checked numerically
against the direct determinants of :mod:`workbench.polynomials.hankel`; the
tests name the measured values):

* ``-n² I_V`` -- the energy of μ_V (common practice; e.g. Johansson, Duke
  Math. J. 91 (1998) 151–204, from memory).
* ``n [log 2π + ∫ log h dμ_V]`` -- ``n log 2π`` is universal: derived from the
  Gaussian case (Mehta's integral ``D_n = (2π)^{n/2} n^{-n²/2} ∏_{k<n} k!`` and
  DLMF 5.17.5); ``∫ log h dμ_V`` is the first-order change of the energy when
  ``V`` becomes ``V - (log h)/n`` (common practice).  At a root or a hard edge
  ``∫ log|x - c| dμ_V = (V(c) - ℓ)/2`` (Euler–Lagrange).
* One band, the log and constant terms edge by edge (soft and hard) plus the
  factor:

  - soft edge: ``-(1/24) log n + ζ'(-1)/2 - (1/24) log(π c_e L^{3/2}/8)``.  Two soft
    edges give the genus-one free energy ``ζ'(-1) - (1/24) log(η(a)η(b)(L/4)^4)``
    of Ambjørn, Chekhov, Kristjansen and Makeenko, Nucl. Phys. B 404 (1993)
    127–172 (from memory; normalised here by the Gaussian, where it is exact:
    DLMF 5.17.5).
  - hard edge with exponent α: ``(α²/2 - 1/8) log n + (3/2)ζ'(-1) + (α/2) log 2π
    - log G(1+α) - (1/8) log(π c_e L^{1/2}) + (1/24) log 2 + (α²/2) log(π c_e L^{1/2}/2)``
    (G Barnes' function).  Derived here: the universal parts from the exact
    Laguerre (DLMF 18.3 norms) and Jacobi (Selberg's integral, DLMF 5.14.1)
    determinants expanded with DLMF 5.17.5; the dependence on the field
    through ``c_e`` by locality and scale invariance, which the Laguerre and
    Jacobi cases then fix (the structure agrees with Charlier and Gharakhloo,
    Adv. Math. 383 (2021) 107672, from memory).
  - a root ``|x - c|^{2γ}`` inside the band: ``γ² log n + γ² log(π L ψ(c)/2) +
    log(G(1+γ)²/G(1+2γ))`` (Krasovsky, Duke Math. J. 139 (2007) 581–619;
    Deift, Its and Krasovsky, Ann. Math. 174 (2011) 1243–1299; Charlier, IMRN
    2019, 7515–7576 -- all from memory); the normalising constant derived here
    at c = 0 of the Gaussian from the generalised Hermite norms
    ``h_{2m} = m! Γ(m + γ + 1/2)``, ``h_{2m+1} = m! Γ(m + γ + 3/2)`` of
    ``|x|^{2γ} e^{-x²}`` (Chihara, An Introduction to Orthogonal Polynomials,
    1978, from memory; the tests check them against the direct determinants).
  - the smooth factor and all pairs of the pieces of log h: half the limiting
    covariance of linear statistics, ``Cov(f, g) = (1/4) Σ_m m f_m g_m`` in the
    Chebyshev coefficients of the band (Johansson 1998, from memory; no mean
    correction at β = 2, also not at hard edges -- checked exactly on the
    Legendre and Laguerre weights).  In closed form: ``(1/8) Σ m W_m²``,
    ``-(α_e/2)(W(e) - W_0)``, ``-γ_j (W(c_j) - W_0)``, ``-α_a α_b log 2``,
    ``-γ_j α_b log(2(1 - t_j))``, ``-γ_j α_a log(2(1 + t_j))``,
    ``-2γ_iγ_j log|2(t_i - t_j)|`` (from ``log|cos θ - cos φ| = -log 2 - 2Σ cos mθ cos mφ/m``).
* Several bands (soft edges, h constant): ``c_log = -k/12`` and

      C = k ζ'(-1) + (k/6) log 4 + (g/2) log 2π - (1/24) log(∏_e η(e) · Δ⁴) - (1/2) log|det B|,

  ``Δ = ∏_{e<e'} |e - e'|`` over the 2k ends, ``B_{il} = ∮_{B_i} z^l dz/R^{1/2}``
  (the curve's raw B-periods, ``l < g``), plus ``log θ(nε | -τ⁻¹)`` with ``τ`` the
  curve's period matrix (A-cycles around bands 2..k, :mod:`gfunction.curve`) and
  ``ε_j = μ_V(band j+1)``.  The fixed-filling genus-one free energy
  ``-(1/24) log(∏η Δ⁴) - (1/2) log|det A|`` is from Chekhov, Theor. Math. Phys.
  141 (2004) 1640–1647 and Eynard, JHEP 0903 (2009) 003 (from memory); the
  sum over the numbers of eigenvalues in each band, ``Σ_N exp(-½ (N - nε)ᵀ H (N - nε))``
  with ``H = ∂²I/∂ε² = -2πiτ`` (derived here from the variation of ℓ between
  bands), gives by Poisson summation ``det(-iτ)^{-1/2} θ(nε | -τ⁻¹)``
  (Bonnet, David and Eynard, J. Phys. A 33 (2000) 6739–6768; Borot and
  Guionnet, arXiv:1303.1045; Claeys, Grava and McLaughlin, Comm. Math. Phys.
  339 (2015) 513–587 for two bands -- from memory).  ``det τ = det B/det A``
  combines the two determinants; the absolute constants are fixed by the limit
  of far-apart bands, where the formula must become a sum of one-band ones
  (derived here).  ``-τ⁻¹`` is the period matrix ``τ'`` of
  :mod:`gfunction.outer` (A-cycles through the gaps) and ``θ(nε|τ')`` equals its
  ``θ(W(nΩ)|τ')`` (tested).  The error of the expansion is O(1/n) with a
  quasi-periodic coefficient.
* ``c_1/n``, ``c_2/n²`` -- derived from DLMF 5.17.5 for the weights whose
  determinant is a product of Barnes functions: Gaussian (``-1/240``),
  Laguerre ``e^{-nλ(x-c)}(x-c)^α`` on ``[c, ∞)`` and Jacobi ``(b-x)^α (x-a)^β`` on
  ``[a, b]`` (V = 0); elsewhere the next term is unknown here (O(1/n²) for h = 1
  on one band, O(1/n) otherwise).

Not covered (:func:`expansion_support` says why): a singular equilibrium
measure, several bands with a hard edge or a non-constant factor, an exponent
of h at a soft edge, Fisher–Hartwig points on several bands.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Mapping, Sequence

import mpmath
import numpy as np

from equilibrium.algebraic import band_sign
from equilibrium.chebyshev import chebyshev_fit
from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, settle

from .szego import _singular_on_support

__all__ = ["HankelExpansion", "hankel_expansion", "expansion_support", "TERM_LABELS"]

#: human names of the terms of :meth:`HankelExpansion.terms`
TERM_LABELS = {
    "quadratic": "-n^2 I_V",
    "linear": "n (log 2pi + int log h dmu_V)",
    "log_n": "c log n",
    "constant": "C",
    "log_theta": "log theta(n eps | -1/tau)",
    "inverse_n": "c_1 / n",
    "inverse_n_squared": "c_2 / n^2",
}

_ZETA1 = float(mpmath.zeta(-1, derivative=1))       # ζ'(-1)
_LOG2PI = math.log(2.0 * math.pi)
#: smallest node count of the band rule for ∫ log h dμ (midpoint rule in θ)
_BAND_NODES = 256
#: a factor whose Chebyshev coefficients beyond the first are below this is constant
_CONSTANT = 1e-14


def _log_barnes(z: float) -> float:
    """``log G(1 + z)`` (Barnes' G; ``mpmath.barnesg``)."""
    return float(mpmath.log(mpmath.barnesg(1.0 + z)))


@dataclass(frozen=True)
class HankelExpansion:
    r"""The expansion of ``log D_n`` (module docstring) for one weight.

    Attributes
    ----------
    regime : ``"one band"``, ``"several bands"``; classical weights add
        ``" (Gaussian)"``, ``" (Laguerre)"`` or ``" (Jacobi)"``.
    coefficients : ``energy`` (I_V), ``linear``, ``log_n``, ``constant`` and, when known,
        ``inverse_n``, ``inverse_n_squared``.
    constant_parts : the named contributions that add up to the constant.
    linear_parts : ``universal`` (log 2π) and ``factor`` (∫ log h dμ_V).
    sources : for each term, where its formula comes from (and "from memory" where so).
    theta_tau : ``τ' = -τ⁻¹`` of the theta term (g × g; empty for one band).
    theta_phases : ``ε``, the masses of bands 2..k.
    checks : ``measure_verified`` (1 or 0), ``band_rule_mass_error``,
        ``factor_chebyshev_tail``, ``curve_quadrature_agreement``, ``theta_truncation_bound``.
    verified : every check within tolerance (``measure_verified`` must be 1).
    message : what failed.
    """

    regime: str
    coefficients: Mapping[str, float]
    constant_parts: Mapping[str, float]
    linear_parts: Mapping[str, float]
    sources: Mapping[str, str]
    theta_tau: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    theta_phases: np.ndarray = field(default_factory=lambda: np.zeros(0))
    checks: Mapping[str, float] = field(default_factory=dict)
    verified: bool = True
    message: str = ""

    @property
    def genus(self) -> int:
        return int(self.theta_phases.size)

    def log_theta(self, n) -> np.ndarray:
        """``log θ(n ε | τ')`` at each n (zero for one band)."""
        n = np.atleast_1d(np.asarray(n, dtype=float))
        if self.genus == 0:
            return np.zeros(n.shape)
        from .theta import riemann_theta

        u = n[:, None] * self.theta_phases[None, :]
        u = u - np.floor(u)                                   # θ has period 1 in each real direction
        values = riemann_theta(u, self.theta_tau).value
        values = np.asarray(values).reshape(n.shape)
        if np.any(values.real <= 0) or np.any(np.abs(values.imag) > 1e-10 * np.abs(values.real)):
            raise NumericalFailure("θ(nε|τ') is not real and positive: the period matrix or the phases are wrong")
        return np.log(values.real)

    def terms(self, n) -> dict[str, np.ndarray]:
        """Each term of the expansion at the sizes ``n`` (arrays), by name (:data:`TERM_LABELS`)."""
        n = np.atleast_1d(np.asarray(n, dtype=float))
        if np.any(~(n >= 1)):
            raise InputError("the sizes n of the determinant must be >= 1")
        c = self.coefficients
        out = {
            "quadratic": -c["energy"] * n * n,
            "linear": c["linear"] * n,
            "log_n": c["log_n"] * np.log(n),
            "constant": np.full(n.shape, c["constant"]),
        }
        if self.genus:
            out["log_theta"] = self.log_theta(n)
        if "inverse_n" in c:
            out["inverse_n"] = c["inverse_n"] / n
        if "inverse_n_squared" in c:
            out["inverse_n_squared"] = c["inverse_n_squared"] / (n * n)
        return out

    def log_det(self, n) -> np.ndarray:
        """The sum of :meth:`terms` at each n (compensated summation)."""
        terms = self.terms(n)
        stacked = np.array(list(terms.values()))
        return np.array([math.fsum(column) for column in stacked.T])

    def log_partition(self, n) -> np.ndarray:
        """``log n! +`` :meth:`log_det`."""
        n = np.atleast_1d(np.asarray(n, dtype=float))
        return np.array([math.lgamma(v + 1.0) for v in n]) + self.log_det(n)


# ----------------------------------------------------------------------------- structure
def _points(measure, factors) -> tuple[tuple[float, float], ...]:
    return _singular_on_support(tuple(factors), tuple(measure.support))


def expansion_support(measure, factors: Sequence = ()) -> str | None:
    """Why the expansion is not available for this measure and factor (``None`` when it is)."""
    support = tuple(measure.support)
    classification = getattr(measure, "classification", None)
    if classification is not None and not classification.regular:
        return (f"the equilibrium measure is not regular ({classification}); the expansion of log D_n "
                "changes there and is not implemented")
    points = _points(measure, factors)
    edges = [kind for pair in measure.edges for kind in pair]
    ends = [e for ab in support for e in ab]
    for c, p in points:
        at_end = [i for i, e in enumerate(ends) if c == e]
        if at_end and edges[at_end[0]] == "soft":
            return (f"the factor has an exponent {p:g} at the soft edge {c:g}; the expansion is implemented for "
                    "exponents at hard edges and roots inside a band")
    if len(support) > 1:
        if "hard" in edges:
            return "the expansion with several bands is implemented for soft edges only (this support has a hard edge)"
        if points:
            return "the expansion with several bands is implemented without Fisher-Hartwig points or edge exponents"
        for a, b in support:
            if not _is_constant(_smooth_log(factors, ()), a, b):
                return "the expansion with several bands is implemented for a constant factor h only"
    return None


def _smooth_log(factors, omit):
    def W(x):
        x = np.asarray(x, dtype=float)
        return sum((f.log_value(x, omit) for f in factors), np.zeros_like(x))
    return W


def _is_constant(W, a: float, b: float) -> bool:
    x = np.linspace(a, b, 9)[1:-1]
    values = W(x)
    return bool(np.max(np.abs(values - values[0])) <= _CONSTANT * max(1.0, abs(values[0])))


def _eta(measure, band: int, x) -> np.ndarray:
    """η = s_j h: ψ = η ∏|x - e|^{σ_e}/(2π) on band j (equilibrium.measure)."""
    return band_sign(measure.structure, band) * np.asarray(measure.h(np.asarray(x, dtype=float)), dtype=float)


def _band_rule(measure, a: float, b: float, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights of ``∫ f dμ`` over the band: midpoint rule in θ, ``x = (a+b)/2 + (b-a)/2 cos θ``.

    ``ψ(x) |dx/dθ|`` is an even trigonometric polynomial times η for soft and
    hard edges alike (``(1 ± cos θ)^{σ + 1/2}``), so for smooth f the rule
    converges geometrically (periodic trapezoidal rule: common practice).
    """
    theta = math.pi * (np.arange(nodes) + 0.5) / nodes
    x = 0.5 * (a + b) + 0.5 * (b - a) * np.cos(theta)
    weights = np.asarray(measure.density(x), dtype=float) * 0.5 * (b - a) * np.sin(theta) * (math.pi / nodes)
    return x, weights


# ----------------------------------------------------------------------------- the expansion
def hankel_expansion(measure, factors: Sequence = (), *, tolerance: float = 1e-9,
                     on_failure: str = "raise") -> HankelExpansion:
    """The expansion of ``log D_n`` for ``e^{-nV} h`` with equilibrium measure ``measure`` of V.

    Parameters
    ----------
    measure : the equilibrium measure of V on Σ (:func:`equilibrium.solve`).
    factors : the factors of h, objects with ``singular_points`` and
        ``log_value(x, omit)`` (the protocol of :mod:`gfunction.szego`).
    tolerance : largest accepted value of the checks (other than ``measure_verified``).
    on_failure : ``"raise"`` (:class:`NumericalFailure`) or ``"mark"`` (``verified = False``).

    Raises
    ------
    InputError : the weight is outside the formulas (:func:`expansion_support` names why).
    """
    failure_policy(on_failure)
    factors = tuple(factors)
    reason = expansion_support(measure, factors)
    if reason is not None:
        raise InputError(f"no expansion of log D_n: {reason}")
    checks: dict[str, float] = {"measure_verified": float(bool(getattr(measure, "verified", True)))}
    if len(measure.support) == 1:
        result = _one_band(measure, factors, checks)
    else:
        result = _several_bands(measure, factors, checks)
    tolerances = {name: tolerance for name in checks}
    tolerances["measure_verified"] = 1.0
    message = failure_message(checks, tolerances, lower=("measure_verified",), what="the expansion of log D_n")
    return settle(replace(result, verified=not message, message=message), on_failure)


def _one_band(measure, factors, checks) -> HankelExpansion:
    (a, b), = measure.support
    kinds = measure.edges[0]
    L = b - a
    sigma = {"soft": 0.5, "hard": -0.5}
    eta_a, eta_b = _eta(measure, 0, [a, b])
    c_end = {a: eta_a * L ** sigma[kinds[1]] / (2 * math.pi), b: eta_b * L ** sigma[kinds[0]] / (2 * math.pi)}
    points = _points(measure, factors)
    alpha = {e: sum(p for c, p in points if c == e) for e in (a, b)}
    roots = [(c, p / 2.0) for c, p in points if a < c < b]
    W = _smooth_log(factors, tuple(c for c, _ in points))
    series = chebyshev_fit(W, a, b, tolerance=1e-15, max_degree=4096, name="log h")
    Wm = np.asarray(series.coefficients, dtype=float)
    checks["factor_chebyshev_tail"] = float(series.tail)
    nodes = max(_BAND_NODES, 4 * (Wm.size + int(getattr(measure, "h_degree", 0))))
    x, weights = _band_rule(measure, a, b, nodes)
    checks["band_rule_mass_error"] = abs(math.fsum(weights) - 1.0)
    V = measure.field.V
    ell = float(measure.lagrange)

    def V_at(c: float) -> float:
        return float(np.asarray(V(np.array([c])), dtype=float)[0])

    # ∫ log h dμ: the smooth part by the band rule, the singular pieces by Euler–Lagrange
    factor_mean = math.fsum(weights * W(x))
    factor_mean += sum(p * (V_at(c) - ell) / 2.0 for c, p in points)

    log_n = 0.0
    parts: dict[str, float] = {}
    for e, kind in ((a, kinds[0]), (b, kinds[1])):
        side = "a" if e == a else "b"
        if kind == "soft":
            log_n += -1.0 / 24.0
            parts[f"soft edge {side} = {e:.15g}"] = _ZETA1 / 2 - math.log(math.pi * c_end[e] * L ** 1.5 / 8) / 24
        else:
            al = alpha[e]
            X = math.pi * c_end[e] * math.sqrt(L)
            log_n += al * al / 2 - 1.0 / 8.0
            parts[f"hard edge {side} = {e:.15g} (exponent {al:.15g})"] = (
                1.5 * _ZETA1 - math.log(X) / 8 + math.log(2.0) / 24 + al * al / 2 * math.log(X / 2)
                + al / 2 * _LOG2PI - _log_barnes(al))
    for c, g in roots:
        psi = float(np.asarray(measure.density(np.array([c])), dtype=float)[0])
        log_n += g * g
        parts[f"Fisher-Hartwig root at {c:.15g} (gamma {g:.15g})"] = (
            g * g * math.log(math.pi * L * psi / 2) + 2 * _log_barnes(g) - _log_barnes(2 * g))
    # covariances of the pieces of log h (module docstring)
    m = np.arange(Wm.size)
    W0 = float(Wm[0])

    def W_at(y: float) -> float:
        return float(np.polynomial.chebyshev.chebval((2 * y - a - b) / L, Wm))

    parts["smooth factor: (1/8) sum m W_m^2"] = 0.125 * math.fsum(m * Wm * Wm)
    cross = [-alpha[a] * alpha[b] * math.log(2.0),
             -alpha[a] / 2 * (W_at(a) - W0), -alpha[b] / 2 * (W_at(b) - W0)]
    t = [(2 * c - a - b) / L for c, _ in roots]
    for (c, g), tj in zip(roots, t):
        cross += [-g * (W_at(c) - W0), -g * alpha[b] * math.log(2 * (1 - tj)), -g * alpha[a] * math.log(2 * (1 + tj))]
    for i in range(len(roots)):
        for j in range(i):
            cross.append(-2 * roots[i][1] * roots[j][1] * math.log(abs(2 * (t[i] - t[j]))))
    parts["pairs of factor pieces"] = math.fsum(cross)
    coefficients = {
        "energy": float(measure.energy),
        "linear": _LOG2PI + factor_mean,
        "log_n": log_n,
        "constant": math.fsum(parts.values()),
    }
    sources = _one_band_sources(kinds, roots, bool(np.any(np.abs(Wm[1:]) > _CONSTANT * max(1.0, abs(W0)))))
    regime = "one band"
    classical = _classical(measure, points, Wm, a, b)
    if classical is not None:
        name, c1, c2, source = classical
        regime += f" ({name})"
        coefficients["inverse_n"] = c1
        coefficients["inverse_n_squared"] = c2
        sources["inverse_n"] = sources["inverse_n_squared"] = source
    return HankelExpansion(regime, coefficients, parts, {"universal": _LOG2PI, "factor": factor_mean}, sources,
                           checks=checks)


def _one_band_sources(kinds, roots, smooth: bool) -> dict[str, str]:
    edge = ("soft edges: Ambjorn-Chekhov-Kristjansen-Makeenko 1993 genus-one free energy (from memory), "
            "normalised by the Gaussian (DLMF 5.17.5)")
    if "hard" in kinds:
        edge += ("; hard edges: derived from the Laguerre (DLMF 18.3) and Jacobi (Selberg, DLMF 5.14.1) "
                 "determinants and DLMF 5.17.5, field dependence by locality (cf. Charlier-Gharakhloo 2021, "
                 "from memory)")
    if roots:
        edge += ("; roots: Krasovsky 2007, Deift-Its-Krasovsky 2011, Charlier 2019 (from memory), constant "
                 "derived from the generalised Hermite norms")
    if smooth or roots:
        edge += "; factor pieces: covariance of linear statistics (Johansson 1998, from memory)"
    return {
        "quadratic": "energy of the equilibrium measure (common practice)",
        "linear": "n log 2pi derived from the Gaussian (Mehta's integral, DLMF 5.17.5); n int log h dmu_V by "
                  "first-order perturbation of the energy (common practice)",
        "log_n": edge,
        "constant": edge,
    }


def _classical(measure, points, Wm, a: float, b: float):
    """``(name, c_1, c_2, source)`` for the Gaussian, Laguerre and Jacobi weights, else None."""
    if np.any(np.abs(Wm[1:]) > _CONSTANT * max(1.0, abs(Wm[0]))):
        return None
    field = measure.field
    poly = getattr(field, "polynomial", None)
    if poly is None:
        return None
    poly = np.trim_zeros(np.asarray(poly, dtype=float), "b")
    on = measure.on.intervals
    source = "DLMF 5.17.5 (Barnes G) applied to the exact determinant (derived)"
    if poly.size == 3 and poly[2] > 0 and on == ((-math.inf, math.inf),) and not points:
        return "Gaussian", 0.0, -1.0 / 240.0, source + " of Mehta's integral"
    if poly.size == 2 and len(on) == 1:
        lo, hi = on[0]
        end = lo if (poly[1] > 0 and math.isfinite(lo) and hi == math.inf) else (
            hi if (poly[1] < 0 and math.isfinite(hi) and lo == -math.inf) else None)
        if end is not None and all(_same(c, end) for c, _ in points):
            al = sum(p for _, p in points)
            c1 = al ** 3 / 6 - al / 12
            c2 = -al ** 4 / 24 + al ** 2 / 24 - 1.0 / 120
            return "Laguerre", c1, c2, source + " of the Laguerre norms (DLMF 18.3)"
    if (poly.size == 0 and len(on) == 1 and _same(on[0][0], a) and _same(on[0][1], b)
            and all(_same(c, a) or _same(c, b) for c, _ in points)):
        al = sum(p for c, p in points if _same(c, b))
        be = sum(p for c, p in points if _same(c, a))
        c1 = (al ** 3 + al ** 2 * be + al * be ** 2 + be ** 3) / 4 - (al + be) / 8
        c2 = (-7 * (al ** 4 + be ** 4) / 96 - (al ** 3 * be + al * be ** 3) / 8 - 3 * al ** 2 * be ** 2 / 16
              + 7 * (al ** 2 + be ** 2) / 96 + al * be / 16 - 1.0 / 64)
        return "Jacobi", c1, c2, source + " of Selberg's integral (DLMF 5.14.1)"
    return None


def _same(x: float, y: float) -> bool:
    return abs(x - y) <= 1e-13 * max(1.0, abs(x), abs(y))


def _several_bands(measure, factors, checks) -> HankelExpansion:
    from .curve import curve_of_bands

    support = tuple(measure.support)
    k = len(support)
    g = k - 1
    ends = np.array([e for ab in support for e in ab])
    eta = np.concatenate([_eta(measure, j, [a, b]) for j, (a, b) in enumerate(support)])
    if np.any(eta <= 0):
        raise NumericalFailure("the density vanishes at a band end: the measure is not regular")
    curve = curve_of_bands(support)
    checks["curve_quadrature_agreement"] = float(curve.checks.get("quadrature_agreement", math.nan))
    vandermonde = math.fsum(math.log(ends[j] - ends[i]) for j in range(2 * k) for i in range(j))
    sign, log_det_b = np.linalg.slogdet(np.asarray(curve.b_periods_raw, dtype=complex))
    # a constant factor only (expansion_support): its logarithm is the whole of ∫ log h dμ
    x_mid = np.array([0.5 * (a + b) for a, b in support[:1]])
    factor_mean = float(_smooth_log(factors, ())(x_mid)[0]) if factors else 0.0
    parts = {
        "k zeta'(-1) + (k/6) log 4 + (g/2) log 2pi": k * _ZETA1 + k / 6 * math.log(4.0) + g / 2 * _LOG2PI,
        "-(1/24) log prod eta(e)": -math.fsum(np.log(eta)) / 24,
        "-(1/6) log Vandermonde of the ends": -vandermonde / 6,
        "-(1/2) log |det B-periods|": -0.5 * float(log_det_b.real),
    }
    tau = np.asarray(curve.tau, dtype=complex)
    tau_prime = -np.linalg.inv(tau)
    tau_prime = 0.5 * (tau_prime + tau_prime.T)
    phases = np.asarray(measure.masses, dtype=float)[1:]
    from .theta import riemann_theta

    probe = riemann_theta(np.zeros(g), tau_prime)
    checks["theta_truncation_bound"] = float(probe.truncation_bound)
    coefficients = {
        "energy": float(measure.energy),
        "linear": _LOG2PI + factor_mean,
        "log_n": -k / 12.0,
        "constant": math.fsum(parts.values()),
    }
    memory = ("from memory: Chekhov 2004, Eynard 2009 (fixed fillings); Bonnet-David-Eynard 2000, "
              "Borot-Guionnet arXiv:1303.1045, Claeys-Grava-McLaughlin 2015 (sum over fillings); "
              "normalisation derived from far-apart bands and Poisson summation")
    sources = {
        "quadratic": "energy of the equilibrium measure (common practice)",
        "linear": "n log 2pi as for one band (derived from the Gaussian)",
        "log_n": "-1/12 per band: " + memory,
        "constant": memory,
        "log_theta": "sum over the numbers of eigenvalues per band by Poisson summation, H = -2 pi i tau "
                     "(derived); " + memory,
    }
    return HankelExpansion("several bands", coefficients, parts, {"universal": _LOG2PI, "factor": factor_mean},
                           sources, theta_tau=tau_prime, theta_phases=phases, checks=checks)
