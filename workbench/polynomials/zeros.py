"""Zeros of ``p_K`` and Gauss rules.

The zeros of ``p_K`` are the eigenvalues of the ``K × K`` Jacobi matrix
(diagonal ``b_0..b_{K-1}``, off-diagonal ``a_1..a_{K-1}``), computed by
``scipy.linalg.eigh_tridiagonal`` (LAPACK ``stebz``/``stemr``).  The Gauss
weights are the Christoffel numbers ``λ_j = 1/Σ_{k<K} p_k(x_j)²``
(Golub & Welsch, Math. Comp. 23 (1969) 221–230 for the eigenvector form
``λ_j = μ_0 v_{0j}²``); they are formed in logarithmic form from the scaled
values of :mod:`.values`, so weights far below ``1e-308`` keep full relative
accuracy and no ``K × K`` eigenvector matrix is ever stored.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dataclass_field
from typing import Mapping

import numpy as np

from equilibrium.errors import InputError
from equilibrium.verification import failure_message, failure_policy, settle

from .recurrence import RecurrenceCoefficients
from .values import log_christoffel_sum


#: the Gauss weights sum to ∫w and equal ∫w times the squared first eigenvector components
TOLERANCES = {"log_mass_difference": 1e-10, "eigenvector_weight_difference": 1e-10}


@dataclass(frozen=True)
class GaussRule:
    """The K-point Gauss rule of the weight: ``∫ f w ≈ Σ λ_j f(x_j)``.

    Attributes
    ----------
    nodes : zeros of p_K, ascending.
    log_weights : ``log λ_j``.
    degree : K.
    checks : ``log_mass_difference`` = |log Σλ_j - log ∫w|,
        ``eigenvector_weight_difference`` = max |λ_j/∫w - v_{0j}²| (K ≤ 400 only).
    verified, message : both figures within :data:`TOLERANCES` (they are at rounding
        level, ≤ 1e-14 for K = 300..2000 on the shipped fields), and the failed ones.
    """

    nodes: np.ndarray
    log_weights: np.ndarray
    degree: int
    checks: Mapping[str, float] = dataclass_field(default_factory=dict)
    verified: bool = True
    message: str = ""

    @property
    def weights(self) -> np.ndarray:
        with np.errstate(under="ignore"):
            return np.exp(self.log_weights)


def _degree(rc: RecurrenceCoefficients, degree: int | None) -> int:
    K = rc.count + 1 if degree is None else degree
    if isinstance(K, bool) or not isinstance(K, (int, np.integer)):
        raise InputError(f"degree must be an integer, got {degree!r}")
    if not 1 <= K <= rc.count + 1:
        raise InputError(f"zeros of p_{K} need coefficients 0..{K - 1}; have 0..{rc.count} (degree >= 1)")
    return int(K)


def zeros(rc: RecurrenceCoefficients, degree: int | None = None) -> np.ndarray:
    """Zeros of ``p_degree`` ascending (default degree ``rc.count + 1``)."""
    K = _degree(rc, degree)
    if K == 1:
        return np.array([rc.b[0]])
    from scipy.linalg import eigh_tridiagonal  # imported here: scipy.linalg costs ~0.1 s of start-up

    return eigh_tridiagonal(rc.b[:K], rc.a[1:K], eigvals_only=True)


def gauss_rule(rc: RecurrenceCoefficients, degree: int | None = None, *, on_failure: str = "raise") -> GaussRule:
    """Nodes and (log) weights of the ``degree``-point Gauss rule.

    ``on_failure``: ``"raise"`` (NumericalFailure when a check fails) or ``"mark"``
    (``verified = False``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    K = _degree(rc, degree)
    x = zeros(rc, K)
    log_w = -log_christoffel_sum(rc, x, K)  # λ_j = 1/Σ_{k<K} p_k(x_j)², streamed in O(K) memory
    wmax = float(np.max(log_w))
    log_sum = wmax + math.log(float(np.sum(np.exp(log_w - wmax))))
    checks = {"log_mass_difference": abs(log_sum - rc.log_mass)}
    if K <= 400:
        from scipy.linalg import eigh_tridiagonal

        _, vectors = eigh_tridiagonal(rc.b[:K], rc.a[1:K]) if K > 1 else (None, np.ones((1, 1)))
        # eigenvector components carry absolute (not relative) accuracy: compare normalised weights absolutely
        first = vectors[0] ** 2
        checks["eigenvector_weight_difference"] = float(np.max(np.abs(np.exp(log_w - rc.log_mass) - first)))
    message = failure_message(checks, TOLERANCES, what=f"the {K}-point Gauss rule")
    return settle(GaussRule(x, log_w, K, checks, not message, message), on_failure)
