r"""Corrections in powers of 1/n: truncated series, the result object, corrected a_n and b_n.

A corrected prediction (CONVENTIONS "Beyond leading order") is

    q_n = c_0 + c_1/n + c_2/n² + … + c_K/n^K      ("order K"),

where in the multi-band case the ``c_k`` depend on ``n`` through the phases
``nΩ`` (quasi-periodically).  Every corrected quantity is returned as a
:class:`CorrectionSeries`; its ``at_order(K)`` is what the workbench stores
and compares.

Adding a corrected quantity (for example a zero)
------------------------------------------------
1. Get ``R`` from :func:`gfunction.residual.residual_expansion` (``term(k, z)``
   for ``R^{(k)}(z)`` anywhere; ``infinity`` for its coefficients at ∞).
2. Write the quantity through ``I + Σ_k R^{(k)}/n^k`` and expand in
   ``ε = 1/n`` with the n-dependent coefficients held fixed, using the
   truncated-series helpers here (:func:`series_mul`, :func:`series_reciprocal`,
   :func:`series_sqrt`; arrays whose first axis is the order).
3. Return ``CorrectionSeries(name, n, coefficients, checks)``.

Recurrence coefficients (derived here)
--------------------------------------
Outside the lenses and discs ``Y = e^{-nℓσ₃/2} R N e^{n(g + ℓ/2)σ₃}``.  With
``R = I + R_1/z + R_2/z² + …``, ``N = I + N_1/z + N_2/z² + …`` and
``e^{n(g - log z)σ₃} = I + E_1/z + …``, ``E_1 = -n m_1 σ₃`` (``m_1`` the first
moment of μ_V; ``g - log z = -m_1/z - m_2/(2z²) - …``), the expansion
``Y z^{-nσ₃} = I + Y_1/z + Y_2/z² + …`` has, with ``X = R N``,

    Y_1 = L (X_1 + E_1) L^{-1},   Y_2 = L (X_2 + X_1 E_1 + E_2) L^{-1},   L = e^{-nℓσ₃/2},
    X_1 = R_1 + N_1,   X_2 = R_2 + R_1 N_1 + N_2.

``L`` multiplies the 12 entries by ``e^{-nℓ}`` and the 21 entries by ``e^{nℓ}``;
``E`` is diagonal.  Hence (CONVENTIONS)

    a_n² = (Y_1)_12 (Y_1)_21 = (X_1)_12 (X_1)_21,
    b_n  = (Y_2)_12/(Y_1)_12 - (Y_1)_22
         = [(X_2)_12 + n m_1 (X_1)_12]/(X_1)_12 - (X_1)_22 - n m_1
         = (X_2)_12/(X_1)_12 - (X_1)_22 :

the factors ``e^{ng}`` and ``e^{nℓ}`` cancel (:func:`recurrence_from_expansions`
keeps ``m_1`` and ``ℓ`` in the formulas and the test checks that the result
does not change with them).  The outer parametrix at infinity
(``N = D_∞^{σ₃} M D^{-σ₃}``, ``log(D/D_∞) = δ_1/z + …``):

    (N_1)_12 = D_∞² (M_1)_12,   (N_1)_21 = D_∞^{-2} (M_1)_21,   (N_1)_22 = (M_1)_22 + δ_1,
    (N_2)_12 = D_∞² [(M_2)_12 + δ_1 (M_1)_12],

with ``M_1, M_2`` from ``outer.ModelProblem.expansion`` and ``δ_1`` from the
trapezoidal rule on a large circle (:func:`szego_first_moment`).  Order ``K``:
substitute ``R_p = Σ_{k=1}^{K} R^{(k)}_p ε^k`` and expand ``a_n`` and ``b_n`` in
``ε`` to ``ε^K``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, float_checks, settle

__all__ = ["CorrectionSeries", "series_mul", "series_reciprocal", "series_sqrt", "szego_first_moment",
           "outer_at_infinity", "recurrence_from_expansions", "corrected_recurrence", "CorrectedRecurrence"]


# ------------------------------------------------------------- truncated power series
def series_mul(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Product of two truncated series (first axis = order), truncated to the shorter."""
    K = min(p.shape[0], q.shape[0])
    out = np.zeros((K,) + np.broadcast_shapes(p.shape[1:], q.shape[1:]), dtype=np.result_type(p, q))
    for k in range(K):
        for j in range(k + 1):
            out[k] = out[k] + p[j] * q[k - j]
    return out


