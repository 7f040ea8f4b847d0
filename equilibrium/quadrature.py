r"""Quadrature on bands and gaps with geometric grading toward nearly singular ends.

Every integral the packages need over a band or a gap [lo, hi] has the form

    ∫_lo^hi F(x) (x - lo)^{σ_lo} (hi - x)^{σ_hi} dx,

with F smooth on [lo, hi] but possibly *nearly* singular: a branch point of
F may sit at a small distance d beyond an end (the far side of a tiny gap,
or of a tiny band).  Two families of rules handle it, one per kind of
endpoint factor; both grade geometrically toward a near singularity, so the
cost grows with log(1/d), not with 1/d.

Angular rules (σ ∈ {-1/2, 0, +1/2}; the equilibrium solver)
-----------------------------------------------------------
The substitution

    x = lo + (hi - lo) sin²(θ/2),   θ ∈ [0, π],                     (1)

turns (x - lo)^{±1/2} (hi - x)^{±1/2} dx into a trigonometric polynomial in
θ/2 times dθ, so the endpoint behaviour costs nothing.  A branch point at
distance d beyond ``hi`` sits at distance 2 (d/(hi-lo))^{1/2} from θ = π in
the θ-plane; the rule grades the θ-panels geometrically toward that end
(breaks at π - 2^{-j}, j = 0, 1, …) until the first panel is as short as
that distance, and uses Gauss–Legendre points on each panel.  A gap of 1e-8
of the hull adds about a dozen panels.  Because the breaks are fixed angles,
all intervals with the same grading share one θ-rule (cached); a rule on a
new interval is a few vector operations.  Distances x - lo, hi - x and
|x - e| for endpoints e beyond the interval are all formed from the angle,
never by subtracting two nearby floats, so nothing is lost when the gaps are
tiny.

Graded Gauss–Jacobi rules (any exponents > -1; the curve, g-function, direct engine)
------------------------------------------------------------------------------------
For ``∫_a^b f(x) (b - x)^α (x - a)^β dx`` a single Gauss–Jacobi rule (nodes of
the Jacobi polynomial ``P_n^{(α,β)}``; Golub and Welsch, Math. Comp. 23 (1969)
221-230) converges geometrically when ``f`` is analytic near ``[a, b]``.  A
singular point at distance ``d ≪ b - a`` from endpoint ``a`` slows that down to
a rate ~ ``1 - O(sqrt(d/(b-a)))``; the cure is composite panels that shrink
geometrically toward ``a`` (ratio 1/2) until the innermost panel is shorter
than ``d/2`` -- each panel then sees the singularity at a distance at least
comparable to its length, and every panel converges at a fixed geometric
rate.  The innermost panel keeps the Jacobi weight of the endpoint; the
others use Gauss–Legendre (the same cached rule as the angular panels) with
the (smooth there) endpoint factors evaluated.

Source
------
Geometric (hp-) grading toward a near singularity: Schwab, p- and hp-Finite
Element Methods, Oxford 1998, ch. 4 (§4.5); common practice for near-singular
quadrature.  Gauss rules from the Jacobi matrix: Golub and Welsch 1969;
recurrence coefficients of the Jacobi polynomials: Szegő, Orthogonal
Polynomials, 1939, §4.5."""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np
from numpy.polynomial import chebyshev as C

from .chebyshev import chebyshev_from_first_kind_values, chebyshev_points
from .errors import InputError

__all__ = [
    "PANEL_POINTS", "panel_points", "gauss_legendre", "grading_levels", "angular_breaks",
    "AngularRule", "angular_rule", "CumulativeIntegral", "theta_of_x", "cumulative_integral",
    "GRADING_THRESHOLD", "gauss_jacobi", "graded_jacobi_rule",
]

#: Gauss–Legendre points per angular panel
PANEL_POINTS = 16


