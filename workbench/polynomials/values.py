"""Scaled values of ``p_k`` and ``π_k``; the Christoffel–Darboux kernel.

At large degree ``p_k(z)`` overflows (``|p_k| ~ e^{k Re g}`` off the support,
``∝ e^{nV/2}`` on it), so values are returned as :class:`ScaledValues`
``mantissa · exp(log_scale)``.  The three-term recurrence is run per point
with exact binary renormalisation (``frexp``/``ldexp``), as in
:func:`.recurrence.stieltjes`: every 8 steps the points whose mantissas
left ``[2^-150, 2^150]`` are rescaled.  On the real line the natural finite quantity is
``p_k(x) w_n(x)^{1/2}`` (:func:`weighted_values`), which is bounded by
``O(K^{1/2})`` (Christoffel-function bound: common practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from equilibrium.errors import InputError
from equilibrium.weight import Weight

from .recurrence import RecurrenceCoefficients

_LOG2 = math.log(2.0)


@dataclass(frozen=True)
class ScaledValues:
    """``value = mantissa · exp(log_scale)``, elementwise.

    ``log_scale`` is real; ``mantissa`` is real or complex.
    """

    mantissa: np.ndarray
    log_scale: np.ndarray

    def value(self) -> np.ndarray:
        """The plain numbers (may overflow to inf or underflow to 0)."""
        with np.errstate(over="ignore", under="ignore"):
            return self.mantissa * np.exp(self.log_scale)

    def log_abs(self) -> np.ndarray:
        with np.errstate(divide="ignore"):
            return np.log(np.abs(self.mantissa)) + self.log_scale

    def times(self, other: "ScaledValues") -> "ScaledValues":
        return ScaledValues(self.mantissa * other.mantissa, self.log_scale + other.log_scale)

    def shifted(self, log_factor) -> "ScaledValues":
        """Multiply by ``exp(log_factor)``."""
        return ScaledValues(self.mantissa, self.log_scale + np.asarray(log_factor, dtype=float))


#: renormalise every this many steps; mantissas outside [2^-150, 2^150] are rescaled
_EVERY = 8
_BIG, _SMALL = 2.0**150, 2.0**-150


def _rescale(exponent: np.ndarray, arrays: list[np.ndarray], extra: list[tuple[np.ndarray, int]] = ()) -> None:
    """Exact binary rescaling, in place, of the points whose mantissas left [2^-150, 2^150].

    ``arrays`` share the per-point ``exponent``; ``extra`` holds (array, power) pairs
    scaled by ``2^{-power·shift}`` (e.g. a running sum of squares, power 2).
    """
    size = np.abs(arrays[0])
    for other in arrays[1:]:
        size = np.maximum(size, np.abs(other))
    chosen = np.flatnonzero((size > _BIG) | ((size < _SMALL) & (size > 0)))
    if chosen.size == 0:
        return
    _, shift = np.frexp(size[chosen])
    for array in arrays:
        if np.iscomplexobj(array):
            array[chosen] = np.ldexp(array[chosen].real, -shift) + 1j * np.ldexp(array[chosen].imag, -shift)
        else:
            array[chosen] = np.ldexp(array[chosen], -shift)
    for array, power in extra:
        array[chosen] = np.ldexp(array[chosen], -power * shift)
    exponent[chosen] += shift


def _check_degree(rc: RecurrenceCoefficients, degree: int) -> int:
    if isinstance(degree, bool) or not isinstance(degree, (int, np.integer)):
        raise InputError(f"degree must be an integer, got {degree!r}")
    if not 0 <= degree <= rc.count + 1:
        raise InputError(f"degree {degree} needs coefficients up to {degree - 1}; have 0..{rc.count}")
    return int(degree)


def _run(rc: RecurrenceCoefficients, z: np.ndarray, degree: int, keep_all: bool, derivative: bool = False):
    """Forward recurrence for p_0..p_degree at z with a per-point binary exponent."""
    z = np.asarray(z)
    dtype = np.result_type(z.dtype, np.float64)
    shape = z.shape
    z = z.ravel().astype(dtype)
    p_prev = np.zeros_like(z)
    p_cur = np.ones_like(z)
    d_prev = np.zeros_like(z)
    d_cur = np.zeros_like(z)
    exponent = np.zeros(z.shape, dtype=np.int64)
    base = -0.5 * rc.log_mass
    store_m = store_e = store_d = None
    if keep_all:
        store_m = np.empty((degree + 1, z.size), dtype=dtype)
        store_e = np.empty((degree + 1, z.size), dtype=np.int64)
        if derivative:
            store_d = np.empty((degree + 1, z.size), dtype=dtype)
    a, b = rc.a, rc.b
    for k in range(degree + 1):
        if keep_all:
            store_m[k] = p_cur
            store_e[k] = exponent
            if derivative:
                store_d[k] = d_cur
        if k == degree:
            break
        p_next = ((z - b[k]) * p_cur - a[k] * p_prev) / a[k + 1]
        if derivative:
            d_next = ((z - b[k]) * d_cur + p_cur - a[k] * d_prev) / a[k + 1]
            d_prev, d_cur = d_cur, d_next
        p_prev, p_cur = p_cur, p_next
        if (k + 1) % _EVERY == 0 or k + 1 == degree:
            _rescale(exponent, [p_cur, p_prev] + ([d_cur, d_prev] if derivative else []))
    if keep_all:
        values = ScaledValues(store_m.reshape((degree + 1,) + shape), base + _LOG2 * store_e.reshape((degree + 1,) + shape))
        deriv = None
        if derivative:
            deriv = ScaledValues(store_d.reshape((degree + 1,) + shape), values.log_scale)
        return values, deriv
    values = ScaledValues(p_cur.reshape(shape), (base + _LOG2 * exponent).reshape(shape))
    deriv = ScaledValues(d_cur.reshape(shape), values.log_scale) if derivative else None
    return values, deriv


def orthonormal_values(rc: RecurrenceCoefficients, z, degree: int, *, all_degrees: bool = False) -> ScaledValues:
    """``p_degree(z)`` (or ``p_0..p_degree`` stacked on a first axis) as :class:`ScaledValues`.

    Forward three-term recurrence ``a_{k+1} p_{k+1} = (z - b_k) p_k - a_k p_{k-1}``,
    ``p_0 = (∫ w)^{-1/2}``; needs ``rc.count ≥ degree - 1``.
    """
    degree = _check_degree(rc, degree)
    return _run(rc, z, degree, all_degrees)[0]


def orthonormal_derivatives(rc: RecurrenceCoefficients, z, degree: int) -> tuple[ScaledValues, ScaledValues]:
    """``(p_degree(z), p'_degree(z))`` sharing one log-scale per point."""
    degree = _check_degree(rc, degree)
    values, deriv = _run(rc, z, degree, False, derivative=True)
    return values, deriv


def monic_values(rc: RecurrenceCoefficients, z, degree: int) -> ScaledValues:
    """``π_degree(z) = p_degree(z)/γ_degree`` as :class:`ScaledValues`."""
    degree = _check_degree(rc, degree)
    if degree > rc.count:
        raise InputError(f"π_{degree} needs γ_{degree}, i.e. coefficients up to {degree}; have 0..{rc.count}")
    values = orthonormal_values(rc, z, degree)
    return values.shifted(-float(rc.log_leading()[degree]))


def weighted_values(rc: RecurrenceCoefficients, weight: Weight, x, degree: int, *,
                    all_degrees: bool = False) -> np.ndarray:
    """``p_degree(x) w_n(x)^{1/2}`` at real x (finite: never overflows).

    Values below the double-precision range underflow to 0 (they are below
    ``1e-308`` relative to the normalisation ``∫ p² w = 1``).
    """
    x = np.asarray(x, dtype=float)
    values = orthonormal_values(rc, x, degree, all_degrees=all_degrees)
    half = 0.5 * weight.log_weight(x)
    with np.errstate(over="ignore", under="ignore"):
        return values.mantissa * np.exp(values.log_scale + half)


def log_christoffel_sum(rc: RecurrenceCoefficients, x, degree: int) -> np.ndarray:
    """``log Σ_{k<N} p_k(x)²`` (N = degree) at real x, streamed in O(len x) memory.

    The running sum shares the per-point binary exponent of the recurrence,
    so it is rescaled exactly whenever the polynomials are.
    """
    N = int(degree)
    if not 1 <= N <= rc.count + 1:
        raise InputError(f"the Christoffel sum of degree {N} needs coefficients 0..{N - 1}; have 0..{rc.count}")
    x = np.asarray(x, dtype=float)
    shape = x.shape
    x = x.ravel()
    p_prev = np.zeros_like(x)
    p_cur = np.ones_like(x)
    total = np.zeros_like(x)          # Σ p_j² in units of 2^(2 exponent)
    exponent = np.zeros(x.shape, dtype=np.int64)
    a, b = rc.a, rc.b
    for k in range(N):
        total += p_cur * p_cur
        if k == N - 1:
            break
        p_next = ((x - b[k]) * p_cur - a[k] * p_prev) / a[k + 1]
        p_prev, p_cur = p_cur, p_next
        if (k + 1) % _EVERY == 0:
            _rescale(exponent, [p_cur, p_prev], [(total, 2)])
    return (np.log(total) + 2.0 * _LOG2 * exponent - rc.log_mass).reshape(shape)


def christoffel_darboux(rc: RecurrenceCoefficients, weight: Weight, x, y=None, degree: int | None = None) -> np.ndarray:
    """Scaled Christoffel–Darboux kernel ``w(x)^{1/2} w(y)^{1/2} Σ_{k<N} p_k(x) p_k(y)``.

    ``N = degree`` (default ``rc.count``).  Computed as the sum of the
    products of :func:`weighted_values` (no cancellation; the diagonal ``y = x``
    needs no limit).  The closed form
    ``K_N(x,y) = a_N (p_N(x) p_{N-1}(y) - p_{N-1}(x) p_N(y))/(x - y)``
    (Christoffel–Darboux formula, Szegő, *Orthogonal Polynomials*, 1939, §3.2) and
    its diagonal limit ``a_N (p_N' p_{N-1} - p_{N-1}' p_N)`` are used in the tests as a check.
    """
    N = rc.count if degree is None else int(degree)
    if not 1 <= N <= rc.count + 1:
        raise InputError(f"the kernel K_N needs 1 <= N <= {rc.count + 1}, got {N}")
    x = np.asarray(x, dtype=float)
    px = weighted_values(rc, weight, x, N - 1, all_degrees=True)
    if y is None:
        return np.sum(px * px, axis=0)
    y = np.asarray(y, dtype=float)
    py = weighted_values(rc, weight, y, N - 1, all_degrees=True)
    return np.sum(px * py, axis=0)