def series_reciprocal(p: np.ndarray) -> np.ndarray:
    """``1/p`` as a truncated series (``p_0 ≠ 0``)."""
    q = np.zeros_like(p)
    q[0] = 1.0 / p[0]
    for k in range(1, p.shape[0]):
        acc = np.zeros_like(p[0])
        for j in range(1, k + 1):
            acc = acc + p[j] * q[k - j]
        q[k] = -acc * q[0]
    return q


def series_sqrt(p: np.ndarray) -> np.ndarray:
    """``p^{1/2}`` as a truncated series (principal root of ``p_0``)."""
    s = np.zeros_like(p)
    s[0] = np.sqrt(p[0])
    for k in range(1, p.shape[0]):
        acc = np.zeros_like(p[0])
        for j in range(1, k):
            acc = acc + s[j] * s[k - j]
        s[k] = (p[k] - acc) / (2.0 * s[0])
    return s


# ------------------------------------------------------------------ the result object
@dataclass(frozen=True)
class CorrectionSeries:
    """``q_n = Σ_{k ≤ K} c_k / n^k`` for a batch of degrees.

    Attributes
    ----------
    quantity : str               what is expanded (``"a"``, ``"b"``, …)
    n : float ndarray (N,)       the n of ``c_k/n^k`` (the scaling of the weight)
    coefficients : ndarray (K+1, N, ...)   ``c_0 … c_K`` per degree (real)
    checks : dict                checks (imaginary parts that must vanish, …)
    """

    quantity: str
    n: np.ndarray
    coefficients: np.ndarray
    checks: dict = field(default_factory=dict)

    @property
    def order(self) -> int:
        return self.coefficients.shape[0] - 1

    @property
    def corrections(self) -> np.ndarray:
        """``c_1 … c_K`` (shape (K, N, ...))."""
        return self.coefficients[1:]

    def at_order(self, order: int) -> np.ndarray:
        """``Σ_{k ≤ order} c_k / n^k`` (order ≤ K)."""
        if isinstance(order, bool) or not isinstance(order, (int, np.integer)) or not 0 <= order <= self.order:
            raise InputError(f"{self.quantity} is available at orders 0..{self.order}; got {order!r}")
        n = self.n.reshape((-1,) + (1,) * (self.coefficients.ndim - 2))
        return sum(self.coefficients[k] / n ** k for k in range(order + 1))


# ------------------------------------------------------------ expansions at infinity
def szego_first_moment(szego, support, *, samples: int = 64) -> float:
    r"""``δ_1 = lim z log(D(z)/D_∞)`` = ``(1/2πi)∮ log(D/D_∞) ds`` on a circle around the support.

    ``log(D/D_∞)`` is analytic outside the hull of the bands and ``O(1/z)``, so
    the integral over any circle enclosing them is ``δ_1``; the trapezoidal rule
    converges like ``(half-width/radius)^L`` (radius three half-widths).
    Real for a real factor (``D(z̄) = conj D(z)``); the imaginary part is
    returned in the checks of the callers.
    """
    lo, hi = support[0][0], support[-1][1]
    c, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    rad = 3.0 * max(half, 1e-3)
    theta = 2.0 * np.pi * (np.arange(samples) + 0.5) / samples
    t = np.exp(1j * theta)
    f = szego.log(c + rad * t) - np.log(szego.limit)
    return complex(rad * np.mean(f * t))


