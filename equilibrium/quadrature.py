"""Quadrature on bands and gaps: angular panels with geometric grading.

Every integral the package needs over a band or a gap [lo, hi] has the form

    ∫_lo^hi F(x) (x - lo)^{σ_lo} (hi - x)^{σ_hi} dx,    σ ∈ {-1/2, 0, +1/2},

with F smooth on [lo, hi] but possibly *nearly* singular: a branch point of
F may sit at a small distance d beyond an end (the far side of a tiny gap,
or of a tiny band).  The substitution

    x = lo + (hi - lo) sin²(θ/2),   θ ∈ [0, π],                     (1)

turns (x - lo)^{±1/2} (hi - x)^{±1/2} dx into a trigonometric polynomial in
θ/2 times dθ, so the endpoint behaviour costs nothing.  A branch point at
distance d beyond ``hi`` sits at distance 2 (d/(hi-lo))^{1/2} from θ = π in
the θ-plane; the rule grades the θ-panels geometrically toward that end
(breaks at π - 2^{-j}, j = 0, 1, …) until the first panel is as short as
that distance, and uses Gauss–Legendre points on each panel.  The cost
therefore grows with log(1/d), not with 1/d: a gap of 1e-8 of the hull adds
about a dozen panels.  Because the breaks are fixed angles, all intervals
with the same grading share one θ-rule (cached); a rule on a new interval
is a few vector operations.

Geometric grading toward a near singularity is common practice (e.g.
Schwab, p- and hp-Finite Element Methods, 1998, ch. 4).

Distances x - lo, hi - x and |x - e| for endpoints e beyond the interval are
all formed from the angle, never by subtracting two nearby floats, so
nothing is lost when the gaps are tiny.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import chebyshev as C
from scipy.special import roots_legendre

from .chebyshev import chebyshev_from_first_kind_values, chebyshev_points

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


@functools.lru_cache(maxsize=32)
def gauss_legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes and weights on [-1, 1] (cached, read-only)."""
    x, w = roots_legendre(n)
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
