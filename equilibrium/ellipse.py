"""The Joukowski ellipse around a window J and Laurent splitting on it.

With c, d the centre and half-width of J = [lower, upper],

    z(u) = c + d (u + 1/u)/2

maps |u| > 1 conformally onto the exterior of J and the unit circle onto J
(twice).  A function f analytic in an annulus 1 < |u| < ρ_f around J splits
uniquely as f = K + r with K analytic inside the ellipse |u| = ρ_f and r
analytic outside J with r(∞) = 0.  In the Laurent series f = Σ f_m u^m,

    K(z) = f_0 + Σ_{m≥1} 2 f_m T_m(t),     r = Σ_{m≥1} (f_{-m} - f_m) u^{-m},     (1)

because T_m(t) = (u^m + u^{-m})/2 on the ellipse.  K is the Cauchy integral
(1/2πi)∮ f(s)/(s - z) ds over any ellipse between J and ρ_f, and the
coefficients f_m come from one FFT of samples on |u| = ρ (trapezoidal rule,
geometrically convergent; Trefethen and Weideman, SIAM Rev. 56 (2014) 385–458).

Coefficients are stored *scaled to the circle*: ``scaled[m] = f_m ρ^m``.
Dividing by ρ^m for m > 0 is harmless; for m < 0 the scaled form is what a
series evaluated at |u| ≥ ρ needs, so no large power of ρ is ever formed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .chebyshev import IntervalMap


@dataclass(frozen=True)
class JoukowskiEllipse(IntervalMap):
    """Sample points on the ellipse |u| = ρ around [lower, upper]."""

    lower: float
    upper: float
    rho: float
    size: int
    u: np.ndarray
    z: np.ndarray
    dz_du: np.ndarray
    zeta: np.ndarray  # z - centre, formed without cancellation (the window may lie far from 0)

    @property
    def real_crossing(self) -> float:
        """The point where the ellipse crosses the real axis right of J."""
        return self.centre + self.half_width * 0.5 * (self.rho + 1 / self.rho)

    @property
    def upper_half(self) -> slice:
        """The sample points with Im u ≥ 0 (indices 0..size/2, both real crossings included)."""
        return slice(0, self.size // 2 + 1)

    def laurent_real(self, upper_samples: np.ndarray) -> np.ndarray:
        """Scaled Laurent coefficients f_m ρ^m (last axis, index m mod size) of a function
        real on the real axis, f(z̄) = conj f(z), from its samples at :attr:`upper_half`.

        The trapezoidal rule on |u| = ρ gives them as the FFT of the samples divided by
        the size.  Such an f has real coefficients, and its samples on the lower half
        are the conjugates of those on the upper half, so one Hermitian FFT of half
        the length gives them (half the evaluations of f, and the imaginary parts
        that rounding would leave are never formed).
        """
        return np.fft.hfft(upper_samples, n=self.size, axis=-1) / self.size

    def chebyshev_part(self, scaled: np.ndarray, count: int) -> np.ndarray:
        """Chebyshev coefficients of the inner part K in (1), first ``count`` of them."""
        m = np.arange(count)
        coefficients = 2.0 * scaled[..., :count].real / self.rho ** m
        coefficients[..., 0] /= 2.0
        return coefficients

    def outer_part(self, scaled: np.ndarray, count: int) -> np.ndarray:
        """Unscaled coefficients (f_{-m} - f_m), m = 1..count, of r in (1).

        Only for small m: f_{-m} = scaled[-m] ρ^m.
        """
        m = np.arange(1, count + 1)
        return (scaled[..., -m].real * self.rho ** m - scaled[..., m].real / self.rho ** m)

    def on_ellipse(self, chebyshev: np.ndarray) -> np.ndarray:
        """Values of Σ c_m T_m(t(u)) at the sample points, by one inverse FFT."""
        degree = len(chebyshev) - 1
        if 2 * degree + 1 > self.size:
            raise ValueError("ellipse has too few points for this degree")
        scaled = np.zeros(self.size, dtype=complex)
        m = np.arange(1, degree + 1)
        scaled[0] = chebyshev[0]
        scaled[m] = 0.5 * chebyshev[1:] * self.rho ** m
        scaled[-m] = 0.5 * chebyshev[1:] * self.rho ** (-m)
        return np.fft.ifft(scaled) * self.size

    def u_of_z(self, z: np.ndarray) -> np.ndarray:
        """Inverse map onto |u| ≥ 1 (the exterior branch)."""
        t = self.to_t(np.asarray(z, dtype=complex))
        root = np.sqrt(t - 1) * np.sqrt(t + 1)  # branch ~ t at infinity, cut on [-1, 1]
        return t + root


def ellipse_for(lower: float, upper: float, degree: int, bands: int) -> JoukowskiEllipse:
    """Choose ρ and the number of points for polynomial data of the given degree.

    ρ = 1 + 1/(degree + 2 bands + 2) keeps the growth ρ^degree of the inner part
    below e (so no digits are lost), and size ≥ 36/log ρ makes the aliasing of
    the outer part (which decays like ρ^{-m}) smaller than e^{-36} ≈ 2e-16.
    """
    spread = degree + 2 * bands + 2
    rho = 1.0 + 1.0 / spread
    size = 1 << max(7, math.ceil(math.log2(max(36.0 / math.log(rho), 4.0 * spread))))
    u = rho * np.exp(2j * np.pi * np.arange(size) / size)
    centre, half = 0.5 * (lower + upper), 0.5 * (upper - lower)
    zeta = half * 0.5 * (u + 1 / u)
    z = centre + zeta
    dz_du = half * 0.5 * (1 - u ** -2)
    for array in (u, z, dz_du, zeta):
        array.setflags(write=False)
    return JoukowskiEllipse(lower, upper, rho, size, u, z, dz_du, zeta)
