r"""The small-norm matrix ``T M^{-1} - I`` of the steepest-descent analysis.

With ``Y`` the solution of the Riemann–Hilbert problem of the orthogonal
polynomials (Fokas, Its & Kitaev, Comm. Math. Phys. 147 (1992) 395–430) and
``g``, ``ℓ`` those of the equilibrium measure (``g_+ + g_- - V + ℓ = 0`` on the
support), the first transformation of the steepest descent is

    T(z) = e^{nℓσ₃/2} Y(z) e^{-n(g(z) + ℓ/2)σ₃},

and away from the support and the lenses ``T M^{-1} = I + O(1/n)`` uniformly,
``M`` the outer parametrix (Deift, Kriecherbauer, McLaughlin, Venakides, Zhou,
Comm. Pure Appl. Math. 52 (1999) 1335–1425, §4 and §7).  The entries of ``Y``
overflow at large ``n``; they come as mantissa and log-scale
(``Y_ij = mantissa_ij · e^{log_scale_ij}``), and the exponents of ``T`` are added
to the log-scales before anything is exponentiated:

    T_ij = mantissa_ij · exp(log_scale_ij + s_i nℓ/2 - s_j n(g + ℓ/2)),   s = (+1, -1).

``M`` has determinant 1 (it is built so; ``outer.jump_residuals`` checks it), so
``M^{-1}`` is its adjugate.  Only the weight ``e^{-nV}`` (no factor ``h``) is
covered: with ``h ≠ 1`` the outer parametrix carries the Szegő function of ``h``.
"""

from __future__ import annotations

import numpy as np

from equilibrium.errors import InputError

from .outer import ModelProblem

__all__ = ["small_norm_matrix", "small_norm_deviation"]


def small_norm_matrix(z, mantissa, log_scale, g, lagrange: float, n: float, model: ModelProblem,
                      phases) -> np.ndarray:
    r"""``T(z) M(z)^{-1} - I`` at the points ``z``, shape ``z.shape + (2, 2)``.

    Parameters
    ----------
    z : points off the support (complex array).
    mantissa, log_scale : ``Y`` at ``z`` as arrays of shape ``(2, 2) + z.shape``,
        ``Y_ij = mantissa_ij · exp(log_scale_ij)`` (e.g.
        ``workbench.polynomials.orthogonality_matrix``).
    g : the g-function at ``z`` (``GFunction.__call__``), shape ``z.shape``.
    lagrange : ℓ of the equilibrium measure.
    n : the degree (= the scaling of the weight ``e^{-nV}``).
    model : the outer parametrix data of the support (``outer.model_problem``).
    phases : ``w`` of the outer parametrix at this ``n`` (``Predictor.phases([n])[0]``),
        shape ``(g,)`` (empty for one band).

    Examples
    --------
    One band, ``V = x²/2`` (support [-2, 2], ℓ = 1): with the recurrence
    coefficients ``a_k = (k/n)^{1/2}``, ``b_k = 0`` of the weight ``e^{-nx²/2}``
    (scaled Hermite; DLMF 18.9.1) the deviation on the circle ``|z| = 3`` is
    O(1/n):

    >>> import numpy as np
    >>> from equilibrium import Field, solve
    >>> from gfunction import predictor
    >>> from workbench.polynomials import RecurrenceCoefficients, orthogonality_matrix
    >>> pred = predictor(solve(Field.from_expression("x**2/2")))
    >>> z = 3 * np.exp(2j * np.pi * (np.arange(32) + 0.5) / 32)
    >>> n, K = 40, 140
    >>> rc = RecurrenceCoefficients(a=np.sqrt(np.arange(K + 1) / n), b=np.zeros(K + 1), n=n,
    ...                             error_estimate=0.0, method="closed form", weight_description="",
    ...                             log_mass=0.5 * np.log(2 * np.pi / n))
    >>> Y = orthogonality_matrix(rc, z, n)
    >>> R = small_norm_matrix(z, Y.mantissa, Y.log_scale, pred.g(z), pred.measure.lagrange, n,
    ...                       pred.model, pred.phases([n])[0])
    >>> deviation = float(np.abs(R).max())
    >>> bool(0.1 / n < deviation < 1 / n)
    True
    """
    z = np.asarray(z, dtype=complex)
    mantissa = np.asarray(mantissa)
    log_scale = np.asarray(log_scale, dtype=float)
    g = np.asarray(g, dtype=complex)
    if mantissa.shape != (2, 2) + z.shape or log_scale.shape != mantissa.shape or g.shape != z.shape:
        raise InputError(f"Y must have shape (2, 2) + z.shape = {(2, 2) + z.shape} and g shape {z.shape}; "
                         f"got {mantissa.shape}, {log_scale.shape} and {g.shape}")
    n, ell = float(n), float(lagrange)
    s = np.array([1.0, -1.0]).reshape((2, 1) + (1,) * z.ndim)
    exponent = log_scale + s * (n * ell / 2) - np.swapaxes(s, 0, 1) * n * (g + ell / 2)
    T = np.moveaxis(mantissa * np.exp(exponent), (0, 1), (-2, -1))
    M = model.evaluate(z, np.asarray(phases, dtype=float))
    adjugate = np.empty_like(M)
    adjugate[..., 0, 0], adjugate[..., 1, 1] = M[..., 1, 1], M[..., 0, 0]
    adjugate[..., 0, 1], adjugate[..., 1, 0] = -M[..., 0, 1], -M[..., 1, 0]
    return T @ adjugate - np.eye(2)


def small_norm_deviation(z, mantissa, log_scale, g, lagrange: float, n: float, model: ModelProblem,
                         phases) -> np.ndarray:
    """``max_ij |T M^{-1} - I|_ij`` at each point ``z`` (arguments of :func:`small_norm_matrix`)."""
    R = small_norm_matrix(z, mantissa, log_scale, g, lagrange, n, model, phases)
    return np.abs(R).max(axis=(-2, -1))
