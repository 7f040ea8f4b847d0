"""Second-kind functions, Cauchy transforms ``C(π_k w)(z)`` and the matrix ``Y(z)``.

Second-kind functions
---------------------
``q_k(z) = ∫ p_k(s) w(s) ds / (z - s)`` (z off Σ) satisfies the three-term
recurrence of the ``p_k`` for ``k ≥ 1`` and is its *minimal* solution, so it
cannot be computed forward from ``q_0``.  Following Gautschi (SIAM Rev. 9
(1967) 24–82, §3; Math. Comp. 36 (1981) 547–554) the ratios
``ρ_k = q_k/q_{k-1}`` come from the continued fraction, evaluated backward
from ``ν`` (Miller's algorithm with ``ρ_{ν+1} = 0``):

    ρ_k = a_k / (z - b_k - a_{k+1} ρ_{k+1}),      k = ν, …, 1,

and ``q_0`` from ``z q_0 = ∫ p_0 w + a_1 q_1 + b_0 q_0``:

    q_0 = (∫ w)^{1/2} / (z - b_0 - a_1 ρ_1)

(Markov's theorem: the J-fraction of the Stieltjes transform of w).
``log q_k = log q_0 + Σ_{j≤k} log ρ_j`` keeps every value representable.
The result carries ``convergence``: the relative change when the backward
recurrence is started at a smaller ``ν'``; near Σ the fraction converges
slowly and more coefficients are needed (:func:`orthogonality_matrix_for_weight`
adds them until converged).

Cauchy transform and Y
----------------------
``C f(z) = (1/2πi) ∫ f(s) ds/(s - z)``, so ``C(p_k w) = -q_k/(2πi)`` and
``C(π_k w) = C(p_k w)/γ_k``.  With ``h_{n-1}^{-1} = γ_{n-1}²``:

    Y = [[π_n, C(π_n w)], [-2πi γ_{n-1}² π_{n-1}, -2πi γ_{n-1}² C(π_{n-1} w)]],
    det Y = a_n (p_n q_{n-1} - p_{n-1} q_n) = 1

(the Casoratian of the two solutions of the recurrence; Fokas, Its &
Kitaev, Comm. Math. Phys. 147 (1992) 395–430 for Y).  The determinant is
formed from the scaled factors, so it is O(1) even when the entries are not
representable.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dataclass_field
from typing import Mapping, Sequence

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, settle, worst
from equilibrium.weight import Weight

from .recurrence import RecurrenceCoefficients, recurrence_coefficients
from .values import ScaledValues, orthonormal_values

_TWO_PI_I = 2j * math.pi


def _log_ratios_sum(rc: RecurrenceCoefficients, z: np.ndarray, start: int, degrees: Sequence[int]) -> tuple[np.ndarray, np.ndarray]:
    """Backward recurrence from ``start``: returns (log q_0, [Σ_{j=1}^{k} log ρ_j for k in degrees])."""
    a, b = rc.a, rc.b
    rho = np.zeros_like(z)
    tail = np.zeros_like(z)  # Σ_{i=j}^{start} log ρ_i
    wanted = {int(k) + 1: idx for idx, k in enumerate(degrees)}
    partial = np.zeros((len(degrees),) + z.shape, dtype=complex)
    recorded = {}
    for j in range(start, 0, -1):
        if j + 1 in wanted:
            recorded[j + 1] = tail.copy()
        rho = a[j] / (z - b[j] - (a[j + 1] * rho if j + 1 <= rc.count else 0.0))
        tail = tail + np.log(rho)
    if 1 in wanted:
        recorded[1] = tail.copy()
    q0 = 0.5 * rc.log_mass - np.log(z - b[0] - (a[1] * rho if rc.count >= 1 else 0.0))
    for k1, idx in wanted.items():
        partial[idx] = tail - recorded.get(k1, tail)
    return q0, partial


@dataclass(frozen=True)
class SecondKindValues:
    """Values of ``q_k(z)`` (or of a Cauchy transform) with the convergence of their continued fraction.

    Attributes
    ----------
    values : the numbers as :class:`ScaledValues` (``mantissa · exp(log_scale)``).
    convergence : relative change of each value between the starts ``ν = rc.count``
        and ``ν' = (ν + max k)/2`` of the backward recurrence (module docstring).
    verified, checks, message : ``checks = {"convergence": max convergence}``, verified
        when it is within the tolerance (:mod:`equilibrium.verification`).
    """

    values: ScaledValues
    convergence: np.ndarray
    verified: bool
    checks: dict[str, float]
    message: str = ""


def second_kind_values(rc: RecurrenceCoefficients, z, degrees: Sequence[int] | int,
                       start: int | None = None, *, tolerance: float = 1e-12,
                       on_failure: str = "raise") -> SecondKindValues:
    """``q_k(z) = ∫ p_k w/(z - s) ds`` for ``k`` in ``degrees`` (stacked on a first axis).

    The continued fraction must have converged to ``tolerance`` (relative) with
    the coefficients in ``rc``; near Σ it needs more of them.  ``on_failure``:
    ``"raise"`` (NumericalFailure) or ``"mark"`` (``verified = False``).

    Examples
    --------
    Hermite weight ``e^{-x²}``: ``q_0(z) = ∫ e^{-s²} π^{-1/4}/(z - s) ds``
    (``p_0 = π^{-1/4}``), which is ``-i π^{3/4} w(z)`` for ``Im z > 0`` with the
    Faddeeva function ``w`` (DLMF 7.7.2; ``scipy.special.wofz``):

    >>> import numpy as np
    >>> from scipy.special import wofz
    >>> from workbench.polynomials import RecurrenceCoefficients
    >>> k = np.arange(81)
    >>> rc = RecurrenceCoefficients(a=np.sqrt(k / 2), b=np.zeros(81), n=1.0, error_estimate=0.0,
    ...                             method="closed form", weight_description="exp(-x^2)",
    ...                             log_mass=0.5 * np.log(np.pi))
    >>> q = second_kind_values(rc, 1 + 2j, 0)
    >>> bool(abs(q.values.value() / (-1j * np.pi ** 0.75 * wofz(1 + 2j)) - 1) < 1e-13)
    True
    """
    failure_policy(on_failure)
    single = np.isscalar(degrees)
    degrees = [int(degrees)] if single else [int(k) for k in degrees]
    z = np.asarray(z, dtype=complex)
    top = max(degrees)
    nu = rc.count if start is None else int(start)
    if min(degrees) < 0 or top >= nu:
        raise InputError(f"second-kind functions up to degree {top} need coefficients beyond it; have 0..{rc.count}")
    nu_short = max(top + 1, (nu + top) // 2)
    log_q0, sums = _log_ratios_sum(rc, z, nu, degrees)
    log_q0s, sums_s = _log_ratios_sum(rc, z, nu_short, degrees)
    log_q = log_q0[None] + sums
    log_qs = log_q0s[None] + sums_s
    convergence = np.abs(np.expm1(log_qs - log_q))
    values = ScaledValues(np.exp(1j * log_q.imag), log_q.real)
    if single:
        values = ScaledValues(values.mantissa[0], values.log_scale[0])
        convergence = convergence[0]
    return _settled(values, convergence, tolerance, rc, on_failure)


def _settled(values: ScaledValues, convergence: np.ndarray, tolerance: float, rc, on_failure: str) -> SecondKindValues:
    checks = {"convergence": worst(convergence)}
    message = failure_message(checks, {"convergence": tolerance},
                              what=f"the continued fraction with {rc.count} coefficients")
    if message:
        message += "; z is too close to the set: use more coefficients"
    return settle(SecondKindValues(values, convergence, not message, checks, message), on_failure)


def cauchy_transform(rc: RecurrenceCoefficients, z, degree: int, *, monic: bool = True,
                     tolerance: float = 1e-12, on_failure: str = "raise") -> SecondKindValues:
    """``C(π_k w)(z)`` (or ``C(p_k w)(z)`` with ``monic=False``) as scaled values, with convergence.

    ``C(p_k w) = -q_k/(2πi)`` (module docstring); ``tolerance`` and ``on_failure``
    as in :func:`second_kind_values`.
    """
    q = second_kind_values(rc, z, int(degree), tolerance=tolerance, on_failure=on_failure)
    shift = -float(rc.log_leading()[degree]) if monic else 0.0
    values = ScaledValues(-q.values.mantissa / _TWO_PI_I, q.values.log_scale + shift)
    return SecondKindValues(values, q.convergence, q.verified, q.checks, q.message)


def cauchy_transform_by_quadrature(rc: RecurrenceCoefficients, disc, z, degree: int) -> np.ndarray:
    """``C(p_k w)(z) ≈ (1/2πi) Σ_i λ_i p_k(x_i)/(x_i - z)`` on a discretisation (z far from Σ only).

    A check, not a method: the sum cancels to ``|C(p_k w)|`` from terms of
    size ``λ_i^{1/2}``, so it is accurate only while ``|q_k(z)|`` is not small.
    """
    values = orthonormal_values(rc, disc.nodes, int(degree))
    terms = values.mantissa * np.exp(values.log_scale + disc.log_weights)
    z = np.asarray(z, dtype=complex)
    return np.sum(terms[:, None] / (disc.nodes[:, None] - z.ravel()[None, :]), axis=0).reshape(z.shape) / _TWO_PI_I


@dataclass(frozen=True)
class OrthogonalityMatrix:
    """``Y(z)`` at points ``z`` (monic normalisation), entries scaled.

    Attributes
    ----------
    z : the points.
    n : the size index of Y.
    mantissa, log_scale : arrays (2, 2, *z.shape): ``Y_ij = mantissa · exp(log_scale)``.
    det : ``det Y`` computed from the scaled factors (should be 1).
    checks : ``det_error = max |det Y - 1|``, ``convergence`` of the continued fraction.
    verified, message : the continued fraction converged to the tolerance asked for
        (``det_error`` is informative: it is O(1) rounding of the scaled factors).
    """

    z: np.ndarray
    n: int
    mantissa: np.ndarray
    log_scale: np.ndarray
    det: np.ndarray
    checks: Mapping[str, float] = dataclass_field(default_factory=dict)
    verified: bool = True
    message: str = ""

    def value(self) -> np.ndarray:
        """Plain entries (overflow to inf for large n far from Σ)."""
        with np.errstate(over="ignore", under="ignore"):
            return self.mantissa * np.exp(self.log_scale)


def orthogonality_matrix(rc: RecurrenceCoefficients, z, n: int, *, tolerance: float = 1e-12,
                         on_failure: str = "raise") -> OrthogonalityMatrix:
    """``Y(z)`` for the weight of ``rc`` (needs ``rc.count > n``; more near Σ).

    When the continued fraction has not converged to ``tolerance`` with the
    coefficients available, ``on_failure="raise"`` raises NumericalFailure
    (:func:`orthogonality_matrix_for_weight` then adds coefficients) and
    ``"mark"`` returns Y with ``verified = False``.
    """
    failure_policy(on_failure)
    n = int(n)
    if n < 1:
        raise InputError(f"Y needs n >= 1, got {n}")
    if rc.count <= n + 1:
        raise InputError(f"Y for n = {n} needs coefficients beyond n (count > {n + 1}); have {rc.count}")
    z = np.asarray(z, dtype=complex)
    p = orthonormal_values(rc, z, n, all_degrees=True)
    pn = ScaledValues(p.mantissa[n], p.log_scale[n])
    pm = ScaledValues(p.mantissa[n - 1], p.log_scale[n - 1])
    second = second_kind_values(rc, z, [n, n - 1], tolerance=tolerance, on_failure="mark")
    q = second.values
    qn = ScaledValues(q.mantissa[0], q.log_scale[0])
    qm = ScaledValues(q.mantissa[1], q.log_scale[1])
    log_gamma = rc.log_leading()
    lg_n, lg_m = float(log_gamma[n]), float(log_gamma[n - 1])
    mantissa = np.empty((2, 2) + z.shape, dtype=complex)
    scale = np.empty((2, 2) + z.shape)
    mantissa[0, 0], scale[0, 0] = pn.mantissa, pn.log_scale - lg_n
    mantissa[0, 1], scale[0, 1] = -qn.mantissa / _TWO_PI_I, qn.log_scale - lg_n
    mantissa[1, 0], scale[1, 0] = -_TWO_PI_I * pm.mantissa, pm.log_scale + lg_m
    mantissa[1, 1], scale[1, 1] = qm.mantissa, qm.log_scale + lg_m
    with np.errstate(over="ignore", under="ignore"):
        det = rc.a[n] * (pn.mantissa * qm.mantissa * np.exp(pn.log_scale + qm.log_scale)
                         - pm.mantissa * qn.mantissa * np.exp(pm.log_scale + qn.log_scale))
    checks = {"det_error": worst(det - 1.0), **second.checks}
    message = second.message and second.message + " (orthogonality_matrix_for_weight adds them)"
    return settle(OrthogonalityMatrix(z, n, mantissa, scale, det, checks, not message, message), on_failure)


def orthogonality_matrix_for_weight(weight: Weight, z, n: int, *, tolerance: float = 1e-12,
                                    max_extra: int = 4096, **options) -> tuple[OrthogonalityMatrix, RecurrenceCoefficients]:
    """``Y(z)`` computing as many extra coefficients beyond ``n`` as the continued fraction needs."""
    extra = 64
    while True:
        rc = recurrence_coefficients(weight, n + extra, **options)
        try:
            return orthogonality_matrix(rc, z, n, tolerance=tolerance), rc
        except NumericalFailure:
            if extra >= max_extra:
                raise
            extra = min(4 * extra, max_extra)
