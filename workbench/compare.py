r"""Comparison of direct and predicted quantities, on plain arrays.

These functions know nothing of cases, runs or files: they take the numbers
(zeros, coefficients, errors against ``n``) and return numbers.  The run
pipeline (:mod:`workbench.pipeline`) calls them on what it stored, and they
are the functions to use from Python:

* :func:`absolute_errors` -- ``|direct - predicted|`` (NaN where either is missing),
  and :func:`finite_maximum` -- the worst of them over what was compared;
* :func:`nearest_zero_distances` -- each predicted zero against the nearest
  computed one (no index bookkeeping across bands);
* :func:`band_counts`, :func:`gap_zeros`, :func:`gap_zero_counts`,
  :func:`zeros_from_edge` -- the zeros of ``p_n`` sorted into the bands and
  gaps of a support, or counted from an end;
* :func:`edge_scaled` -- zeros at an edge in the scaling of the local variable;
* :func:`value_normalisation` -- ``γ_n e^{-nℓ/2}``, the factor between the
  bulk form of the model problem and ``p_n w^{1/2}``;
* :func:`fit_rate` (:class:`RateFit`), :func:`rounding_floor`,
  :func:`scaled_maximum` -- convergence rates of errors against ``n``.

The small-norm matrix ``T M^{-1} - I`` lives with the model problem, in
:mod:`gfunction.small_norm`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np
from numpy.typing import ArrayLike

from equilibrium.errors import InputError
from equilibrium.verification import failure_message

__all__ = ["absolute_errors", "finite_maximum", "nearest_zero_distances", "band_counts", "gap_zeros",
           "gap_zero_counts", "zeros_from_edge", "edge_scaled", "value_normalisation", "RateFit", "fit_rate",
           "rounding_floor", "scaled_maximum"]


def _support(support: ArrayLike) -> np.ndarray:
    s = np.asarray(support, dtype=float).reshape(-1, 2)
    if s.size == 0 or not np.all(np.diff(s.ravel()) > 0):
        raise InputError(f"the support must be bands a_1 < b_1 < a_2 < ... ; got {s.tolist()}")
    return s


# ------------------------------------------------------------------------ errors
def absolute_errors(direct: ArrayLike, predicted: ArrayLike) -> np.ndarray:
    """``|direct - predicted|`` elementwise; NaN where either side is NaN (nothing to compare).

    Examples
    --------
    >>> absolute_errors([1.0, 2.0, float("nan")], [1.5, 2.0, 3.0]).tolist()
    [0.5, 0.0, nan]
    """
    return np.abs(np.asarray(direct, dtype=float) - np.asarray(predicted, dtype=float))


# ------------------------------------------------------------------------ zeros
def nearest_zero_distances(zeros: ArrayLike, predicted: ArrayLike) -> np.ndarray:
    """For each predicted zero, the distance to the nearest of ``zeros``.

    Matching by nearest neighbour needs no index bookkeeping across bands, whose
    zero counts move with ``nΩ``; it is the index-matched error whenever the
    errors are below half the local spacing of the zeros.  NaN predictions give
    NaN; with no ``zeros`` every distance is NaN.

    Examples
    --------
    >>> nearest_zero_distances([-1.0, 0.0, 2.0], [0.1, 1.9, float("nan")]).round(12).tolist()
    [0.1, 0.1, nan]
    """
    x = np.sort(np.asarray(zeros, dtype=float).ravel())
    p = np.asarray(predicted, dtype=float)
    if x.size == 0:
        return np.full(p.shape, np.nan)
    place = np.searchsorted(x, p)
    below = x[np.clip(place - 1, 0, x.size - 1)]
    above = x[np.clip(place, 0, x.size - 1)]
    with np.errstate(invalid="ignore"):
        return np.minimum(np.abs(below - p), np.abs(above - p))


def band_counts(zeros: ArrayLike, support: ArrayLike) -> np.ndarray:
    """Number of ``zeros`` in each band ``[a_j, b_j]`` (ends included), an integer array of length k.

    Examples
    --------
    >>> band_counts([-1.9, -1.2, 0.1, 1.5], [(-2, -1), (1, 2)]).tolist()
    [2, 1]
    """
    x = np.asarray(zeros, dtype=float).ravel()
    s = _support(support)
    return np.array([int(np.sum((x >= a) & (x <= b))) for a, b in s], dtype=np.int64)


def gap_zeros(zeros: ArrayLike, support: ArrayLike) -> np.ndarray:
    """The zero in each gap ``(b_j, a_{j+1})``, length k - 1; NaN where the gap holds none.

    A gap holding more than one zero also gives NaN (there is no single zero to
    compare with the prediction "at most one zero per gap" of the model problem);
    :func:`gap_zero_counts` tells the two cases apart.

    Examples
    --------
    >>> gap_zeros([-1.5, 0.2, 1.5, 2.5, 2.7], [(-2, -1), (1, 2), (3, 4)]).tolist()
    [0.2, nan]
    """
    x = np.asarray(zeros, dtype=float).ravel()
    s = _support(support)
    out = np.full(s.shape[0] - 1, np.nan)
    for j in range(s.shape[0] - 1):
        inside = x[(x > s[j, 1]) & (x < s[j + 1, 0])]
        if inside.size == 1:
            out[j] = inside[0]
    return out


def gap_zero_counts(zeros: ArrayLike, support: ArrayLike) -> np.ndarray:
    """Number of ``zeros`` strictly inside each gap, length k - 1.

    Examples
    --------
    >>> gap_zero_counts([-1.5, 0.2, 1.5, 2.5, 2.7], [(-2, -1), (1, 2), (3, 4)]).tolist()
    [1, 2]
    """
    x = np.asarray(zeros, dtype=float).ravel()
    s = _support(support)
    return np.array([int(np.sum((x > s[j, 1]) & (x < s[j + 1, 0]))) for j in range(s.shape[0] - 1)],
                    dtype=np.int64)


def zeros_from_edge(zeros: ArrayLike, count: int, side: str = "right") -> np.ndarray:
    """The ``count`` zeros next to the ``"right"`` (largest) or ``"left"`` (smallest) end, counted
    inward from that end; NaN-padded when there are fewer.

    Examples
    --------
    >>> zeros_from_edge([0.3, -1.0, 0.9, 0.5], 2).tolist()
    [0.9, 0.5]
    >>> zeros_from_edge([0.3, -1.0], 3, "left").tolist()
    [-1.0, 0.3, nan]
    """
    if side not in ("left", "right"):
        raise InputError(f"side must be 'left' or 'right', not {side!r}")
    x = np.sort(np.asarray(zeros, dtype=float).ravel())
    x = (x[::-1] if side == "right" else x)[:count]
    return np.concatenate([x, np.full(max(count - x.size, 0), np.nan)])


def edge_scaled(zeros: ArrayLike, predicted_first: ArrayLike, model_first: float, edge: float) -> np.ndarray:
    r"""Zeros next to an edge ``e`` in the scaling of its local variable: ``c (x_j - e)``.

    The scale ``c = ζ_1 / (x̂_1 - e)`` is the one implied by the scaling prediction
    ``x̂_1`` of the first zero, ``ζ_1`` the first zero of the model problem in the
    local variable: the Airy zero ``ι_1`` at a soft edge (``c ∝ n^{2/3}``,
    DLMF 9.9.1) or ``-j_{α,1}²/4`` at a hard edge (``c ∝ n²``, DLMF 10.21).  So the
    scaled zeros approach the model zeros ``ζ_j``.  ``zeros`` and
    ``predicted_first`` broadcast row by row (one row per n).

    Examples
    --------
    >>> edge_scaled([[1.9, 1.8]], [[1.9]], -2.338107410459767, 2.0).round(6).tolist()
    [[-2.338107, -4.676215]]
    """
    x = np.asarray(zeros, dtype=float)
    first = np.asarray(predicted_first, dtype=float)
    return float(model_first) / (first - float(edge)) * (x - float(edge))


def finite_maximum(values: ArrayLike) -> np.ndarray:
    """Largest finite entry of each row (last axis); NaN for a row with none (nothing compared there).

    Examples
    --------
    >>> finite_maximum([[1.0, float("nan"), 3.0], [float("nan"), float("nan"), float("nan")]]).tolist()
    [3.0, nan]
    """
    v = np.asarray(values, dtype=float)
    finite = np.isfinite(v)
    if v.shape[-1] == 0:
        return np.full(v.shape[:-1], np.nan)
    return np.where(finite.any(axis=-1), np.max(np.where(finite, v, -np.inf), axis=-1), np.nan)


# ------------------------------------------------------------- normalisation
def value_normalisation(log_mass: float, a: ArrayLike, n: int, lagrange: float) -> float:
    r"""``γ_n e^{-nℓ/2}`` from the direct coefficients: ``log γ_n = -log_mass/2 - Σ_{k=1}^{n} log a_k``.

    ``γ_n`` is the leading coefficient of the orthonormal ``p_n`` (``γ_0 =
    (∫w)^{-1/2}``, ``γ_k = γ_{k-1}/a_k`` from the recurrence), ``ℓ`` the constant
    of the equilibrium measure.  The bulk form of the model problem predicts
    ``p_n w^{1/2} / (γ_n e^{-nℓ/2})`` (``gfunction.predict.Predictor.band_form``);
    this factor, O(1) in n, turns it into ``p_n w^{1/2}``.  ``a[k] = a_k`` with
    ``a[0]`` unused.

    Examples
    --------
    Hermite weight ``e^{-x²}`` (``a_k = (k/2)^{1/2}``, ``∫w = π^{1/2}``): ``γ_n =
    2^{n/2} π^{-1/4} / (n!)^{1/2}`` (DLMF 18.3, Table 18.3.1, normalised):

    >>> import math
    >>> import numpy as np
    >>> k = np.arange(11)
    >>> value = value_normalisation(0.5 * math.log(math.pi), np.sqrt(k / 2), 10, 0.0)
    >>> abs(value / (2 ** 5 * math.pi ** -0.25 / math.sqrt(math.factorial(10))) - 1) < 1e-14
    True
    """
    n = int(n)
    a = np.asarray(a, dtype=float)
    if n < 0 or a.size < n + 1:
        raise InputError(f"γ_n needs a_1 .. a_n; got {a.size - 1} coefficients for n = {n}")
    log_gamma = -0.5 * float(log_mass) - float(np.sum(np.log(a[1:n + 1])))
    return math.exp(log_gamma - 0.5 * n * float(lagrange))


# -------------------------------------------------------------------- rates
@dataclass(frozen=True)
class RateFit:
    """Least-squares fit ``log e = intercept + slope · log n``.

    ``stderr`` is the standard error of the slope,
    ``sqrt(RSS / (m - 2) / Σ (log n_i - mean)^2)`` (m points; undefined, NaN,
    for m = 2).  ``residual`` is the RMS residual in log e.  ``verified`` when
    the fit is determined with an error bar: at least three usable points
    (finite errors above the floor) at two or more distinct n; ``checks`` holds
    ``points`` and ``residual``; ``message`` says why not otherwise.
    """

    slope: float
    stderr: float
    intercept: float
    points: int
    residual: float
    verified: bool
    checks: dict[str, float]
    message: str = ""


def fit_rate(n: Sequence[float], error: Sequence[float], *, floor: float = 0.0) -> RateFit:
    """Fit the convergence rate of ``error`` against ``n``.

    Only finite errors above ``floor`` enter (errors at rounding level carry no
    rate: :func:`rounding_floor`).  Ordinary least squares on
    ``(log n, log e)`` (common practice); see e.g. Draper & Smith, *Applied
    Regression Analysis*, 3rd ed., 1998, §1.4 for the standard error of the slope.

    Examples
    --------
    >>> fit = fit_rate([10, 20, 40, 80], [3 * n ** -2.0 for n in (10, 20, 40, 80)])
    >>> round(fit.slope, 12), round(fit.intercept - math.log(3), 12), fit.verified
    (-2.0, 0.0, True)
    """
    x = np.log(np.asarray(n, dtype=float))
    y = np.asarray(error, dtype=float)
    if x.shape != y.shape:
        raise InputError(f"n and error must have the same length; got {x.size} and {y.size}")
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(x) & np.isfinite(y) & (y > max(float(floor), 0.0))
    x, y = x[ok], np.log(y[ok])
    m = int(x.size)
    if m < 2 or np.ptp(x) == 0:
        slope = stderr = intercept = residual = math.nan
    else:
        xm = x.mean()
        sxx = float(np.sum((x - xm) ** 2))
        slope = float(np.sum((x - xm) * (y - y.mean())) / sxx)
        intercept = float(y.mean() - slope * xm)
        rss = float(np.sum((y - intercept - slope * x) ** 2))
        stderr = math.sqrt(rss / (m - 2) / sxx) if m > 2 else math.nan
        residual = math.sqrt(rss / m)
    checks = {"points": float(m), "residual": residual if m >= 2 else 0.0}
    message = failure_message({"points": float(m)}, {"points": 3.0}, lower=("points",), what="the rate fit")
    if message:
        message += f" (usable errors: finite and above {float(floor):.1e})"
    elif not math.isfinite(stderr):
        message = "the rate fit not verified: the n are not distinct"
    return RateFit(slope, stderr, intercept, m, residual, not message, checks, message)


def rounding_floor(scale: float = 1.0) -> float:
    """``1e3 ε max(1, scale)``: errors below it are rounding, not convergence (common practice).

    ``scale`` is the size of the compared quantities, e.g. ``max |a_j|, |b_j|``
    over the support.

    Examples
    --------
    >>> f"{rounding_floor(2.5):.3e}"
    '5.551e-13'
    """
    return 1e3 * float(np.finfo(float).eps) * max(1.0, abs(float(scale)))


def scaled_maximum(n: ArrayLike, error: ArrayLike, power: float = 1.0, *, second_half: bool = False) -> float:
    """``max n^power · error`` over the finite errors (over the larger half of them with ``second_half``).

    In several bands the O(1/n) coefficient is quasi-periodic in n (it depends
    on the phases nΩ), so a slope fitted over a few n can look flat; ``n·error``
    staying bounded across the range is what shows O(1/n) there.  NaN when no
    error is finite.

    Examples
    --------
    >>> scaled_maximum([10, 20, 40], [0.3, 0.1, float("nan")])
    3.0
    >>> scaled_maximum([10, 20, 40, 80], [0.3, 0.1, 0.06, 0.02], second_half=True)
    2.4
    """
    n = np.asarray(n, dtype=float)
    e = np.asarray(error, dtype=float)
    finite = np.isfinite(e)
    scaled = n[finite] ** float(power) * e[finite]
    if second_half:
        scaled = scaled[scaled.size // 2:]
    return float(np.max(scaled)) if scaled.size else math.nan
