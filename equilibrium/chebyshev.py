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
    coefficients = dct2(values) / n
    coefficients[..., 0] /= 2
    return coefficients


def dct2(values: np.ndarray) -> np.ndarray:
    """Unnormalised DCT-II along the last axis: ``y_k = 2 Σ_j v_j cos(π k (2j + 1) / (2N))``.

    The numbers are those of ``scipy.fft.dct(values, type=2, axis=-1)`` bit for bit: the
    same compiled pocketfft routine, loaded without the ``scipy.fft`` package
    (:func:`_pocketfft_dct`), whose import costs 0.15–0.2 s of every command's start-up
    (its array-API layer and ``scipy.special``) for a transform of microseconds.  Where
    that module cannot be loaded (another scipy layout) ``scipy.fft.dct`` is used.  (A
    cosine-matrix product would avoid scipy altogether but rounds differently: Ω of a
    two-band quartic moved by 8e-16, enough to shift a_n at n = 2000 by 2e-12.)
    """
    if np.iscomplexobj(values):  # as scipy does: the real and imaginary parts one after the other
        return dct2(np.real(values)) + 1j * dct2(np.imag(values))
    values = np.ascontiguousarray(values, dtype=float)
    transform = _pocketfft_dct()
    if transform is not None:
        # type 2, the last axis, inorm 0 (no normalisation), a new output, one thread, no orthogonalisation
        return transform(values, 2, (values.ndim - 1,), 0, None, 1, None)
    from scipy.fft import dct

    return dct(values, type=2, axis=-1)


_POCKETFFT: list = []


def _pocketfft_dct():
    """``dct`` of scipy's compiled pocketfft module (``scipy/fft/_pocketfft/pypocketfft``), or None.

    The extension is loaded from its file under its own module name, without running
    ``scipy/__init__`` or ``scipy/fft/__init__`` (a later ``import scipy.fft`` gets the
    same module from the interpreter's extension cache).  It is accepted only if the
    DCT-II of ``[1, 2, 3, 4]`` is the closed form ``2 Σ_j v_j cos(π k (2j + 1)/8)``, so a
    changed calling convention falls back to ``scipy.fft.dct`` instead of giving other numbers.
    """
    if _POCKETFFT:
        return _POCKETFFT[0]
    transform = None
    try:
        import importlib.machinery
        import importlib.util
        import sys
        from pathlib import Path

        name = "scipy.fft._pocketfft.pypocketfft"
        module = sys.modules.get(name)
        if module is None:
            spec = importlib.util.find_spec("scipy")  # locates the package without importing it
            folder = Path(spec.submodule_search_locations[0]) / "fft" / "_pocketfft"
            for suffix in importlib.machinery.EXTENSION_SUFFIXES:
                path = folder / f"pypocketfft{suffix}"
                if path.exists():
                    loader = importlib.machinery.ExtensionFileLoader(name, str(path))
                    module = importlib.util.module_from_spec(importlib.util.spec_from_file_location(name, path, loader=loader))
                    loader.exec_module(module)
                    break
        candidate = module.dct
        probe = np.array([1.0, 2.0, 3.0, 4.0])
        expected = 2 * np.cos(np.pi * np.outer(np.arange(4), 2 * np.arange(4) + 1) / 8) @ probe
        if np.allclose(candidate(probe, 2, (0,), 0, None, 1, None), expected, rtol=0, atol=1e-13):
            transform = candidate
    except Exception:  # noqa: BLE001 - any other layout or signature: scipy.fft.dct instead
        transform = None
    _POCKETFFT.append(transform)
    return transform


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