def outer_at_infinity(predictor, degrees, *, expansion: dict | None = None) -> dict:
    """``(N_1)_12, (N_1)_21, (N_1)_22, (N_2)_12`` for each degree (module docstring).

    ``expansion`` -- ``predictor.model.expansion`` at the phases of ``degrees`` when the caller
    has it already (one evaluation of the theta functions instead of two).
    """
    w = predictor.phases(degrees)
    ex = expansion if expansion is not None else predictor.model.expansion(
        w if predictor.genus else np.zeros((w.shape[0], 0)))
    N = w.shape[0]
    M1_12 = np.broadcast_to(ex["M1_12"], (N,)).astype(complex)
    M1_21 = np.broadcast_to(ex["M1_21"], (N,)).astype(complex)
    M1_22 = np.broadcast_to(ex["M1_22"], (N,)).astype(complex)
    M2_12 = np.broadcast_to(ex["M2_12"], (N,)).astype(complex)
    D = predictor.szego
    if D is None:
        lim2, d1 = 1.0, 0.0
    else:
        lim2, d1 = D.limit ** 2, szego_first_moment(D, predictor.g.support)
    return {"N1_12": lim2 * M1_12, "N1_21": M1_21 / lim2, "N1_22": M1_22 + d1,
            "N2_12": lim2 * (M2_12 + d1 * M1_12), "delta1": d1}


def recurrence_from_expansions(N1_12, N1_21, N1_22, N2_12, R1, R2, *, moment: float = 0.0,
                               lagrange: float = 0.0, n=None):
    r"""``(a², b)`` from the coefficients at ∞ of ``N`` and of ``R - I`` (module docstring).

    ``R1``, ``R2`` have shape (..., 2, 2).  ``moment`` (``m_1``), ``lagrange`` (ℓ)
    and ``n`` enter ``Y_1, Y_2`` exactly as in the derivation and cancel.
    """
    X1_12 = R1[..., 0, 1] + N1_12
    X1_21 = R1[..., 1, 0] + N1_21
    X1_22 = R1[..., 1, 1] + N1_22
    X2_12 = R2[..., 0, 1] + R1[..., 0, 0] * N1_12 + R1[..., 0, 1] * N1_22 + N2_12
    nn = 0.0 if n is None else np.asarray(n, dtype=float)
    Lq = np.exp(-nn * lagrange)                   # L = e^{-nℓσ₃/2}: 12 entries times e^{-nℓ}
    Y1_12, Y1_21 = Lq * X1_12, X1_21 / Lq
    Y1_22 = X1_22 + nn * moment                   # (E_1)_22 = +n m_1
    Y2_12 = Lq * (X2_12 + X1_12 * nn * moment)
    return Y1_12 * Y1_21, Y2_12 / Y1_12 - Y1_22


#: tolerances of :class:`CorrectedRecurrence` beyond those of the residual expansion
TOLERANCES = {"imag_a": 1e-10, "imag_b": 1e-10, "imag_delta1": 1e-10}


@dataclass(frozen=True)
class CorrectedRecurrence:
    """Corrected ``a_n``, ``b_n`` (degree = scaling) as :class:`CorrectionSeries`.

    ``checks``: ``imag_a``, ``imag_b`` (largest imaginary part of any ``c_k``: the weight is
    real), ``imag_delta1`` and, for order ≥ 1, the figures of the residual expansion of the
    first degree (``gfunction.residual.TOLERANCES``).
    """

    degrees: np.ndarray
    order: int
    a: CorrectionSeries
    b: CorrectionSeries
    verified: bool
    checks: dict = field(default_factory=dict)
    message: str = ""


