"""Chebyshev approximation on an interval J = [lower, upper].

A function on J is represented by coefficients c_m of Σ c_m T_m(t) with
t = (2x - lower - upper)/(upper - lower).  The derivative V' of the field is
approximated this way on a window containing the support (exactly, up to
rounding, when V is a polynomial); everything downstream is then an
algebraic problem for that approximation.

Adaptive construction follows common practice (sample at first-kind
Chebyshev points, double the size until the tail of the coefficients is
below the tolerance; cf. Trefethen, Approximation Theory and Approximation
Practice, SIAM 2013, ch. 3 and 8).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from numpy.polynomial import chebyshev as C

from .errors import InputError


def chebyshev_points(n: int) -> np.ndarray:
    """First-kind Chebyshev points cos(π(j + 1/2)/n), j = 0..n-1, on [-1, 1]."""
    return np.cos(np.pi * (np.arange(n) + 0.5) / n)


def chebyshev_from_first_kind_values(values: np.ndarray) -> np.ndarray:
    """Coefficients of the interpolant through values at :func:`chebyshev_points` (DCT-II, last axis)."""
    values = np.asarray(values, dtype=float)
    n = values.shape[-1]
    # imported here, not at module level: a command that never fits a series skips scipy.fft.
    # (A cosine-matrix product would avoid scipy altogether but rounds differently: Ω of a
    # two-band quartic moved by 8e-16, enough to shift a_n at n = 2000 by 2e-12.)
    from scipy.fft import dct

    coefficients = dct(values, type=2, axis=-1) / n
    coefficients[..., 0] /= 2
    return coefficients


#: longest series whose roots come from the colleague matrix; longer ones are sampled
COLLEAGUE_MAX = 80


def real_roots(coefficients: np.ndarray, t_lo: float, t_hi: float, imaginary_tolerance: float = 1e-10,
               samples: int = 4001) -> np.ndarray:
    """Real roots in (t_lo, t_hi) of Σ c_m T_m(t), ascending.

    Short series: eigenvalues of the colleague matrix (numpy's ``chebroots``;
    Good, Quart. J. Math. 12 (1961) 61–68) whose imaginary part is below
    ``imaginary_tolerance``.  Long series: sign changes on a uniform grid of
    ``samples`` points (a root of even multiplicity is then missed).
    """
    if len(coefficients) <= COLLEAGUE_MAX:
        roots = C.chebroots(coefficients)
        roots = np.sort(roots[np.abs(roots.imag) < imaginary_tolerance].real)
    else:
        t = np.linspace(t_lo, t_hi, samples)
        values = C.chebval(t, coefficients)
        change = np.nonzero(np.sign(values[:-1]) != np.sign(values[1:]))[0]
        roots = 0.5 * (t[change] + t[change + 1])
    return roots[(roots > t_lo) & (roots < t_hi)]


class IntervalMap:
    """The affine map t = (x - c)/d of J = [lower, upper] onto [-1, 1] (c the centre, d the
    half-width); shared by :class:`ChebyshevApproximation` and
    :class:`equilibrium.ellipse.JoukowskiEllipse`, which both have ``lower`` and ``upper``."""

    lower: float
    upper: float

    @property
    def centre(self) -> float:
        return 0.5 * (self.lower + self.upper)

    @property
    def half_width(self) -> float:
        return 0.5 * (self.upper - self.lower)

    def to_t(self, x):
        return (np.asarray(x) - self.centre) / self.half_width


@dataclass(frozen=True)
class ChebyshevApproximation(IntervalMap):
    """f(x) ≈ Σ c_m T_m(t(x)) on [lower, upper].

    Attributes
    ----------
    coefficients : the c_m.
    tail : estimated sup-norm error of the truncation, relative to max|f|.
    exact : True when f is a polynomial represented without truncation.
    """

    lower: float
    upper: float
    coefficients: np.ndarray
    tail: float
    exact: bool

    @property
    def degree(self) -> int:
        return len(self.coefficients) - 1

    def __call__(self, x):
        return C.chebval(self.to_t(x), self.coefficients)

    def antiderivative(self, anchor: float, value: float) -> "ChebyshevApproximation":
        """The antiderivative F with F(anchor) = value."""
        coefficients = C.chebint(self.coefficients) * self.half_width
        coefficients[0] += value - C.chebval(self.to_t(anchor), coefficients)
        return ChebyshevApproximation(self.lower, self.upper, coefficients, self.tail, self.exact)


def chebyshev_fit(
    function: Callable[[np.ndarray], np.ndarray],
    lower: float,
    upper: float,
    *,
    degree: int | None = None,
    tolerance: float = 2e-16,
    max_degree: int = 1024,
    name: str = "V'",
) -> ChebyshevApproximation:
    """Chebyshev approximation of a real function on [lower, upper].

    With ``degree`` given (a polynomial of that degree) the interpolant at
    degree+1 points is exact up to rounding.  Otherwise the number of points
    doubles from 33 until the last eighth of the coefficients is below
    ``tolerance`` times the largest, and the tail is chopped.
    """
    centre, half = 0.5 * (lower + upper), 0.5 * (upper - lower)

    def sample(n: int) -> np.ndarray:
        x = centre + half * chebyshev_points(n)
        with np.errstate(all="ignore"):
            values = np.asarray(function(x))
        if np.iscomplexobj(values):
            if np.any(np.abs(values.imag) > 1e-12 * (1 + np.abs(values.real))):
                raise InputError(f"{name} is not real on the set; the field must be real-valued there")
            values = values.real
        values = np.broadcast_to(np.asarray(values, dtype=float), x.shape)
        bad = ~np.isfinite(values)
        if np.any(bad):
            where = x[np.argmax(bad)]
            raise InputError(
                f"{name} is not finite at x = {where:.6g}; the field must be finite on the set (restrict the set)",
                about="set",
            )
        return values

    if degree is not None:
        coefficients = chebyshev_from_first_kind_values(sample(degree + 1))
        return ChebyshevApproximation(lower, upper, coefficients, 0.0, True)
    n = 33
    while True:
        coefficients = chebyshev_from_first_kind_values(sample(n))
        scale = np.max(np.abs(coefficients)) or 1.0
        tail = np.max(np.abs(coefficients[-max(4, n // 8):])) / scale
        if tail <= tolerance or n >= max_degree:
            break
        n = 2 * n - 1
    significant = np.nonzero(np.abs(coefficients) > tolerance * scale)[0]
    last = int(significant[-1]) + 1 if significant.size else 1
    # keep a few more terms than the significant ones: they cost nothing
    coefficients = coefficients[: min(len(coefficients), last + 2)]
    return ChebyshevApproximation(lower, upper, coefficients, float(tail), False)