def panel_points(degree: int, minimum: int = PANEL_POINTS) -> int:
    """Gauss–Legendre points per angular panel for an integrand carrying a polynomial
    of the given degree in x.

    Under (1) such a polynomial is a cosine polynomial of the same degree in θ on
    [0, π]; the two main panels of a rule then need about degree/2 points each
    beyond what the endpoint factors need.  Polynomial fields keep the minimum;
    a non-polynomial V, whose Chebyshev approximation on the window may have a
    degree in the hundreds, gets rules that resolve it.
    """
    return max(int(minimum), int(degree) // 2 + 8)


@functools.lru_cache(maxsize=64)
def gauss_legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes and weights on [-1, 1] (cached, read-only).

    Newton's method on ``P_n`` from ``cos(π(i + 3/4)/(n + 1/2))`` (Tricomi's
    first-order node estimate: Hale & Townsend, SIAM J. Sci. Comput. 35 (2013)
    A652–A674, eq. (3.1)), ``P_n`` and ``P_{n-1}`` by the three-term recurrence,
    weights ``2 / ((1 - x²) P_n'(x)²)`` (Abramowitz & Stegun 25.4.29), made
    exactly symmetric.  Against mpmath (tests/equilibrium/test_quadrature_rules.py)
    the nodes are within 2e-16 and the weights within 2e-13 relative for
    n ≤ 200, more accurate than scipy.special.roots_legendre (weights off by
    4e-13 at n = 40, 4e-11 at n = 200); numpy only, so that solving a field
    does not import scipy (0.4 s).
    """
    n = int(n)
    if n < 1:
        raise InputError(f"a Gauss–Legendre rule needs at least one point, got {n}")
    x = np.cos(np.pi * (np.arange(n) + 0.75) / (n + 0.5))

    def legendre(x):
        previous, current = np.ones_like(x), x.copy()
        for k in range(2, n + 1):
            previous, current = current, ((2 * k - 1) * x * current - (k - 1) * previous) / k
        if n == 1:
            previous = np.ones_like(x)
        return current, n * (x * current - previous) / (x * x - 1.0)   # P_n, P_n'

    for _ in range(100):
        value, slope = legendre(x)
        step = value / slope
        x = x - step
        if np.max(np.abs(step)) <= 1e-16:
            break
    value, slope = legendre(x)
    w = 2.0 / ((1.0 - x * x) * slope * slope)
    x, w = x[::-1], w[::-1]                      # ascending
    x = 0.5 * (x - x[::-1])
    w = 0.5 * (w + w[::-1])
    x.setflags(write=False)
    w.setflags(write=False)
    return x, w


def grading_levels(length: float, near: float | None) -> int:
    """Number of geometrically graded θ-panels toward an end with a singular point
    at distance ``near`` beyond it (``None``: none closer than the interval itself).

    The branch point sits at distance 2 (near/length)^{1/2} from the end in the
    θ-plane; the breaks 2^{-j}, j = 0..levels-1, reach down to a first panel
    no longer than that distance, and every panel is at most as long as its
    distance from the end (the last one, [1, π], about twice as long).
    """
    if near is None or not near < length:
        return 0
    distance = 2.0 * math.sqrt(near / length)
    if distance >= 1.0:
        return 0
    return max(1, math.ceil(math.log2(1.0 / distance)))


@functools.lru_cache(maxsize=256)
def _breaks_of_levels(levels_lo: int, levels_hi: int) -> np.ndarray:
    left = [2.0 ** -j for j in range(levels_lo)]
    right = [math.pi - 2.0 ** -j for j in range(levels_hi)]
    interior = [math.pi / 2] if not (left or right) else []  # two panels even for smooth integrands
    breaks = np.array(sorted([0.0, math.pi] + left + interior + right))
    breaks.setflags(write=False)
    return breaks


def angular_breaks(length: float, near_lo: float | None, near_hi: float | None) -> np.ndarray:
    """Panel breaks in θ ∈ [0, π] for an interval of the given length.

    Parameters
    ----------
    length : hi - lo.
    near_lo, near_hi : distance of the nearest singular point beyond each
        end (``None`` when there is none closer than the interval itself).

    The breaks sit at the fixed angles 2^{-j} (and π minus them), so they
    depend on the distances only through :func:`grading_levels`: rules for
    intervals of the same grading share their θ-nodes.
    """
    return _breaks_of_levels(grading_levels(length, near_lo), grading_levels(length, near_hi))


@functools.lru_cache(maxsize=256)
def _theta_rule(levels_lo: int, levels_hi: int, points: int) -> tuple[np.ndarray, ...]:
    """θ-nodes and weights of the graded rule, and sin²(θ/2), cos²(θ/2), sin(θ/2)cos(θ/2) there."""
    breaks = _breaks_of_levels(levels_lo, levels_hi)
    t, w = gauss_legendre(points)
    left, right = breaks[:-1, None], breaks[1:, None]
    half = (right - left) / 2
    theta = (left + half * (t + 1)).ravel()
    weights = (half * w).ravel()
    s, c = np.sin(theta / 2), np.cos(theta / 2)
    arrays = (theta, weights, s * s, c * c, s * c)
    for array in arrays:
        array.setflags(write=False)
    return arrays


@dataclass(frozen=True)
class AngularRule:
    """Nodes on [lo, hi] given by (1), with everything needed to integrate.

    Attributes
    ----------
    theta, weights : Gauss–Legendre nodes in θ and their weights.
    x : the nodes in x.
    from_lo, to_hi : x - lo and hi - x at the nodes, computed without cancellation.
    dx_dtheta : (hi - lo) sin(θ/2) cos(θ/2).
    breaks : the θ-panel breaks.
    """

    lo: float
    hi: float
    theta: np.ndarray
    weights: np.ndarray
    x: np.ndarray
    from_lo: np.ndarray
    to_hi: np.ndarray
    dx_dtheta: np.ndarray
    breaks: np.ndarray


def angular_rule(
    lo: float,
    hi: float,
    near_lo: float | None = None,
    near_hi: float | None = None,
    points: int = PANEL_POINTS,
) -> AngularRule:
    """Graded Gauss–Legendre rule in the angle (1) on [lo, hi].

    The θ-part is shared by all intervals of the same grading (cached), so a
    rule costs a few vector operations.
    """
    length = hi - lo
    levels_lo, levels_hi = grading_levels(length, near_lo), grading_levels(length, near_hi)
    theta, weights, sin2, cos2, sincos = _theta_rule(levels_lo, levels_hi, points)
    from_lo = length * sin2
    return AngularRule(
        lo=lo,
        hi=hi,
        theta=theta,
        weights=weights,
        x=lo + from_lo,
        from_lo=from_lo,
        to_hi=length * cos2,
        dx_dtheta=length * sincos,
        breaks=_breaks_of_levels(levels_lo, levels_hi),
    )


@dataclass(frozen=True)
class CumulativeIntegral:
    """A cumulative integral Φ(θ) = ∫_0^θ φ on angular panels, as Chebyshev pieces.

    Used for the distribution function on a band and the effective
    potential on a gap: both are integrals of smooth functions of θ.
    """

    lo: float
    hi: float
    breaks: np.ndarray
    pieces: np.ndarray  # row j: Chebyshev coefficients of Φ on panel j (panel mapped to [-1, 1])
    offsets: np.ndarray  # Φ at the left break of each panel

    @property
    def total(self) -> float:
        return float(self.offsets[-1] + self.pieces[-1].sum())  # T_m(1) = 1

    def at_theta(self, theta: np.ndarray) -> np.ndarray:
        """Φ(θ), all points at once: T_m(s) = cos(m arccos s) on each point's own panel."""
        theta = np.asarray(theta, dtype=float)
        flat = theta.ravel()
        index = np.clip(np.searchsorted(self.breaks, flat, side="right") - 1, 0, len(self.pieces) - 1)
        left, right = self.breaks[index], self.breaks[index + 1]
        s = np.clip((2 * flat - left - right) / (right - left), -1.0, 1.0)
        degrees = np.arange(self.pieces.shape[1])
        T = np.cos(np.arccos(s)[:, None] * degrees[None, :])
        values = self.offsets[index] + np.einsum("ij,ij->i", T, self.pieces[index])
        return values.reshape(theta.shape)


@functools.lru_cache(maxsize=8)
def _cumulative_matrices(points: int) -> tuple[np.ndarray, np.ndarray]:
    """Matrices taking values at first-kind Chebyshev points to the Chebyshev
    coefficients of the interpolant (the DCT-II of :mod:`.chebyshev`) and then
    to those of its antiderivative vanishing at -1 (``chebint`` with lbnd=-1)."""
    identity = np.eye(points)
    to_coefficients = chebyshev_from_first_kind_values(identity).T  # column j: coefficients of e_j
    integrate = np.column_stack([C.chebint(identity[j], lbnd=-1) for j in range(points)])
    for matrix in (to_coefficients, integrate):
        matrix.setflags(write=False)
    return to_coefficients, integrate


def theta_of_x(lo: float, hi: float, x: np.ndarray) -> np.ndarray:
    """Inverse of (1), accurate near both ends."""
    x = np.asarray(x, dtype=float)
    length = hi - lo
    near_lo = (x - lo) <= (hi - x)
    out = np.empty(x.shape)
    with np.errstate(invalid="ignore"):
        out[near_lo] = 2 * np.arcsin(np.sqrt(np.clip((x[near_lo] - lo) / length, 0, 1)))
        out[~near_lo] = math.pi - 2 * np.arcsin(np.sqrt(np.clip((hi - x[~near_lo]) / length, 0, 1)))
    return out


def cumulative_integral(integrand, lo: float, hi: float, breaks: np.ndarray, points: int = 24) -> CumulativeIntegral:
    """Build Φ(θ) = ∫_0^θ integrand(θ') dθ' on the given θ-panels.

    ``integrand(theta)`` must return the (smooth) integrand in θ, i.e. already
    multiplied by dx/dθ; it is called once with the nodes of all panels.
    On each panel the integrand is interpolated at first-kind Chebyshev points
    and the interpolant integrated exactly (common practice; the indefinite
    form of Clenshaw–Curtis quadrature, cf. Trefethen, Approximation Theory
    and Approximation Practice, SIAM 2013, ch. 19).
    """
    breaks = np.asarray(breaks, dtype=float)
    nodes = chebyshev_points(points)
    left, right = breaks[:-1, None], breaks[1:, None]
    theta = (left + right) / 2 + (right - left) / 2 * nodes
    values = np.asarray(integrand(theta.ravel())).reshape(theta.shape)
    to_coefficients, integrate = _cumulative_matrices(points)
    antiderivative = (values @ to_coefficients.T) @ integrate.T * (right - left) / 2
    totals = antiderivative.sum(axis=1)  # Φ at the right end of each panel (T_m(1) = 1)
    offsets = np.concatenate([[0.0], np.cumsum(totals)[:-1]])
    return CumulativeIntegral(lo=lo, hi=hi, breaks=breaks, pieces=antiderivative, offsets=offsets)


# ----------------------------------------------------------------------------- graded Gauss–Jacobi

#: a singular point nearer than this fraction of b - a to an endpoint triggers grading
GRADING_THRESHOLD = 0.25


@functools.lru_cache(maxsize=128)
def gauss_jacobi(n: int, alpha: float, beta: float) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Jacobi nodes/weights on [-1, 1] for (1 - t)^α (1 + t)^β (read only).

    α = β = 0 is Gauss–Legendre: the cached rule of :func:`gauss_legendre` (one
    cache for both families).  α = β = -1/2 is Gauss–Chebyshev (closed form).
    Otherwise Golub–Welsch:
    eigenvalues of the symmetric Jacobi matrix of the Jacobi polynomials and
    the squared first eigenvector components times μ_0 = 2^{α+β+1} B(α+1, β+1)
    (recurrence coefficients: Szegő, Orthogonal Polynomials, 1939, §4.5;
    Golub and Welsch 1969).  ``scipy.special.roots_jacobi`` is not used for the
    asymmetric exponents: measured here, its rule for (α, β) = (0, -1/2) errs by
    1e-13 at n = 20 and 2e-12 at n = 80 on cos(3t + 0.2), against 5e-15 for
    Golub–Welsch.
    """
    if alpha == 0.0 and beta == 0.0:
        return gauss_legendre(n)
    if alpha == -0.5 and beta == -0.5:
        t = np.cos((2.0 * np.arange(n, 0, -1) - 1.0) * np.pi / (2.0 * n))
        w = np.full(n, np.pi / n)
    elif n == 1:
        from scipy.special import betaln  # imported here: only hard edges and singular factors need scipy

        t = np.array([(beta - alpha) / (alpha + beta + 2.0)])
        w = np.array([np.exp((alpha + beta + 1.0) * np.log(2.0) + betaln(alpha + 1.0, beta + 1.0))])
    else:
        from scipy.linalg import eigh_tridiagonal
        from scipy.special import betaln

        a, b = float(alpha), float(beta)
        k = np.arange(n, dtype=float)
        s = 2.0 * k + a + b
        diag = np.empty(n)
        diag[0] = (b - a) / (a + b + 2.0)
        diag[1:] = (b * b - a * a) / (s[1:] * (s[1:] + 2.0))
        k1 = k[1:]
        s1 = s[1:]
        # (k + α + β)/(2k + α + β - 1) is identically 1 at k = 1 (0/0 when α + β = -1)
        ratio = np.ones_like(k1)
        ratio[1:] = (k1[1:] + a + b) / (s1[1:] - 1.0)
        off = np.sqrt(4.0 * k1 * (k1 + a) * (k1 + b) * ratio / (s1 * s1 * (s1 + 1.0)))
        t, V = eigh_tridiagonal(diag, off)
        w = np.exp((a + b + 1.0) * np.log(2.0) + betaln(a + 1.0, b + 1.0)) * V[0] ** 2
    t.setflags(write=False)
    w.setflags(write=False)
    return t, w


def _panel(a: float, L: float, c0: float, c1: float, n: int, wa: float, wb: float):
    """Gauss–Jacobi rule on the panel [a + L c0, a + L c1] of [a, a + L].

    Weight (x - lo)^wa (hi - x)^wb in the panel's own end points.  Returns the
    nodes, weights, x - a and (a + L) - x; the panel width is formed from the
    exact fractions c0, c1 (never from rounded absolute end points, which
    would cost relative accuracy on panels of width 1e-9 away from 0).
    """
    t, w = gauss_jacobi(n, float(wb), float(wa))
    half = 0.5 * L * (c1 - c0)
    da = L * c0 + half * (1.0 + t)
    db = L * (1.0 - c1) + half * (1.0 - t)
    return a + da, w * half ** (1.0 + wa + wb), da, db


def graded_jacobi_rule(a: float, b: float, alpha: float, beta: float, near: Sequence[complex] = (),
                       n: int = 30, return_distances: bool = False):
    r"""Nodes and weights for ∫_a^b f(x) (b - x)^α (x - a)^β dx ≈ Σ w_i f(x_i).

    Parameters
    ----------
    a, b : float
        Interval, ``a < b``.
    alpha, beta : float
        Exponents (> -1) of ``(b - x)`` and ``(x - a)``.
    near : sequence of complex
        Singular points of ``f`` (not on ``[a, b]``).  A point within
        ``GRADING_THRESHOLD·(b - a)`` of an endpoint grades the panels toward
        that endpoint down to half its distance.
    n : int
        Nodes per panel.
    return_distances : bool
        Also return ``x - a`` and ``b - x`` computed from the panel geometry,
        accurate to full *relative* precision even for nodes 1e-12 from an end
        (``b - nodes`` would lose digits); integrands with near singularities
        should evaluate their factors from these.

    Returns
    -------
    nodes, weights : ndarray
        Real nodes in ``(a, b)`` and weights that include the endpoint factors.
    x_minus_a, b_minus_x : ndarray
        Only with ``return_distances=True``.
    """
    a = float(a)
    b = float(b)
    if not (np.isfinite(a) and np.isfinite(b) and a < b):
        raise InputError(f"quadrature interval must satisfy a < b (finite); got [{a}, {b}]")
    if not (alpha > -1 and beta > -1):
        raise InputError(f"Jacobi exponents must exceed -1; got alpha={alpha}, beta={beta}")
    if n < 1:
        raise InputError(f"need at least one node per panel; got n={n}")
    L = b - a
    d_left = np.inf
    d_right = np.inf
    for p in np.atleast_1d(np.asarray(near, dtype=complex)):
        s = (p - a) / L
        if abs(s.imag) < 1e-15 and 0.0 < s.real < 1.0:
            raise InputError(f"singular point {p} lies inside the quadrature interval [{a}, {b}]")
        dl, dr = abs(s), abs(s - 1.0)
        if dl <= dr:
            d_left = min(d_left, dl)
        else:
            d_right = min(d_right, dr)

    def grade(d: float) -> list[float]:
        # breakpoints 1/2, 1/4, ... (relative distance to the endpoint) until below d/2
        if not d < GRADING_THRESHOLD:
            return []
        h = [0.5]
        while h[-1] > 0.5 * d:
            h.append(0.5 * h[-1])
        return h

    hl, hr = grade(d_left), grade(d_right)
    if not hl and not hr:
        x, w, da, db = _panel(a, L, 0.0, 1.0, n, beta, alpha)
        return (x, w, da, db) if return_distances else (x, w)

    # breakpoints in s ∈ [0, 1]
    left = sorted(hl)[:-1] if hl else []          # drop 1/2 (midpoint added once below)
    right = sorted(1.0 - h for h in hr)[1:] if hr else []
    cuts = [0.0] + left + [0.5] + right + [1.0]
    xs, ws, das, dbs = [], [], [], []
    last = len(cuts) - 2
    for i in range(len(cuts) - 1):
        ea = beta if i == 0 else 0.0               # Jacobi weight kept on the end panels only
        eb = alpha if i == last else 0.0
        x, w, da, db = _panel(a, L, cuts[i], cuts[i + 1], n, ea, eb)
        if i != 0:
            w = w * da ** beta
        if i != last:
            w = w * db ** alpha
        xs.append(x)
        ws.append(w)
        das.append(da)
        dbs.append(db)
    out = (np.concatenate(xs), np.concatenate(ws))
    if return_distances:
        out = out + (np.concatenate(das), np.concatenate(dbs))
    return out
