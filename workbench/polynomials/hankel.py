r"""Hankel determinants and partition functions of ``w_n``, computed from the norms of the polynomials.

For the weight ``w_n = e^{-nV} h`` on Σ,

    D_n = det[∫ x^{j+k} w_n(x) dx]_{j,k=0}^{n-1} = ∏_{k=0}^{n-1} h_k,
    h_k = ∫ π_k² w_n = h_0 ∏_{j=1}^{k} a_j²,    h_0 = ∫ w_n,

(the Gram determinant of 1, x, …, x^{n-1} is the product of the squared norms of
the monic orthogonal polynomials obtained from them by Gram–Schmidt: common
practice, e.g. Szegő, Orthogonal Polynomials, 1939, §2.1), hence

    log D_n = n log h_0 + Σ_{k=1}^{n-1} 2 (n - k) log a_k^{(n)},
    log Z_n = log n! + log D_n      (Z_n = n! D_n, the partition function of the unitary ensemble).

Nothing is exponentiated: ``log h_0`` is the log-mass the Stieltjes procedure
keeps (a log-sum-exp of the log-weights) and the ``a_k`` are numbers of order
one (or of the size of the set for fixed weights), so ``log D_n`` of size
``n² I_V`` is formed at any n without overflow.

Error estimate
--------------
Two sources, added:

* the discretisation, from the second, independent discretisation of the
  weight that :func:`.recurrence.recurrence_coefficients` runs anyway: the
  first-order propagation of the differences ``Δ log h_0`` and ``Δa_k``,

      n |Δ log h_0| + Σ_k 2 (n - k) |Δa_k| / a_k    (≥ |log D_n - log D_n'| to first order);

* rounding of the sum.  The n terms are added by compensated summation
  (``math.fsum``, Shewchuk's algorithm: the sum of the stored terms is
  correctly rounded), so what remains is the rounding of each term (one
  logarithm and one product: ``2u|t_k|``, u = 2^-53) and of the result:
  ``u (2 Σ|t_k| + |log D_n|)``.  Plain summation of 10⁴ terms of size 10⁴ would
  add errors up to ``10⁴ u Σ|t_k|``.

The result is verified when the coefficients are and
``error_estimate ≤ tolerance · max(1, |log D_n|, Σ|t_k|)``: the scale is the size of
the summands, because when they cancel (``|log D_n| ≪ Σ|t_k|``, e.g. a field whose
energy is near zero) no summation of them can be more accurate than ``u Σ|t_k|``
relative to ``|log D_n|``.  ``relative_error_estimate`` is always reported against
``max(1, |log D_n|)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dataclass_field
from typing import Any, Callable, Mapping

import numpy as np

from equilibrium.errors import InputError
from equilibrium.verification import failure_message, failure_policy, settle

from .recurrence import RecurrenceCoefficients, recurrence_coefficients
from .weight import Weight

__all__ = ["HankelDeterminant", "hankel_determinant", "log_det_from_coefficients"]

#: unit roundoff of double precision
_UNIT = 2.0 ** -53


@dataclass(frozen=True)
class HankelDeterminant:
    """``log D_n`` and ``log Z_n`` of ``w_n`` with their error estimate.

    Attributes
    ----------
    n : the size of the determinant (equal to the scaling of the weight).
    log_det : ``log D_n``.
    log_partition : ``log Z_n = log n! + log D_n``.
    error_estimate : absolute error estimate of ``log_det`` (and of ``log_partition``):
        propagated discretisation difference plus rounding (module docstring).
    verified : coefficients verified and ``error_estimate ≤ tolerance · max(1, |log D_n|, Σ|t_k|)``
        (module docstring).
    checks : ``discretisation_bound``, ``discretisation_difference`` (``|log D_n - log D_n'|``,
        the second discretisation), ``summation_rounding``, ``relative_error_estimate``,
        ``terms_scale`` (``Σ|t_k|``), ``error_relative_to_terms`` (the one with a tolerance),
        ``coefficients_relative_error_estimate``, ``log_mass_difference``.
    log_mass : ``log h_0 = log ∫ w_n``.
    method : how the numbers were computed.
    weight_description : text of the weight.
    message : why the result is not verified (empty when it is).
    """

    n: int
    log_det: float
    log_partition: float
    error_estimate: float
    verified: bool
    checks: Mapping[str, float] = dataclass_field(default_factory=dict)
    log_mass: float = 0.0
    method: str = ""
    weight_description: str = ""
    message: str = ""

    @property
    def relative_error_estimate(self) -> float:
        """``error_estimate / max(1, |log D_n|)``."""
        return self.error_estimate / max(1.0, abs(self.log_det))


def _terms(a: np.ndarray, log_mass: float, n: int) -> np.ndarray:
    """The summands ``n log h_0`` and ``2 (n - k) log a_k`` (k = 1..n-1)."""
    k = np.arange(1, n, dtype=float)
    return np.concatenate([[n * log_mass], 2.0 * (n - k) * np.log(a[1:n])])


def log_det_from_coefficients(a: np.ndarray, log_mass: float, n: int) -> float:
    """``log D_n = n log h_0 + Σ_{k=1}^{n-1} 2 (n-k) log a_k`` by compensated summation.

    ``a`` holds ``a[0] = 0, a[1], …`` (at least n entries); ``log_mass = log h_0``.
    """
    a = np.asarray(a, dtype=float)
    if a.size < n:
        raise InputError(f"log D_{n} needs a_1 .. a_{n - 1}; got {a.size - 1} coefficients")
    return math.fsum(_terms(a, log_mass, n))


def _size_of(weight: Weight) -> int:
    n = weight.n
    if not (float(n).is_integer() and n >= 1):
        raise InputError(f"the Hankel determinant D_n needs an integer scaling n >= 1 (its size); got n = {n:g}")
    return int(n)


def hankel_determinant(weight: Weight, *, tolerance: float = 1e-12, coefficient_tolerance: float = 1e-10,
                       coefficients: RecurrenceCoefficients | None = None, measure=None,
                       solver: Callable[..., Any] | None = None,
                       on_failure: str = "raise") -> HankelDeterminant:
    """``log D_n`` and ``log Z_n`` of ``w_n = e^{-nV} h`` (size n = the scaling of the weight).

    Parameters
    ----------
    weight : the weight; its scaling ``n`` must be an integer (the size of the determinant).
    tolerance : allowed ``error_estimate / max(1, |log D_n|, Σ|t_k|)``.
    coefficient_tolerance : passed to :func:`.recurrence.recurrence_coefficients`.
    coefficients : recurrence coefficients of this weight already computed (up to k ≥ n - 1,
        with the second discretisation run); they are used instead of computing them again.
    measure, solver : node placement, as in :func:`.recurrence.recurrence_coefficients`.
    on_failure : ``"raise"`` (:class:`NumericalFailure` when not verified) or ``"mark"``
        (``verified = False`` and ``message``).

    Returns
    -------
    HankelDeterminant
    """
    failure_policy(on_failure)
    if not (isinstance(tolerance, (int, float)) and math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"tolerance must be a positive number, got {tolerance!r}")
    n = _size_of(weight)
    if coefficients is None:
        # at least a_1: with count = 0 the layout (degree 1) cuts the tails of w_n where their mass is
        # ~1e-12 of ∫ w_n, in both discretisations alike (measured on e^{-x²/2}); from count = 1 on it is
        # at rounding level
        coefficients = recurrence_coefficients(weight, max(n - 1, 1), tolerance=coefficient_tolerance,
                                               measure=measure, solver=solver, on_failure=on_failure)
    elif coefficients.count < n - 1 or coefficients.n != weight.n:
        raise InputError(f"the coefficients given are for n = {coefficients.n:g} up to k = {coefficients.count}; "
                         f"log D_{n} needs n = {n} and k up to {n - 1}")
    if coefficients.a_secondary is None or coefficients.log_mass_secondary is None:
        raise InputError("the coefficients given carry no second discretisation (computed with verify=False); "
                         "the error estimate of log D_n needs it")
    a, a2 = coefficients.a, coefficients.a_secondary
    terms = _terms(a, coefficients.log_mass, n)
    log_det = math.fsum(terms)
    log_det2 = math.fsum(_terms(a2, coefficients.log_mass_secondary, n))
    k = np.arange(1, n, dtype=float)
    bound = n * abs(coefficients.log_mass - coefficients.log_mass_secondary) + math.fsum(
        2.0 * (n - k) * np.abs(a[1:n] - a2[1:n]) / a[1:n])
    scale = math.fsum(np.abs(terms))
    rounding = _UNIT * (2.0 * scale + abs(log_det))
    error = bound + rounding
    relative = error / max(1.0, abs(log_det))
    against_scale = error / max(1.0, abs(log_det), scale)
    checks = {
        "discretisation_bound": bound,
        "discretisation_difference": abs(log_det - log_det2),
        "summation_rounding": rounding,
        "relative_error_estimate": relative,
        "terms_scale": scale,
        "coefficients_relative_error_estimate": float(coefficients.checks.get("relative_error_estimate", math.nan)),
        "log_mass_difference": abs(coefficients.log_mass - coefficients.log_mass_secondary),
    }
    checks["error_relative_to_terms"] = against_scale if math.isfinite(log_det) else math.nan
    message = failure_message(checks, {"error_relative_to_terms": tolerance}, what=f"log D_{n}")
    if not coefficients.verified:
        message = "; ".join(m for m in (f"log D_{n} not verified: the recurrence coefficients are not verified "
                                        f"({coefficients.method})", message) if m)
    return settle(HankelDeterminant(
        n=n, log_det=log_det, log_partition=math.lgamma(n + 1.0) + log_det, error_estimate=error,
        verified=not message, checks=checks, log_mass=coefficients.log_mass,
        method=f"log D_n = n log h_0 + sum 2(n-k) log a_k (compensated summation) from {coefficients.method}",
        weight_description=coefficients.weight_description, message=message,
    ), on_failure)