def corrected_recurrence(predictor, degrees, order: int = 2, *, samples: int = 64, chunk: int = 256,
                         on_failure: str = "raise", corrections=None) -> CorrectedRecurrence:
    """``a_n = Σ_{k≤K} c_k/n^k`` and the same for ``b_n`` (degree = scaling n).

    Order 0 is the outer parametrix alone (``Predictor.recurrence``); order K ≥ 1
    adds the residual expansion of :mod:`gfunction.residual`.  The checks are the
    imaginary parts of ``c_k`` (must be rounding: the weight is real), the residual
    expansion's own checks (first batch), and ``outer_infinity``, the difference
    of the closed-form ``N_1, N_2`` from the trapezoidal rule on a large circle.

    ``corrections`` -- a ``gfunction.polynomial_form.Corrections`` of this order covering the
    degrees (the gap zeros' expansions): its coefficients at ∞ and checks are reused instead of
    computing the expansions again (``samples`` and ``chunk`` are then those it was built with).
    """
    from .residual import TOLERANCES as RESIDUAL_TOLERANCES
    from .residual import _check_order, jump_expansion, residual_expansion

    failure_policy(on_failure)
    order = _check_order(order)
    degrees = np.atleast_1d(np.asarray(degrees))
    if degrees.ndim != 1 or degrees.size == 0 or np.any(degrees < 1) or np.any(degrees != np.round(degrees)):
        raise InputError(f"degrees must be positive integers; got {degrees!r}")
    degrees = degrees.astype(np.int64)
    n = degrees.astype(float)
    out = outer_at_infinity(predictor, degrees)
    K1 = order + 1
    R1 = np.zeros((K1, degrees.size, 2, 2), dtype=complex)
    R2 = np.zeros((K1, degrees.size, 2, 2), dtype=complex)
    checks: dict = {}
    if order and corrections is not None:
        if corrections.order != order:
            raise InputError(f"the corrections are of order {corrections.order}, not {order}")
        R1[1:], R2[1:] = corrections.at_infinity(degrees)
        checks.update(corrections.checks)
    elif order:
        jump = jump_expansion(predictor, order, samples=samples)
        for start in range(0, degrees.size, chunk):
            sl = slice(start, start + chunk)
            res = residual_expansion(predictor, degrees[sl], order, jump=jump, verify=start == 0,
                                     on_failure="mark")
            R1[1:, sl] = res.infinity[:, :, 0]
            R2[1:, sl] = res.infinity[:, :, 1]
            if start == 0:
                checks.update(res.checks)
    def const(v):
        s = np.zeros((K1, degrees.size), dtype=complex)
        s[0] = v
        return s

    X1_12 = const(out["N1_12"]) + R1[..., 0, 1]
    X1_21 = const(out["N1_21"]) + R1[..., 1, 0]
    X1_22 = const(out["N1_22"]) + R1[..., 1, 1]
    X2_12 = (const(out["N2_12"]) + R2[..., 0, 1] + R1[..., 0, 0] * out["N1_12"][None]
             + R1[..., 0, 1] * out["N1_22"][None])
    a2 = series_mul(X1_12, X1_21)
    if np.any(a2[0].real <= 0):
        raise NumericalFailure("the outer parametrix gives a non-positive a² (leading order)")
    a = series_sqrt(a2)
    b = series_mul(X2_12, series_reciprocal(X1_12)) - X1_22
    checks["imag_a"] = float(np.max(np.abs(a.imag)))
    checks["imag_b"] = float(np.max(np.abs(b.imag)))
    checks["imag_delta1"] = float(abs(np.imag(out["delta1"])))
    checks = float_checks(checks)
    message = failure_message(checks, {**RESIDUAL_TOLERANCES, **TOLERANCES},
                              what=f"recurrence coefficients at order {order}")
    result = CorrectedRecurrence(degrees, order, CorrectionSeries("a", n, a.real.copy(), checks),
                                 CorrectionSeries("b", n, b.real.copy(), checks), not message, checks, message)
    return settle(result, on_failure)
