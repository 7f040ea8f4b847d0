"""The equilibrium measure as a result object, with its checks.

:func:`build_measure` turns the solution of the algebraic problem
(:mod:`equilibrium.algebraic`) into an :class:`EquilibriumMeasure`:
density, band masses, filling fractions Ω_j, the constant ℓ, the energy, the
distribution function and its inverse, the effective potential and the
Stieltjes transform, and the checks that show the result is right.

Conventions (energy, ℓ, Ω_j, g): :mod:`equilibrium.conventions`.

How each check is obtained (so that the checks are not circular):

``mass_error``
    max of |Σ band masses - 1| (angular quadrature of the density) and
    |(1/2πi)∮ G - 1| (trapezoidal rule on the ellipse).
``lagrange_spread``
    ℓ computed independently at the left end of every band from the exact
    V and integrals of G across the gaps; the spread of those values.
``euler_lagrange_residual``
    |2U^μ(x) + V(x) - ℓ| at band midpoints, with U^μ from a direct
    quadrature of the logarithmic kernel against the density (a second,
    independent discretisation).
``density_margin``
    min over the bands of the regular part of the density, relative to its
    maximum (≥ 0 for a positive measure).
``density_minimum`` (signed measures)
    the same relative minimum of the regular part for the signed measure,
    where it is not a failure: a signed equilibrium measure may be negative
    and still be exactly what was asked for.  Where it is negative,
    :meth:`EquilibriumMeasure.negative_part` gives the pieces of the bands
    where ψ < 0 (their ends are zeros of h) and the mass ∫ ψ⁻ over them (from
    the cumulative band integrals; computed when asked for, ``to_dict`` and
    the outputs show it as ``negative_mass``: it costs ~20% of a solve).  A signed
    measure with ψ < 0 somewhere is *not positive* (:attr:`EquilibriumMeasure.positive`):
    it is not the limit of the zeros of the orthogonal polynomials of a
    weight on Σ, which follow the positive equilibrium measure constrained
    to Σ (Saff and Totik 1997, Thm IV.1.11 and §IV.5 -- from memory of the
    statements).  Where ψ < 0 at a hard end, ψ itself tends to -∞ there,
    so the minimum is reported for the regular part.
``min_effective_potential``
    min of the effective potential over its critical points and a sample of
    the gaps and of Σ outside the hull (≥ 0 for the true minimiser; scaled
    by max(1, |ℓ|)).
``field_approximation``
    relative tail of the Chebyshev approximation of V' on the window (0 for
    polynomial fields).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dataclass_field, replace
from typing import Any

import numpy as np
from numpy.polynomial import chebyshev as C

from .algebraic import (
    AlgebraicState,
    BandStructure,
    Window,
    band_sign,
    distance_product,
    gap_sign,
    q_hard,
)
from .radical import sqrt_R
from .chebyshev import COLLEAGUE_MAX, real_roots
from .field import Field
from .quadrature import (
    PANEL_POINTS,
    AngularRule,
    CumulativeIntegral,
    angular_breaks,
    angular_rule,
    cumulative_integral,
    panel_points,
    theta_of_x,
)
from .sets import IntervalSet
from .verification import failure_message

#: checks above these thresholds make a result unverified
TOLERANCES = {
    "mass_error": 1e-10,
    "lagrange_spread": 1e-9,
    "euler_lagrange_residual": 1e-8,
    "density_margin": -1e-9,  # lower bound
    "min_effective_potential": -1e-9,  # lower bound
    "field_approximation": 1e-8,
    "discretisation_agreement": 1e-9,
}

#: the figures of TOLERANCES that are lower bounds (margins)
LOWER_BOUNDS = ("density_margin", "min_effective_potential")

#: a margin below this (relative) marks the measure as singular rather than regular
SINGULAR_THRESHOLD = 1e-7


@dataclass(frozen=True)
class Singularity:
    kind: str  # "interior zero", "edge vanishing faster than square root", "effective potential touches zero", "hard edge with vanishing density"
    x: float

    def __str__(self) -> str:
        return f"{self.kind} at x = {self.x:.12g}"


@dataclass(frozen=True)
class Classification:
    regular: bool
    singularities: tuple[Singularity, ...]

    def __str__(self) -> str:
        if self.regular:
            return "regular"
        return "singular: " + "; ".join(str(s) for s in self.singularities)


@dataclass(frozen=True)
class EquilibriumMeasure:
    """Equilibrium measure μ_V of a field on a set, with checks.

    See the module docstring for the conventions and for how every entry
    of :attr:`checks` is computed.
    """

    support: tuple[tuple[float, float], ...]
    edges: tuple[tuple[str, str], ...]
    masses: np.ndarray
    omega: np.ndarray
    lagrange: float
    energy: float
    capacity: float | None
    kind: str
    verified: bool
    checks: dict[str, float]
    classification: Classification
    message: str
    field: Field = dataclass_field(repr=False)
    on: IntervalSet = dataclass_field(repr=False)
    _window: Window = dataclass_field(repr=False)
    _state: AlgebraicState = dataclass_field(repr=False)
    _g_scaled: np.ndarray = dataclass_field(repr=False)
    _pieces: "_Pieces" = dataclass_field(repr=False)
    #: trailing part of Ω = omega + omega_low when Ω was re-solved beyond double precision
    #: (:func:`equilibrium.refinement.with_refined_frequencies`); None for the double solve
    omega_low: np.ndarray | None = dataclass_field(default=None, repr=False)

    # ----------------------------------------------------------------- basics
    @property
    def bands(self) -> int:
        return len(self.support)

    @property
    def genus(self) -> int:
        return self.bands - 1

    @property
    def structure(self) -> BandStructure:
        return self._state.structure

    @property
    def window(self) -> tuple[float, float]:
        return (self._window.lower, self._window.upper)

    def h(self, z) -> np.ndarray:
        """The analytic factor h of G - V'/2 = -(1/2) h R^{1/2}/Q_h.

        Off the real line, trust it only inside :attr:`h_ellipse`.
        """
        return C.chebval(self._window.t(np.asarray(z)), self._state.h)

    @property
    def h_degree(self) -> int:
        """Degree of the Chebyshev series of :meth:`h` (a few for polynomial V)."""
        return len(self._state.h) - 1

    @property
    def h_ellipse(self) -> float:
        """Bernstein parameter ρ of the ellipse around :attr:`window` inside which :meth:`h` is
        accurate off the real line (``inf`` when V is a polynomial, whose h is exact).

        For other fields h is a Chebyshev series of N + 1 terms fitted on the window;
        rounding in its coefficients grows like ρ^N on the ellipse of parameter ρ, and
        ρ = 1000^{1/N} keeps that growth below a factor 1000.
        """
        if self._window.dV.exact:
            return math.inf
        return 1000.0 ** (1.0 / max(self.h_degree, 1))

    def sqrt_ratio(self, z) -> np.ndarray:
        """R(z)^{1/2}/Q_h(z) on the first sheet (boundary value from above on the bands)."""
        z = np.asarray(z, dtype=complex)
        return sqrt_R(z, self.structure.ends) / q_hard(z, self.structure)

    @property
    def positive(self) -> bool:
        """True when the density is ≥ 0 on every band (within the tolerance of ``density_margin``).

        Always true of a verified positive measure; a signed measure may be negative
        (``checks["density_minimum"] < 0``), and is then no model of orthogonal polynomials.
        """
        value = self.checks.get("density_minimum", self.checks.get("density_margin", 0.0))
        return bool(value >= TOLERANCES["density_margin"])

    def negative_part(self) -> tuple[tuple[tuple[float, float], ...], float]:
        """The pieces of the bands where ψ < 0, and the mass -∫ ψ over them (≥ 0).

        Ends of the pieces are band ends and real zeros of h inside the bands.
        """
        pieces: list[tuple[float, float]] = []
        mass = 0.0
        for j, (a, b) in enumerate(self.support):
            t_a, t_b = float(self._window.t(a)), float(self._window.t(b))
            roots = self._window.dV.centre + self._window.dV.half_width * real_roots(self._state.h, t_a, t_b)
            ends = np.concatenate([[a], roots, [b]])
            middles = 0.5 * (ends[:-1] + ends[1:])
            negative = self._regular_part(j, middles) < 0
            cdf = self._pieces.band_cdf(j)
            for lo, hi in zip(ends[:-1][negative], ends[1:][negative]):
                if pieces and pieces[-1][1] == lo:  # a double root: one piece
                    lo = pieces.pop()[0]
                pieces.append((float(lo), float(hi)))
                theta = theta_of_x(a, b, np.array([lo, hi]))
                mass -= float(cdf.at_theta(theta[1]) - cdf.at_theta(theta[0]))
        return tuple(pieces), max(mass, 0.0)

    # ---------------------------------------------------------------- density
    def _regular_part(self, band: int, x: np.ndarray) -> np.ndarray:
        """η(x) = s_j h(x): ψ = η ∏|x-e|^{σ_e}/(2π) on band j; η ≥ 0 for a positive measure."""
        return band_sign(self.structure, band) * self.h(x)

    def density(self, x) -> np.ndarray:
        """ψ(x) = dμ/dx, zero off the support (vectorised)."""
        x = np.asarray(x, dtype=float)
        out = np.zeros(x.shape)
        e, hard = self.structure.ends, self.structure.hard
        for j, (a, b) in enumerate(self.support):
            inside = (x > a) & (x < b)
            if not np.any(inside):
                continue
            xs = x[inside]
            value = self._regular_part(j, xs) / (2 * math.pi)
            for index, point in enumerate(e):
                value = value * np.abs(xs - point) ** (-0.5 if hard[index] else 0.5)
            out[inside] = value
        return out

    def distribution(self, x) -> np.ndarray:
        """F(x) = μ((-∞, x])."""
        x = np.asarray(x, dtype=float)
        out = np.zeros(x.shape)
        before = 0.0
        for j, (a, b) in enumerate(self.support):
            out[x >= b] = before + self.masses[j]
            inside = (x > a) & (x < b)
            if np.any(inside):
                out[inside] = before + self._pieces.band_cdf(j).at_theta(theta_of_x(a, b, x[inside]))
            before += self.masses[j]
        return np.clip(out, 0.0, 1.0)

    def complement(self) -> tuple[tuple[float, float], ...]:
        """The components of Σ \\ S as closed intervals ``(lo, hi)``, ascending: the gaps of
        the support inside Σ and the parts of Σ beyond its ends (the outer ones may be
        unbounded).  Pieces of Σ that hold no band are whole components."""
        pieces = []
        for lo, hi in self.on.intervals:
            cursor = lo
            for a, b in self.support:
                if b <= lo or a >= hi:
                    continue
                if a > cursor:
                    pieces.append((cursor, a))
                cursor = max(cursor, b)
            if cursor < hi:
                pieces.append((cursor, hi))
        return tuple((float(lo), float(hi)) for lo, hi in pieces)

    def quantile(self, p) -> np.ndarray:
        """The inverse of F: the x with F(x) = p, for p in [0, 1] (bisection in the angle)."""
        p = np.asarray(p, dtype=float)
        if np.any((p < 0) | (p > 1)) or np.any(~np.isfinite(p)):
            raise ValueError("quantile levels must lie in [0, 1]")
        out = np.empty(p.shape)
        cumulative = np.concatenate([[0.0], np.cumsum(self.masses)])
        band = np.clip(np.searchsorted(cumulative, p, side="right") - 1, 0, self.bands - 1)
        for j in np.unique(band):
            mask = band == j
            a, b = self.support[j]
            target = p[mask] - cumulative[j]
            lo = np.zeros(target.shape)
            hi = np.full(target.shape, math.pi)
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                below = self._pieces.band_cdf(j).at_theta(mid) < target
                lo = np.where(below, mid, lo)
                hi = np.where(below, hi, mid)
            theta = 0.5 * (lo + hi)
            out[mask] = a + (b - a) * np.sin(theta / 2) ** 2
        return out

    # ------------------------------------------------------------- transforms
    def _u(self, z):
        return self._window.ellipse.u_of_z(z)

    def g_far(self, z) -> np.ndarray:
        """g(z) from its Laurent series, valid where |u(z)| ≥ ρ (outside the ellipse)."""
        return _g_series(self._window.ellipse, self._g_scaled, self._u(z))

    def stieltjes(self, z) -> np.ndarray:
        """G(z) = ∫ dμ(s)/(z - s) for z off the support."""
        z = np.asarray(z, dtype=complex)
        ellipse = self._window.ellipse
        u = self._u(z)
        far = np.abs(u) >= ellipse.rho
        out = np.empty(z.shape, dtype=complex)
        if np.any(~far):
            zn = z[~far]
            out[~far] = 0.5 * (self._window.dV(zn) - self.h(zn) * self.sqrt_ratio(zn))
        if np.any(far):
            uf = u[far]
            m = np.arange(1, len(self._g_scaled) + 1)
            series = _power_series(ellipse.rho / uf, m * self._g_scaled)
            dz_du = ellipse.half_width * 0.5 * (1 - uf ** -2)
            out[far] = (1 - series) / uf / dz_du
        return out

    def effective_potential(self, x) -> np.ndarray:
        """2U^μ(x) + V(x) - ℓ for real x in Σ (0 on S; NaN outside Σ)."""
        x = np.asarray(x, dtype=float)
        out = np.full(x.shape, np.nan)
        inside_sigma = self.on.contains(x)
        out[inside_sigma] = 0.0
        e = self.structure.ends
        for j in range(self.bands - 1):
            lo, hi = e[2 * j + 1], e[2 * j + 2]
            mask = inside_sigma & (x > lo) & (x < hi)
            if np.any(mask):
                out[mask] = self._pieces.gap(j).at_theta(theta_of_x(lo, hi, x[mask]))
        for side in ("left", "right"):
            piece = self._pieces.outer(side)
            if piece is None:
                continue
            lo, hi = piece.lo, piece.hi
            mask = inside_sigma & (x >= lo) & (x <= hi) & ((x < e[0]) if side == "left" else (x > e[-1]))
            if np.any(mask):
                out[mask] = piece.at_theta(theta_of_x(lo, hi, x[mask]))
            far = inside_sigma & ((x < lo) if side == "left" else (x > hi))
            if np.any(far):
                xf = x[far]
                with np.errstate(all="ignore"):
                    out[far] = self.field.V(xf) - 2 * self.g_far(xf.astype(complex)).real - self.lagrange
        return out

    def log_potential(self, x) -> np.ndarray:
        """U^μ(x) = ∫ log 1/|x-y| dμ(y) by direct quadrature (real x; slow, for checks)."""
        return _log_potentials(self, np.atleast_1d(np.asarray(x, dtype=float)))

    # ----------------------------------------------------------------- export
    def to_dict(self) -> dict[str, Any]:
        """Plain numbers: the one serialisation of the measure.

        What ``workbench equilibrium --json`` prints, what the ``/equilibrium`` group of a
        results file stores (``workbench.equilibrium_io.measure_group``) and what a sweep
        records per point (a subset of these keys).
        """
        return {
            "bands": self.bands,
            "support": [[float(a), float(b)] for a, b in self.support],
            "edges": [list(pair) for pair in self.edges],
            "masses": [float(m) for m in self.masses],
            "omega": [float(o) for o in self.omega],
            "lagrange": float(self.lagrange),
            "energy": float(self.energy),
            "capacity": None if self.capacity is None else float(self.capacity),
            "kind": self.kind,
            "positive": bool(self.positive),
            "density_minimum": float(self.checks.get("density_minimum",
                                                     self.checks.get("density_margin", math.nan))),
            "negative_mass": 0.0 if self.positive else float(self.negative_part()[1]),
            "verified": bool(self.verified),
            "regular": bool(self.classification.regular),
            "classification": str(self.classification),
            "singularities": [{"kind": s.kind, "x": s.x} for s in self.classification.singularities],
            "checks": {k: float(v) for k, v in self.checks.items()},
            "message": self.message,
            "field": self.field.description,
            "set": self.on.describe(),
        }


# ======================================================================= build
def _band_rule_distances(structure: BandStructure, j: int) -> tuple[float | None, float | None]:
    e = structure.ends
    near_lo = e[2 * j] - e[2 * j - 1] if j > 0 else None
    near_hi = e[2 * j + 2] - e[2 * j + 1] if j < structure.bands - 1 else None
    return near_lo, near_hi


def _density_dx_dtheta(structure: BandStructure, h_of, j: int, rule, h_values=None) -> np.ndarray:
    """ψ(x) dx/dθ at the nodes of an angular rule on band j (ψ = s_j h ∏|x-e|^{σ_e}/(2π)).

    ``h_values`` may pass h at the nodes when the caller has evaluated it already.
    """
    h_values = h_of(rule.x) if h_values is None else h_values
    return band_sign(structure, j) * h_values * distance_product(structure, 2 * j, 2 * j + 1, rule) / (2 * math.pi)


def _band_quadratures(structure: BandStructure, h_of, points: int = PANEL_POINTS) -> list[tuple[AngularRule, np.ndarray]]:
    """Angular rule on every band and ψ dx/dθ times the weights at its nodes (h evaluated once for all bands)."""
    rules = [
        angular_rule(structure.ends[2 * j], structure.ends[2 * j + 1], *_band_rule_distances(structure, j), points=points)
        for j in range(structure.bands)
    ]
    h_all = h_of(np.concatenate([rule.x for rule in rules]))
    out, start = [], 0
    for j, rule in enumerate(rules):
        stop = start + rule.x.size
        out.append((rule, rule.weights * _density_dx_dtheta(structure, h_of, j, rule, h_all[start:stop])))
        start = stop
    return out


def _band_integrand(measure_like, j: int):
    """θ ↦ ψ(x(θ)) dx/dθ on band j."""
    structure, h_of = measure_like

    def integrand(theta):
        a, b = structure.ends[2 * j], structure.ends[2 * j + 1]
        return _density_dx_dtheta(structure, h_of, j, _rule_at(a, b, theta))

    return integrand


@dataclass(frozen=True)
class _PointRule:
    """A minimal stand-in of AngularRule at given angles (for the integrands)."""

    lo: float
    hi: float
    x: np.ndarray
    from_lo: np.ndarray
    to_hi: np.ndarray
    dx_dtheta: np.ndarray


def _rule_at(lo: float, hi: float, theta: np.ndarray) -> _PointRule:
    length = hi - lo
    s, c = np.sin(theta / 2), np.cos(theta / 2)
    return _PointRule(lo, hi, lo + length * s * s, length * s * s, length * c * c, length * s * c)


def _outer_integrand(structure: BandStructure, h_of, lo_index: int, hi_index: int, lo: float, hi: float, sign: int):
    """θ ↦ eff'(x(θ)) dx/dθ = h R^{1/2}/Q_h dx/dθ on an interval between/after ends."""

    def integrand(theta):
        rule = _rule_at(lo, hi, theta)
        return sign * h_of(rule.x) * distance_product(structure, lo_index, hi_index, rule)

    return integrand


