r"""Near-diagonal recurrence coefficients ``a_{n+j}^{(n)}``, ``b_{n+j}^{(n)}`` for small ``|j|``.

Choice: the diagonal problem of a rescaled field
-----------------------------------------------
The weight ``e^{-nV} h`` at degree ``N = n + j`` is the weight ``e^{-N V_N} h`` of the field
``V_N = (n/N) V`` at its diagonal degree ``N``:

    a_{n+j}^{(n)}[V] = a_N^{(N)}[(n/N) V],     b_{n+j}^{(n)}[V] = b_N^{(N)}[(n/N) V]

(exact: the two weights are the same function).  So every diagonal method -- the
correction series at order K (:mod:`gfunction.series`) and the residual problem
(:mod:`gfunction.residual_problem`) -- gives the near-diagonal coefficients with the
equilibrium measure of ``(n/N) V`` (``equilibrium.Field.scaled``), its g-function, outer
parametrix and Szegő function.

Why not the shifted-phase problem (the outer parametrix with phases ``nΩ + jΩ̂`` and the
harmonic g-function ``ĝ`` for the degree shift, ``Predictor.phases(N, n)``): at order 0 it
keeps the support of ``μ_V``, whereas the support of ``(n/N)V`` moves by ``O(j/n)``; the two
agree to ``O(1/n)``, and beyond order 0 the shifted problem would need the derivatives of all
the data with respect to the support -- new local parametrices for the same problem.  The
rescaled field reuses every verified piece, costs one equilibrium solve per ``j`` (a few ms),
and is exact in ``j``.  ``test_near_diagonal.py`` checks it against direct coefficients and
against the shifted-phase leading order (an ``O(1/n)`` difference).

For a fixed weight (``V = 0`` on a compact set) ``(n/N)V = 0``: the coefficient at degree ``N``
is the diagonal one of degree ``N``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Sequence

import numpy as np

from equilibrium.errors import InputError
from equilibrium.verification import failure_policy, settle

__all__ = ["NearDiagonal", "near_diagonal_recurrence"]


@dataclass(frozen=True)
class NearDiagonal:
    """``a_{n+j}^{(n)}``, ``b_{n+j}^{(n)}`` for the shifts ``j`` (module docstring).

    ``a[i], b[i]`` belong to ``shifts[i]``; ``corrections_a[i]`` are the ``c_0 … c_K`` of the
    series in ``1/N`` (``N = n + j``, the scaling of the rescaled field) for ``method = "series"``,
    ``None`` for the residual method, whose ``error_estimate[i]`` is given instead.
    """

    n: int
    shifts: np.ndarray
    method: str
    order: int | None
    a: np.ndarray
    b: np.ndarray
    corrections_a: np.ndarray | None
    corrections_b: np.ndarray | None
    error_estimate: np.ndarray | None
    verified: bool
    checks: dict = field(default_factory=dict)
    message: str = ""


def near_diagonal_recurrence(measure, n: int, shifts: Sequence[int], *, factor=None, order: int = 2,
                             method: str = "series", solver: Callable[..., Any] | None = None,
                             on_failure: str = "raise") -> NearDiagonal:
    """Near-diagonal coefficients of ``e^{-nV} h`` (``measure`` = μ_V on its set Σ).

    Parameters
    ----------
    measure : the equilibrium measure of V (its ``field`` and ``on`` are rescaled).
    n : the scaling of the weight.
    shifts : the ``j`` with ``N = n + j ≥ 1``.
    factor : the factor ``h`` (as for :func:`gfunction.predictor`).
    order : K for ``method = "series"``.
    method : ``"series"`` (orders 0 … K) or ``"residual"`` (the residual problem).
    solver : the equilibrium solver (default ``equilibrium.solve``; ``solve_signed`` for a signed case).
    """
    from equilibrium import solve

    from .predict import predictor
    from .residual_problem import residual_solver
    from .series import corrected_recurrence

    failure_policy(on_failure)
    if method not in ("series", "residual"):
        raise InputError(f"method must be 'series' or 'residual'; got {method!r}")
    if isinstance(n, bool) or int(n) != n or n < 1:
        raise InputError(f"n must be a positive integer; got {n!r}")
    n = int(n)
    js = np.atleast_1d(np.asarray(shifts))
    if js.ndim != 1 or js.size == 0 or np.any(js != np.round(js)) or np.any(n + js < 1):
        raise InputError(f"shifts must be integers with n + j >= 1; got {shifts!r} for n = {n}")
    js = js.astype(int)
    solver = solve if solver is None else solver
    a = np.empty(js.size)
    b = np.empty(js.size)
    ca = cb = err = None
    checks: dict = {}
    messages = []
    verified = True
    for i, j in enumerate(js):
        N = n + int(j)
        mu = measure if N == n else solver(measure.field.scaled(n / N), on=measure.on)
        if not mu.verified:
            verified = False
            messages.append(f"j = {j}: equilibrium measure of (n/N)V not verified: {mu.message}")
        pr = predictor(mu, factor)
        if method == "series":
            r = corrected_recurrence(pr, [N], order, on_failure="mark")
            if ca is None:
                ca, cb = np.empty((js.size, order + 1)), np.empty((js.size, order + 1))
            a[i], b[i] = r.a.at_order(order)[0], r.b.at_order(order)[0]
            ca[i], cb[i] = r.a.coefficients[:, 0], r.b.coefficients[:, 0]
            res = r
        else:
            res = residual_solver(pr).solve([N], on_failure="mark")
            if err is None:
                err = np.empty(js.size)
            a[i], b[i], err[i] = res.a[0], res.b[0], res.error_estimate[0]
        for key, value in res.checks.items():
            checks[key] = max(checks.get(key, 0.0), float(value)) if np.isfinite(value) else float("nan")
        if not res.verified:
            verified = False
            messages.append(f"j = {j}: {res.message}")
    result = NearDiagonal(n, js, method, order if method == "series" else None, a, b, ca, cb, err, verified,
                          checks, "; ".join(messages))
    return settle(result, on_failure)