def band_masses(window: Window, state: AlgebraicState) -> np.ndarray:
    """Band masses by the angular rule (no cumulative pieces): a quick number for comparisons."""
    structure = state.structure

    def h_of(x):
        return C.chebval(window.t(x), state.h)

    points = panel_points(len(state.h) - 1)
    return np.array([float(np.sum(weighted)) for _, weighted in _band_quadratures(structure, h_of, points)])


def build_measure(
    window: Window,
    state: AlgebraicState,
    field: Field,
    on: IntervalSet,
    kind: str,
    extra_checks: dict[str, float] | None = None,
    message: str = "",
    light: bool = False,
    masses: np.ndarray | None = None,
) -> EquilibriumMeasure:
    """Assemble the result object and compute all checks.

    ``light=True`` skips the expensive checks (direct log potential,
    sampling of the effective potential): used for intermediate results.
    ``masses`` may pass the :func:`band_masses` of this state when the
    caller has them already.
    """
    structure = state.structure
    k = structure.bands
    e = structure.ends
    ellipse = window.ellipse
    h_coefficients = state.h

    def h_of(x):
        return C.chebval(window.t(x), h_coefficients)

    support = tuple((float(e[2 * j]), float(e[2 * j + 1])) for j in range(k))
    edges = tuple(
        ("hard" if structure.hard[2 * j] else "soft", "hard" if structure.hard[2 * j + 1] else "soft") for j in range(k)
    )

    # band masses (angular rule); cumulative pieces are built lazily when asked for
    masses = band_masses(window, state) if masses is None else np.asarray(masses, dtype=float)
    omega = np.array([masses[j + 1:].sum() for j in range(k - 1)])
    degree = len(h_coefficients) - 1  # of h: the quadratures below resolve it
    pieces = _Pieces(structure, h_of, on, ellipse, degree)

    # G on the ellipse and the Laurent series of g
    upper = ellipse.upper_half
    zeta, ratio, _ = window.ratio_on_ellipse(structure)
    G_ellipse = 0.5 * (window.dV_upper - C.chebval(zeta / window.dV.half_width, h_coefficients) * ratio)
    scaled = ellipse.laurent_real(ellipse.u[upper] * G_ellipse * ellipse.dz_du[upper])
    total_mass = scaled[0].real
    size = ellipse.size
    m = np.arange(1, size // 2)
    g_scaled = -scaled[-m] / m  # coefficient of (ρ/u)^m in g
    g_scaled = np.asarray(g_scaled)
    # keep the significant part of the series
    significant = np.nonzero(np.abs(g_scaled) > 1e-18 * max(1.0, np.abs(g_scaled).max()))[0]
    g_scaled = g_scaled[: (significant[-1] + 1) if significant.size else 1]
    analytic_leak = float(np.max(np.abs(scaled[1 : size // 4])))  # should vanish: G is analytic outside

    # ℓ from the right end: g(b_k) = g(X) - ∫_{b_k}^X G
    X = ellipse.real_crossing
    bk = e[-1]
    rule = angular_rule(bk, X, near_lo=bk - e[-2], points=panel_points(degree))
    weight = distance_product(structure, len(e) - 1, len(e), rule)
    G_path = 0.5 * (window.dV(rule.x) * rule.dx_dtheta - h_of(rule.x) * weight)
    u_X = ellipse.u_of_z(np.array([X + 0j]))
    g_X = _g_series(ellipse, g_scaled, u_X)[0]
    g_bk = g_X - np.dot(rule.weights, G_path)
    V_bk = float(np.real(field.V(np.array([bk]))[0]))
    lagrange = V_bk - 2.0 * g_bk.real

    # ℓ at the left end of every band, through the gaps, with the exact V
    dV_integral = window.dV.antiderivative(bk, 0.0)
    lagranges = [lagrange]
    gap_total = 0.0
    for j in range(k - 2, -1, -1):
        gap_total += pieces.gap_total(j)
        a = e[2 * j]
        V_a = float(np.real(field.V(np.array([a]))[0]))
        # ℓ_j - ℓ = [V(a_j) - V(b_k) + ∫_{a_j}^{b_k} V'_approx] - Σ_{gaps right of a_j} ∫ eff'
        lagranges.append(lagrange + (V_a - V_bk + (0.0 - float(dV_integral(a)))) - gap_total)
    lagrange_spread = float(np.max(np.abs(np.array(lagranges) - lagrange)))

    # energy: I = (ℓ + ∫ V dμ)/2 with ∫ V dμ by angular quadrature of the exact V
    band_rules = _band_quadratures(structure, h_of, points=panel_points(degree, 24))
    V_all = np.real(field.V(np.concatenate([rule.x for rule, _ in band_rules])))
    V_mean = float(np.dot(np.concatenate([weighted for _, weighted in band_rules]), V_all))
    energy = 0.5 * (lagrange + V_mean)
    capacity = math.exp(-lagrange / 2) if field.is_zero else None

    provisional = EquilibriumMeasure(
        support=support,
        edges=edges,
        masses=masses,
        omega=omega,
        lagrange=float(lagrange),
        energy=float(energy),
        capacity=capacity,
        kind=kind,
        verified=False,
        checks={},
        classification=Classification(True, ()),
        message="",
        field=field,
        on=on,
        _window=window,
        _state=state,
        _g_scaled=g_scaled,
        _pieces=pieces,
    )

    checks: dict[str, float] = {
        "mass_error": float(max(abs(masses.sum() - 1.0), abs(total_mass - 1.0))),
        "lagrange_spread": lagrange_spread,
        "analyticity_leak": analytic_leak,
        "imaginary_part_at_right_end": float(abs(g_bk.imag)),
        "field_approximation": float(window.dV.tail),
        "algebraic_residual": float(np.max(np.abs(state.residual))) if state.residual.size else 0.0,
    }
    if light:
        return replace(provisional, checks=checks)
    # Euler–Lagrange equality by a second discretisation (direct log potential)
    midpoints = np.array([(a + b) / 2 for a, b in support])
    U = provisional.log_potential(midpoints)
    V_mid = np.real(field.V(midpoints))
    checks["euler_lagrange_residual"] = float(np.max(np.abs(2 * U + V_mid - lagrange)) / max(1.0, abs(lagrange)))

    singularities: list[Singularity] = []
    # positivity of the density: η = s_j h on an angular grid of each band (ends included)
    theta = np.linspace(0, math.pi, 257)
    grids = [a + (b - a) * np.sin(theta / 2) ** 2 for a, b in support]
    h_grids = np.split(h_of(np.concatenate(grids)), k)
    etas = [band_sign(structure, j) * values for j, values in enumerate(h_grids)]
    peak = max(float(np.max(np.abs(eta))) for eta in etas) or 1.0
    density_margin = min(float(np.min(eta)) for eta in etas) / peak
    if kind == "signed":
        # not a failure: the signed measure may be negative and still be right (module docstring)
        checks["density_minimum"] = float(density_margin)
    if kind == "positive":
        checks["density_margin"] = float(density_margin)
        for j, (xs, eta) in enumerate(zip(grids, etas)):
            interior = eta[1:-1] / peak
            i = int(np.argmin(interior))
            if interior[i] < SINGULAR_THRESHOLD and 0 < i < len(interior) - 1:
                singularities.append(Singularity("interior zero of the density", float(xs[1 + i])))
            for side, value in ((0, eta[0] / peak), (1, eta[-1] / peak)):
                if abs(value) < SINGULAR_THRESHOLD:
                    label = (
                        "density vanishes faster than a square root at a soft edge"
                        if edges[j][side] == "soft"
                        else "density vanishes at a hard edge (soft-to-hard transition)"
                    )
                    singularities.append(Singularity(label, float(support[j][side])))
        # effective potential off the support: critical points and samples
        regions = _off_support_regions(provisional)
        critical = _real_zeros_of_h(provisional)
        off_min, off_place = _effective_potential_minimum(provisional, regions, critical)
        scale = max(1.0, abs(lagrange))
        checks["min_effective_potential"] = float(off_min / scale)
        for x_touch, value in _effective_potential_touches(provisional, regions, critical):
            if abs(value) / scale < SINGULAR_THRESHOLD:
                singularities.append(Singularity("effective potential touches zero off the support", x_touch))
    if extra_checks:
        checks.update(extra_checks)

    failed = failure_message(checks, TOLERANCES, LOWER_BOUNDS)
    verified = not failed
    if failed:
        message = (message + "; " if message else "") + failed
    classification = Classification(not singularities, tuple(singularities))
    return replace(
        provisional, verified=verified, checks=checks, classification=classification, message=message
    )


class _Pieces:
    """Cumulative integrals on the bands (distribution) and off them (effective potential).

    Built on first use and kept: most callers never need them, and they are the
    expensive part of a result.
    """

    def __init__(self, structure: BandStructure, h_of, on: IntervalSet, ellipse, degree: int = 0):
        self.structure, self.h_of, self.on, self.ellipse = structure, h_of, on, ellipse
        self.points = panel_points(degree, 24)  # Chebyshev points per panel of the cumulative pieces
        self.rule_points = panel_points(degree)
        self._cache: dict = {}

    def band_cdf(self, j: int) -> CumulativeIntegral:
        key = ("band", j)
        if key not in self._cache:
            structure = self.structure
            a, b = structure.ends[2 * j], structure.ends[2 * j + 1]
            breaks = angular_breaks(b - a, *_band_rule_distances(structure, j))
            self._cache[key] = cumulative_integral(
                _band_integrand((structure, self.h_of), j), a, b, breaks, points=self.points
            )
        return self._cache[key]

    def _gap_integrand(self, j: int):
        e = self.structure.ends
        lo, hi = e[2 * j + 1], e[2 * j + 2]
        return lo, hi, _outer_integrand(self.structure, self.h_of, 2 * j + 1, 2 * j + 2, lo, hi, gap_sign(self.structure, j))

    def gap(self, j: int) -> CumulativeIntegral:
        key = ("gap", j)
        if key not in self._cache:
            e = self.structure.ends
            lo, hi, integrand = self._gap_integrand(j)
            breaks = angular_breaks(hi - lo, lo - e[2 * j], e[2 * j + 3] - hi)
            self._cache[key] = cumulative_integral(integrand, lo, hi, breaks, points=self.points)
        return self._cache[key]

    def gap_total(self, j: int) -> float:
        """∫ over gap j of eff' (zero for the solution), by the angular rule."""
        e = self.structure.ends
        lo, hi, integrand = self._gap_integrand(j)
        rule = angular_rule(lo, hi, lo - e[2 * j], e[2 * j + 3] - hi, points=self.rule_points)
        return float(np.dot(rule.weights, integrand(rule.theta)))

    def outer(self, side: str):
        key = ("outer", side)
        if key not in self._cache:
            self._cache[key] = self._build_outer(side)
        return self._cache[key]

    def _build_outer(self, side: str):
        structure, ellipse = self.structure, self.ellipse
        e, k = structure.ends, structure.bands
        sigma_lo, sigma_hi = self.on.hull
        if side == "right":
            bk = e[-1]
            right_end = min(ellipse.real_crossing, sigma_hi)
            if right_end <= bk:
                return None
            breaks = angular_breaks(right_end - bk, bk - e[-2], None)
            return cumulative_integral(
                _outer_integrand(structure, self.h_of, len(e) - 1, len(e), bk, right_end, 1),
                bk,
                right_end,
                breaks,
                points=self.points,
            )
        a1 = e[0]
        X_left = ellipse.centre - ellipse.half_width * 0.5 * (ellipse.rho + 1 / ellipse.rho)
        left_end = max(X_left, sigma_lo)
        if left_end >= a1:
            return None
        # on (-∞, a_1): R^{1/2}/Q_h has sign (-1)^k (-1)^{#hard}; eff(x) = -∫_x^{a_1} eff'
        sign = (-1) ** k * (-1) ** structure.hard_count
        breaks = angular_breaks(a1 - left_end, None, e[1] - a1)
        piece = cumulative_integral(
            _outer_integrand(structure, self.h_of, -1, 0, left_end, a1, sign), left_end, a1, breaks, points=self.points
        )
        return _Reversed(piece)


class _Reversed:
    """eff(x) = -∫_x^{a_1} eff' on the left of the support, from a cumulative integral on [lo, a_1]."""

    def __init__(self, piece: CumulativeIntegral):
        self.piece = piece
        self.lo, self.hi = piece.lo, piece.hi

    def at_theta(self, theta):
        return -(self.piece.total - self.piece.at_theta(theta))


def _power_series(ratio: np.ndarray, coefficients: np.ndarray) -> np.ndarray:
    """Σ_{m≥1} c_m ratio^m for |ratio| ≤ 1, by blocks of powers (vectorised, no Python loop over m)."""
    ratio = np.asarray(ratio, dtype=complex)
    flat = ratio.ravel()
    out = np.zeros(flat.shape, dtype=complex)
    block = 64
    powers_in_block = np.cumprod(np.broadcast_to(flat[:, None], (flat.size, block)), axis=1)
    start_power = np.ones(flat.shape, dtype=complex)
    for start in range(0, len(coefficients), block):
        chunk = coefficients[start : start + block]
        out += start_power * (powers_in_block[:, : len(chunk)] @ chunk)
        start_power = start_power * powers_in_block[:, -1]
        if np.all(np.abs(start_power) < 1e-18):
            break
    return out.reshape(ratio.shape)


def _g_series(ellipse, g_scaled, u):
    """g(z(u)) = log(d/2) + log u + Σ_m g_m u^{-m}, from the coefficients scaled to |u| = ρ."""
    return math.log(ellipse.half_width / 2) + np.log(u) + _power_series(ellipse.rho / u, g_scaled)


def _log_potentials(measure: EquilibriumMeasure, xs: np.ndarray) -> np.ndarray:
    """U^μ(x) = ∫ log 1/|x - y| dμ(y) at many real points, by direct quadrature.

    Band j is integrated with one shared angular rule for the points farther
    than a quarter of its length; for the points in or near it the band is
    split at the point (or graded toward it) so the logarithm sits at the end
    of a panel sequence.  All pieces of one band are evaluated together.
    """
    structure = measure.structure
    points = panel_points(measure.h_degree, 20)
    total = np.zeros(xs.shape)
    for j, (a, b) in enumerate(measure.support):
        near_lo, near_hi = _band_rule_distances(structure, j)
        distance = np.maximum(a - xs, xs - b)
        far = distance > 0.25 * (b - a)
        pieces = []  # (point index or None, rule on the band, kernel distance or None)
        if np.any(far):
            pieces.append((None, angular_rule(a, b, near_lo, near_hi, points=points), None))
        for i in np.nonzero(~far)[0]:
            pieces.extend(_singular_pieces(a, b, near_lo, near_hi, float(xs[i]), i, points))
        # ψ dx/dθ at the nodes of all pieces at once (distances to the band's own ends from each piece)
        on_band = _PointRule(
            a,
            b,
            np.concatenate([rule.x for _, rule, _ in pieces]),
            np.concatenate([rule.from_lo if rule.lo == a else rule.x - a for _, rule, _ in pieces]),
            np.concatenate([rule.to_hi if rule.hi == b else b - rule.x for _, rule, _ in pieces]),
            np.concatenate([rule.dx_dtheta for _, rule, _ in pieces]),
        )
        weighted = _density_dx_dtheta(structure, measure.h, j, on_band) * np.concatenate(
            [rule.weights for _, rule, _ in pieces]
        )
        start = 0
        for i, rule, kernel_distance in pieces:
            stop = start + rule.x.size
            if i is None:
                total[far] += -np.log(np.abs(xs[far, None] - rule.x[None, :])) @ weighted[start:stop]
            else:
                with np.errstate(divide="ignore"):
                    total[i] += float(np.dot(weighted[start:stop], -np.log(kernel_distance)))
            start = stop
    return total


def _singular_pieces(a: float, b: float, near_lo, near_hi, x: float, i: int, points: int = 20) -> list:
    """Angular rules on band [a, b] for a point x in or near it, with the distance |x - y| at their nodes.

    Inside the band: the two pieces [a, x] and [x, b], graded toward x, where
    |x - y| comes from the angle.  Outside: the whole band graded toward the
    side of x.
    """
    tiny = 1e-12 * (b - a)  # grading this deep keeps the logarithm's quadrature error near rounding
    if a < x < b:
        left = angular_rule(a, x, near_lo, tiny, points=points)
        right = angular_rule(x, b, tiny, near_hi, points=points)
        return [(i, left, left.to_hi), (i, right, right.from_lo)]
    d = (a - x) if x <= a else (x - b)
    if x <= a:
        n_lo, n_hi = (tiny if d == 0 else (d if near_lo is None else min(near_lo, d))), near_hi
    else:
        n_lo, n_hi = near_lo, (tiny if d == 0 else (d if near_hi is None else min(near_hi, d)))
    rule = angular_rule(a, b, n_lo, n_hi, points=points)
    return [(i, rule, rule.from_lo + d if x <= a else rule.to_hi + d)]


#: a Chebyshev series is only trusted a little beyond its window
_TRUSTED_T = 1.2


def _real_zeros_of_h(measure: EquilibriumMeasure) -> np.ndarray | None:
    """All real zeros of h with |t| < 1.2, as points x, when h is short enough for the
    colleague matrix; None otherwise (then each region is sampled on its own)."""
    coefficients = measure._state.h
    if len(coefficients) > COLLEAGUE_MAX:
        return None
    roots = real_roots(coefficients, -_TRUSTED_T, _TRUSTED_T, imaginary_tolerance=1e-8)
    return measure._window.dV.centre + measure._window.dV.half_width * roots


def _critical_points(measure: EquilibriumMeasure, critical: np.ndarray | None, lo: float, hi: float) -> np.ndarray:
    """Real zeros of h strictly inside (lo, hi): the critical points of the effective potential there."""
    if critical is not None:
        return critical[(critical > lo) & (critical < hi)]
    window = measure._window
    t_lo, t_hi = max(float(window.t(lo)), -_TRUSTED_T), min(float(window.t(hi)), _TRUSTED_T)
    if t_lo >= t_hi:
        return np.zeros(0)
    roots = real_roots(measure._state.h, t_lo, t_hi, samples=2001)
    return window.dV.centre + window.dV.half_width * roots


def _off_support_regions(measure: EquilibriumMeasure) -> list[tuple[float, float]]:
    """The pieces of Σ \\ S (:meth:`EquilibriumMeasure.complement`) inside the window and a
    little beyond, where eff is sampled: the gaps, then the right and the left ones, cut
    at twice the window's span beyond the window (and the ellipse)."""
    e = measure.structure.ends
    window_lo, window_hi = measure.window
    ellipse = measure._window.ellipse
    span = window_hi - window_lo
    right_cut = max(window_hi, ellipse.real_crossing) + 2 * span
    left_cut = min(window_lo, 2 * ellipse.centre - ellipse.real_crossing) - 2 * span
    pieces = measure.complement()
    gaps = [(lo, hi) for lo, hi in pieces if lo >= e[0] and hi <= e[-1]]
    right = [(lo, min(hi, right_cut)) for lo, hi in pieces if lo >= e[-1] and lo < right_cut]
    left = [(max(lo, left_cut), hi) for lo, hi in pieces if hi <= e[0] and left_cut < hi]
    return gaps + right + left


def _effective_potential_minimum(measure: EquilibriumMeasure, regions=None, critical=None) -> tuple[float, float]:
    """Min of the effective potential over samples of Σ \\ S (denser toward the ends) and its critical points."""
    regions = _off_support_regions(measure) if regions is None else regions
    critical = _real_zeros_of_h(measure) if critical is None else critical  # None: sample each region
    fraction = np.sin(np.linspace(0, math.pi / 2, 66)[1:-1]) ** 2
    samples = []
    for lo, hi in regions:
        samples.append(lo + (hi - lo) * fraction)
        samples.append(_critical_points(measure, critical, lo, hi))
    if not samples:
        return 0.0, math.nan
    xs = np.concatenate(samples)
    values = measure.effective_potential(xs)
    finite = np.isfinite(values)
    if not np.any(finite):
        return 0.0, math.nan
    i = int(np.argmin(np.where(finite, values, np.inf)))
    return float(values[i]), float(xs[i])


def _effective_potential_touches(measure: EquilibriumMeasure, regions=None, critical=None) -> list[tuple[float, float]]:
    """Values of the effective potential at its critical points strictly off the support."""
    regions = _off_support_regions(measure) if regions is None else regions
    critical = _real_zeros_of_h(measure) if critical is None else critical
    points = []
    for lo, hi in regions:
        for x in _critical_points(measure, critical, lo, hi):
            if hi - lo > 0 and min(x - lo, hi - x) >= 1e-6 * (hi - lo):
                points.append(float(x))
    if not points:
        return []
    values = measure.effective_potential(np.array(points))
    return [(x, float(v)) for x, v in zip(points, values) if np.isfinite(v)]
